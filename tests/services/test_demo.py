"""The demo logbook: built through the importer, with every planted effect visible.

The planted story is the scenario's (docs/demo-scenario.md); these checks read the
figures stored by the import, not the simulator, and demand that each effect
stands clear of the run-to-run spread: every affected run is beyond every
unaffected run of the comparison.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner
from sqlalchemy import select

from logbook.acceptance.rules import Verdict
from logbook.cli import main
from logbook.errors import ConflictError, LockedError
from logbook.reports.readback import read_report_file
from logbook.services.demo import DemoSummary, build_demo, demo_data_dir
from logbook.services.regressions import find_regressions
from logbook.services.reporting import issue_report, verify_report
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from logbook.store.models import AnalysisResult, Axis, GainSet, HardwareRevision, TestRun


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> tuple[DemoSummary, Database]:
    path = tmp_path_factory.mktemp("demo") / "demo-logbook.db"
    summary = build_demo(path)
    database = Database(resolve_url(str(path)))
    yield summary, database
    database.dispose()


def values(database: Database, axis: str, revision: str, gains: str, metric: str) -> list[float]:
    """The metric's first-step value of every run of (axis, revision, gains)."""
    with database.session() as session:
        rows = session.scalars(
            select(AnalysisResult.value)
            .join(TestRun, TestRun.id == AnalysisResult.run_id)
            .join(Axis, Axis.id == TestRun.axis_id)
            .join(HardwareRevision, HardwareRevision.id == TestRun.revision_id)
            .join(GainSet, GainSet.id == TestRun.gain_set_id)
            .where(
                Axis.name == axis,
                HardwareRevision.label == revision,
                GainSet.name == gains,
                AnalysisResult.metric == metric,
                AnalysisResult.step_index == 0,
            )
        ).all()
    assert len(rows) >= 5, f"{axis} {revision} {gains}: only {len(rows)} runs"
    return [v for v in rows if v is not None]


def test_every_capture_of_the_manifest_is_imported(demo: tuple[DemoSummary, Database]) -> None:
    summary, database = demo
    manifest = json.loads((demo_data_dir() / "scenario.json").read_text())
    assert summary.imported == len(manifest["captures"])
    assert {axis for axis, _, _ in summary.axes} == {a["name"] for a in manifest["axes"]}
    assert all(revisions >= 4 for _, revisions, _ in summary.axes)
    with database.session() as session:
        assert len(session.scalars(select(TestRun.id)).all()) == len(manifest["captures"])


def test_degraded_revision_costs_damping_and_the_next_fixes_it(
    demo: tuple[DemoSummary, Database],
) -> None:
    _, database = demo
    for gains in ("stage-pid-v1", "stage-pd-soft"):
        before = values(database, "x-stage", "B", gains, "overshoot_pct")
        degraded = values(database, "x-stage", "C", gains, "overshoot_pct")
        fixed = values(database, "x-stage", "D", gains, "overshoot_pct")
        assert min(degraded) > max(before) and min(degraded) > max(fixed)
        assert min(values(database, "x-stage", "C", gains, "settling_time_s")) > max(
            values(database, "x-stage", "B", gains, "settling_time_s")
        )
        assert max(values(database, "x-stage", "C", gains, "zeta")) < min(
            values(database, "x-stage", "B", gains, "zeta")
        )


def test_windup_gain_set_overshoots_after_saturation(demo: tuple[DemoSummary, Database]) -> None:
    _, database = demo
    for revision in ("A", "B"):
        hot = values(database, "spindle", revision, "spindle-pi-hot", "windup_overshoot_pct")
        calm = values(database, "spindle", revision, "spindle-pi", "overshoot_pct")
        assert min(hot) > max(calm)
        assert (
            min(values(database, "spindle", revision, "spindle-pi-hot", "saturation_time_s")) > 0.05
        )


def test_hunting_configuration_oscillates_at_standstill(demo: tuple[DemoSummary, Database]) -> None:
    _, database = demo
    hunting = values(database, "tilt-servo", "B", "servo-stiff", "hunting_pp")
    quiet = values(database, "tilt-servo", "A", "servo-stiff", "hunting_pp") + values(
        database, "tilt-servo", "B", "servo-soft", "hunting_pp"
    )
    assert min(hunting) > max(quiet)
    assert set(values(database, "tilt-servo", "B", "servo-stiff", "hunting_flag")) == {1.0}


def test_summary_names_the_failing_revisions_and_why(demo: tuple[DemoSummary, Database]) -> None:
    summary, _ = demo
    failing = {(v.axis, v.revision, v.gains) for v in summary.failing}
    assert ("x-stage", "C", "stage-pid-v1") in failing
    assert ("x-stage", "B", "stage-pid-v1") not in failing
    assert ("spindle", "A", "spindle-pi-hot") in failing
    assert ("tilt-servo", "B", "servo-stiff") in failing
    stage_c = next(
        v
        for v in summary.verdicts
        if (v.axis, v.revision, v.gains) == ("x-stage", "C", "stage-pid-v1")
    )
    assert stage_c.verdict is Verdict.FAIL
    assert any(r.startswith("overshoot_pct median") for r in stage_c.reasons)


def test_demo_command_prints_the_summary_and_refuses_a_foreign_file(tmp_path: Path) -> None:
    target = tmp_path / "demo.db"
    result = CliRunner().invoke(main, ["demo", "--db", str(target)])
    assert result.exit_code == 0, result.output
    assert "130 captures imported" in result.output or "captures imported" in result.output
    assert "x-stage rev C with stage-pid-v1 (5 runs): fail" in result.output
    again = CliRunner().invoke(main, ["demo", "--db", str(target)])
    assert again.exit_code == 0, "an earlier demo is replaced"
    foreign = tmp_path / "mine.db"
    foreign.write_text("not a logbook")
    refused = CliRunner().invoke(main, ["demo", "--db", str(foreign)])
    assert refused.exit_code == 1 and "is not a demo logbook" in refused.output
    assert foreign.read_text() == "not a logbook"
    with pytest.raises(ConflictError):
        build_demo(foreign)


def test_regressions_name_the_degraded_revision_and_the_fix(
    demo: tuple[DemoSummary, Database],
) -> None:
    _, database = demo
    with database.session() as session:
        scan = find_regressions(session, "x-stage")
    for metric in ("overshoot_pct", "settling_time_s"):
        bad = scan.first_bad[metric]
        assert bad is not None and bad.finding.revision == "C" and bad.finding.parent == "B"
        assert bad.fixed_by == ("D",)
        assert bad.change_category == "mechanical"
        better = {
            (f.revision, f.parent)
            for f in scan.findings
            if f.metric == metric and f.direction == "better"
        }
        assert ("D", "C") in better


def test_reports_for_a_passing_and_a_failing_revision_read_back_and_verify(
    demo: tuple[DemoSummary, Database], tmp_path: Path
) -> None:
    _, database = demo
    spec = "stage-position-acceptance"
    passing = issue_report(
        database,
        axis="x-stage",
        revision="D",
        spec=spec,
        gains="stage-pid-v1",
        out=tmp_path / "d.html",
    )
    failing = issue_report(
        database,
        axis="x-stage",
        revision="C",
        spec=spec,
        gains="stage-pid-v1",
        out=tmp_path / "c.html",
    )
    assert (passing.verdict, failing.verdict) == ("pass", "fail")
    for issued in (passing, failing):
        readback = read_report_file(issued.html_path)
        assert readback.verdict.lower().startswith(issued.verdict)
        assert readback.content_hash == issued.content_hash
        overshoot = next(r for r in readback.rows if r["Metric"] == "overshoot_pct")
        assert overshoot["Upper"] == "10"  # the demo spec's limit (demo_data/specs)
        with database.session() as session:
            assert verify_report(session, issued.html_path).matches
    with database.session() as session:  # the reported runs are locked now
        run = session.scalars(
            select(TestRun).where(
                TestRun.revision_id.in_(
                    select(HardwareRevision.id).where(HardwareRevision.label == "C")
                )
            )
        ).first()
        run_id = run.id
    with pytest.raises(LockedError), database.session(write=True) as session:
        session.get(TestRun, run_id).notes = "edited after the report"
