"""Typed, frozen results of the step-response analysis.

Every step carries every figure of :data:`~logbook.analysis.catalog.METRICS`; a
figure that cannot be determined has ``value=None`` and a ``reason`` saying why, so
results always have the same shape whatever the input.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import NamedTuple

from logbook.analysis.catalog import METRICS
from logbook.analysis.settings import AnalysisSettings


class Figure(NamedTuple):
    """One number, or None with the reason it could not be determined. (A named
    tuple: a trace has some thirty per step, and tuples are the cheapest to make.)"""

    value: float | None
    reason: str | None = None  # why value is None (or a note)


@dataclass(frozen=True)
class StepAnalysis:
    """The figures of one step; keys are names from ``METRICS``."""

    index: int  # 0-based step number within the trace
    figures: Mapping[str, Figure]

    def __post_init__(self) -> None:
        unknown = sorted(set(self.figures) - set(METRICS))
        if unknown:
            raise ValueError(f"figures not in the metric catalogue: {unknown}")
        object.__setattr__(self, "figures", MappingProxyType(dict(self.figures)))

    def __reduce__(self) -> tuple[type[StepAnalysis], tuple[int, dict[str, Figure]]]:
        # A read-only mapping cannot be pickled; rebuild from a plain copy (for
        # worker processes and caches).
        return StepAnalysis, (self.index, dict(self.figures))

    def value(self, name: str) -> float | None:
        """The value of figure ``name`` (None when missing or undetermined)."""
        figure = self.figures.get(name)
        return None if figure is None else figure.value

    def to_json(self) -> dict[str, float | None]:
        """Every catalogue figure in catalogue order, name -> value (None -> null)."""
        return {name: self.value(name) for name in METRICS}


@dataclass(frozen=True)
class TraceAnalysis:
    """All steps of one trace and the settings they were computed with."""

    steps: tuple[StepAnalysis, ...]
    settings: AnalysisSettings

    def to_json(self) -> list[dict[str, float | None]]:
        """One :meth:`StepAnalysis.to_json` object per step, in step order."""
        return [step.to_json() for step in self.steps]
