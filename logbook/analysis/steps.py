"""Step detection: where the setpoint jumps, and the segment each step owns.

A step is a change of the setpoint between two consecutive samples larger than a
small tolerance (float noise in a logged command is not a step). Its segment runs
from the first sample carrying the new value to the sample before the next step,
or to the end of the trace. Steps may go up or down; a file may hold many.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class Step:
    """One setpoint step and the sample range of its segment."""

    start: int  # index of the first sample carrying the new setpoint (>= 1)
    end: int  # one past the last sample of the segment
    before: float  # setpoint on the sample before ``start``
    after: float  # setpoint on sample ``start``


def find_steps(setpoint: np.ndarray, *, tolerance: float = 1e-6) -> tuple[Step, ...]:
    """Every step of ``setpoint``, in time order.

    tolerance: a change counts as a step when it exceeds this fraction of the
        setpoint's full range (max - min); the default only ignores float noise.
    """
    span = float(setpoint.max() - setpoint.min())
    if span == 0.0:
        return ()
    starts = np.flatnonzero(np.abs(np.diff(setpoint)) > tolerance * span) + 1
    ends = np.append(starts[1:], len(setpoint))
    return tuple(
        Step(int(s), int(e), float(setpoint[s - 1]), float(setpoint[s]))
        for s, e in zip(starts, ends, strict=True)
    )
