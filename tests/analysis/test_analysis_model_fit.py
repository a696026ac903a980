"""Second-order-plus-dead-time fit: the closed form against python-control's
simulation, its derivatives, and recovery of known zeta, wn and dead time, exact and
from noisy python-control simulations."""

from __future__ import annotations

import control
import numpy as np
import pytest

from logbook.analysis import analyze_arrays
from logbook.analysis.model_fit import _derivatives, second_order_step
from tests.analysis.signals import first_order, second_order, setpoint

T_STEP = 0.05
DT = 1e-4


@pytest.mark.parametrize("zeta", [0.0, 0.3, 1.0 - 1e-7, 1.0, 1.0 + 1e-7, 2.5, 9.0])
def test_closed_form_matches_python_control(zeta):
    # Under-, critically and over-damped branches, and both sides of zeta = 1.
    wn = 20.0
    t = np.linspace(0.0, 3.0, 3001)
    simulated = control.step_response(control.tf([wn**2], [1.0, 2 * zeta * wn, wn**2]), t)
    np.testing.assert_allclose(
        second_order_step(t, zeta, wn), np.asarray(simulated.outputs), atol=1e-9
    )


@pytest.mark.parametrize("zeta", [0.2, 0.9, 1.0 - 1e-9, 1.0, 1.0 + 1e-5, 1.7, 9.0])
def test_derivatives_match_central_differences(zeta):
    # The fit's Jacobian: dg/dx and dg/dzeta of the (checked) closed form, on both
    # sides of zeta = 1 and at its limit there.
    x = np.linspace(0.05, 12.0, 240)  # x > h: g is clipped at 0 before the step
    slope, by_zeta = _derivatives(x, zeta)
    h = 1e-6
    np.testing.assert_allclose(
        slope,
        (second_order_step(x + h, zeta, 1.0) - second_order_step(x - h, zeta, 1.0)) / (2 * h),
        atol=1e-8,
    )
    np.testing.assert_allclose(
        by_zeta,
        (second_order_step(x, zeta + h, 1.0) - second_order_step(x, zeta - h, 1.0)) / (2 * h),
        atol=1e-7,
    )


def _fit(y, t):
    (step,) = analyze_arrays(t, setpoint(t, [(T_STEP, 1.0)]), y).steps
    return step


@pytest.mark.parametrize(
    ("zeta", "wn", "delay"), [(0.25, 80.0, 0.0), (0.6, 40.0, 0.01234), (1.6, 30.0, 0.0051)]
)
def test_recovers_exact_parameters(zeta, wn, delay):
    t = np.arange(0.0, T_STEP + 40 / min(zeta * wn, wn / (2 * zeta)), DT)
    step = _fit(second_order(t, T_STEP + delay, zeta, wn), t)
    # Noise-free data of the model itself: the optimum is exact up to the
    # optimiser's tolerances.
    assert step.value("zeta") == pytest.approx(zeta, rel=1e-4)
    assert step.value("wn_rad_s") == pytest.approx(wn, rel=1e-4)
    assert step.value("fit_delay_s") == pytest.approx(delay, abs=1e-6)
    assert step.value("fit_rmse_pct") < 1e-3


def test_noisy_fit_residual_is_the_noise():
    # With the right model the residual RMS is the noise's standard deviation.
    sigma, zeta, wn = 0.002, 0.45, 50.0
    t = np.arange(0.0, 1.2, DT)
    y = second_order(t, T_STEP, zeta, wn) + np.random.default_rng(2).normal(0, sigma, len(t))
    step = _fit(y, t)
    assert step.value("fit_rmse_pct") == pytest.approx(100 * sigma, rel=0.1)
    # 500 samples of noise sigma pin zeta and wn to well under 1 %.
    assert step.value("zeta") == pytest.approx(zeta, rel=0.01)
    assert step.value("wn_rad_s") == pytest.approx(wn, rel=0.01)


def test_first_order_data_fits_as_overdamped():
    # No overshoot at all: any second-order model of it has zeta >= 1.
    t = np.arange(0.0, 1.0, DT)
    step = _fit(first_order(t, T_STEP, 0.05), t)
    assert step.value("zeta") >= 1.0


def test_lower_damping_shows_as_lower_zeta():
    t = np.arange(0.0, 2.0, DT)
    before = _fit(second_order(t, T_STEP, 0.7, 40.0), t)
    after = _fit(second_order(t, T_STEP, 0.35, 40.0), t)
    assert after.value("zeta") < before.value("zeta")
    assert after.value("wn_rad_s") == pytest.approx(before.value("wn_rad_s"), rel=1e-3)


def _simulated(t, zeta, wn, delay, response=control.step_response):
    """python-control's step (or impulse) response of wn^2/(s^2 + 2 zeta wn s + wn^2),
    starting ``delay`` after T_STEP, sampled at ``t``."""
    system = control.tf([wn**2], [1.0, 2 * zeta * wn, wn**2])
    tau = t - T_STEP - delay
    grid = np.arange(0.0, tau[-1] + DT, DT)
    return np.where(
        tau >= 0.0, np.interp(tau, grid, np.asarray(response(system, grid).outputs)), 0.0
    )


@pytest.mark.parametrize(
    ("zeta", "wn", "delay", "seed"),
    [(0.3, 60.0, 0.005, 1), (0.7, 40.0, 0.012, 2), (1.5, 80.0, 0.003, 3)],
)
def test_recovers_zeta_wn_and_delay_of_a_noisy_simulation(zeta, wn, delay, seed):
    # Noise of 0.2 % of the step on python-control's response. The tolerance is four
    # standard errors of the least-squares estimate, from its linearised covariance
    # sigma^2 (J^T J)^-1 over the fitted samples (e.g. Bates & Watts, Nonlinear
    # Regression Analysis and Its Applications, ch. 2; from memory).
    sigma = 0.002
    t = np.arange(0.0, T_STEP + delay + 12.0 * max(1 / (zeta * wn), 2 * zeta / wn), DT)
    rng = np.random.default_rng(seed)
    step = _fit(_simulated(t, zeta, wn, delay) + rng.normal(0.0, sigma, len(t)), t)
    # The fitted samples (documented rule): up to 2 settling times after the step,
    # at most 500 at an even stride.
    first = int(np.searchsorted(t, T_STEP))
    count = int(np.sum(t[first:] <= T_STEP + 2 * step.value("settling_time_s")))
    k = np.arange(first, first + count, -(-count // 500))
    h = 1e-5
    jacobian = np.column_stack(
        (
            (
                _simulated(t[k], zeta * (1 + h), wn, delay)
                - _simulated(t[k], zeta * (1 - h), wn, delay)
            )
            / (2 * h * zeta),
            (
                _simulated(t[k], zeta, wn * (1 + h), delay)
                - _simulated(t[k], zeta, wn * (1 - h), delay)
            )
            / (2 * h * wn),
            -_simulated(t[k], zeta, wn, delay, control.impulse_response),  # d/d(delay)
        )
    )
    se_zeta, se_wn, se_delay = sigma * np.sqrt(np.diag(np.linalg.inv(jacobian.T @ jacobian)))
    assert se_zeta < 0.01 * zeta and se_wn < 0.01 * wn and se_delay < DT  # a tight check
    assert step.value("zeta") == pytest.approx(zeta, abs=4 * se_zeta)
    assert step.value("wn_rad_s") == pytest.approx(wn, abs=4 * se_wn)
    assert step.value("fit_delay_s") == pytest.approx(delay, abs=4 * se_delay)
    assert step.value("fit_rmse_pct") == pytest.approx(100 * sigma, rel=0.1)
