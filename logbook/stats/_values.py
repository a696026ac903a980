"""Turning caller input into clean float arrays, loudly rejecting what cannot be used."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from logbook.errors import InputError


def finite_array(values: Sequence[float] | np.ndarray, *, what: str) -> np.ndarray:
    """``values`` as a 1-D float64 array; NaN or infinity raise :class:`InputError`.

    Missing figures must be dropped by the caller on purpose (a figure that could
    not be computed is not a sample), so a NaN here is a mistake, not a value.
    """
    array = np.asarray(values, dtype=float)
    if array.ndim != 1:
        raise InputError(f"{what}: expected a flat list of numbers, got shape {array.shape}")
    bad = np.flatnonzero(~np.isfinite(array))
    if bad.size:
        raise InputError(
            f"{what}: value {float(array[bad[0]])} at position {int(bad[0])} is not a finite number"
        )
    return array
