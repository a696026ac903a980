"""The step-response figure marks the step's figures where they belong."""

from __future__ import annotations

import math

import pytest

from logbook.acceptance.spec_file import Limit
from logbook.analysis import AnalysisSettings, analyze_arrays
from logbook.reports.data import MetricTrend, StepMarks, StepPlot, TrendPoint
from logbook.reports.figures import step_figure, trend_figure

from .sample_report import simulated_run

ZETA, WN = 0.6, 60.0
DT = 0.001  # sample period of simulated_run


@pytest.fixture(scope="module")
def figure():
    t, sp, fb = simulated_run(ZETA, WN, seed=0, noise=0.0)
    settings = AnalysisSettings()
    values = analyze_arrays(t, sp, fb, settings=settings).steps[0].to_json()
    marks = StepMarks.from_values(values, rise_low=0.1, rise_high=0.9, band=settings.band)
    return step_figure(StepPlot("run 1", tuple(t), tuple(sp), tuple(fb), "mm", marks)), marks


def test_peak_marker_at_the_second_order_peak(figure):
    fig, _ = figure
    peak = next(trace for trace in fig.data if trace.name.startswith("peak"))
    # Ogata, Modern Control Engineering 5th ed., sec. 5-3:
    # tp = pi/wd, Mp = exp(-zeta pi / sqrt(1 - zeta^2))
    wd = WN * math.sqrt(1 - ZETA**2)
    mp = math.exp(-ZETA * math.pi / math.sqrt(1 - ZETA**2))
    assert peak.x[0] == pytest.approx(math.pi / wd, abs=DT)
    assert peak.y[0] == pytest.approx(2.0 * (1 + mp), rel=2e-3)


def test_rise_interval_band_and_settling_line(figure):
    fig, marks = figure
    shapes = {shape.type: shape for shape in fig.layout.shapes}
    rise = next(s for s in fig.layout.shapes if s.type == "rect" and s.xref == "x")
    assert rise.x0 == marks.rise_start_s
    assert rise.x1 == pytest.approx(marks.rise_start_s + marks.rise_time_s)
    band = next(s for s in fig.layout.shapes if s.type == "rect" and s.yref == "y")
    assert band.y0 == pytest.approx(marks.final - 0.02 * abs(marks.amplitude))
    assert band.y1 == pytest.approx(marks.final + 0.02 * abs(marks.amplitude))
    assert shapes["line"].x0 == marks.settling_time_s
    # time is plotted from the step: the setpoint jumps at x = 0
    setpoint = fig.data[0]
    first_high = next(x for x, y in zip(setpoint.x, setpoint.y, strict=True) if y > 0)
    assert first_high == pytest.approx(0.0, abs=DT / 2)


def test_marks_need_the_step_time():
    with pytest.raises(ValueError, match="t_step_s"):
        StepMarks.from_values({}, rise_low=0.1, rise_high=0.9, band=0.02)


def test_trend_draws_both_limits_and_enlarges_the_reported_revision():
    trend = MetricTrend("rise_time_s", "s", (TrendPoint("A", 0.05, 3), TrendPoint("B", None, 0),
                                             TrendPoint("C", 0.03, 5)))  # fmt: skip
    fig = trend_figure(trend, Limit(0.005, 0.08, "s"))
    assert list(fig.data[0].x) == ["A", "B", "C"]
    assert fig.data[0].y[1] is None  # a revision without runs leaves a gap
    assert list(fig.data[0].marker.size) == [8, 8, 14]
    assert sorted(s.y0 for s in fig.layout.shapes) == [0.005, 0.08]
