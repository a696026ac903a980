"""Step detection, the level estimator, result objects and settings."""

from __future__ import annotations

import json
import math
import pickle

import numpy as np
import pytest

from logbook.analysis import METRICS, AnalysisSettings, analyze_arrays
from logbook.analysis.analyze import transient_figures
from logbook.analysis.levels import median, tail_median
from logbook.analysis.results import Figure, StepAnalysis
from logbook.analysis.steps import Step, find_steps


def test_steps_up_and_down_with_their_segments():
    sp = np.array([0.0, 0.0, 1.0, 1.0, 1.0, -2.0, -2.0, 0.5])
    assert find_steps(sp) == (
        Step(start=2, end=5, before=0.0, after=1.0),
        Step(start=5, end=7, before=1.0, after=-2.0),
        Step(start=7, end=8, before=-2.0, after=0.5),
    )


def test_float_noise_in_the_setpoint_is_not_a_step():
    sp = np.array([0.0, 1e-12, 0.0, 10.0, 10.0 + 1e-9, 10.0])
    (step,) = find_steps(sp)
    assert step.start == 3
    assert find_steps(np.zeros(5)) == ()


def test_steps_of_a_setpoint_whose_range_overflows_a_double():
    # max - min = 2e308 is beyond the largest double; the threshold must not become
    # infinite and swallow every step.
    sp = np.array([0.0, 1e308, 1e308, -1e308])
    assert find_steps(sp) == (
        Step(start=1, end=3, before=0.0, after=1e308),
        Step(start=3, end=4, before=1e308, after=-1e308),
    )


def test_tail_median_ignores_spikes_and_takes_the_window_by_time():
    # Non-uniform clock: 90 samples in the first 0.9 s, 100 in the last 0.1 s.
    t = np.concatenate((np.linspace(0.0, 0.9, 90, endpoint=False), np.linspace(0.9, 1.0, 100)))
    values = np.where(t >= 0.9, 5.0, 0.0)
    values[-10:-5] = 1e3  # spikes in 5 % of the window
    assert tail_median(t, values, 0, len(t), window=0.1) == 5.0


def test_tail_median_of_gaussian_noise():
    # Standard error of the median of N normal samples: sqrt(pi/2) sigma / sqrt(N).
    rng = np.random.default_rng(9)
    n, sigma = 10_000, 0.01
    t = np.arange(n, dtype=float)
    values = 3.0 + rng.normal(0.0, sigma, n)
    error = math.sqrt(math.pi / 2) * sigma / math.sqrt(n // 10)
    assert tail_median(t, values, 0, n, window=0.1) == pytest.approx(3.0, abs=4 * error)


def test_every_step_reports_every_catalogue_figure_in_order():
    t = np.linspace(0.0, 1.0, 1001)
    sp = np.where(t >= 0.2, 1.0, 0.0)
    y = np.where(t >= 0.2, 1.0 - np.exp(-(t - 0.2) / 0.05), 0.0)
    analysis = analyze_arrays(t, sp, y)
    (payload,) = analysis.to_json()
    assert list(payload) == list(METRICS)
    assert json.loads(json.dumps(payload)) == payload
    assert all(v is None or isinstance(v, float) for v in payload.values())
    # Undetermined figures carry a reason.
    step = analysis.steps[0]
    assert all(f.reason for f in step.figures.values() if f.value is None)
    assert analysis.settings == AnalysisSettings()


def test_step_analysis_is_read_only_picklable_and_checked():
    step = StepAnalysis(0, {"overshoot_pct": Figure(3.0)})
    with pytest.raises(TypeError):
        step.figures["overshoot_pct"] = Figure(4.0)  # type: ignore[index]
    assert pickle.loads(pickle.dumps(step)) == step
    assert step.to_json()["rise_time_s"] is None
    with pytest.raises(ValueError, match="not in the metric catalogue"):
        StepAnalysis(0, {"rise_time_ms": Figure(1.0)})


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"rise_low": 0.9, "rise_high": 0.1}, "rise limits"),
        ({"band": 0.0}, "settling band"),
        ({"level_estimator": "mean"}, "unknown level estimator"),
        ({"level_window": 0.0}, "level window"),
        ({"effort_limit": -1.0}, "effort limit"),
        ({"hunting_min_share": 1.5}, "hunting share"),
    ],
)
def test_bad_settings(kwargs, match):
    with pytest.raises(ValueError, match=match):
        AnalysisSettings(**kwargs)


def test_crossings_before_the_logged_step_count_from_the_step():
    # Sampled every 0.1 s, the feedback is already half-way at the first sample with
    # the new setpoint: the interpolated 10 % crossing would fall before t_step; it
    # is reported at t_step, and the rise time is measured from there too.
    t = np.array([0.0, 0.1, 0.2, 0.3, 0.4])
    (step,) = analyze_arrays(t, [0, 1, 1, 1, 1], [0.0, 0.5, 0.9, 1.0, 1.0]).steps
    assert step.value("rise_start_s") == 0.0
    assert step.value("delay_time_s") == pytest.approx(0.0, abs=1e-15)
    assert step.value("rise_time_s") == pytest.approx(0.1, abs=1e-15)  # 0.9 reached at 0.2 s


@pytest.mark.parametrize(
    "values",
    [
        np.random.default_rng(3).normal(5.0, 0.01, 1001),  # noisy level, odd count
        np.random.default_rng(4).normal(5.0, 0.01, 1000),  # even count: mean of the middle two
        np.round(np.random.default_rng(5).normal(1000.0, 0.4, 4000)),  # encoder counts
        np.diff(np.arange(5500, 10001) / 1e4),  # sample intervals of a uniform clock
        np.array([2.0]),
    ],
)
def test_median_is_numpys_median(values):
    # The level estimator's median is numpy's number exactly (numpy as the reference).
    assert median(values) == np.median(values)


def test_transient_figures_are_those_of_the_whole_analysis():
    t = np.linspace(0.0, 2.0, 2001)
    sp = np.where(t >= 1.2, -1.0, np.where(t >= 0.2, 2.0, 0.0))
    y = np.convolve(sp, np.full(40, 1 / 40))[: len(t)]
    quick = transient_figures(t, sp, y)
    full = analyze_arrays(t, sp, y).steps
    assert len(quick) == len(full) == 2
    for figures, step in zip(quick, full, strict=True):
        assert figures == {name: step.figures[name] for name in figures}
        assert {"rise_time_s", "overshoot_pct", "settling_time_s", "final"} <= set(figures)
