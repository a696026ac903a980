"""Measured data: noise, encoder quantisation, non-uniform sampling, negative and
offset steps, several steps per trace, responses that never settle.

Expected values are the first-order formulas (rise tau*ln 9, 2 % settling
tau*ln 50) and Ogata's second-order overshoot exp(-pi*zeta/sqrt(1 - zeta^2))
(Modern Control Engineering, 5th ed., sec. 5-3, from memory). Tolerances add to
the sampling period what the disturbance can move each figure by.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from logbook.analysis import analyze_arrays
from tests.analysis.signals import first_order, responses, second_order, setpoint

TAU = 0.05
T_STEP = 0.1
DT = 1e-3
SIGMA = 0.002  # 0.2 % of the amplitude
K = 4.0  # noise excursions stay within K sigma over a few thousand samples


def _ogata_overshoot_pct(zeta: float) -> float:
    return 100 * math.exp(-math.pi * zeta / math.sqrt(1 - zeta**2))


def _first_order_trace(t, y):
    (step,) = analyze_arrays(t, setpoint(t, [(T_STEP, 1.0)]), y).steps
    return step


def test_gaussian_noise_first_order():
    rng = np.random.default_rng(7)
    t = np.arange(0.0, T_STEP + 20 * TAU, DT)
    step = _first_order_trace(t, first_order(t, T_STEP, TAU) + rng.normal(0, SIGMA, len(t)))
    # Noise of K sigma at a crossing moves it by K sigma / slope; the slope of the
    # exponential is 0.9/tau at 10 % and 0.1/tau at 90 %.
    rise_tolerance = DT + K * SIGMA * TAU * (1 / 0.9 + 1 / 0.1)
    assert step.value("rise_time_s") == pytest.approx(TAU * math.log(9), abs=rise_tolerance)
    # The band edge moves by up to K sigma: the last exit lies between the
    # exponential's entries into bands of 2 % +- K sigma.
    earliest = TAU * math.log(1 / (0.02 + K * SIGMA))
    latest = TAU * math.log(1 / (0.02 - K * SIGMA))
    assert earliest - DT <= step.value("settling_time_s") <= latest + DT
    # The median of the 100-sample tail: standard error 1.25 sigma / sqrt(100).
    assert step.value("final") == pytest.approx(1.0, abs=K * 1.25 * SIGMA / 10)


def test_gaussian_noise_second_order():
    rng = np.random.default_rng(11)
    zeta, wn = 0.4, 50.0
    t = np.arange(0.0, 1.5, 1e-4)
    y = second_order(t, T_STEP, zeta, wn) + rng.normal(0, SIGMA, len(t))
    (step,) = analyze_arrays(t, setpoint(t, [(T_STEP, 1.0)]), y).steps
    # The largest noisy sample exceeds the true peak by at most K sigma.
    assert step.value("overshoot_pct") == pytest.approx(
        _ogata_overshoot_pct(zeta), abs=100 * K * SIGMA
    )
    # Near the peak y = ymax - |y''| d^2 / 2 with |y''| = wn^2 * Mp: noise can make any
    # sample within 2 K sigma of the top the largest, i.e. within sqrt(4 K sigma/|y''|).
    curvature = wn**2 * _ogata_overshoot_pct(zeta) / 100
    tp = math.pi / (wn * math.sqrt(1 - zeta**2))
    assert step.value("peak_time_s") == pytest.approx(
        tp, abs=math.sqrt(4 * K * SIGMA / curvature) + 1e-4
    )


def test_encoder_quantisation():
    # A 200-count move: feedback in whole counts (quantum q = 1 count = 0.5 % of it).
    counts = 200.0
    t = np.arange(0.0, T_STEP + 20 * TAU, DT)
    y = np.round(counts * first_order(t, T_STEP, TAU))
    (step,) = analyze_arrays(t, counts * setpoint(t, [(T_STEP, 1.0)]), y).steps
    assert step.value("initial") == 0.0
    assert step.value("final") == counts  # the median of a settled count is that count
    # Rounding moves each crossing level by at most q/2: time error <= (q/2)/slope.
    q = 1.0 / counts
    rise_tolerance = DT + q / 2 * TAU * (1 / 0.9 + 1 / 0.1)
    assert step.value("rise_time_s") == pytest.approx(TAU * math.log(9), abs=rise_tolerance)
    earliest, latest = TAU * math.log(1 / (0.02 + q / 2)), TAU * math.log(1 / (0.02 - q / 2))
    assert earliest - DT <= step.value("settling_time_s") <= latest + DT
    assert step.value("overshoot_pct") == 0.0


def test_non_uniform_sampling():
    rng = np.random.default_rng(3)
    t = np.cumsum(rng.uniform(0.2 * DT, 1.8 * DT, 1500))
    step_at = t[200]
    sp = np.where(t >= step_at, 1.0, 0.0)
    (step,) = analyze_arrays(t, sp, first_order(t, step_at, TAU)).steps
    longest = float(np.diff(t).max())
    assert step.value("t_step_s") == step_at
    assert step.value("rise_time_s") == pytest.approx(TAU * math.log(9), abs=longest)
    assert step.value("delay_time_s") == pytest.approx(TAU * math.log(2), abs=longest)
    assert step.value("settling_time_s") == pytest.approx(TAU * math.log(50), abs=longest)


def test_negative_step_with_offset_and_late_time_origin():
    # From 5 mm down to 3 mm, the clock starting at 1234.5 s: same figures as 0 -> 1.
    zeta, wn = 0.5, 40.0
    t0 = 1234.5
    t = t0 + np.arange(0.0, 1.5, 1e-4)
    y = second_order(t, t0 + T_STEP, zeta, wn, initial=5.0, final=3.0)
    (down,) = analyze_arrays(t, setpoint(t, [(t0 + T_STEP, 3.0)], start=5.0), y).steps
    up_t = np.arange(0.0, 1.5, 1e-4)
    (up,) = analyze_arrays(
        up_t, setpoint(up_t, [(T_STEP, 1.0)]), second_order(up_t, T_STEP, zeta, wn)
    ).steps
    assert down.value("amplitude") == pytest.approx(-2.0, abs=1e-9)
    assert down.value("t_step_s") == pytest.approx(t0 + T_STEP, abs=1e-4)
    assert down.value("overshoot_pct") == pytest.approx(_ogata_overshoot_pct(zeta), rel=1e-4)
    for name in ("rise_time_s", "delay_time_s", "peak_time_s", "settling_time_s"):
        # The late clock costs float resolution only (1234.5 s to 1e-13 s).
        assert down.value(name) == pytest.approx(up.value(name), abs=1e-9)
    assert down.value("steady_state_error") == pytest.approx(0.0, abs=1e-9)


def test_multi_step_trace_up_and_down():
    zeta, wn = 0.3, 60.0
    plan = [(0.5, 2.0), (2.5, -1.0), (4.5, -0.5), (6.5, 3.0)]
    t = np.arange(0.0, 8.5, 1e-4)
    steps = analyze_arrays(t, setpoint(t, plan), responses(t, plan, zeta, wn)).steps
    assert [s.value("t_step_s") for s in steps] == pytest.approx([p[0] for p in plan], abs=1e-4)
    starts = [0.0] + [p[1] for p in plan[:-1]]
    for step, (_, target), start in zip(steps, plan, starts, strict=True):
        assert step.value("initial") == pytest.approx(start, abs=1e-9)
        assert step.value("final") == pytest.approx(target, abs=1e-9)
        assert step.value("overshoot_pct") == pytest.approx(_ogata_overshoot_pct(zeta), rel=1e-4)
        assert step.value("peak_time_s") == pytest.approx(
            math.pi / (wn * math.sqrt(1 - zeta**2)), abs=1e-4
        )


def test_sustained_oscillation_never_settles():
    # zeta = 0: y = 1 - cos(wn t) keeps swinging across the whole band to the end.
    t = np.arange(0.0, 2.0, 1e-4)
    y = second_order(t, T_STEP, 0.0, 30.0)
    (step,) = analyze_arrays(t, setpoint(t, [(T_STEP, 1.0)]), y).steps
    assert step.value("settling_time_s") is None
    assert "settle" in (step.figures["settling_time_s"].reason or "")


def test_response_still_moving_at_segment_end_does_not_settle():
    # A time constant as long as the segment: the tail still climbs several % of the
    # step within the last 10 %, so there is no settled level to report against.
    t = np.arange(0.0, 1.1, DT)
    (step,) = analyze_arrays(t, setpoint(t, [(T_STEP, 1.0)]), first_order(t, T_STEP, 1.0)).steps
    assert step.value("settling_time_s") is None
    assert step.value("rise_time_s") is not None  # its own (partial) 10-90 % still exists
