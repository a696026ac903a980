"""Issuing reports from the database: read back, the run lock, and verification."""

from __future__ import annotations

import csv
import io

import pytest
from click.testing import CliRunner
from reports.sample_report import seed_bench
from sqlalchemy import select, text, update

from logbook.acceptance.rules import DecisionRule
from logbook.cli import main
from logbook.errors import LockedError, LogbookError
from logbook.reports import pdf
from logbook.reports.readback import read_report_file
from logbook.services import catalog
from logbook.services.reporting import issue_report, verify_report
from logbook.store.models import AcceptanceReport, AnalysisResult, ReportRun, TestRun


@pytest.fixture
def bench(database):
    return seed_bench(database)


def issue(database, tmp_path, revision="C", **options):
    return issue_report(
        database,
        axis="bench-x",
        revision=revision,
        spec="bench-x-position",
        out=tmp_path / f"report-{revision}.html",
        issued_by="L. Marchetti",
        **options,
    )


def test_issued_report_reads_back_and_is_recorded(bench, tmp_path):
    issued = issue(bench, tmp_path)
    report = read_report_file(issued.html_path)
    assert report.verdict == issued.verdict == "pass"
    assert report.report_id == issued.report_id
    assert report.content_hash == issued.content_hash
    assert [row["Metric"] for row in report.rows] == [
        "overshoot_pct",
        "rise_time_s",
        "settling_time_s",
    ]
    assert all(row["Verdict"] == "pass" for row in report.rows)
    with bench.session() as session:
        record = session.get_one(AcceptanceReport, issued.report_id)
        assert record.content_hash == issued.content_hash
        assert record.verdict == "pass"
        assert record.decision_rule == "simple"
        assert record.file_name == "report-C.html"
        runs = catalog.list_runs(session, axis="bench-x", revision="C")
        assert [r.id for r in record.runs] == [r.id for r in runs]
        assert [r["source_sha256"] for r in report.evidence["runs"]] == [
            r.source_sha256 for r in runs
        ]


def test_issued_runs_are_locked(bench, tmp_path):
    issued = issue(bench, tmp_path)
    with bench.session() as session:
        run_id = session.scalar(
            select(ReportRun.run_id).where(ReportRun.report_id == issued.report_id)
        )
    with pytest.raises(LockedError), bench.session(write=True) as session:
        session.execute(update(TestRun).where(TestRun.id == run_id).values(operator="someone"))
    with pytest.raises(LockedError), bench.session(write=True) as session:
        session.execute(
            update(AnalysisResult).where(AnalysisResult.run_id == run_id).values(value=0)
        )


def test_verify_matches_an_untouched_report(bench, tmp_path):
    issued = issue(bench, tmp_path, rule=DecisionRule.GUARDED)
    with bench.session() as session:
        result = verify_report(session, issued.html_path)
    assert result.problems == ()
    assert result.matches
    assert result.recomputed_hash == issued.content_hash


def test_verify_finds_an_edited_report_file(bench, tmp_path):
    issued = issue(bench, tmp_path, revision="B")
    page = issued.html_path.read_text(encoding="utf-8")
    edited = tmp_path / "edited.html"
    edited.write_text(
        page.replace('<span id="verdict">fail</span>', '<span id="verdict">pass</span>')
    )
    with bench.session() as session:
        result = verify_report(session, edited)
    assert not result.matches
    assert any(
        "visible verdict 'pass' differs from the recorded 'fail'" in p for p in result.problems
    )


def _unlock(session, dialect: str, table: str) -> None:
    """Tampering from outside the logbook: drop the lock trigger on ``table``."""
    if dialect == "sqlite":
        session.execute(text(f"DROP TRIGGER lock_{table}_update"))
    else:
        session.execute(text(f"DROP TRIGGER lock_{table} ON {table}"))


def test_verify_finds_a_changed_run(bench, tmp_path):
    issued = issue(bench, tmp_path)
    with bench.session(write=True) as session:
        _unlock(session, bench.dialect, "test_runs")
        run = session.scalars(select(TestRun).join(ReportRun).order_by(TestRun.id)).first()
        session.execute(update(TestRun).where(TestRun.id == run.id).values(source_sha256="0" * 64))
    with bench.session() as session:
        result = verify_report(session, issued.html_path)
    assert not result.matches
    assert result.recomputed_hash != issued.content_hash
    assert any("runs[0].source_sha256" in p for p in result.problems)


def test_verify_finds_a_changed_figure(bench, tmp_path):
    issued = issue(bench, tmp_path)
    with bench.session(write=True) as session:
        _unlock(session, bench.dialect, "analysis_results")
        run_id = session.scalar(select(ReportRun.run_id).order_by(ReportRun.run_id))
        session.execute(
            update(AnalysisResult)
            .where(AnalysisResult.run_id == run_id, AnalysisResult.metric == "overshoot_pct")
            .values(value=AnalysisResult.value + 1.0)
        )
    with bench.session() as session:
        result = verify_report(session, issued.html_path)
    assert not result.matches
    assert any("evaluation.metrics[0]" in p for p in result.problems)


def test_csv_export_of_a_failing_revision(bench, tmp_path):
    issued = issue(bench, tmp_path, revision="B", csv_path=tmp_path / "b.csv")
    assert issued.verdict == "fail"
    rows = list(csv.DictReader(io.StringIO(issued.csv_path.read_text(encoding="utf-8-sig"))))
    overshoot = next(r for r in rows if r["metric"] == "overshoot_pct")
    assert overshoot["verdict"] == "fail"
    assert float(overshoot["margin"]) < 0  # a negative margin stays a number


def test_pdf_without_chromium_issues_nothing(bench, tmp_path, monkeypatch):
    monkeypatch.setattr(pdf, "find_chromium", lambda: None)
    with pytest.raises(LogbookError, match="no Chromium browser found"):
        issue(bench, tmp_path, pdf_path=tmp_path / "r.pdf")
    with bench.session() as session:
        assert session.scalar(select(AcceptanceReport.id)) is None
    assert not (tmp_path / "report-C.html").exists()


@pytest.mark.browser
@pytest.mark.skipif(pdf.find_chromium() is None, reason="no Chromium installed (Debian 'chromium')")
def test_pdf_of_a_failing_revision(bench, tmp_path):
    pypdf = pytest.importorskip("pypdf", reason="PDF text extraction needs pypdf")
    issued = issue(bench, tmp_path, revision="B", pdf_path=tmp_path / "b.pdf")
    first = pypdf.PdfReader(str(issued.pdf_path)).pages[0].extract_text()
    assert "Acceptance report: bench-x, revision B" in first
    assert "FAIL" in first


def test_report_commands(bench, tmp_path):
    db = bench.url.render_as_string(hide_password=False)
    runner = CliRunner()
    out = tmp_path / "c.html"
    issued = runner.invoke(main, ["report", "--axis", "bench-x", "--rev", "C", "--spec",
                                  "bench-x-position", "--out", str(out), "--db", db])  # fmt: skip
    assert issued.exit_code == 0, issued.output
    assert "report no. 1: pass" in issued.output
    verified = runner.invoke(main, ["report", "--verify", str(out), "--db", db])
    assert verified.exit_code == 0, verified.output
    assert "report no. 1 matches the database" in verified.output
    out.write_text(
        out.read_text(encoding="utf-8").replace('"verdict": "pass"}', '"verdict": "fail"}')
    )
    tampered = runner.invoke(main, ["report", "--verify", str(out), "--db", db])
    assert tampered.exit_code == 1
    assert "mismatch: the data block's evidence does not give its content hash" in tampered.output
    unknown = runner.invoke(main, ["report", "--axis", "bench-x", "--rev", "Z", "--spec",
                                   "bench-x-position", "--out", str(out), "--db", db])  # fmt: skip
    assert unknown.exit_code == 1
    assert "unknown revision 'Z'" in unknown.output
    usage = runner.invoke(main, ["report", "--axis", "bench-x", "--db", db])
    assert usage.exit_code == 2
