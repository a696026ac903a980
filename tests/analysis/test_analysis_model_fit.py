"""Second-order-plus-dead-time fit: the closed form against python-control's
simulation, and recovery of known zeta, wn and dead time."""

from __future__ import annotations

import control
import numpy as np
import pytest

from logbook.analysis import analyze_arrays
from logbook.analysis.model_fit import second_order_step
from tests.analysis.signals import first_order, second_order, setpoint

T_STEP = 0.05
DT = 1e-4


@pytest.mark.parametrize("zeta", [0.0, 0.3, 1.0 - 1e-7, 1.0, 1.0 + 1e-7, 2.5, 9.0])
def test_closed_form_matches_python_control(zeta):
    # Under-, critically and over-damped branches, and both sides of zeta = 1.
    wn = 20.0
    t = np.linspace(0.0, 3.0, 3001)
    simulated = control.step_response(control.tf([wn**2], [1.0, 2 * zeta * wn, wn**2]), t)
    np.testing.assert_allclose(second_order_step(t, zeta, wn),
                               np.asarray(simulated.outputs), atol=1e-6)


def _fit(y, t):
    (step,) = analyze_arrays(t, setpoint(t, [(T_STEP, 1.0)]), y).steps
    return step


@pytest.mark.parametrize(("zeta", "wn", "delay"), [(0.25, 80.0, 0.0), (0.6, 40.0, 0.01234),
                                                   (1.6, 30.0, 0.0051)])
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
