"""First-order step response y = 1 - exp(-t/tau): the textbook timing figures.

From the exponential directly (e.g. Ogata, Modern Control Engineering, 5th ed.,
sec. 5-2, first-order systems -- section from memory): y reaches a fraction p at
t = tau*ln(1/(1-p)), so the 10-90 % rise time is tau*ln 9, the 50 % delay time
tau*ln 2, the 2 % settling time tau*ln 50 and the 5 % settling time tau*ln 20.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from logbook.analysis import AnalysisSettings, analyze_arrays
from tests.analysis.signals import first_order, setpoint

TAU = 0.05
DEFAULTS = AnalysisSettings()
T_STEP = 0.1


def _analyse(dt: float, settings: AnalysisSettings = DEFAULTS):
    t = np.arange(0.0, T_STEP + 20 * TAU, dt)
    result = analyze_arrays(
        t, setpoint(t, [(T_STEP, 1.0)]), first_order(t, T_STEP, TAU), settings=settings
    )
    (step,) = result.steps
    return step


@pytest.mark.parametrize(
    ("name", "settings", "expected"),
    [
        ("rise_time_s", AnalysisSettings(), TAU * math.log(9.0)),
        ("delay_time_s", AnalysisSettings(), TAU * math.log(2.0)),
        ("settling_time_s", AnalysisSettings(band=0.02), TAU * math.log(50.0)),
        ("settling_time_s", AnalysisSettings(band=0.05), TAU * math.log(20.0)),
        # 20-80 % rise: tau*ln(0.8/0.2) = tau*ln 4, from the same exponential.
        ("rise_time_s", AnalysisSettings(rise_low=0.2, rise_high=0.8), TAU * math.log(4.0)),
    ],
)
def test_first_order_times_within_one_sample(name, settings, expected):
    dt = 1e-3
    step = _analyse(dt, settings)
    assert step.value(name) == pytest.approx(expected, abs=dt)


def test_crossings_are_interpolated_between_coarse_samples():
    # Five samples per time constant: picking whole samples would be off by up to
    # dt = 10 ms. Linear interpolation errs by at most dt^2/8 * max|y''| / min|y'|
    # (interpolation error over the slope) = dt^2/(8 tau) * exp(dt/tau) per crossing.
    dt = TAU / 5
    bound = dt**2 / (8 * TAU) * math.exp(dt / TAU)
    step = _analyse(dt)
    assert step.value("delay_time_s") == pytest.approx(TAU * math.log(2.0), abs=bound)
    assert step.value("rise_time_s") == pytest.approx(TAU * math.log(9.0), abs=2 * bound)
    assert step.value("settling_time_s") == pytest.approx(TAU * math.log(50.0), abs=bound)


def test_first_order_levels_and_no_overshoot():
    step = _analyse(1e-3)
    # 20 time constants: the tail is within exp(-18) of the final value, so the
    # final (the tail's median) is below the last samples by less than that and
    # the "overshoot" is of that size only.
    assert step.value("initial") == 0.0
    assert step.value("final") == pytest.approx(1.0, abs=math.exp(-18))
    assert step.value("steady_state_error") == pytest.approx(0.0, abs=math.exp(-18))
    assert step.value("overshoot_pct") == pytest.approx(0.0, abs=100 * math.exp(-18))
    assert step.value("undershoot_pct") == 0.0


def test_no_peak_time_when_no_sample_passes_the_final_level():
    # Logged to 6 decimals, the response reaches exactly 1.0 and stays there.
    t = np.arange(0.0, T_STEP + 20 * TAU, 1e-3)
    y = np.round(first_order(t, T_STEP, TAU), 6)
    (step,) = analyze_arrays(t, setpoint(t, [(T_STEP, 1.0)]), y).steps
    assert step.value("final") == 1.0
    assert step.value("overshoot_pct") == 0.0
    assert step.value("peak_time_s") is None
    assert "never passes the final level" in (step.figures["peak_time_s"].reason or "")


def test_first_order_error_integrals():
    # IAE of e = exp(-t/tau) is tau; ISE is tau/2; ITAE is tau^2 (integrals of the
    # exponential, over a segment long enough that the tail is negligible). The
    # trapezoidal rule's relative error on exp(-a t) is about (a dt)^2/12, largest
    # for ISE (a = 2/tau).
    dt = 1e-4
    step = _analyse(dt)
    relative = (2 * dt / TAU) ** 2 / 12 + 1e-7
    assert step.value("iae") == pytest.approx(TAU, rel=relative)
    assert step.value("ise") == pytest.approx(TAU / 2, rel=relative)
    assert step.value("itae") == pytest.approx(TAU**2, rel=relative)
