"""The DC motor model against the textbook model and an outside integrator.

Reference: G. F. Franklin, J. D. Powell, A. Emami-Naeini, *Feedback Control of
Dynamic Systems*, ch. 2 (DC motor: J·θ'' + b·θ' = Kt·i, L·i' + R·i = v − Ke·θ';
section numbers from memory); the formulas are in ``textbook.py``.

Tolerances: fourth-order Runge–Kutta with step h has a global error of order
(h/τ)^4 relative to the response; with h = τ/200 that is about 1e-9, so a relative
tolerance of 1e-6 leaves ample room while still catching any modelling slip (a
wrong sign or factor changes the value by percent).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from logbook.simulate.motor import LOAD_ANGLE, MOTOR_ANGLE, MotorBank, open_loop_step

from .textbook import KE, KT, VOLTS, B, J, R, textbook_speed, textbook_tau
from .textbook import textbook_motor as motor


def test_speed_at_one_time_constant_is_63_percent_of_final() -> None:
    # Franklin et al., ch. 2 (from memory): first-order speed response with L = 0.
    tau = textbook_tau()
    response = open_loop_step(motor(), VOLTS, duration_s=tau, dt_s=tau / 200)
    assert response.time[-1] == pytest.approx(tau)
    expected = (1 - math.exp(-1)) * textbook_speed()
    assert response.motor_speed[-1] == pytest.approx(expected, rel=1e-6)


def test_final_speed_and_stall_current_match_the_textbook() -> None:
    tau = textbook_tau()
    response = open_loop_step(motor(), VOLTS, duration_s=20 * tau, dt_s=tau / 200)
    # After 20 τ the exponential has decayed to e^-20 ≈ 2e-9 of the step.
    assert response.motor_speed[-1] == pytest.approx(textbook_speed(), rel=1e-6)
    # At t = 0 the rotor is still: the current is V/R (no back-EMF yet).
    assert response.current[0] == pytest.approx(VOLTS / R, rel=1e-12)


def test_second_order_model_with_inductance_matches_scipy_lsim() -> None:
    # Outside reference: scipy.signal.lsim of ω/V = Kt / ((J s + b)(L s + R) + Kt·Ke).
    inductance = 2e-3  # L/R = 1 ms against τ ≈ 16 ms: a visible second pole
    params = motor(inductance_h=inductance)
    response = open_loop_step(params, VOLTS, duration_s=0.08, dt_s=2e-5)
    plant = signal.TransferFunction([KT], [J * inductance, J * R + B * inductance, B * R + KT * KE])
    _, expected, _ = signal.lsim(plant, np.full(len(response.time), VOLTS), response.time)
    scale = textbook_speed()
    assert np.max(np.abs(response.motor_speed - expected)) < 1e-6 * scale
    # The inductance really matters here: the first-order curve is far off early on.
    first_order = scale * (1 - np.exp(-response.time / textbook_tau()))
    assert np.max(np.abs(first_order - expected)) > 0.02 * scale


def test_rigid_gear_reflects_load_inertia_by_the_square_of_the_ratio() -> None:
    # Common practice (gear trains, Franklin et al. ch. 2 from memory): a load behind
    # an N:1 reduction looks like J_L/N² and b_L/N² at the motor; output speed is ω/N.
    ratio, load_j, load_b = 5.0, 2.5e-4, 5e-5
    params = motor(gear_ratio=ratio, load_inertia_kg_m2=load_j, load_viscous_nm_s_per_rad=load_b)
    j_eff, b_eff = J + load_j / ratio**2, B + load_b / ratio**2
    tau = textbook_tau(j_eff, b_eff)
    response = open_loop_step(params, VOLTS, duration_s=tau, dt_s=tau / 200)
    expected = (1 - math.exp(-1)) * textbook_speed(j_eff, b_eff)
    assert response.motor_speed[-1] == pytest.approx(expected, rel=1e-6)
    assert response.output_speed[-1] == pytest.approx(expected / ratio, rel=1e-9)


def test_coulomb_friction_lowers_the_final_speed_by_its_torque() -> None:
    # A constant friction torque Fc is a load torque: Kt·V/R − Fc = (b + Kt·Ke/R)·ω.
    # The smooth sign (tanh(ω/ωs), ωs = 0.01 rad/s) is 1 to within 1e-12 at ~200 rad/s.
    friction = 2e-3
    tau = textbook_tau()
    response = open_loop_step(
        motor(coulomb_nm=friction), VOLTS, duration_s=20 * tau, dt_s=tau / 200
    )
    expected = (KT * VOLTS / R - friction) / (B + KT * KE / R)
    assert response.motor_speed[-1] == pytest.approx(expected, rel=1e-6)


def test_compliant_coupling_rings_at_the_two_inertia_frequency() -> None:
    # Common practice (two masses on a torsion spring): ω = sqrt(k·(1/J1 + 1/J2)).
    # Kt and Ke are tiny so the motor's electrical damping does not shift the frequency.
    stiffness, load_j = 50.0, 3e-5
    params = motor(
        torque_constant_nm_per_a=1e-6,
        back_emf_v_s_per_rad=1e-6,
        viscous_nm_s_per_rad=0.0,
        load_inertia_kg_m2=load_j,
        coupling_stiffness_nm_per_rad=stiffness,
    )
    bank = MotorBank([params])
    state = bank.rest_state(np.zeros(1))
    state[MOTOR_ANGLE] += 1e-3  # wind the coupling up and let go
    expected = math.sqrt(stiffness * (1 / J + 1 / load_j))
    dt = 2 * math.pi / expected / 400
    twist = []
    for _ in range(4000):  # ten periods
        twist.append(state[MOTOR_ANGLE, 0] - state[LOAD_ANGLE, 0])
        state = bank.step(state, np.zeros(1), dt)
    twist_arr = np.array(twist)
    rising = np.flatnonzero((twist_arr[:-1] < 0) & (twist_arr[1:] >= 0))
    period = (rising[-1] - rising[0]) * dt / (len(rising) - 1)
    # Crossing times are found to within one step over nine periods.
    assert 2 * math.pi / period == pytest.approx(expected, rel=2 * dt / (9 * period) + 1e-3)


def test_backlash_passes_no_torque_inside_the_gap() -> None:
    # A motor turning by less than half the free play leaves the load where it was.
    gap = math.radians(2.0)
    params = motor(
        load_inertia_kg_m2=1e-4,
        coupling_stiffness_nm_per_rad=20.0,
        backlash_rad=gap,
        inductance_h=0.0,
    )
    bank = MotorBank([params])
    state = bank.rest_state(np.zeros(1))
    state[MOTOR_ANGLE] = 0.45 * gap
    derivatives = bank.derivatives(state, np.zeros(1))
    assert derivatives[4, 0] == 0.0  # load acceleration
    state[MOTOR_ANGLE] = 0.55 * gap  # past half the gap: the spring engages by 0.05·gap
    derivatives = bank.derivatives(state, np.zeros(1))
    assert derivatives[4, 0] == pytest.approx(20.0 * 0.05 * gap / 1e-4, rel=1e-12)


@pytest.mark.parametrize(
    ("changes", "message"),
    [
        ({"resistance_ohm": 0.0}, "resistance_ohm"),
        ({"coupling_stiffness_nm_per_rad": 10.0}, "load inertia"),
        ({"load_inertia_kg_m2": 1e-5, "backlash_rad": 0.01}, "backlash"),
        ({"coulomb_nm": -1.0}, "coulomb_nm"),
    ],
)
def test_impossible_drive_trains_are_refused(changes: dict[str, float], message: str) -> None:
    with pytest.raises(ValueError, match=message):
        motor(**changes)
