"""Unanalysable input raises InputError naming the channel (and sample), no file."""

from __future__ import annotations

import numpy as np
import pytest

from logbook.analysis import analyze_arrays, analyze_trace
from logbook.errors import InputError
from logbook.trace import Channel, Role, Trace

T = [0.0, 0.1, 0.2, 0.3]
SP = [0.0, 1.0, 1.0, 1.0]
FB = [0.0, 0.5, 0.9, 1.0]
NAN = float("nan")
INF = float("inf")


@pytest.mark.parametrize(
    ("time", "setpoint", "feedback", "effort", "match"),
    [
        ([], [], [], None, "only 0 samples; at least 3 are needed"),
        ([0.0], [0.0], [0.0], None, "only 1 samples; at least 3 are needed"),
        ([0.0, 0.1], [0.0, 1.0], [0.0, 1.0], None, "only 2 samples"),
        (T, [1.0] * 4, FB, None, "no step: the setpoint never changes"),
        (T, SP, [0.5] * 4, None, "constant feedback"),
        (T, SP, [0.0, NAN, 0.9, 1.0], None, "NaN at sample 1"),
        (T, [0.0, 1.0, NAN, 1.0], FB, None, "NaN at sample 2"),
        (T, SP, FB, [0.0, 1.0, float("inf"), 0.0], "infinite value at sample 2"),
        # The setpoint is checked at its change points: a run of infinities is found
        # at its first sample, and so is a bad first sample.
        (T, [0.0, INF, INF, INF], FB, None, "column 'setpoint': infinite value at sample 1"),
        (T, [-INF, 1.0, 1.0, 1.0], FB, None, "column 'setpoint': infinite value at sample 0"),
        (T, [NAN, NAN, 1.0, 1.0], FB, None, "column 'setpoint': NaN at sample 0"),
        (T, SP, [0.0, 0.5, -INF, 1.0], None, "column 'feedback': infinite value at sample 2"),
        (T, SP, [INF, INF, INF, INF], None, "column 'feedback': infinite value at sample 0"),
        ([0.0, 0.1, 0.05, 0.3], SP, FB, None, r"time goes backwards at sample 2"),
        ([0.0, 0.1, 0.1, 0.3], SP, FB, None, "duplicate timestamp at sample 2"),
        (T, SP, FB[:3], None, "has 3 samples, the time axis 4"),
        (T, SP, ["a", "b", "c", "d"], None, "not numbers"),
        (T, SP, [FB, FB], None, "one-dimensional"),
    ],
)
def test_bad_arrays(time, setpoint, feedback, effort, match):
    with pytest.raises(InputError, match=match) as caught:
        analyze_arrays(time, setpoint, feedback, effort)
    assert caught.value.file is None  # callers add the file with .located(path)


def test_error_names_the_channel_of_a_trace():
    trace = Trace(
        (
            Channel("t [s]", Role.TIME, "s", np.array(T)),
            Channel("target [mm]", Role.SETPOINT, "mm", np.array([2.0] * 4)),
            Channel("position [mm]", Role.FEEDBACK, "mm", np.array(FB)),
        )
    )
    with pytest.raises(InputError, match="no step") as caught:
        analyze_trace(trace)
    assert caught.value.column == "target [mm]"
    assert str(caught.value.located("run.csv")).startswith("run.csv, column 'target [mm]': ")


def test_trace_without_feedback():
    trace = Trace(
        (
            Channel("t", Role.TIME, "s", np.array(T)),
            Channel("sp", Role.SETPOINT, "mm", np.array(SP)),
        )
    )
    with pytest.raises(InputError, match="the trace has no feedback channel"):
        analyze_trace(trace)
