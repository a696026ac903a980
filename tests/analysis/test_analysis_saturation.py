"""Saturation of the controller output and integral windup.

A PI loop on a first-order plant is simulated with its output clipped. Without
anti-windup the integrator keeps charging while the output is stuck at the limit
and the response overshoots once it comes off it; with conditional integration
(the integrator holds while saturated and the error would push further) it does
not (common practice; e.g. Astrom & Hagglund, PID Controllers, sec. on integrator
windup -- from memory).
"""

from __future__ import annotations

import numpy as np
import pytest

from logbook.analysis import AnalysisSettings, analyze_arrays

DT = 1e-3
T_STEP = 0.1
U_MAX = 1.5


def _pi_loop(*, anti_windup: bool):
    """(t, setpoint, feedback, effort, clipped) of the PI loop with a clipped output."""
    tau, kp, ki = 0.1, 5.0, 50.0  # PI zero on the plant pole: no overshoot when linear
    t = np.arange(0.0, 3.0, DT)
    sp = np.where(t >= T_STEP, 1.0, 0.0)
    y = np.zeros(len(t))
    u = np.zeros(len(t))
    clipped = np.zeros(len(t), dtype=bool)
    integral = 0.0
    for k in range(len(t) - 1):
        error = sp[k] - y[k]
        raw = kp * error + integral
        u[k] = np.clip(raw, -U_MAX, U_MAX)
        clipped[k] = raw != u[k]
        if not (anti_windup and clipped[k] and error * raw > 0):
            integral += ki * error * DT
        y[k + 1] = y[k] + DT * (u[k] - y[k]) / tau
    u[-1] = u[-2]
    return t, sp, y, u, clipped


def _clipped_duration(t, clipped):
    """Summed first-to-last-sample duration of the runs of clipped samples."""
    edges = np.diff(np.concatenate(([0], clipped.astype(np.int8), [0])))
    starts, ends = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    return float(np.sum(t[ends - 1] - t[starts]))


def test_windup_is_flagged_and_anti_windup_is_not():
    t, sp, y, u, _ = _pi_loop(anti_windup=False)
    (wound,) = analyze_arrays(t, sp, y, u).steps
    t, sp, y, u, _ = _pi_loop(anti_windup=True)
    (clean,) = analyze_arrays(t, sp, y, u).steps
    assert wound.value("saturation_time_s") > 0.05
    assert wound.value("windup_overshoot_pct") > 10.0
    assert wound.value("windup_flag") == 1.0
    assert clean.value("saturation_time_s") > 0.05
    assert clean.value("windup_overshoot_pct") < 2.0
    assert clean.value("windup_flag") == 0.0


def test_saturation_time_equals_the_simulated_clipping_with_a_known_limit():
    t, sp, y, u, clipped = _pi_loop(anti_windup=False)
    settings = AnalysisSettings(effort_limit=U_MAX, saturation_fraction=0.0)
    (step,) = analyze_arrays(t, sp, y, u, settings=settings).steps
    assert step.value("saturation_time_s") == pytest.approx(
        _clipped_duration(t, clipped), abs=1e-12
    )


def test_inferred_limit_counts_the_same_interval_within_a_few_samples():
    # Inferred from the largest |effort|, samples within 0.5 % of it count too: the
    # output approaching or leaving the limit adds at most a few samples.
    t, sp, y, u, clipped = _pi_loop(anti_windup=False)
    (step,) = analyze_arrays(t, sp, y, u).steps
    assert step.value("saturation_time_s") == pytest.approx(
        _clipped_duration(t, clipped), abs=3 * DT
    )


def test_unsaturated_effort_and_missing_effort():
    t, sp, y, u, _ = _pi_loop(anti_windup=False)
    (step,) = analyze_arrays(t, sp, y, u, settings=AnalysisSettings(effort_limit=10.0)).steps
    assert step.value("saturation_time_s") == 0.0
    assert step.value("windup_overshoot_pct") is None
    assert step.value("windup_flag") == 0.0
    (bare,) = analyze_arrays(t, sp, y).steps
    for name in ("saturation_time_s", "windup_overshoot_pct", "windup_flag"):
        assert bare.value(name) is None
        assert bare.figures[name].reason == "no effort channel"
