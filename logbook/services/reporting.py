"""Issuing acceptance reports and verifying them against the database.

:func:`issue_report` judges a revision against a spec, gathers everything the
report shows (:func:`build_report_data`), records an :class:`AcceptanceReport`
with the content hash of the evidence and links every run it used (which locks
those runs in the database), then writes the HTML, and on request the CSV table
and the PDF.

:func:`verify_report` reads a report file back, checks that it agrees with
itself, and rebuilds its evidence from the database (the recorded spec, runs,
analysis settings, rule, date and issuer) to see whether the stored data still
give the recorded hash.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import asdict, dataclass
from datetime import datetime
from pathlib import Path
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from logbook import __version__
from logbook.acceptance.rules import DecisionRule, judged_value
from logbook.errors import ConflictError, LogbookError
from logbook.reports.csv_export import write_metric_csv
from logbook.reports.data import (
    MetricTrend,
    ReportData,
    RevisionInfo,
    RunRecord,
    StepMarks,
    StepPlot,
    TrendPoint,
    content_hash,
    evidence,
)
from logbook.reports.html import render_html
from logbook.reports.pdf import print_pdf, require_chromium
from logbook.reports.readback import read_report_file, self_check
from logbook.services import catalog
from logbook.services.acceptance import (
    AcceptanceCase,
    AcceptanceResult,
    evaluate_case,
    resolve_case,
    run_label,
    step_values,
    worst_step_values,
)
from logbook.services.specs import spec_definition
from logbook.store.engine import Database
from logbook.store.models import (
    AcceptanceReport,
    AnalysisSettingsRow,
    Axis,
    GainSet,
    HardwareRevision,
    ReportRun,
    Spec,
    TestRun,
)
from logbook.store.runs import load_trace
from logbook.store.types import utc_now
from logbook.trace import Role

MAX_PLOT_POINTS = 5000  # per run; longer windows are thinned by a fixed stride


@dataclass(frozen=True)
class IssuedReport:
    report_id: int
    content_hash: str
    verdict: str
    html_path: Path
    csv_path: Path | None
    pdf_path: Path | None


@dataclass(frozen=True)
class Verification:
    """``matches`` is True only when the file agrees with itself and with the database."""

    report_id: int | None
    file_hash: str
    recomputed_hash: str | None
    problems: tuple[str, ...]

    @property
    def matches(self) -> bool:
        return not self.problems


def gain_set_name(gain_set: GainSet | None) -> str:
    if gain_set is None:
        return "(none)"
    return gain_set.name or f"#{gain_set.id}"


def build_report_data(
    session: Session,
    result: AcceptanceResult,
    *,
    issued_at: datetime,
    issued_by: str,
    software_version: str,
    with_trends: bool = True,
    max_plot_points: int = MAX_PLOT_POINTS,
) -> ReportData:
    """Everything the report shows, read from the database.

    ``with_trends`` False skips the lineage trend (not part of the evidence), which
    verification does not need.
    """
    case = result.case
    lineage = [*reversed(catalog.ancestors(session, case.revision)), case.revision]
    settings = case.settings
    judged = set(result.evaluation.runs)
    plots = tuple(
        plot
        for run in case.runs
        if run_label(run) in judged
        for plot in _step_plot(session, run, result.steps[run.id], settings, max_plot_points)
    )
    gains: dict[str, Any] = {}
    if case.gain_set is not None:
        gains = {"form": case.gain_set.form, **asdict(catalog.gain_params(case.gain_set))}
    return ReportData(
        axis=case.axis.name,
        axis_description=case.axis.description,
        revision=case.revision.label,
        lineage=tuple(
            RevisionInfo(
                label=r.label,
                date=r.revision_date.isoformat() if r.revision_date else None,
                change_category=r.change_category,
                change_summary=r.change_summary,
            )
            for r in lineage
        ),
        gain_set=gain_set_name(case.gain_set),
        gains=gains,
        evaluation=result.evaluation,
        runs=tuple(_run_record(r) for r in case.runs),
        plots=plots,
        trends=_trends(session, case, lineage) if with_trends else (),
        analysis_version=settings.analysis_version,
        analysis_settings=dict(settings.settings),
        software_version=software_version,
        issued_at=issued_at.isoformat(),
        issued_by=issued_by,
    )


def _run_record(run: TestRun) -> RunRecord:
    load = None
    if run.load_value is not None:
        load = f"{run.load_value:g} {run.load_unit or ''}".strip()
    return RunRecord(
        label=run_label(run),
        taken_at=run.taken_at.isoformat(),
        test_kind=run.test_kind,
        operator=run.operator,
        source_name=run.source_name,
        source_sha256=run.source_sha256,
        supply_voltage_v=run.supply_voltage_v,
        load=load,
        temperature_c=run.temperature_c,
        notes=run.notes,
    )


def _step_plot(
    session: Session,
    run: TestRun,
    steps: tuple[Mapping[str, float | None], ...],
    settings: AnalysisSettingsRow,
    max_points: int,
) -> list[StepPlot]:
    """The run's first step: samples up to the next step (thinned), with its figures."""
    if not steps or steps[0].get("t_step_s") is None:
        return []
    trace = load_trace(session, run)
    setpoint, feedback = trace.by_role(Role.SETPOINT), trace.by_role(Role.FEEDBACK)
    if setpoint is None or feedback is None:
        return []
    time = trace.time
    end = len(time)
    if len(steps) > 1 and steps[1].get("t_step_s") is not None:
        end = int((time < steps[1]["t_step_s"]).sum())
    stride = max(1, math.ceil(end / max_points))
    window = slice(0, end, stride)
    marks = StepMarks.from_values(
        steps[0], rise_low=settings.rise_low, rise_high=settings.rise_high, band=settings.band
    )
    return [
        StepPlot(
            run_label=run_label(run),
            time=tuple(time[window].tolist()),
            setpoint=tuple(setpoint.values[window].tolist()),
            feedback=tuple(feedback.values[window].tolist()),
            unit=feedback.unit,
            marks=marks,
        )
    ]


def _trends(
    session: Session, case: AcceptanceCase, lineage: list[HardwareRevision]
) -> tuple[MetricTrend, ...]:
    """Per judged metric, the spec's statistic over each lineage revision's runs of the
    same gain set and test kind (each run by its worst step, as judged)."""
    spec = spec_definition(case.spec)
    query = select(TestRun).where(
        TestRun.revision_id.in_([r.id for r in lineage]), TestRun.test_kind == spec.test_kind
    )
    if case.gain_set is not None:
        query = query.where(TestRun.gain_set_id == case.gain_set.id)
    runs = list(session.scalars(query))
    steps = step_values(session, [r.id for r in runs], case.settings.id)
    per_run = {r.id: worst_step_values(steps[r.id], spec) for r in runs}
    trends = []
    for metric, limit in spec.limits.items():
        points = []
        for revision in lineage:
            values = [
                v
                for r in runs
                if r.revision_id == revision.id and (v := per_run[r.id][metric]) is not None
            ]
            value = judged_value(values, limit, spec.statistic)[0] if values else None
            points.append(TrendPoint(revision.label, value, len(values)))
        trends.append(MetricTrend(metric, limit.unit, tuple(points)))
    return tuple(trends)


def issue_report(
    database: Database,
    *,
    axis: str,
    revision: str,
    spec: str,
    out: str | Path,
    version: str | None = None,
    gains: str | None = None,
    rule: DecisionRule = DecisionRule.SIMPLE,
    issued_by: str = "",
    csv_path: str | Path | None = None,
    pdf_path: str | Path | None = None,
) -> IssuedReport:
    """Judge, record and write a report (see the module docstring).

    The report row, its run links and the HTML file are made in one transaction: if
    the file cannot be written nothing is recorded. A missing Chromium is reported
    before anything is issued when a PDF is asked for.
    """
    if pdf_path is not None:
        require_chromium()
    out = Path(out)
    with database.session(write=True) as session:
        case = resolve_case(
            session, axis=axis, revision=revision, spec=spec, version=version, gains=gains
        )
        result = evaluate_case(session, case, rule=rule)
        data = build_report_data(
            session,
            result,
            issued_at=utc_now().replace(microsecond=0),
            issued_by=issued_by,
            software_version=__version__,
        )
        digest = content_hash(data)
        if session.scalar(
            select(AcceptanceReport.id).where(AcceptanceReport.content_hash == digest)
        ):
            raise ConflictError("an identical report was issued this very second; issue it again")
        record = AcceptanceReport(
            spec_id=case.spec.id,
            axis_id=case.axis.id,
            revision_id=case.revision.id,
            gain_set_id=case.gain_set.id if case.gain_set else None,
            settings_id=case.settings.id,
            decision_rule=str(rule),
            verdict=str(result.evaluation.verdict),
            issued_at=datetime.fromisoformat(data.issued_at),
            issued_by=issued_by,
            content_hash=digest,
            software_version=__version__,
            file_name=out.name,
        )
        session.add(record)
        session.flush()
        session.add_all(ReportRun(report_id=record.id, run_id=r.id) for r in case.runs)
        session.flush()
        _write_text(out, render_html(data, report_id=record.id))
        report_id = record.id
    written_csv = write_metric_csv(result.evaluation, csv_path) if csv_path is not None else None
    written_pdf = print_pdf(out, pdf_path) if pdf_path is not None else None
    return IssuedReport(
        report_id, digest, str(result.evaluation.verdict), out, written_csv, written_pdf
    )


def _write_text(path: Path, text: str) -> None:
    try:
        path.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise LogbookError(f"cannot write {path}: {exc}") from exc


def rebuild_report_data(session: Session, record: AcceptanceReport) -> ReportData:
    """The evidence of an issued report as the database gives it today (no trends)."""
    case = AcceptanceCase(
        axis=session.get_one(Axis, record.axis_id),
        revision=session.get_one(HardwareRevision, record.revision_id),
        gain_set=session.get(GainSet, record.gain_set_id) if record.gain_set_id else None,
        spec=session.get_one(Spec, record.spec_id),
        settings=session.get_one(AnalysisSettingsRow, record.settings_id),
        runs=tuple(sorted(record.runs, key=lambda r: (r.taken_at, r.id))),
    )
    result = evaluate_case(session, case, rule=DecisionRule(record.decision_rule))
    return build_report_data(
        session,
        result,
        issued_at=record.issued_at,
        issued_by=record.issued_by,
        software_version=record.software_version,
        with_trends=False,
    )


def verify_report(session: Session, html_path: str | Path) -> Verification:
    """Whether the report file still matches itself and the evidence in the database."""
    report = read_report_file(html_path)
    problems = self_check(report)
    record = None
    if report.report_id is not None:
        record = session.get(AcceptanceReport, report.report_id)
    if record is None:
        record = session.scalar(
            select(AcceptanceReport).where(AcceptanceReport.content_hash == report.content_hash)
        )
    if record is None:
        problems.append(
            f"no issued report no. {report.report_id} with this content hash in this database"
        )
        return Verification(report.report_id, report.content_hash, None, tuple(problems))
    if record.content_hash != report.content_hash:
        problems.append(
            f"the file's content hash differs from the one recorded for report no. {record.id}"
        )
    rebuilt = rebuild_report_data(session, record)
    recomputed = content_hash(rebuilt)
    if recomputed != record.content_hash:
        changed = _differences(report.evidence, evidence(rebuilt))
        problems.append(
            "the evidence in the database no longer gives the recorded content hash"
            + (f" (changed: {', '.join(changed)})" if changed else "")
        )
    return Verification(record.id, report.content_hash, recomputed, tuple(problems))


def _differences(old: Any, new: Any, path: str = "", limit: int = 6) -> list[str]:
    """Paths (``runs[1].source_sha256``) where two evidence payloads differ, at most ``limit``."""
    if old == new:
        return []
    if isinstance(old, dict) and isinstance(new, dict):
        found: list[str] = []
        for key in sorted(set(old) | set(new)):
            found += _differences(old.get(key), new.get(key), f"{path}.{key}" if path else key)
        return found[:limit]
    if isinstance(old, list) and isinstance(new, list) and len(old) == len(new):
        found = []
        for i, (a, b) in enumerate(zip(old, new, strict=True)):
            found += _differences(a, b, f"{path}[{i}]")
        return found[:limit]
    return [path or "(everything)"]
