"""Hunting: a sustained oscillation in the settled part, its size and frequency.

A limit cycle is modelled as a sinusoid riding on a well-damped step response
(common practice: friction and backlash make position loops hunt this way). The
frequency is checked to within one FFT bin (1 / length of the settled part), the
resolution of the method.
"""

from __future__ import annotations

import numpy as np
import pytest

from logbook.analysis import AnalysisSettings, analyze_arrays
from logbook.analysis.oscillation import hann_window
from tests.analysis.signals import second_order, setpoint

DEFAULTS = AnalysisSettings()
T_STEP = 0.1
DT = 1e-4
HUNT_HZ = 23.7  # not a whole number of periods in the window


def _step(ripple: float, *, noise: float = 0.0, settings: AnalysisSettings = DEFAULTS):
    t = np.arange(0.0, 2.1, DT)
    y = second_order(t, T_STEP, 0.7, 60.0)
    y += np.where(t >= T_STEP, ripple * np.sin(2 * np.pi * HUNT_HZ * (t - T_STEP)), 0.0)
    y += np.random.default_rng(5).normal(0.0, noise, len(t))
    (step,) = analyze_arrays(t, setpoint(t, [(T_STEP, 1.0)]), y, settings=settings).steps
    return t, step


def test_hunting_inside_the_band_is_measured_and_flagged():
    # +-1.5 % ripple: inside the 2 % band (the step settles), but its 3 % peak-to-peak
    # exceeds half the band's 4 % width.
    t, step = _step(0.015)
    assert step.value("settling_time_s") is not None
    half = (t[-1] - T_STEP) / 2  # the settled part examined: the last half
    assert step.value("hunting_freq_hz") == pytest.approx(HUNT_HZ, abs=1.0 / half)
    assert step.value("hunting_pp") == pytest.approx(0.03, rel=0.02)
    assert step.value("hunting_flag") == 1.0


def test_small_ripple_is_measured_but_not_flagged():
    # +-0.4 %: peak-to-peak 0.8 % is below hunting_fraction (0.5) of the 4 % band width.
    _, step = _step(0.004)
    assert step.value("hunting_freq_hz") == pytest.approx(HUNT_HZ, abs=1.0)
    assert step.value("hunting_flag") == 0.0
    # ... and flagged once the threshold is lowered below 0.8 / 4 = 0.2 of the width.
    _, strict = _step(0.004, settings=AnalysisSettings(hunting_fraction=0.15))
    assert strict.value("hunting_flag") == 1.0


def test_noise_alone_is_not_hunting():
    _, step = _step(0.0, noise=0.002)
    assert step.value("hunting_freq_hz") is None
    assert "no sustained oscillation" in (step.figures["hunting_freq_hz"].reason or "")
    assert step.value("hunting_flag") == 0.0
    assert step.value("hunting_pp") > 0.0  # the noise's own peak-to-peak


def test_limit_cycle_larger_than_the_band():
    # +-5 %: the response never settles; the last half of the segment is examined.
    t, step = _step(0.05)
    assert step.value("settling_time_s") is None
    half = (t[-1] - T_STEP) / 2
    assert step.value("hunting_freq_hz") == pytest.approx(HUNT_HZ, abs=1.0 / half)
    assert step.value("hunting_pp") == pytest.approx(0.10, rel=0.02)
    assert step.value("hunting_flag") == 1.0


def test_a_decaying_transient_is_not_hunting():
    _, step = _step(0.0)
    assert step.value("hunting_freq_hz") is None
    assert step.value("hunting_flag") == 0.0


@pytest.mark.parametrize("n", [2, 3, 16, 17, 4096, 4375, 100_000])
def test_hann_window_is_numpys(n):
    # The spectrum's window is numpy's Hann window to the last bit (numpy as the reference).
    np.testing.assert_array_equal(hann_window(n), np.hanning(n))
