"""Underdamped second-order step response: overshoot and peak time from the
closed-form relations, rise, delay and settling times from root finding.

Ogata, Modern Control Engineering, 5th ed., sec. 5-3 (transient-response
specifications of second-order systems; section from memory):
Mp = exp(-pi*zeta/sqrt(1 - zeta^2)), tp = pi/wd with wd = wn*sqrt(1 - zeta^2), and the
0-100 % rise time tr = (pi - beta)/wd with beta = arccos(zeta).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from logbook.analysis import AnalysisSettings, analyze_arrays
from logbook.analysis.model_fit import second_order_step
from tests.analysis.signals import second_order, setpoint

WN = 50.0
DEFAULTS = AnalysisSettings()
T_STEP = 0.02
DT = 1e-4
ZETAS = [0.2, 0.4, 0.6, 0.8]


def _step(zeta: float, settings: AnalysisSettings = DEFAULTS):
    t = np.arange(0.0, T_STEP + 40.0 / (zeta * WN), DT)
    y = second_order(t, T_STEP, zeta, WN)
    (step,) = analyze_arrays(t, setpoint(t, [(T_STEP, 1.0)]), y, settings=settings).steps
    return step


def _peak_time(zeta: float) -> float:
    return math.pi / (WN * math.sqrt(1 - zeta**2))


def _g(zeta: float):
    return lambda tau: float(second_order_step(np.array([tau]), zeta, WN)[0])


def _last_band_exit(zeta: float, band: float) -> float:
    """Settling time of the analytic response: the last instant |g - 1| = band,
    bracketed on a fine grid and refined by brentq."""
    g = _g(zeta)
    grid = np.linspace(0.0, 40.0 / (zeta * WN), 400_001)
    outside = np.flatnonzero(np.abs(second_order_step(grid, zeta, WN) - 1.0) > band)
    a, b = grid[outside[-1]], grid[outside[-1] + 1]
    edge = 1.0 + band if g(a) > 1.0 else 1.0 - band
    return brentq(lambda tau: g(tau) - edge, a, b, xtol=1e-12)


@pytest.mark.parametrize("zeta", ZETAS)
def test_overshoot_matches_ogata(zeta):
    mp = math.exp(-math.pi * zeta / math.sqrt(1 - zeta**2))
    # The largest sample lies within dt/2 of the true peak, where |y''| = wn^2 * Mp,
    # so it is low by at most wn^2 * Mp * (dt/2)^2 / 2.
    sampling = WN**2 * mp * (DT / 2) ** 2 / 2
    assert _step(zeta).value("overshoot_pct") == pytest.approx(100 * mp, abs=100 * sampling)


@pytest.mark.parametrize("zeta", ZETAS)
def test_peak_time_matches_ogata(zeta):
    assert _step(zeta).value("peak_time_s") == pytest.approx(_peak_time(zeta), abs=DT)


@pytest.mark.parametrize("zeta", ZETAS)
def test_rise_and_delay_match_root_finding(zeta):
    g, tp = _g(zeta), _peak_time(zeta)
    t10, t50, t90 = (brentq(lambda tau, p=p: g(tau) - p, 0.0, tp) for p in (0.1, 0.5, 0.9))
    step = _step(zeta)
    assert step.value("rise_start_s") == pytest.approx(t10, abs=DT)
    assert step.value("delay_time_s") == pytest.approx(t50, abs=DT)
    assert step.value("rise_time_s") == pytest.approx(t90 - t10, abs=DT)


@pytest.mark.parametrize("zeta", ZETAS)
@pytest.mark.parametrize("band", [0.02, 0.05])
def test_settling_matches_root_finding(zeta, band):
    step = _step(zeta, AnalysisSettings(band=band))
    expected = _last_band_exit(zeta, band)
    assert step.value("settling_time_s") == pytest.approx(expected, abs=DT)
    # Ogata's envelope 1 + exp(-zeta wn t)/sqrt(1 - zeta^2) bounds the response, so
    # the settling time can be no later than the envelope's entry into the band.
    envelope = math.log(1.0 / (band * math.sqrt(1 - zeta**2))) / (zeta * WN)
    assert step.value("settling_time_s") <= envelope + DT


@pytest.mark.parametrize("zeta", ZETAS)
def test_zero_to_hundred_rise_time_matches_ogata(zeta):
    wd = WN * math.sqrt(1 - zeta**2)
    expected = (math.pi - math.acos(zeta)) / wd
    step = _step(zeta, AnalysisSettings(rise_low=0.0, rise_high=1.0))
    assert step.value("rise_time_s") == pytest.approx(expected, abs=DT)
