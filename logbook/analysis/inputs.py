"""Checks that turn unusable arrays into an InputError naming the channel and sample."""

from __future__ import annotations

import math

import numpy as np

from logbook.errors import InputError

#: Fewest samples a trace may have (a step needs a before, an at and an after).
MIN_SAMPLES = 3


def samples(values: object, name: str, *, length: int | None = None) -> np.ndarray:
    """``values`` as a 1-D float64 array without NaN or infinity."""
    array = _one_dimensional(values, name)
    if length is not None and len(array) != length:
        raise InputError(f"has {len(array)} samples, the time axis {length}", column=name)
    if math.isfinite(array.sum()):  # one pass; NaN and infinity make the sum non-finite
        return array
    bad = ~np.isfinite(array)
    if bad.any():
        i = int(bad.argmax())
        raise InputError(
            f"{'NaN' if np.isnan(array[i]) else 'infinite value'} at sample {i}", column=name
        )
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


def _one_dimensional(values: object, name: str) -> np.ndarray:
    """``values`` as a 1-D float64 array (no copy when it already is one)."""
    try:
        array = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InputError(f"not numbers ({exc})", column=name) from exc
    if array.ndim != 1:
        raise InputError(f"must be one-dimensional, got shape {array.shape}", column=name)
    return array
