"""Cross-check against python-control's ``step_info`` (a test-only reference).

Where the definitions agree the figures agree within one sample period. The
differences, and why they exist:

* python-control takes its rise and settling levels as fractions of the final
  *value* (it assumes the response starts at 0); ours are fractions of the
  amplitude final - initial, so they agree only when the initial level is 0;
* python-control reports the first sample at or past each level, and the first
  sample after the last one outside the band; ours are linearly interpolated
  between samples, so each of our crossing times is earlier by less than dt;
* python-control measures times from the first sample of the array; ours from
  t_step, the first sample carrying the new setpoint (the same sample here);
* python-control analyses one step per array; we find every step of a trace.
"""

from __future__ import annotations

import control
import numpy as np
import pytest

from logbook.analysis import analyze_arrays

DT = 1e-3


def _simulate(system: control.TransferFunction, duration: float):
    """(t, y) of python-control's step response, with one pre-step sample at -dt
    so our step detection sees the setpoint change at t = 0."""
    t = np.arange(0.0, duration, DT)
    response = control.step_response(system, t)
    y = np.asarray(response.outputs, dtype=float)
    return np.concatenate(([-DT], t)), np.concatenate(([0.0], y))


def _ours(t, y, offset: float = 0.0):
    sp = np.where(t >= 0.0, 1.0 + offset, offset)
    (step,) = analyze_arrays(t, sp, y + offset).steps
    return step


#: name -> (system, simulated duration in s: at least 40 time constants of the slowest
#: pole, so the tail is at the final value 1 to within exp(-40)).
SYSTEMS = {
    "underdamped zeta 0.3": (control.tf([100.0], [1.0, 6.0, 100.0]), 14.0),
    "well damped zeta 0.7": (control.tf([400.0], [1.0, 28.0, 400.0]), 3.0),
    "first order plus lag": (control.tf([1.0], [0.02 * 0.005, 0.025, 1.0]), 1.0),
}


@pytest.mark.parametrize("name", SYSTEMS)
def test_agrees_with_step_info_within_one_sample(name):
    t, y = _simulate(*SYSTEMS[name])
    theirs = control.step_info(y[1:], t[1:], yfinal=1.0)
    ours = _ours(t, y)
    # Each interpolated crossing is at most one sample earlier than python-control's.
    assert ours.value("rise_time_s") == pytest.approx(theirs["RiseTime"], abs=DT)
    settling = ours.value("settling_time_s")
    assert theirs["SettlingTime"] - DT <= settling <= theirs["SettlingTime"] + 1e-12
    # Same extreme sample, same final value.
    assert ours.value("overshoot_pct") == pytest.approx(theirs["Overshoot"], abs=1e-6)
    if theirs["Overshoot"] > 0:
        assert ours.value("peak_time_s") == pytest.approx(theirs["PeakTime"], abs=1e-12)


def test_undershoot_of_a_non_minimum_phase_system():
    # python-control's own docstring example (-s + 1)/(s^2 + s + 1): the response
    # first dips the wrong way. Both measure the dip from 0 as % of the final value.
    t, y = _simulate(control.tf([-1.0, 1.0], [1.0, 1.0, 1.0]), 80.0)
    theirs = control.step_info(y[1:], t[1:], yfinal=1.0)
    ours = _ours(t, y)
    assert theirs["Undershoot"] > 20.0
    assert ours.value("undershoot_pct") == pytest.approx(theirs["Undershoot"], abs=1e-6)
    assert ours.value("overshoot_pct") == pytest.approx(theirs["Overshoot"], abs=1e-6)


def test_offset_start_differs_by_definition():
    # From 2 to 3: python-control's 10/90 % of the final value (0.3 and 2.7) and its
    # 2 % band of the final value (+-0.06, i.e. 6 % of the step) are not the step's
    # levels, so its figures change with the offset; ours do not.
    t, y = _simulate(*SYSTEMS["underdamped zeta 0.3"])
    zero_based, offset = _ours(t, y), _ours(t, y, offset=2.0)
    theirs_offset = control.step_info(y[1:] + 2.0, t[1:], yfinal=3.0)
    theirs_shifted = control.step_info(y[1:], t[1:], yfinal=1.0)
    for name in ("rise_time_s", "settling_time_s", "overshoot_pct"):
        assert offset.value(name) == pytest.approx(zero_based.value(name), rel=1e-9, abs=1e-12)
    assert abs(theirs_offset["RiseTime"] - theirs_shifted["RiseTime"]) > 10 * DT
    assert theirs_offset["SettlingTime"] < theirs_shifted["SettlingTime"] - DT
    # Given the data shifted to start at 0, python-control agrees with us again.
    assert offset.value("rise_time_s") == pytest.approx(theirs_shifted["RiseTime"], abs=DT)


def test_each_step_of_a_multi_step_trace_agrees_with_step_info_on_its_segment():
    system, duration = SYSTEMS["underdamped zeta 0.3"]
    levels = [1.0, -0.5, 0.25]
    t_one, y_one = _simulate(system, len(levels) * duration)
    n = int(round(duration / DT))
    # Superposition: each setpoint change adds a scaled copy of the unit response.
    t = np.concatenate(([-DT], np.arange(0, 3 * n) * DT))
    y = np.zeros(len(t))
    sp = np.zeros(len(t))
    previous = 0.0
    for k, level in enumerate(levels):
        start = 1 + k * n
        y[start:] += (level - previous) * y_one[1 : 1 + len(t) - start]
        sp[start:] = level
        previous = level
    steps = analyze_arrays(t, sp, y).steps
    assert len(steps) == 3
    for k, step in enumerate(steps):
        seg = slice(1 + k * n, 1 + (k + 1) * n)
        start_level = 0.0 if k == 0 else levels[k - 1]
        amplitude = levels[k] - start_level
        # python-control on the segment, shifted to start at 0 and scaled to a unit step.
        theirs = control.step_info(
            (y[seg] - start_level) / amplitude, t[seg] - t[seg][0], yfinal=1.0
        )
        assert step.value("rise_time_s") == pytest.approx(theirs["RiseTime"], abs=DT)
        assert step.value("settling_time_s") == pytest.approx(theirs["SettlingTime"], abs=DT)
        assert step.value("overshoot_pct") == pytest.approx(theirs["Overshoot"], abs=1e-4)
