"""Per-step transient figures: rise, delay, peak, overshoot, undershoot, settling,
steady-state error and the error integrals.

Definitions (amplitude A = final - initial, t_step = time of the first sample
carrying the new setpoint; the step's direction is the sign of A):

* a *crossing* of a level is the first sample at or after t_step that is at or
  beyond the level in the step's direction; its time is linearly interpolated
  between that sample and the one before it. A crossing that falls between the
  last pre-step sample and t_step is reported at t_step (0 s);
* rise_start_s, delay_time_s: from t_step to the crossings of initial + LOW*A and
  initial + A/2; rise_time_s: between the crossings of initial + LOW*A and
  initial + HIGH*A;
* overshoot_pct = max(0, extreme beyond final in the step's direction - final)
  / |A| * 100; peak_time_s = time of that extreme (first sample holding it) - t_step,
  None when no sample passes final;
* undershoot_pct: the largest excursion against the step's direction, relative to
  initial, between t_step and the 50 % crossing, as % of |A|;
* settling_time_s: from t_step to the interpolated instant after which
  |feedback - final| stays within band*|A| until the segment ends. None when the
  feedback leaves the band inside the final-level window (see ``levels``): the
  response did not settle before the segment ended, and that final is no level;
* steady_state_error = setpoint after the step - final;
* iae, ise, itae: integrals over the segment's samples of |e|, e^2 and
  (t - t_step)*|e| with e = setpoint - feedback, by the trapezoidal rule.
"""

from __future__ import annotations

import numpy as np

from logbook.analysis.levels import tail_start
from logbook.analysis.results import Figure
from logbook.analysis.settings import AnalysisSettings
from logbook.analysis.steps import Step

#: Figures that are relative to the amplitude, undefined when the feedback does not move.
RELATIVE = (
    "rise_start_s", "rise_time_s", "delay_time_s", "peak_time_s", "overshoot_pct",
    "undershoot_pct", "settling_time_s",
)


def step_figures(
    time: np.ndarray,
    feedback: np.ndarray,
    step: Step,
    initial: float,
    final: float,
    *,
    settings: AnalysisSettings,
) -> dict[str, Figure]:
    """Levels, timing and overshoot figures of one step (see the module docstring)."""
    t_step = float(time[step.start])
    amplitude = final - initial
    error = step.after - final
    figures = {
        "t_step_s": Figure(t_step),
        "setpoint_before": Figure(step.before),
        "setpoint_after": Figure(step.after),
        "initial": Figure(initial),
        "final": Figure(final),
        "amplitude": Figure(amplitude),
        "steady_state_error": Figure(error),
        "abs_steady_state_error": Figure(abs(error)),
    }
    if amplitude == 0.0:
        reason = "no response: the final level equals the initial level"
        return figures | {name: Figure(None, reason) for name in RELATIVE}
    # Progress from initial (0) to final (1), with the pre-step sample at position 0.
    t = time[step.start - 1 : step.end]
    d = feedback[step.start - 1 : step.end] - initial
    d *= 1.0 / amplitude

    t_low = _crossing(t, d, settings.rise_low)
    t_half = _crossing(t, d, 0.5)
    t_high = _crossing(t, d, settings.rise_high)
    low_pct, high_pct = 100 * settings.rise_low, 100 * settings.rise_high
    figures["rise_start_s"] = _since(t_low, t_step, f"never reaches {low_pct:g} % of the step")
    figures["delay_time_s"] = _since(t_half, t_step, "never reaches 50 % of the step")
    if t_low is None or t_high is None:
        figures["rise_time_s"] = Figure(None, f"never reaches {high_pct:g} % of the step")
    else:
        figures["rise_time_s"] = Figure(t_high - t_low)

    k_peak = int(np.argmax(d[1:])) + 1
    beyond = float(d[k_peak]) - 1.0
    figures["overshoot_pct"] = Figure(max(0.0, beyond) * 100.0)
    figures["peak_time_s"] = (
        Figure(float(t[k_peak]) - t_step) if beyond > 0.0
        else Figure(None, "no overshoot: the response never passes the final level")
    )
    k_half = len(d) if t_half is None else int(np.searchsorted(t, t_half, side="right"))
    figures["undershoot_pct"] = Figure(max(0.0, -float(d[1 : max(k_half, 2)].min())) * 100.0)
    figures["settling_time_s"] = _settling(
        t, d, t_step, settings.band,
        t_window=float(time[tail_start(time, step.start, step.end,
                                       window=settings.level_window)]),
        window_pct=100 * settings.level_window,
    )
    return figures


def error_integrals(
    time: np.ndarray, setpoint: np.ndarray, feedback: np.ndarray, step: Step
) -> dict[str, Figure]:
    """IAE, ISE and ITAE over the segment's samples (trapezoidal rule)."""
    seg = slice(step.start, step.end)
    t = time[seg]
    if len(t) < 2:
        reason = "the segment has a single sample"
        return {name: Figure(None, reason) for name in ("iae", "ise", "itae")}
    abs_error = np.abs(setpoint[seg] - feedback[seg])
    dt = np.diff(t)
    return {
        "iae": Figure(_trapezoid(abs_error, dt)),
        "ise": Figure(_trapezoid(abs_error * abs_error, dt)),
        "itae": Figure(_trapezoid((t - t[0]) * abs_error, dt)),
    }


def _trapezoid(values: np.ndarray, dt: np.ndarray) -> float:
    return float(0.5 * np.dot(values[1:] + values[:-1], dt))


def _crossing(t: np.ndarray, d: np.ndarray, level: float) -> float | None:
    """Interpolated time of the first crossing of ``level`` by ``d[1:]``, or None."""
    k = int(np.argmax(d[1:] >= level)) + 1
    if d[k] < level:
        return None
    if d[k - 1] >= level:  # already beyond it before the step: report t_step
        return float(t[k])
    return _interpolate(t, d, k, level)


def _interpolate(t: np.ndarray, d: np.ndarray, k: int, level: float) -> float:
    """Time at which the straight line from sample k-1 to sample k reaches ``level``."""
    fraction = (level - d[k - 1]) / (d[k] - d[k - 1])
    return float(t[k - 1] + fraction * (t[k] - t[k - 1]))


def _since(instant: float | None, t_step: float, reason: str) -> Figure:
    return Figure(None, reason) if instant is None else Figure(max(0.0, instant - t_step))


def _settling(
    t: np.ndarray, d: np.ndarray, t_step: float, band: float, *, t_window: float,
    window_pct: float,
) -> Figure:
    outside = np.abs(d - 1.0) > band
    j = len(d) - 1 - int(np.argmax(outside[::-1]))
    if not outside[j]:  # inside the band from before the step on
        return Figure(0.0)
    if j == len(d) - 1:
        return Figure(None, f"never settles: outside the ±{100 * band:g} % band at the end")
    if t[j] >= t_window:
        return Figure(None, f"not settled: leaves the ±{100 * band:g} % band within the last "
                            f"{window_pct:g} % of the segment, where the final level is taken")
    edge = 1.0 + band if d[j] > 1.0 else 1.0 - band
    return Figure(max(0.0, _interpolate(t, d, j + 1, edge) - t_step))
