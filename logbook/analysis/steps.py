"""Step detection: where the setpoint jumps, and the segment each step owns.

A step is a change of the setpoint between two consecutive samples larger than a
small tolerance (float noise in a logged command is not a step). Its segment runs
from the first sample carrying the new value to the sample before the next step,
or to the end of the trace. Steps may go up or down; a file may hold many.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np


class Step(NamedTuple):
    """One setpoint step and the sample range of its segment."""

    start: int  # index of the first sample carrying the new setpoint (>= 1)
    end: int  # one past the last sample of the segment
    before: float  # setpoint on the sample before ``start``
    after: float  # setpoint on sample ``start``


def change_points(setpoint: np.ndarray) -> np.ndarray:
    """Indices i >= 1 with setpoint[i] != setpoint[i - 1], however small the change
    (a NaN sample is always one: NaN equals nothing)."""
    return (setpoint[1:] != setpoint[:-1]).nonzero()[0] + 1


def find_steps(
    setpoint: np.ndarray, *, tolerance: float = 1e-6, changes: np.ndarray | None = None
) -> tuple[Step, ...]:
    """Every step of ``setpoint``, in time order.

    tolerance: a change counts as a step when it exceeds this fraction of the
        setpoint's full range (max - min); the default only ignores float noise.
    changes: the :func:`change_points` of ``setpoint``, when the caller has them.
    """
    starts = change_points(setpoint) if changes is None else changes
    if len(starts) == 0:
        return ()
    at = starts.tolist()
    after = setpoint[starts].tolist()
    first = setpoint.item(0)
    before = [first, *after[:-1]]  # the setpoint holds each value until the next change
    low, high = min(first, *after), max(first, *after)  # the full range
    threshold = tolerance * (high - low)
    if not math.isfinite(threshold):  # the range overflows: scale before subtracting
        threshold = tolerance * high - tolerance * low
    kept = [i for i in range(len(at)) if abs(after[i] - before[i]) > threshold]
    if not kept:
        return ()
    ends = [at[i] for i in kept[1:]] + [len(setpoint)]
    return tuple([Step(at[i], end, before[i], after[i]) for i, end in zip(kept, ends, strict=True)])
