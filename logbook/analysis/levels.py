"""The level estimator: where the feedback sits before a step and where it settles.

Rule ("tail-median"): the level of an interval of samples is the **median of the
samples in the last ``window`` fraction of the interval's duration** (by time, so
non-uniform sampling does not tilt it; default window 10 %, at least one sample).

Why this rule:

* the end of an interval is where the response is most settled, so the level is
  what the axis actually reached before the next command;
* the median has a 50 % breakdown point: spikes, a dropped sample or a residual
  oscillation that is symmetric about the level do not move it, and for Gaussian
  noise of standard deviation s over N samples its standard error is about
  1.25 s / sqrt(N), close to the mean's;
* with encoder quantisation the samples are whole counts; the median is then a
  count (or the midpoint of two), so it is never more than half a count from the
  truth when the signal rests between counts: the resolution of the data itself.

A segment must be long enough for the response to settle inside it; the figures
are relative to the level reached at the end of the segment.
"""

from __future__ import annotations

import numpy as np


def tail_start(time: np.ndarray, start: int, end: int, *, window: float) -> int:
    """Index of the first sample of the last ``window`` fraction of samples
    ``start:end`` by time (always leaves at least the last sample)."""
    t_last = time.item(end - 1)
    cut = t_last - window * (t_last - time.item(start))
    return start + int(time[start:end].searchsorted(cut, side="left"))


def tail_median(
    time: np.ndarray, values: np.ndarray, start: int, end: int, *, window: float
) -> float:
    """The level of samples ``start:end``: the median of their last ``window`` by time."""
    return median(values[tail_start(time, start, end, window=window) : end])


def median(values: np.ndarray) -> float:
    """The median (mean of the two middle values for an even count): the same number
    as ``np.median`` without its per-call overhead. By sorting rather than
    selection: numpy's vectorised sort is as fast on noisy samples and many times
    faster on the few-valued data bench traces are full of (encoder counts, sample
    intervals), where selection slows down."""
    ordered = np.sort(values)
    half = len(ordered) // 2
    if len(ordered) % 2:
        return ordered.item(half)
    return 0.5 * (ordered.item(half - 1) + ordered.item(half))
