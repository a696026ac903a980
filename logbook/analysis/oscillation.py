"""Hunting (a sustained oscillation or limit cycle) in the settled part of a step.

The settled part is the last half of the segment, or less when the step settles
after the segment's midpoint (from the settling instant on). Starting no earlier
than the midpoint keeps the decaying tail of the transient, which may swing across
the whole band just after settling, out of the figures. In it:

* hunting_pp is the peak-to-peak of the feedback (max - min; includes noise);
* hunting_freq_hz is the dominant frequency: the settled part is resampled on a
  uniform grid about as fine as its median sample interval (linear interpolation;
  a point count the FFT handles fast), its straight-line trend removed, a Hann
  window applied, and the peak of the power spectrum located to a fraction of a
  bin by parabolic interpolation of the log magnitude.
  It is reported only for a *sustained* oscillation: at least ``min_cycles``
  periods fit in the settled part and the spectral peak (+-2 bins) holds at least
  ``min_share`` of the variance; broadband noise and quantisation flicker hold
  only a few bins' worth and are not hunting;
* hunting_flag is 1 when there is a sustained oscillation whose peak-to-peak
  exceeds ``fraction`` of the settling band's full width (2*band*|A|), else 0.
"""

from __future__ import annotations

import functools

import numpy as np

from logbook.analysis.levels import median
from logbook.analysis.results import Figure

#: Fewest samples in the settled part for a spectrum worth reading.
MIN_SAMPLES = 16
_PEAK_BINS = 2  # half-width of the Hann window's main lobe, in bins


def hunting_figures(
    time: np.ndarray,
    values: np.ndarray,
    *,
    band_width: float,
    fraction: float,
    min_cycles: float,
    min_share: float,
) -> dict[str, Figure]:
    """Hunting figures of the settled part ``time``/``values`` (see the module doc).

    band_width: full width of the settling band (2*band*|A|), in feedback units.
    """
    if len(values) < MIN_SAMPLES:
        reason = f"settled part too short ({len(values)} samples, {MIN_SAMPLES} needed)"
        return {
            name: Figure(None, reason) for name in ("hunting_pp", "hunting_freq_hz", "hunting_flag")
        }
    pp = float(values.max() - values.min())
    frequency, share, duration = _dominant_frequency(time, values)
    limit = fraction * band_width
    if frequency is None:
        freq = Figure(None, "no variation in the settled part")
    elif frequency * duration < min_cycles:
        freq = Figure(
            None, f"no sustained oscillation: fewer than {min_cycles:g} periods in the settled part"
        )
    elif share < min_share:
        freq = Figure(
            None,
            f"no sustained oscillation: the spectral peak holds "
            f"{100 * share:.0f} % of the variance (noise)",
        )
    else:
        freq = Figure(frequency)
    hunting = freq.value is not None and pp > limit
    return {
        "hunting_pp": Figure(pp),
        "hunting_freq_hz": freq,
        "hunting_flag": Figure(
            1.0 if hunting else 0.0, f"limit {limit:.6g} (peak-to-peak of a sustained oscillation)"
        ),
    }


def _dominant_frequency(time: np.ndarray, values: np.ndarray) -> tuple[float | None, float, float]:
    """(peak frequency in Hz or None, its share of the variance, grid duration in s)."""
    dt = median(time[1:] - time[:-1])
    n = _fast_length(int((time[-1] - time[0]) / dt) + 1)
    dt = float(time[-1] - time[0]) / (n - 1)
    grid = time[0] + dt * np.arange(n)
    y = np.interp(grid, time, values)
    x = grid - grid.mean()
    y = y - y.mean()
    y -= x * ((x * y).sum() / (x * x).sum())  # no BLAS dot: see metrics._trapezoid
    power = np.abs(np.fft.rfft(y * hann_window(n))) ** 2
    power[0] = 0.0
    total = float(power.sum())
    duration = n * dt
    if total == 0.0 or len(power) < 3:
        return None, 0.0, duration
    k = int(np.argmax(power))
    share = float(power[max(k - _PEAK_BINS, 1) : k + _PEAK_BINS + 1].sum()) / total
    offset = 0.0
    if 1 <= k - 1 and k + 1 < len(power) and power[k - 1] > 0.0 and power[k + 1] > 0.0:
        a, b, c = np.log(power[k - 1 : k + 2])
        offset = 0.5 * (a - c) / (a - 2.0 * b + c)
    return (k + offset) / duration, share, duration


@functools.lru_cache(maxsize=8)
def hann_window(n: int) -> np.ndarray:
    """``np.hanning(n)`` (n >= 2), the same numbers at half the cost: the window is
    symmetric, so only its first half is computed and then mirrored. Kept for the
    last few lengths (read-only), as a batch's captures are mostly alike."""
    first = np.arange(1.0 - n, 1.0, 2.0)[: (n + 1) // 2]  # numpy's k <= 0
    first = 0.5 + 0.5 * np.cos(np.pi * first / (n - 1.0))
    window = np.empty(n)
    window[: len(first)] = first
    window[n - len(first) :] = first[::-1]
    window.flags.writeable = False
    return window


@functools.lru_cache(maxsize=64)
def _fast_length(n: int) -> int:
    """The smallest 2^a * 3^b * 5^c >= n: lengths the FFT transforms quickly."""
    best = 1 << max(0, (n - 1).bit_length())
    power5 = 1
    while power5 < best:
        power35 = power5
        while power35 < best:
            candidate = power35 << max(0, (-(-n // power35) - 1).bit_length())
            best = min(best, candidate)
            power35 *= 3
        power5 *= 5
    return best
