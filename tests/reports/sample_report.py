"""A realistic report built from simulated second-order step responses.

Five runs of an underdamped loop (zeta about 0.6, wn about 60 rad/s, 2 mm step,
1 kHz sampling) are analysed with the project's analysis and judged against a
spec, so the report shows genuine figures. The scenario (a "bench-x" positioning
stage) is invented.
"""

from __future__ import annotations

import hashlib
from dataclasses import replace
from datetime import UTC, datetime, timedelta

import numpy as np
from scipy import signal

from logbook.acceptance.rules import DecisionRule, RunValues, evaluate
from logbook.acceptance.spec_file import Limit, SpecDefinition, parse_spec_text
from logbook.analysis import ANALYSIS_VERSION, AnalysisSettings, analyze_arrays, analyze_trace
from logbook.reports.data import (
    MetricTrend,
    ReportData,
    RevisionInfo,
    RunRecord,
    StepMarks,
    StepPlot,
    TrendPoint,
)
from logbook.services import catalog, specs
from logbook.store.runs import RunConditions, RunEvidence, add_run, save_analysis
from logbook.trace import Channel, Role, Trace

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


# --- a bench logbook in a database -------------------------------------------------

BENCH_SPEC_TOML = """
name = "bench-x-position"
version = "1.0"
test_kind = "position_step"
axes = ["bench-x"]
statistic = "median"
required_runs = 5
description = "2 mm position steps at the nominal load"
[limits.overshoot_pct]
upper = 15.0
unit = "%"
[limits.rise_time_s]
lower = 0.005
upper = 0.080
unit = "s"
[limits.settling_time_s]
upper = 0.200
unit = "s"
"""

# revision -> damping ratios of its runs (wn = 60 rad/s): B is underdamped and fails
# the 15 % overshoot limit, C passes; A has too few runs for the spec.
BENCH_RUNS = {
    "A": (0.50, 0.52, 0.48),
    "B": (0.40, 0.41, 0.39, 0.40, 0.42),
    "C": (0.60, 0.62, 0.58, 0.61, 0.59),
}


def capture_bytes(t: np.ndarray, sp: np.ndarray, fb: np.ndarray) -> bytes:
    """The run's samples as the CSV file they came from (unique per run via the noise)."""
    rows = [f"{a:.4f},{b:.1f},{c:.9f}" for a, b, c in zip(t, sp, fb, strict=True)]
    return ("t [s],setpoint [mm],position [mm]\n" + "\n".join(rows) + "\n").encode()


def add_simulated_run(session, *, axis, revision, gain_set, zeta, seed, test_kind="position_step"):
    """Store one simulated run with its trace and figures (default analysis settings)."""
    t, sp, fb = simulated_run(zeta, 60.0, seed)
    trace = Trace(
        (
            Channel("t [s]", Role.TIME, "s", t),
            Channel("setpoint [mm]", Role.SETPOINT, "mm", sp),
            Channel("position [mm]", Role.FEEDBACK, "mm", fb),
        )
    )
    run = add_run(
        session,
        axis=axis,
        revision=revision,
        gain_set=gain_set,
        test_kind=test_kind,
        conditions=RunConditions(
            taken_at=datetime(2031, 3, 1, 9, 0, tzinfo=UTC) + timedelta(hours=seed),
            operator="R. Okonkwo",
            supply_voltage_v=24.0,
            load_value=0.5,
            load_unit="kg",
            temperature_c=22.5,
        ),
        evidence=RunEvidence.from_trace(
            f"bench-x_{revision.label}_{seed:03d}.csv", capture_bytes(t, sp, fb), trace
        ),
    )
    save_analysis(session, run, analyze_trace(trace))
    return run


def seed_bench(database, runs=BENCH_RUNS):
    """Axis bench-x with revisions A -> B -> C, gain set stage-tuned-3, the runs and
    the spec of :data:`BENCH_SPEC_TOML`."""
    with database.session(write=True) as session:
        axis = catalog.add_axis(session, "bench-x", position_unit="mm", feedback_kind="encoder",
                                description="belt-driven positioning stage")  # fmt: skip
        gains, _ = catalog.add_gain_set(
            session, catalog.GainParams(kp=4.2, ki=35.0, kd=0.012, loop_rate_hz=2000.0),
            name="stage-tuned-3",
        )  # fmt: skip
        parent = None
        seed = 0
        for label, zetas in runs.items():
            revision = catalog.add_revision(session, "bench-x", label, parent=parent,
                                            change_summary=f"build {label}")  # fmt: skip
            parent = label
            for zeta in zetas:
                seed += 1
                add_simulated_run(session, axis=axis, revision=revision, gain_set=gains,
                                  zeta=zeta, seed=seed)  # fmt: skip
        spec = parse_spec_text(BENCH_SPEC_TOML, fmt="toml", source="bench-x.toml")
        specs.add_spec(session, spec, source_text=BENCH_SPEC_TOML)
    return database
