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

from logbook.analysis.results import Figure
from logbook.analysis.settings import AnalysisSettings
from logbook.analysis.steps import Step

#: First chunk of the forward search for a crossing (chunks grow fourfold).
FIRST_CHUNK = 256
#: Figures that are relative to the amplitude, undefined when the feedback does not move.
RELATIVE = (
    "rise_start_s",
    "rise_time_s",
    "delay_time_s",
    "peak_time_s",
    "overshoot_pct",
    "undershoot_pct",
    "settling_time_s",
)


def step_figures(
    time: np.ndarray,
    feedback: np.ndarray,
    step: Step,
    initial: float,
    final: float,
    *,
    final_window: int,
    settings: AnalysisSettings,
) -> dict[str, Figure]:
    """Levels, timing and overshoot figures of one step (see the module docstring).

    final_window: index of the first sample of the window ``final`` was taken over
        (:func:`~logbook.analysis.levels.tail_start`)."""
    t_step = time.item(step.start)
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
    # The segment with the pre-step sample at position 0 (views, no copies).
    t = time[step.start - 1 : step.end]
    y = feedback[step.start - 1 : step.end]
    rising = amplitude > 0.0

    # A level further along the step is first reached no earlier than a nearer one,
    # so each search starts where the one for the nearest level short of it ended.
    low, high = settings.rise_low, settings.rise_high
    level_low, level_half = initial + low * amplitude, initial + 0.5 * amplitude
    level_high = initial + high * amplitude
    k_low = _first(y, level_low, rising, begin=1)
    k_half = _first(y, level_half, rising, begin=k_low if low <= 0.5 else 1)
    k_high = _first(y, level_high, rising, begin=k_half if low <= 0.5 <= high else k_low)
    t_low = _crossing(t, y, k_low, level_low, rising)
    t_half = _crossing(t, y, k_half, level_half, rising)
    t_high = _crossing(t, y, k_high, level_high, rising)
    figures["rise_start_s"] = (
        Figure(max(0.0, t_low - t_step))
        if t_low is not None
        else Figure(None, f"never reaches {100 * low:g} % of the step")
    )
    figures["delay_time_s"] = (
        Figure(max(0.0, t_half - t_step))
        if t_half is not None
        else Figure(None, "never reaches 50 % of the step")
    )
    figures["rise_time_s"] = (
        Figure(t_high - t_low)
        if t_low is not None and t_high is not None
        else Figure(None, f"never reaches {100 * high:g} % of the step")
    )

    body = y[1:]
    k_peak = 1 + int(body.argmax() if rising else body.argmin())
    beyond = (y.item(k_peak) - final) / amplitude
    figures["overshoot_pct"] = Figure(max(0.0, beyond) * 100.0)
    figures["peak_time_s"] = (
        Figure(t.item(k_peak) - t_step)
        if beyond > 0.0
        else Figure(None, "no overshoot: the response never passes the final level")
    )
    # Samples 1 .. k_half - 1 are short of the 50 % level (sample k_half is the first
    # at or beyond it, so it cannot be the largest excursion against the step).
    before_half = y[1 : max(len(y) if k_half is None else k_half, 2)]
    against = (before_half.min() if rising else before_half.max()).item()
    figures["undershoot_pct"] = Figure(max(0.0, (initial - against) / amplitude) * 100.0)
    figures["settling_time_s"] = _settling(
        t,
        y,
        t_step,
        final,
        settings.band * abs(amplitude),
        window=final_window - (step.start - 1),
        band_pct=100 * settings.band,
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
    # A product and a sum, not np.dot: with this machine's OpenBLAS settings a BLAS
    # dot product of a long vector costs milliseconds.
    return float(0.5 * ((values[1:] + values[:-1]) * dt).sum())


def _crossing(
    t: np.ndarray, y: np.ndarray, k: int | None, level: float, rising: bool
) -> float | None:
    """Interpolated time at which ``y`` reaches ``level`` (above it when ``rising``)
    on the way to sample k, the first of ``y[1:]`` at or beyond it (None: never);
    never earlier than t_step = t[1]."""
    if k is None:
        return None
    before = y.item(k - 1)
    if (before >= level) if rising else (before <= level):
        return t.item(k)  # already beyond it before the step: report t_step
    return max(t.item(1), _interpolate(t, y, k, level))


def _first(y: np.ndarray, level: float, rising: bool, *, begin: int | None) -> int | None:
    """Index of the first sample of ``y[begin:]`` at or beyond ``level`` (None when
    ``begin`` is None or there is none). Searched in growing chunks, since
    crossings come early in a segment."""
    if begin is None:
        return None
    size = FIRST_CHUNK
    while begin < len(y):
        chunk = y[begin : begin + size]
        hits = chunk >= level if rising else chunk <= level
        k = int(hits.argmax())
        if hits.item(k):
            return begin + k
        begin += size
        size *= 4
    return None


def _interpolate(t: np.ndarray, y: np.ndarray, k: int, level: float) -> float:
    """Time at which the straight line from sample k-1 to sample k reaches ``level``."""
    y0, t0 = y.item(k - 1), t.item(k - 1)
    return t0 + (level - y0) / (y.item(k) - y0) * (t.item(k) - t0)


def _settling(
    t: np.ndarray,
    y: np.ndarray,
    t_step: float,
    final: float,
    half_width: float,
    *,
    window: int,
    band_pct: float,
    window_pct: float,
) -> Figure:
    """Settling time in segment ``t``/``y``, whose final-level window starts at
    ``window``."""
    j = _last_outside(y, final, half_width)
    if j is None:  # inside the band from before the step on
        return Figure(0.0)
    if j == len(y) - 1:
        return Figure(None, f"never settles: outside the ±{band_pct:g} % band at the end")
    if j >= window:
        return Figure(
            None,
            f"not settled: leaves the ±{band_pct:g} % band within the last "
            f"{window_pct:g} % of the segment, where the final level is taken",
        )
    edge = final + half_width if y.item(j) > final else final - half_width
    return Figure(max(0.0, _interpolate(t, y, j + 1, edge) - t_step))


def _last_outside(y: np.ndarray, final: float, half_width: float) -> int | None:
    """Index of the last sample with |y - final| > half_width, or None."""
    # The indices rather than a backward argmax: numpy's argmax over a reversed
    # array is several times slower than listing the outside samples of a response.
    outside = np.flatnonzero((y > final + half_width) | (y < final - half_width))
    return outside.item(-1) if len(outside) else None
