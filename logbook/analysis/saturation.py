"""Saturation of the controller output and the overshoot that integral windup causes.

The output limit is ``effort_limit`` when given, else the largest |effort| in the
trace. A sample is *at the limit* when |effort| >= limit * (1 - saturation_fraction);
a *saturated interval* is a run of at least ``min_samples`` consecutive samples at
the limit (a single touch is a peak, not saturation). Per step:

* saturation_time_s: the summed duration (first to last sample) of the step's
  saturated intervals;
* windup_overshoot_pct: the overshoot beyond final, as % of |A|, in the part of
  the segment after the first saturated interval ends;
* windup_flag: 1 when a saturated interval is followed by overshoot that leaves
  the settling band (windup_overshoot_pct > 100 * band), the usual signature of an
  integrator that kept charging while the output could not follow; else 0.
"""

from __future__ import annotations

import numpy as np

from logbook.analysis.results import Figure

NAMES = ("saturation_time_s", "windup_overshoot_pct", "windup_flag")


def output_limit(effort: np.ndarray, *, effort_limit: float | None) -> float | None:
    """The limit the effort saturates at: the given one, else max |effort| (None if 0)."""
    if effort_limit is not None:
        return effort_limit
    peak = float(np.abs(effort).max())
    return peak if peak > 0.0 else None


def saturation_figures(
    time: np.ndarray,
    feedback: np.ndarray,
    effort: np.ndarray,
    start: int,
    end: int,
    *,
    limit: float,
    final: float,
    amplitude: float,
    band: float,
    fraction: float,
    min_samples: int,
) -> dict[str, Figure]:
    """Saturation and windup figures of samples ``start:end`` (see the module doc)."""
    padded = np.zeros(end - start + 2, dtype=np.int8)  # 1 at the limit, 0 around it
    np.greater_equal(np.abs(effort[start:end]), limit * (1.0 - fraction), out=padded[1:-1])
    edges = np.flatnonzero(np.diff(padded))  # alternately a run's start and its end
    run_starts, run_ends = edges[0::2], edges[1::2]  # ends exclusive
    keep = run_ends - run_starts >= min_samples
    run_starts, run_ends = run_starts[keep] + start, run_ends[keep] + start
    if len(run_starts) == 0:
        return {
            "saturation_time_s": Figure(0.0),
            "windup_overshoot_pct": Figure(None, "the effort never stays at its limit"),
            "windup_flag": Figure(0.0),
        }
    held = float(np.sum(time[run_ends - 1] - time[run_starts]))
    after = feedback[run_ends[0] : end]
    if len(after) == 0 or amplitude == 0.0:
        reason = (
            "the effort is saturated until the segment ends"
            if len(after) == 0
            else "no response: the final level equals the initial level"
        )
        return {
            "saturation_time_s": Figure(held),
            "windup_overshoot_pct": Figure(None, reason),
            "windup_flag": Figure(None, reason),
        }
    overshoot = max(0.0, float(np.max((after - final) * (1.0 / amplitude)))) * 100.0
    return {
        "saturation_time_s": Figure(held),
        "windup_overshoot_pct": Figure(overshoot),
        "windup_flag": Figure(1.0 if overshoot > 100.0 * band else 0.0),
    }
