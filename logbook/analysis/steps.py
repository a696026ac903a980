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
    starts = (setpoint[1:] != setpoint[:-1]).nonzero()[0] + 1
    if len(starts) == 0:
        return ()
    after = setpoint[starts].tolist()
    before = setpoint[starts - 1].tolist()
    first = setpoint.item(0)
    span = max(first, *after) - min(first, *after)  # every value the setpoint takes
    kept = [(s, b, a) for s, b, a in zip(starts.tolist(), before, after, strict=True)
            if abs(a - b) > tolerance * span]
    ends = [s for s, _, _ in kept[1:]] + [len(setpoint)]
    return tuple(Step(s, e, b, a) for (s, b, a), e in zip(kept, ends, strict=True))
