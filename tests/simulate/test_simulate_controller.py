"""The discrete PID against hand computations.

Each expected number is worked out in the comment beside it from the control law
in the module docstring of ``logbook.simulate.controller`` (parallel form, forward
Euler integrator, derivative on the measurement through a first-order low-pass).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from logbook.simulate.controller import PidBank, PidGains


def tick(bank: PidBank, setpoint: float, measurement: float, limit: float = 1e9) -> float:
    return float(bank.update(np.array([setpoint]), np.array([measurement]), np.array([limit]))[0])


def test_p_control_of_a_first_order_discrete_plant_matches_the_hand_computation() -> None:
    # Plant x[k+1] = 0.9·x[k] + 0.1·u[k], P control u = 2·(1 − x), x[0] = 0:
    #   u0 = 2     -> x1 = 0.2
    #   u1 = 1.6   -> x2 = 0.18 + 0.16 = 0.34
    #   u2 = 1.32  -> x3 = 0.306 + 0.132 = 0.438
    # and the fixed point x = 0.1·2/(1 − 0.9 + 0.1·2) = 2/3.
    bank = PidBank([PidGains(kp=2.0)])
    bank.reset(np.zeros(1))
    x, trajectory = 0.0, []
    for _ in range(200):
        u = tick(bank, 1.0, x)
        x = 0.9 * x + 0.1 * u
        trajectory.append(x)
    assert trajectory[:3] == pytest.approx([0.2, 0.34, 0.438], abs=1e-12)
    assert trajectory[-1] == pytest.approx(2 / 3, abs=1e-12)


def test_output_saturates_at_the_limit() -> None:
    bank = PidBank([PidGains(kp=100.0)])
    bank.reset(np.zeros(1))
    assert tick(bank, 1.0, 0.0, limit=12.0) == 12.0
    assert tick(bank, -1.0, 0.0, limit=12.0) == -12.0


def test_integrator_accumulates_ki_times_error_times_period() -> None:
    # ki = 50 /s, e = 0.2, Ts = 1 ms: each tick adds 50·0.2·0.001 = 0.01; after 10 ticks
    # the integrator holds 0.1 and the output is 0.1 (kp = 0).
    bank = PidBank([PidGains(kp=0.0, ki=50.0, loop_rate_hz=1000.0)])
    bank.reset(np.zeros(1))
    outputs = [tick(bank, 0.2, 0.0) for _ in range(10)]
    assert outputs == pytest.approx([0.01 * k for k in range(1, 11)], abs=1e-12)


def test_anti_windup_modes_under_saturation() -> None:
    # e = 1 held while the output is saturated at 1 V (kp = 2 alone saturates it):
    # "none" integrates 100·1·0.001 = 0.1 per tick (1.0 after 10 ticks); "clamp" stops
    # at its limit 0.3; "conditional" does not integrate while pushing into the limit.
    gains = [
        PidGains(kp=2.0, ki=100.0),
        PidGains(kp=2.0, ki=100.0, integrator_limit=0.3, anti_windup="clamp"),
        PidGains(kp=2.0, ki=100.0, anti_windup="conditional"),
    ]
    bank = PidBank(gains)
    bank.reset(np.zeros(3))
    for _ in range(10):
        out = bank.update(np.ones(3), np.zeros(3), np.ones(3))
    assert out == pytest.approx([1.0, 1.0, 1.0])
    assert bank.integrator == pytest.approx([1.0, 0.3, 0.0], abs=1e-12)
    # Off the limit (e = −0.2: output −0.4 − 0.02) the conditional integrator moves
    # again at once, by 100·(−0.2)·0.001 = −0.02.
    bank.update(np.zeros(3), np.full(3, 0.2), np.ones(3))
    assert bank.integrator[2] == pytest.approx(-0.02, abs=1e-12)


def test_derivative_of_a_ramp_through_the_filter() -> None:
    # Measurement ramps by 0.01 per 1 ms tick (slope 10/s). The filtered rate after n
    # ticks is 10·(1 − a^n) with a = exp(−2π·50 Hz·1 ms) (geometric series), and the
    # output is −kd times it with the error held at zero (setpoint = measurement).
    bank = PidBank([PidGains(kp=1.0, kd=0.5, derivative_filter_hz=50.0)])
    bank.reset(np.zeros(1))
    a = math.exp(-2 * math.pi * 50.0 * 1e-3)
    for n in range(1, 21):
        y = 0.01 * n
        out = tick(bank, y, y)
        assert out == pytest.approx(-0.5 * 10.0 * (1 - a**n), rel=1e-9)


def test_setpoint_step_gives_no_derivative_kick() -> None:
    # The derivative acts on the measurement: a unit step of the setpoint moves the
    # output by kp only.
    bank = PidBank([PidGains(kp=3.0, kd=10.0)])
    bank.reset(np.zeros(1))
    assert tick(bank, 0.0, 0.0) == 0.0
    assert tick(bank, 1.0, 0.0) == pytest.approx(3.0)


def test_feedforward_adds_per_unit_of_setpoint() -> None:
    bank = PidBank([PidGains(kp=0.0, feedforward=0.25)])
    bank.reset(np.zeros(1))
    assert tick(bank, 8.0, 8.0) == pytest.approx(2.0)


def test_inactive_loops_hold_their_output() -> None:
    # Zero-order hold between ticks: a loop that is not due keeps its last output.
    bank = PidBank([PidGains(kp=1.0), PidGains(kp=1.0)])
    bank.reset(np.zeros(2))
    bank.update(np.ones(2), np.zeros(2), np.full(2, 10.0))
    held = bank.update(np.full(2, 5.0), np.zeros(2), np.full(2, 10.0), np.array([True, False]))
    assert held == pytest.approx([5.0, 1.0])


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"kp": 1.0, "loop_rate_hz": 0.0}, "loop rate"),
        ({"kp": 1.0, "anti_windup": "magic"}, "anti_windup"),
        ({"kp": 1.0, "anti_windup": "clamp"}, "integrator_limit"),
        ({"kp": 1.0, "derivative_filter_hz": -5.0}, "derivative_filter_hz"),
    ],
)
def test_bad_gain_sets_are_refused(kwargs: dict[str, object], message: str) -> None:
    with pytest.raises(ValueError, match=message):
        PidGains(**kwargs)  # type: ignore[arg-type]
