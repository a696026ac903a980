"""Analysis settings and version: recorded beside every stored figure.

Bump :data:`ANALYSIS_VERSION` whenever a change to the analysis code could change
any figure computed with the same settings; stored results keep the version they
were computed with, so old and new numbers are never confused.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import asdict, dataclass

ANALYSIS_VERSION = "1.1.0"


@dataclass(frozen=True)
class AnalysisSettings:
    """How step-response figures are computed. Defaults follow common practice.

    rise_low, rise_high: rise-time reference levels as fractions of the amplitude.
    band: settling band as a fraction of |amplitude| (0.02 is the usual 2 % band).
    level_estimator: name of the documented estimator of the initial and final
        levels (see ``logbook.analysis.levels``).
    hunting_fraction: sustained peak-to-peak oscillation in the settled part is
        flagged as hunting when it exceeds this fraction of the settling band's
        full width (2·band·|amplitude|).
    saturation_fraction: effort within this fraction of its observed extreme
        counts as "at the output limit" when no explicit limit is given.
    effort_limit: the controller output limit, when known; None means infer it.
    step_tolerance: setpoint changes between consecutive samples no larger than
        this fraction of the setpoint's full range are float noise, not steps.
    level_window: the initial and final levels are medians over the last
        ``level_window`` of their interval's duration.
    hunting_min_cycles: an oscillation counts as sustained only when at least
        this many periods fit in the settled part.
    hunting_min_share: ... and when its spectral peak holds at least this share of
        the settled part's variance (noise spreads over all frequencies).
    saturation_min_samples: a saturated interval lasts at least this many
        consecutive samples at the limit (shorter touches are ignored).
    fit_max_samples: the second-order fit uses at most this many samples of the
        fit window (an even stride), which bounds its cost on long traces.
    """

    rise_low: float = 0.10
    rise_high: float = 0.90
    band: float = 0.02
    level_estimator: str = "tail-median"
    hunting_fraction: float = 0.5
    saturation_fraction: float = 0.005
    effort_limit: float | None = None
    step_tolerance: float = 1e-6
    level_window: float = 0.1
    hunting_min_cycles: float = 3.0
    hunting_min_share: float = 0.5
    saturation_min_samples: int = 3
    fit_max_samples: int = 500

    def __post_init__(self) -> None:
        if not 0.0 <= self.rise_low < self.rise_high <= 1.0:
            raise ValueError(
                "rise limits must satisfy 0 <= low < high <= 1, "
                f"got {self.rise_low}-{self.rise_high}"
            )
        if not 0.0 < self.band < 1.0:
            raise ValueError(f"settling band must be between 0 and 1, got {self.band}")
        if self.level_estimator != "tail-median":
            raise ValueError(
                f"unknown level estimator {self.level_estimator!r}; the only one is 'tail-median'"
            )
        if not 0.0 < self.level_window <= 0.5:
            raise ValueError(f"level window must be in (0, 0.5], got {self.level_window}")
        if not 0.0 <= self.step_tolerance < 1.0:
            raise ValueError(f"step tolerance must be in [0, 1), got {self.step_tolerance}")
        if self.hunting_fraction <= 0.0 or self.hunting_min_cycles <= 0.0:
            raise ValueError("hunting fraction and minimum cycles must be positive")
        if not 0.0 < self.hunting_min_share <= 1.0:
            raise ValueError(f"hunting share must be in (0, 1], got {self.hunting_min_share}")
        if not 0.0 <= self.saturation_fraction < 1.0:
            raise ValueError(
                f"saturation fraction must be in [0, 1), got {self.saturation_fraction}"
            )
        if self.effort_limit is not None and self.effort_limit <= 0.0:
            raise ValueError(f"effort limit must be positive, got {self.effort_limit}")
        if self.saturation_min_samples < 2 or self.fit_max_samples < 10:
            raise ValueError("saturation_min_samples must be >= 2 and fit_max_samples >= 10")

    def to_dict(self) -> dict[str, object]:
        """The settings plus the analysis version, as stored with each result."""
        return {**asdict(self), "analysis_version": ANALYSIS_VERSION}

    def content_hash(self) -> str:
        """A stable hash of :meth:`to_dict`, used to find identical settings rows."""
        canonical = json.dumps(self.to_dict(), sort_keys=True, separators=(",", ":"))
        return hashlib.sha256(canonical.encode()).hexdigest()
