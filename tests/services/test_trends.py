"""Trends of a metric along the revision lineage, from a small logbook built through the
catalogue and store API (also used by the regression tests)."""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from datetime import UTC, datetime, timedelta

import numpy as np
import pandas as pd
import pytest
from sqlalchemy import event

from logbook.analysis.results import Figure, StepAnalysis, TraceAnalysis
from logbook.analysis.settings import AnalysisSettings
from logbook.errors import InputError, NotFoundError
from logbook.services import catalog
from logbook.services.trends import metric_trend, trend_summary
from logbook.stats.explain import second_order_figures
from logbook.store.engine import Database
from logbook.store.models import Spec, SpecAxis, SpecLimit, TestRun
from logbook.store.runs import RunConditions, RunEvidence, add_run, save_analysis
from tests.store.helpers import step_trace

AXIS = "x-stage"
# label, parent, change category, what changed
REVISIONS = [
    ("A", None, "other", "first build"),
    ("B", "A", "electrical", "new driver board"),
    ("C", "B", "mechanical", "softer motor coupling"),
    ("D", "C", "firmware", "status LED blinks"),
    ("E", "D", "mechanical", "stiff coupling refitted"),
]
# Damping ratio per revision: C's coupling costs damping, E restores it; omega_n stays.
# Overshoot, settling and peak time follow from them (Ogata ch. 5 relations).
ZETA = {"A": 0.69, "B": 0.69, "C": 0.52, "D": 0.52, "E": 0.69}
WN_RAD_S = 60.0
START = datetime(2026, 3, 2, 9, 0, tzinfo=UTC)
BASE_GAINS = catalog.GainParams(kp=2.0, ki=10.0, kd=0.01, loop_rate_hz=1000.0)
HOT_GAINS = catalog.GainParams(kp=2.0, ki=40.0, kd=0.01, loop_rate_hz=1000.0)


def story_figures(zeta: float, wn: float) -> dict[str, float]:
    """Figures of a 2 mm step of a loop that is second order with this zeta and omega_n."""
    return {**second_order_figures(zeta, wn).metrics(), "amplitude": 2.0}


def add_figured_run(
    session,
    *,
    revision: str,
    gains: str,
    taken_at: datetime,
    steps: Sequence[dict[str, float | None]],
    test_kind: str = "position_step",
    axis: str = AXIS,
) -> TestRun:
    """A run with a small trace and the given figures per step, as the importer stores them."""
    run = add_run(
        session,
        axis=catalog.get_axis(session, axis),
        revision=catalog.get_revision(session, axis, revision),
        gain_set=catalog.get_gain_set(session, gains),
        test_kind=test_kind,
        conditions=RunConditions(taken_at=taken_at, operator="ines"),
        evidence=RunEvidence.from_trace(
            f"{revision}-{taken_at:%Y%m%d%H%M}.csv",
            f"{axis} {revision} {gains} {test_kind} {taken_at.isoformat()}".encode(),
            step_trace(),
        ),
    )
    analysis = TraceAnalysis(
        steps=tuple(
            StepAnalysis(i, {name: Figure(value) for name, value in step.items()})
            for i, step in enumerate(steps)
        ),
        settings=AnalysisSettings(),
    )
    save_analysis(session, run, analysis)
    return run


def build_story(
    database: Database,
    *,
    seed: int = 0,
    runs: int = 8,
    zeta: dict[str, float] | None = None,
    drift: tuple[int, float] | None = None,
) -> list[int]:
    """The planted story: ``runs`` runs a revision with the base gains, one a day.

    ``drift`` = (run index, change in zeta) from that run of the axis history on
    (a coupling working loose, not a revision). Also four runs with hot integral
    gains on B and C. Returns the run ids in date order.
    """
    rng = np.random.default_rng(seed)
    zeta = zeta or ZETA
    ids = []
    with database.session(write=True) as session:
        catalog.add_axis(session, AXIS, position_unit="mm", feedback_kind="encoder")
        for label, parent, category, summary in REVISIONS:
            catalog.add_revision(
                session,
                AXIS,
                label,
                parent=parent,
                change_category=category,
                change_summary=summary,
            )
        catalog.add_gain_set(session, BASE_GAINS, name="base")
        catalog.add_gain_set(session, HOT_GAINS, name="hot-integral")
        index = 0
        for label, *_ in REVISIONS:
            for _ in range(runs):
                z = zeta[label] + rng.normal(0.0, 0.01)
                if drift is not None and index >= drift[0]:
                    z += drift[1]
                figures = story_figures(z, WN_RAD_S + rng.normal(0.0, 1.0))
                taken = START + timedelta(days=index)
                ids.append(
                    add_figured_run(
                        session, revision=label, gains="base", taken_at=taken, steps=[figures]
                    ).id
                )
                index += 1
        for label in ("B", "C"):
            for k in range(4):
                figures = story_figures(zeta[label] - 0.2 + 0.01 * k, WN_RAD_S)
                taken = START + timedelta(days=index, hours=k + 1)
                add_figured_run(
                    session, revision=label, gains="hot-integral", taken_at=taken, steps=[figures]
                )
    return ids


@contextmanager
def statements(database: Database) -> Iterator[list[str]]:
    """Collect the SQL statements run on ``database`` inside the block."""
    seen: list[str] = []

    def record(_conn, _cursor, statement, *_args) -> None:
        seen.append(statement)

    event.listen(database.engine, "before_cursor_execute", record)
    try:
        yield seen
    finally:
        event.remove(database.engine, "before_cursor_execute", record)


@pytest.fixture
def story(database: Database) -> Database:
    build_story(database)
    return database


def test_runs_come_along_the_lineage_then_by_date(story: Database) -> None:
    with story.session() as session:
        trend = metric_trend(session, AXIS, "overshoot_pct", gains="base")
    assert list(trend["revision"].unique()) == ["A", "B", "C", "D", "E"]
    assert trend.groupby("revision").size().to_dict() == dict.fromkeys("ABCDE", 8)
    assert trend["lineage_index"].is_monotonic_increasing
    for _, group in trend.groupby("revision"):
        assert group["taken_at"].is_monotonic_increasing
    assert set(trend["parent"].dropna()) == {"A", "B", "C", "D"}
    assert set(trend["unit"]) == {"%"} and set(trend["gains"]) == {"base"}
    assert (trend["steps"] == 1).all() and set(trend["test_kind"]) == {"position_step"}


def test_values_are_the_stored_figures(story: Database) -> None:
    with story.session() as session:
        trend = metric_trend(session, AXIS, "zeta", gains="base")
    # Planted: C and D lost damping (Ogata's overshoot relation used to build them).
    medians = trend.groupby("revision")["value"].median()
    assert medians["C"] == pytest.approx(0.52, abs=0.01)
    assert medians["E"] == pytest.approx(0.69, abs=0.01)


def test_without_a_gain_filter_every_gain_set_is_listed(story: Database) -> None:
    with story.session() as session:
        trend = metric_trend(session, AXIS, "overshoot_pct")
    assert trend.groupby("gains").size().to_dict() == {"base": 40, "hot-integral": 8}


def test_a_run_with_several_steps_counts_once_with_its_median(database: Database) -> None:
    build_story(database, runs=3)
    with database.session(write=True) as session:
        steps = [
            {"overshoot_pct": 4.0, "amplitude": 2.0},
            {"overshoot_pct": 9.0, "amplitude": -2.0},
            {"overshoot_pct": 5.0, "amplitude": 0.5},
        ]
        run = add_figured_run(
            session, revision="E", gains="base", taken_at=START + timedelta(days=99), steps=steps
        )
    with database.session() as session:
        trend = metric_trend(session, AXIS, "overshoot_pct", gains="base")
        small_steps_out = metric_trend(
            session, AXIS, "overshoot_pct", gains="base", amplitude_range=(1.0, 3.0)
        )
    row = trend.loc[trend["run_id"] == run.id].iloc[0]
    assert (row["steps"], row["value"]) == (3, 5.0)
    row = small_steps_out.loc[small_steps_out["run_id"] == run.id].iloc[0]
    assert (row["steps"], row["value"]) == (2, 6.5)  # |amplitude| 2 and 2 kept, 0.5 not


def test_summary_statistics_match_numpy_and_pandas(story: Database) -> None:
    with story.session() as session:
        trend = metric_trend(session, AXIS, "settling_time_s", gains="base")
        summary = trend_summary(session, AXIS, "settling_time_s", gains="base")
    assert list(summary["revision"]) == ["A", "B", "C", "D", "E"]
    for _, row in summary.iterrows():
        values = trend.loc[trend["revision"] == row["revision"], "value"]
        assert row["count"] == len(values)
        assert row["median"] == pytest.approx(np.median(values), rel=1e-12)
        assert row["q1"] == pytest.approx(values.quantile(0.25), rel=1e-12)
        assert row["iqr"] == pytest.approx(values.quantile(0.75) - values.quantile(0.25))
        assert (row["min"], row["max"]) == (values.min(), values.max())
    assert summary["spec"].isna().all() and summary["upper_limit"].isna().all()


def test_summary_shows_the_newest_applicable_spec_limits(story: Database) -> None:
    with story.session(write=True) as session:
        axis = catalog.get_axis(session, AXIS)
        for version, upper in (("1.0", 12.0), ("1.1", 10.0)):
            spec = Spec(name="stage-acceptance", version=version, test_kind="position_step")
            spec.limits = [SpecLimit(metric="overshoot_pct", upper=upper, unit="%")]
            session.add(spec)
            session.flush()
            session.add(SpecAxis(spec_id=spec.id, axis_id=axis.id))
            session.flush()
    with story.session() as session:
        summary = trend_summary(session, AXIS, "overshoot_pct", gains="base")
        with pytest.raises(NotFoundError, match="spec 'other' has no limit on overshoot_pct"):
            trend_summary(session, AXIS, "overshoot_pct", spec="other")
    assert set(summary["spec"]) == {"stage-acceptance 1.1"}
    assert set(summary["upper_limit"]) == {10.0} and summary["lower_limit"].isna().all()


def test_revisions_without_runs_appear_with_count_zero(story: Database) -> None:
    with story.session() as session:
        summary = trend_summary(session, AXIS, "overshoot_pct", gains="hot-integral")
    counts = dict(zip(summary["revision"], summary["count"], strict=True))
    assert counts == {"A": 0, "B": 4, "C": 4, "D": 0, "E": 0}
    assert pd.isna(summary.loc[summary["revision"] == "A", "median"].iloc[0])


def test_the_trend_query_never_reads_traces(story: Database) -> None:
    with story.session() as session, statements(story) as seen:
        metric_trend(session, AXIS, "overshoot_pct", gains="base", amplitude_range=(1.0, 3.0))
    assert seen, "no statement was recorded"
    assert not [s for s in seen if "traces" in s or "trace_channels" in s]


def test_several_test_kinds_need_a_choice(story: Database) -> None:
    with story.session(write=True) as session:
        add_figured_run(
            session,
            revision="A",
            gains="base",
            taken_at=START,
            steps=[{"overshoot_pct": 1.0}],
            test_kind="ramp",
        )
    with story.session() as session:
        with pytest.raises(InputError, match=r"several test kinds \(position_step, ramp\)"):
            metric_trend(session, AXIS, "overshoot_pct")
        ramp = metric_trend(session, AXIS, "overshoot_pct", test_kind="ramp")
    assert list(ramp["value"]) == [1.0]


def test_bad_requests_name_what_is_wrong(story: Database) -> None:
    with story.session() as session:
        with pytest.raises(InputError, match="unknown metric 'overshoot'"):
            metric_trend(session, AXIS, "overshoot")
        with pytest.raises(NotFoundError, match="unknown axis 'y-stage'"):
            metric_trend(session, "y-stage", "overshoot_pct")
        with pytest.raises(NotFoundError, match="unknown gain set 'none-such'"):
            metric_trend(session, AXIS, "overshoot_pct", gains="none-such")
        with pytest.raises(NotFoundError, match="no figures were computed with these"):
            metric_trend(session, AXIS, "overshoot_pct", settings=AnalysisSettings(band=0.05))
        with pytest.raises(InputError, match="amplitude range must be LOW <= HIGH"):
            metric_trend(session, AXIS, "overshoot_pct", amplitude_range=(3.0, 1.0))
