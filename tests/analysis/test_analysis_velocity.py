"""Velocity from quantised, non-uniformly sampled position.

The estimator is the mean speed over a centred window of width 2h. For a known
motion the mean speed over the window has a closed form, so the only errors left
are the quantisation (at most about q/h) and linear interpolation between samples.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from logbook.analysis import analyze_arrays, estimate_velocity
from logbook.analysis.velocity import default_window
from logbook.errors import InputError


def test_constant_speed_from_encoder_counts():
    # 4000 counts/s sampled at 10 kHz: 0.4 count per sample, so a sample-to-sample
    # difference reads 0 or 10000 counts/s.
    t = np.arange(0.0, 1.0, 1e-4)
    counts = np.floor(4000.0 * t + 0.3)
    window = 0.01
    v = estimate_velocity(t, counts, window_s=window)
    interior = (t > window) & (t < t[-1] - window)
    # Quantisation of one count at each window end: |error| <= 1 count / h.
    assert np.abs(v[interior] - 4000.0).max() <= 1.0 / (window / 2)


def test_default_window_meets_its_resolution_target():
    t = np.arange(0.0, 10.0, 1e-4)
    counts = np.floor(4000.0 * t + 0.3)
    window = default_window(t, counts)
    # The rule: 2h = 2 d / (1 % * v_peak) with d = 1 count -> 2h = 0.05 s here,
    # below the cap of 1 % of the 10 s trace.
    assert window == pytest.approx(2 * 1.0 / (0.01 * 4000.0), rel=0.01)
    v = estimate_velocity(t, counts)
    interior = (t > window) & (t < t[-1] - window)
    assert np.abs(v[interior] - 4000.0).max() <= 0.01 * 4000.0 * 1.01


def test_default_window_is_capped_at_one_percent_of_the_trace():
    t = np.arange(0.0, 1.0, 1e-4)
    assert default_window(t, np.floor(4000.0 * t + 0.3)) == pytest.approx(0.01, rel=1e-3)


def test_sinusoidal_motion_with_irregular_samples():
    # x = X sin(w t): the mean speed over [t - h, t + h] is X w cos(w t) sin(w h)/(w h).
    # Interpolating x between samples errs by <= gap^2/8 * X w^2 at each window end.
    rng = np.random.default_rng(4)
    t = np.cumsum(rng.uniform(0.5e-3, 1.5e-3, 3000))
    amplitude, w, h = 2.0, 2 * math.pi * 3.0, 0.01
    x = amplitude * np.sin(w * t)
    v = estimate_velocity(t, x, window_s=2 * h)
    expected = amplitude * w * np.cos(w * t) * math.sin(w * h) / (w * h)
    gap = float(np.diff(t).max())
    bound = 2 * (gap**2 / 8 * amplitude * w**2) / (2 * h)
    interior = (t > t[0] + h) & (t < t[-1] - h)
    assert np.abs(v[interior] - expected[interior]).max() <= bound


def test_speed_step_from_quantised_position():
    # First-order speed response V(1 - exp(-(t - ts)/tau)); the encoder reports the
    # integral of the speed in whole counts. The 10-90 % rise of the estimated speed
    # is tau*ln 9 (first-order formula) to within the window width: a centred moving
    # mean moves each crossing by less than half its width.
    speed, tau, t_step = 20000.0, 0.02, 0.05
    t = np.arange(0.0, 0.5, 1e-4)
    since = np.maximum(t - t_step, 0.0)
    position = speed * (since - tau * (1.0 - np.exp(-since / tau)))
    counts = np.floor(position)
    v = estimate_velocity(t, counts)
    window = default_window(t, counts)
    (step,) = analyze_arrays(t, np.where(t >= t_step, speed, 0.0), v).steps
    assert step.value("rise_time_s") == pytest.approx(tau * math.log(9), abs=window + 1e-4)
    assert step.value("final") == pytest.approx(speed, rel=0.01)


@pytest.mark.parametrize(
    ("time", "position", "kwargs", "match"),
    [
        ([0.0, 1.0, 2.0], [0.0, 1.0], {}, "has 2 samples, the time axis 3"),
        ([0.0, 1.0, 1.0], [0.0, 1.0, 2.0], {}, "duplicate timestamp at sample 2"),
        ([0.0, 1.0, 2.0], [0.0, float("nan"), 2.0], {}, "NaN at sample 1"),
        ([0.0, 1.0, 2.0], [0.0, 1.0, 2.0], {"window_s": 0.0}, "window must be positive"),
        ([0.0], [0.0], {}, "only 1 samples; at least 2"),
    ],
)
def test_bad_input(time, position, kwargs, match):
    with pytest.raises(InputError, match=match):
        estimate_velocity(np.array(time), np.array(position), **kwargs)
