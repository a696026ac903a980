"""Read models of the front end, on the small logbook of tests/ui/small_logbook.py."""

from __future__ import annotations

import math
from collections.abc import Iterator
from datetime import date
from pathlib import Path

import numpy as np
import pytest

from logbook.analysis.catalog import METRICS
from logbook.errors import InputError, NotFoundError
from logbook.services import catalog, reporting, views
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from tests.services.capture_files import write_capture
from tests.ui.small_logbook import SPEC_NAME, small_logbook, small_logbook_template

__all__ = ["small_logbook", "small_logbook_template"]

SAMPLE_PERIOD = 0.001  # the captures are sampled at 1 kHz
TAU = {"A": 0.020, "B": 0.030, "C": 0.020}  # per revision of x-stage


@pytest.fixture
def bench(small_logbook: Path) -> Iterator[Database]:
    database = Database(resolve_url(str(small_logbook)))
    yield database
    database.dispose()


def test_the_run_table_carries_each_runs_figures(bench: Database) -> None:
    with bench.session() as session:
        table = views.run_table(session, views.RunFilter("x-stage"))
    frame = table.frame
    assert len(frame) == 19
    assert list(frame["taken_at"]) == sorted(frame["taken_at"], reverse=True)  # newest first
    assert table.units["rise_time_s"] == "s" and table.units["steady_state_error"] == "mm"
    tau = frame["revision"].map(TAU)
    # First-order response: 10-90 % rise tau·ln 9, 2 % settling tau·ln 50 (follows from
    # the exponential); within a sample period, plus the noise's effect on the crossings.
    assert np.allclose(frame["rise_time_s"], tau * math.log(9), atol=2 * SAMPLE_PERIOD)
    assert np.allclose(frame["settling_time_s"], tau * math.log(50), atol=4 * SAMPLE_PERIOD)
    assert list(frame["lineage_index"].drop_duplicates()) == [2, 1, 0]  # C, B, A
    assert not frame["locked"].any()


def test_run_filters_combine_and_date_bounds_are_inclusive(bench: Database) -> None:
    with bench.session() as session:

        def ids(**given: object) -> list[int]:
            return list(
                views.run_table(session, views.RunFilter("x-stage", **given)).frame["run_id"]
            )

        assert len(ids(revision="B")) == 8
        assert len(ids(gains="base", operator="dana")) == 8  # revision A
        assert len(ids(gains="stiff", operator="lee")) == 0
        one_day = ids(since=date(2026, 3, 11), until=date(2026, 3, 11))
        assert len(one_day) == 1
        assert len(ids(since=date(2026, 4, 1))) == 11  # B and C
        with pytest.raises(NotFoundError, match="unknown revision 'Z'"):
            ids(revision="Z")


def test_choices_summary_and_revision_table(bench: Database) -> None:
    with bench.session() as session:
        choices = views.axis_choices(session, "x-stage")
        summary = views.axis_summary(session).set_index("axis")
        revisions = views.revision_table(session, "x-stage")
        gains = views.gain_table(session).set_index("gains")
    assert choices.revisions == ("A", "B", "C")
    assert choices.gains == ("base", "stiff") and choices.operators == ("dana", "lee")
    assert (choices.first_day, choices.last_day) == (date(2026, 3, 10), date(2026, 5, 12))
    assert summary.loc["x-stage", "latest_revision"] == "C"  # the newest revision date
    assert summary.loc["x-stage", "runs"] == 19 and summary.loc["y-stage", "runs"] == 2
    assert list(revisions["parent"].fillna("-")) == ["-", "A", "B"]
    assert list(revisions["runs"]) == [8, 8, 3]
    assert gains.loc["base", "runs"] == 18 and gains.loc["stiff", "kp"] == 4.0


def test_the_data_version_changes_when_rows_are_added(bench: Database, tmp_path: Path) -> None:
    with bench.session() as session:
        before = views.data_version(session)
    with bench.session(write=True) as session:
        catalog.add_revision(session, "y-stage", "R2", parent="R1")
    with bench.session() as session:
        after = views.data_version(session)
        assert after != before
        assert views.data_version(session) == after  # stable while nothing changes


def test_an_opened_run_has_its_samples_and_step_figures(bench: Database) -> None:
    with bench.session() as session:
        run = views.open_run(session, 1)
        other = views.open_run(session, 10)
        with pytest.raises(NotFoundError, match="no run 999"):
            views.open_run(session, 999)
    assert len(run.time) == len(run.setpoint) == len(run.feedback) == 300
    assert run.effort is not None and run.effort_unit == "V" and run.feedback_unit == "mm"
    [step] = run.steps
    assert step["t_step_s"] == pytest.approx(0.05)  # the writer's step time
    assert step["setpoint_after"] == pytest.approx(2.0)
    assert run.label == "run 1 · rev A · 2026-03-10"
    assert (run.rise_low, run.rise_high, run.band) == (0.10, 0.90, 0.02)
    side = views.side_by_side([run, other], step=0).set_index("metric")
    assert list(side.index) == list(METRICS)
    assert list(side.columns) == ["unit", run.label, other.label]
    assert side.loc["rise_time_s", run.label] == step["rise_time_s"]
    assert side.loc["rise_time_s", "unit"] == "s"


def test_a_capture_preview_finds_columns_by_name(tmp_path: Path) -> None:
    path = write_capture(tmp_path / "p.csv", metadata={"axis": "x-stage"})
    preview = views.preview_capture(path, rows=5)
    assert preview.rows == 300 and len(preview.head) == 5
    assert preview.detected == {
        "time": "t [s]",
        "setpoint": "setpoint [mm]",
        "feedback": "position [mm]",
        "effort": "effort [V]",
    }
    assert preview.metadata == {"axis": "x-stage"}
    bad = tmp_path / "bad.csv"
    bad.write_text("t [s],setpoint [mm],position [mm]\n0,0,0\n0.001,1,x\n0.002,1,1\n")
    with pytest.raises(InputError, match="line 3"):
        views.preview_capture(bad)


def test_specs_verdicts_and_locks(bench: Database, tmp_path: Path) -> None:
    with bench.session() as session:
        specs = views.spec_table(session)
        assert list(specs["spec"]) == [SPEC_NAME]
        assert "settling_time_s ≤ 0.1 s" in specs["limits"].iloc[0]
        assert views.spec_table(session, "y-stage").empty
        assert views.judged_metrics(session, "x-stage") == (
            "rise_time_s",  # catalogue order
            "overshoot_pct",
            "settling_time_s",
        )
        assert views.judged_metrics(session, "y-stage") == ()
        failing = views.evaluation(session, axis="x-stage", revision="B", spec=SPEC_NAME)
        verdicts = views.latest_verdicts(session)
    # B settles in tau·ln 50 = 117 ms against the 100 ms limit; C in 78 ms.
    assert str(failing.verdict) == "fail"
    assert {m.metric: str(m.verdict) for m in failing.metrics}["settling_time_s"] == "fail"
    [row] = verdicts.to_dict("records")
    assert (row["axis"], row["revision"], row["gains"], row["verdict"]) == (
        "x-stage",
        "C",
        "stiff",
        "pass",
    )
    assert row["not_passed"] == ""
    reporting.issue_report(
        bench, axis="x-stage", revision="C", spec=SPEC_NAME, out=tmp_path / "r.html"
    )
    with bench.session() as session:
        frame = views.run_table(session, views.RunFilter("x-stage")).frame
        revisions = views.revision_table(session, "x-stage").set_index("revision")
    assert set(frame.loc[frame["locked"], "revision"]) == {"C"}
    assert revisions.loc["C", "locked_runs"] == 3 and revisions.loc["B", "locked_runs"] == 0
