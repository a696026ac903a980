"""A realistic report built from simulated second-order step responses.

Five runs of an underdamped loop (zeta about 0.6, wn about 60 rad/s, 2 mm step,
1 kHz sampling) are analysed with the project's analysis and judged against a
spec, so the report shows genuine figures. The scenario (a "bench-x" positioning
stage) is invented.
"""

from __future__ import annotations

import hashlib
from dataclasses import replace

import numpy as np
from scipy import signal

from logbook.acceptance.rules import DecisionRule, RunValues, evaluate
from logbook.acceptance.spec_file import Limit, SpecDefinition
from logbook.analysis import ANALYSIS_VERSION, AnalysisSettings, analyze_arrays
from logbook.reports.data import (
    MetricTrend,
    ReportData,
    RevisionInfo,
    RunRecord,
    StepMarks,
    StepPlot,
    TrendPoint,
)

HOSTILE = (
    '<script>alert("x")</script>"><img src=x onerror=alert(1)>'
    "' onmouseover='alert(2)' </script><!-- & &amp;"
)

SPEC = SpecDefinition(
    name="bench-x-position",
    version="2.1",
    test_kind="position_step",
    axes=("bench-x",),
    statistic="median",
    required_runs=5,
    description="2 mm position steps at the nominal load",
    limits={
        "abs_steady_state_error": Limit(None, 0.02, "mm"),
        "overshoot_pct": Limit(None, 15.0, "%"),
        "rise_time_s": Limit(0.005, 0.080, "s"),
        "settling_time_s": Limit(None, 0.200, "s"),
    },
)


def simulated_run(
    zeta: float, wn: float, seed: int, *, noise: float = 0.002
) -> tuple[np.ndarray, ...]:
    """Time, setpoint and feedback of a 0 -> 2 mm step at t = 50 ms, with ``noise`` mm rms."""
    t = np.arange(0.0, 0.4, 0.001)
    moving = t >= 0.05
    loop = signal.lti([wn**2], [1.0, 2.0 * zeta * wn, wn**2])
    feedback = np.zeros_like(t)
    _, response = signal.step(loop, T=t[moving] - t[moving][0])
    feedback[moving] = 2.0 * response
    feedback += np.random.default_rng(seed).normal(0.0, noise, size=t.size)
    setpoint = np.where(moving, 2.0, 0.0)
    return t, setpoint, feedback


def build_report(
    *, zetas=(0.60, 0.62, 0.58, 0.61, 0.59), rule=DecisionRule.SIMPLE, spec=SPEC
) -> ReportData:
    settings = AnalysisSettings()
    values, plots, records = [], [], []
    for i, zeta in enumerate(zetas, start=1):
        t, sp, fb = simulated_run(zeta, 60.0, seed=i)
        figures = analyze_arrays(t, sp, fb, settings=settings).steps[0].to_json()
        label = f"run {100 + i}"
        values.append(RunValues(label, "position_step", figures))
        marks = StepMarks.from_values(
            figures, rise_low=settings.rise_low, rise_high=settings.rise_high, band=settings.band
        )
        plots.append(StepPlot(label, tuple(t), tuple(sp), tuple(fb), "mm", marks))
        source = f"bench-x_revC_{i:02d}.csv"
        records.append(
            RunRecord(
                label=label,
                taken_at=f"2031-03-0{i}T10:15:00+00:00",
                test_kind="position_step",
                operator="R. Okonkwo",
                source_name=source,
                source_sha256=hashlib.sha256(source.encode()).hexdigest(),
                supply_voltage_v=24.0,
                load="0.50 kg",
                temperature_c=22.5,
                notes="nominal load",
            )
        )
    evaluation = evaluate(spec, values, rule=rule)
    trends = tuple(
        MetricTrend(
            m.metric,
            m.unit,
            (
                TrendPoint("A", None if m.value is None else m.value * 1.4, 4),
                TrendPoint("B", None if m.value is None else m.value * 1.1, 6),
                TrendPoint("C", m.value, len(values)),
            ),
        )
        for m in evaluation.metrics
    )
    return ReportData(
        axis="bench-x",
        axis_description="belt-driven positioning stage, quadrature encoder",
        revision="C",
        lineage=(
            RevisionInfo("A", "2030-11-02", "other", "first build"),
            RevisionInfo("B", "2031-01-15", "mechanical", "stiffer belt tensioner"),
            RevisionInfo("C", "2031-02-20", "firmware", "velocity feedforward added"),
        ),
        gain_set="stage-tuned-3",
        gains={"form": "parallel", "kp": 4.2, "ki": 35.0, "kd": 0.012, "loop_rate_hz": 2000.0},
        evaluation=evaluation,
        runs=tuple(records),
        plots=tuple(plots),
        trends=trends,
        analysis_version=ANALYSIS_VERSION,
        analysis_settings=settings.to_dict(),
        software_version="0.1.0",
        issued_at="2031-03-06T09:00:00+00:00",
        issued_by="L. Marchetti",
    )


def hostile_copy(report_data: ReportData) -> ReportData:
    """The same report with hostile text in every field a user can write."""
    spec = replace(report_data.evaluation.spec, name=HOSTILE, description=HOSTILE, axes=(HOSTILE,))
    metrics = tuple(
        replace(m, unit=HOSTILE) if m.metric == "abs_steady_state_error" else m
        for m in report_data.evaluation.metrics
    )  # feedback-unit metrics take the spec's unit as written
    evaluation = replace(
        report_data.evaluation,
        spec=spec,
        metrics=metrics,
        runs=(HOSTILE,) + report_data.evaluation.runs[1:],
    )
    return replace(
        report_data,
        axis=HOSTILE,
        axis_description=HOSTILE,
        revision=HOSTILE,
        lineage=tuple(
            replace(r, label=HOSTILE, change_summary=HOSTILE) for r in report_data.lineage
        ),
        gain_set=HOSTILE,
        gains={**report_data.gains, "notes": HOSTILE},
        evaluation=evaluation,
        runs=tuple(
            replace(r, operator=HOSTILE, notes=HOSTILE, source_name=HOSTILE, load=HOSTILE)
            for r in report_data.runs
        ),
        plots=tuple(replace(p, run_label=HOSTILE, unit=HOSTILE) for p in report_data.plots),
        trends=tuple(
            replace(
                tr,
                points=tuple(
                    replace(pt, revision=HOSTILE + str(i)) for i, pt in enumerate(tr.points)
                ),
            )
            for tr in report_data.trends
        ),
        issued_by=HOSTILE,
    )
