"""Checks that turn unusable arrays into an InputError naming the channel and sample."""

from __future__ import annotations

import math

import numpy as np

from logbook.analysis.steps import change_points
from logbook.errors import InputError

#: Fewest samples a trace may have (a step needs a before, an at and an after).
MIN_SAMPLES = 3


def samples(values: object, name: str, *, length: int | None = None) -> np.ndarray:
    """``values`` as a 1-D float64 array without NaN or infinity."""
    array = _one_dimensional(values, name, length=length)
    if math.isfinite(array.sum()):  # one pass; NaN and infinity make the sum non-finite
        return array
    bad = ~np.isfinite(array)
    if bad.any():
        i = int(bad.argmax())
        raise InputError(
            f"{'NaN' if np.isnan(array[i]) else 'infinite value'} at sample {i}", column=name
        )
    return array


def setpoint_samples(values: object, name: str, *, length: int) -> tuple[np.ndarray, np.ndarray]:
    """``values`` as a 1-D float64 setpoint without NaN or infinity, with its
    :func:`~logbook.analysis.steps.change_points`.

    A setpoint holds its value between changes, so it only takes the values of its
    first sample and of its change points (every NaN is a change point, and so is
    the first of a run of infinities): checking those checks every sample, in the
    pass that finds the changes."""
    array = _one_dimensional(values, name, length=length)
    changes = change_points(array)
    if not (math.isfinite(array.item(0)) and np.isfinite(array[changes]).all()):
        samples(array, name)  # names the first bad sample
    return array, changes


def feedback_samples(values: object, name: str, *, length: int) -> np.ndarray:
    """``values`` as a 1-D float64 feedback without NaN or infinity that is not
    constant. Its minimum and maximum answer both: NaN makes them NaN, and an
    infinity is one of them."""
    array = _one_dimensional(values, name, length=length)
    low, high = array.min(), array.max()
    if not (math.isfinite(low) and math.isfinite(high)):
        samples(array, name)  # names the first bad sample
    if low == high:
        raise InputError("constant feedback: it never changes, nothing to analyse", column=name)
    return array


def time_axis(values: object, name: str, *, min_samples: int = MIN_SAMPLES) -> np.ndarray:
    """A time axis in seconds: at least ``min_samples`` samples, finite, strictly
    increasing.

    Strictly increasing between a finite first and last sample means finite
    throughout (a NaN fails every comparison), so one comparison pass checks both; a
    time axis that fails it takes the checks that name the fault."""
    time = _one_dimensional(values, name)
    if (
        len(time) >= min_samples
        and math.isfinite(time.item(0))
        and math.isfinite(time.item(-1))
        and (time[1:] > time[:-1]).all()
    ):
        return time
    time = samples(time, name)
    if len(time) < min_samples:
        raise InputError(
            f"only {len(time)} samples; at least {min_samples} are needed", column=name
        )
    not_after = time[1:] <= time[:-1]
    if not_after.any():
        i = int(not_after.argmax()) + 1
        what = "duplicate timestamp" if time[i] == time[i - 1] else "time goes backwards"
        raise InputError(f"{what} at sample {i} ({time[i]!r} after {time[i - 1]!r})", column=name)
    return time


def _one_dimensional(values: object, name: str, *, length: int | None = None) -> np.ndarray:
    """``values`` as a 1-D float64 array (no copy when it already is one), of
    ``length`` samples when given (that of the time axis)."""
    try:
        array = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InputError(f"not numbers ({exc})", column=name) from exc
    if array.ndim != 1:
        raise InputError(f"must be one-dimensional, got shape {array.shape}", column=name)
    if length is not None and len(array) != length:
        raise InputError(f"has {len(array)} samples, the time axis {length}", column=name)
    return array
