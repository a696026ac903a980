"""Velocity from sampled position or encoder counts, for speed-loop analysis.

Estimator: the mean speed over a centred window of width 2h,
``v(t) = [x(t + h) - x(t - h)] / 2h``, with x linearly interpolated between samples
(so non-uniform sampling needs no resampling); near the ends of the trace the
window is cut to the samples that exist. A position known to a resolution d
(one count for an encoder) gives a speed error of at most about d/h, whatever the
sampling rate, which is why a plain sample-to-sample difference of encoder counts
is useless at high sampling rates and a window is needed.

Default window (``window_s=None``): wide enough that this error is at most
``resolution_pct`` of the peak speed, i.e. 2h = 2d / (resolution_pct/100 * v_peak),
but never narrower than two sample intervals nor wider than 1 % of the trace
duration (so a step's transient is not smeared). d is the larger of the smallest
non-zero change between samples (the quantisation step) and the noise level
(1.4826 * MAD of the second differences / sqrt(6)); v_peak is the largest mean
speed over windows of 2 % of the trace duration.
"""

from __future__ import annotations

import numpy as np

from logbook.analysis.inputs import samples, time_axis
from logbook.analysis.levels import median
from logbook.errors import InputError

#: Widest default window, as a fraction of the trace duration.
MAX_WINDOW_FRACTION = 0.01
#: Window of the coarse peak-speed estimate, as a fraction of the trace duration.
COARSE_WINDOW_FRACTION = 0.02


def estimate_velocity(
    time: np.ndarray,
    position: np.ndarray,
    *,
    window_s: float | None = None,
    resolution_pct: float = 1.0,
) -> np.ndarray:
    """Velocity in position units (or counts) per second at every sample of ``time``.

    window_s: full window width 2h in seconds; None chooses it (module docstring).
    resolution_pct: target quantisation error of the default window, % of peak speed.
    """
    t = time_axis(time, "time", min_samples=2)
    x = samples(position, "position", length=len(t))
    if window_s is None:
        window_s = default_window(t, x, resolution_pct=resolution_pct)
    elif window_s <= 0.0:
        raise InputError(f"the velocity window must be positive, got {window_s}")
    return _windowed_difference(t, x, 0.5 * window_s)


def default_window(t: np.ndarray, x: np.ndarray, *, resolution_pct: float = 1.0) -> float:
    """The full window width 2h chosen by the rule in the module docstring."""
    if resolution_pct <= 0.0:
        raise InputError(f"resolution_pct must be positive, got {resolution_pct}")
    duration = float(t[-1] - t[0])
    shortest = 2.0 * median(np.diff(t))
    widest = max(shortest, MAX_WINDOW_FRACTION * duration)
    v_peak = float(
        np.abs(_windowed_difference(t, x, 0.5 * COARSE_WINDOW_FRACTION * duration)).max()
    )
    if v_peak == 0.0:
        return shortest
    steps = np.abs(np.diff(x))
    moving = steps[steps > 0.0]
    quantum = float(moving.min()) if len(moving) else 0.0
    second = np.diff(x, 2)
    noise = (
        1.4826 * median(np.abs(second - median(second))) / np.sqrt(6.0) if (len(second)) else 0.0
    )
    resolution = max(quantum, noise)
    return float(np.clip(2.0 * resolution / (resolution_pct / 100.0 * v_peak), shortest, widest))


def _windowed_difference(t: np.ndarray, x: np.ndarray, h: float) -> np.ndarray:
    lo = np.maximum(t - h, t[0])
    hi = np.minimum(t + h, t[-1])
    return (np.interp(hi, t, x) - np.interp(lo, t, x)) / (hi - lo)
