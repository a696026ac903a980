"""What an acceptance report says, as plain frozen data, and its content hash.

:class:`ReportData` is everything a report shows; the services gather it from the
database and :mod:`logbook.reports.html` renders it. :func:`evidence` is the part
that the report vouches for, as canonical JSON-ready data, and
:func:`content_hash` its SHA-256. The hash covers the evidence, not the rendered
HTML, so a restyled template does not break verification, while any change to a
judged value, a limit, a run's source file hash, its samples or the analysis
settings does.

Left out of the evidence: the explanatory texts of the verdicts (they may be
reworded), the trend across the revision's ancestors (context that grows as
ancestors get new runs) and the free-text descriptions of the axis and of the
revisions (editable notes, not measurements). Everything else is in.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from logbook.acceptance.rules import Evaluation

REPORT_FORMAT = "logbook-acceptance-report/1"


@dataclass(frozen=True)
class RevisionInfo:
    """One revision of the lineage. ``date`` is an ISO date or None."""

    label: str
    date: str | None
    change_category: str
    change_summary: str


@dataclass(frozen=True)
class RunRecord:
    """A judged run and where its data came from. ``taken_at`` is ISO 8601."""

    label: str
    taken_at: str
    test_kind: str
    operator: str
    source_name: str
    source_sha256: str
    supply_voltage_v: float | None = None
    load: str | None = None
    temperature_c: float | None = None
    notes: str = ""

    def conditions(self) -> str:
        """Bench conditions in one line, e.g. "24 V, 0.50 kg, 22.5 °C"."""
        parts = []
        if self.supply_voltage_v is not None:
            parts.append(f"{self.supply_voltage_v:g} V")
        if self.load:
            parts.append(self.load)
        if self.temperature_c is not None:
            parts.append(f"{self.temperature_c:g} °C")
        return ", ".join(parts)


@dataclass(frozen=True)
class StepMarks:
    """Figures of the plotted step (seconds from the step; levels in feedback units).

    ``rise_low``/``rise_high``/``band`` are the analysis settings' fractions, so the
    plot labels say which rise interval and settling band were used.
    """

    t_step_s: float
    initial: float | None
    final: float | None
    amplitude: float | None
    rise_start_s: float | None
    rise_time_s: float | None
    peak_time_s: float | None
    overshoot_pct: float | None
    settling_time_s: float | None
    rise_low: float
    rise_high: float
    band: float

    @classmethod
    def from_values(
        cls, values: Mapping[str, float | None], *, rise_low: float, rise_high: float, band: float
    ) -> StepMarks:
        """Marks from a step's figures by catalogue name (``StepAnalysis.to_json()``)."""
        t_step = values.get("t_step_s")
        if t_step is None:
            raise ValueError("a step plot needs the step time t_step_s")
        return cls(
            t_step_s=t_step,
            initial=values.get("initial"),
            final=values.get("final"),
            amplitude=values.get("amplitude"),
            rise_start_s=values.get("rise_start_s"),
            rise_time_s=values.get("rise_time_s"),
            peak_time_s=values.get("peak_time_s"),
            overshoot_pct=values.get("overshoot_pct"),
            settling_time_s=values.get("settling_time_s"),
            rise_low=rise_low,
            rise_high=rise_high,
            band=band,
        )


@dataclass(frozen=True)
class StepPlot:
    """Samples of one run around its first step, with that step's figures."""

    run_label: str
    time: tuple[float, ...]
    setpoint: tuple[float, ...]
    feedback: tuple[float, ...]
    unit: str
    marks: StepMarks

    def samples_sha256(self) -> str:
        """SHA-256 of the samples as little-endian float64 (time, setpoint, feedback)."""
        digest = hashlib.sha256()
        for column in (self.time, self.setpoint, self.feedback):
            values = np.asarray(column, dtype="<f8")
            digest.update(len(values).to_bytes(8, "little"))
            digest.update(values.tobytes())
        return digest.hexdigest()


@dataclass(frozen=True)
class TrendPoint:
    """The judged statistic of one revision (None when it has no usable runs)."""

    revision: str
    value: float | None
    n_runs: int


@dataclass(frozen=True)
class MetricTrend:
    """One judged metric across the lineage, the root first and the reported revision last."""

    metric: str
    unit: str
    points: tuple[TrendPoint, ...]


@dataclass(frozen=True)
class ReportData:
    """Everything an acceptance report shows. The spec is ``evaluation.spec``."""

    axis: str
    axis_description: str
    revision: str
    lineage: tuple[RevisionInfo, ...]
    gain_set: str
    gains: Mapping[str, Any]
    evaluation: Evaluation
    runs: tuple[RunRecord, ...]
    plots: tuple[StepPlot, ...]
    trends: tuple[MetricTrend, ...]
    analysis_version: str
    analysis_settings: Mapping[str, Any]
    software_version: str
    issued_at: str
    issued_by: str


def evidence(data: ReportData) -> dict[str, Any]:
    """The canonical evidence of ``data``: what :func:`content_hash` covers."""
    return _finite(
        {
            "axis": data.axis,
            "revision": data.revision,
            "lineage": [r.label for r in data.lineage],
            "gain_set": data.gain_set,
            "gains": dict(data.gains),
            "evaluation": _judgement(data.evaluation),
            "runs": [
                {
                    "label": r.label,
                    "taken_at": r.taken_at,
                    "test_kind": r.test_kind,
                    "operator": r.operator,
                    "source_name": r.source_name,
                    "source_sha256": r.source_sha256,
                    "supply_voltage_v": r.supply_voltage_v,
                    "load": r.load,
                    "temperature_c": r.temperature_c,
                    "notes": r.notes,
                }
                for r in data.runs
            ],
            "plots": [
                {
                    "run_label": p.run_label,
                    "unit": p.unit,
                    "samples_sha256": p.samples_sha256(),
                    "marks": vars(p.marks).copy(),
                }
                for p in data.plots
            ],
            "analysis_version": data.analysis_version,
            "analysis_settings": dict(data.analysis_settings),
            "software_version": data.software_version,
            "issued_at": data.issued_at,
            "issued_by": data.issued_by,
        }
    )


def canonical_json(payload: Any) -> str:
    """Sorted keys, no spaces, UTF-8 text, NaN refused: one text per value."""
    return json.dumps(
        payload, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
    )


def hash_evidence(payload: Mapping[str, Any]) -> str:
    """SHA-256 (hex) of the canonical JSON of an evidence mapping."""
    return hashlib.sha256(canonical_json(payload).encode("utf-8")).hexdigest()


def content_hash(data: ReportData) -> str:
    """The report's content hash: SHA-256 over its canonical :func:`evidence`."""
    return hash_evidence(evidence(data))


def _judgement(evaluation: Evaluation) -> dict[str, Any]:
    """The evaluation without its explanatory texts, which may be reworded freely."""
    payload = evaluation.to_dict()
    payload["metrics"] = [{k: v for k, v in m.items() if k != "reason"} for m in payload["metrics"]]
    return payload


def _finite(value: Any) -> Any:
    """Plain JSON types throughout; non-finite floats become None (JSON has no NaN)."""
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, Mapping):
        return {str(k): _finite(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_finite(v) for v in value]
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value
