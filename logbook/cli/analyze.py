"""``logbook analyze FILE ...``: step-response figures of capture files, no database.

Each file is read with the ingest reader, its columns are picked by name (or by
the flags) and every step is analysed. A file that cannot be analysed gets one
``Error:`` line on stderr naming file, line and column; the others are still
reported, and the exit code is 1 when any file failed. Large batches are spread
over the available cores; output stays in input order.
"""

from __future__ import annotations

import multiprocessing
import os
from collections.abc import Iterator
from dataclasses import dataclass, replace

import click

from logbook.analysis import METRICS, AnalysisSettings, TraceAnalysis, analyze_trace
from logbook.analysis.catalog import resolve_unit
from logbook.cli.base import analysis_settings, json_option, json_text, print_table
from logbook.cli.heap import keep_freed_memory
from logbook.errors import InputError
from logbook.trace import Role

#: Batches of at least this many files are analysed by a pool of worker processes.
PARALLEL_FROM = 16
#: Files handed to a worker at a time (keeps the order cheap to restore).
CHUNK = 8


@dataclass(frozen=True)
class _Columns:
    time: str | None
    setpoint: str | None
    feedback: str | None
    effort: str | None


@dataclass(frozen=True)
class FileReport:
    """What ``analyze`` prints for one file: its analysis or its error."""

    path: str
    analysis: TraceAnalysis | None
    feedback_unit: str
    error: str | None
    #: The --json line, when asked for (written where the file was analysed, so a
    #: worker process sends back one string rather than the analysis).
    json_line: str = ""

    def for_json(self) -> FileReport:
        """This report reduced to its JSON line (the analysis is dropped)."""
        steps = None if self.analysis is None else self.analysis.to_json()
        line = json_text({"file": self.path, "steps": steps, "error": self.error})
        return replace(self, analysis=None, json_line=line)


@click.command("analyze")
@click.argument("files", nargs=-1, required=True)
@click.option("--time", "time_col", metavar="COL", help="Time column, in seconds.")
@click.option("--setpoint", "setpoint_col", metavar="COL", help="Setpoint column.")
@click.option("--feedback", "feedback_col", metavar="COL", help="Feedback column.")
@click.option("--effort", "effort_col", metavar="COL", help="Effort (controller output) column.")
@click.option("--band", type=float, metavar="PCT", help="Settling band in % of the step [2].")
@click.option("--rise", metavar="LOW-HIGH", help="Rise-time levels in % of the step [10-90].")
@json_option
def analyze_command(
    files: tuple[str, ...],
    time_col: str | None,
    setpoint_col: str | None,
    feedback_col: str | None,
    effort_col: str | None,
    band: float | None,
    rise: str | None,
    as_json: bool,
) -> None:
    """Compute the step-response figures of capture files (CSV), without a database.

    Columns not named by a flag are found by name (t/time, setpoint/target/command,
    position/feedback/speed, effort/output/pwm ...; a unit in brackets is ignored).
    With --json, one JSON object per file per line: {"file", "steps", "error"}.

    Example: logbook analyze runs/*.csv --band 5 --rise 10-90 --json
    """
    settings = analysis_settings(band, rise)
    columns = _Columns(time_col, setpoint_col, feedback_col, effort_col)
    keep_freed_memory()
    failed = False
    for report in _reports(list(files), columns, settings, as_json=as_json):
        if report.error is not None:
            failed = True
            click.echo(f"Error: {report.error}", err=True)
        if as_json:
            click.echo(report.json_line)
        elif report.analysis is not None:
            _print_report(report)
    if failed:
        raise SystemExit(1)


def analyze_file(path: str, columns: _Columns, settings: AnalysisSettings) -> FileReport:
    """Read, pick columns and analyse one file; an InputError becomes the report's error."""
    from logbook.ingest.columns import trace_from_table
    from logbook.ingest.reader import read_table

    try:
        trace = trace_from_table(
            read_table(path),
            time=columns.time,
            setpoint=columns.setpoint,
            feedback=columns.feedback,
            effort=columns.effort,
        )
        analysis = analyze_trace(trace, settings=settings)
    except InputError as exc:
        located = exc if exc.file is not None else exc.located(path)
        return FileReport(path, None, "", str(located))
    feedback = trace.by_role(Role.FEEDBACK)
    return FileReport(path, analysis, feedback.unit if feedback is not None else "", None)


def _analyze_job(job: tuple[str, _Columns, AnalysisSettings, bool]) -> FileReport:
    path, columns, settings, as_json = job
    report = analyze_file(path, columns, settings)
    return report.for_json() if as_json else report


def _reports(
    paths: list[str], columns: _Columns, settings: AnalysisSettings, *, as_json: bool
) -> Iterator[FileReport]:
    """Reports in input order; a worker pool for large batches on several cores."""
    cores = (
        len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    )
    workers = min(cores, len(paths) // CHUNK)
    if (
        len(paths) < PARALLEL_FROM
        or workers < 2
        or "fork" not in (multiprocessing.get_all_start_methods())
    ):
        yield from (_analyze_job((path, columns, settings, as_json)) for path in paths)
        return
    # fork: workers inherit the parent's modules; import the reader here once
    # rather than in every worker.
    from logbook.ingest import reader  # noqa: F401

    with multiprocessing.get_context("fork").Pool(workers) as pool:
        jobs = ((path, columns, settings, as_json) for path in paths)
        yield from pool.imap(_analyze_job, jobs, chunksize=CHUNK)


def _print_report(report: FileReport) -> None:
    """One table per file: a row per figure, a column per step, then the reasons."""
    analysis = report.analysis
    assert analysis is not None  # only called for analysed files
    click.echo(f"{report.path}: {len(analysis.steps)} step(s)")
    unit = report.feedback_unit or "units"
    labels = [f"step {step.index}" for step in analysis.steps]
    rows = []
    for name, info in METRICS.items():
        row: dict[str, object] = {"figure": name, "unit": resolve_unit(info.unit, unit)}
        row |= {label: step.value(name) for label, step in zip(labels, analysis.steps, strict=True)}
        rows.append(row)
    print_table(rows, ["figure", "unit", *labels])
    for step in analysis.steps:
        for name, figure in step.figures.items():
            if figure.value is None and figure.reason:
                click.echo(f"  step {step.index} {name}: {figure.reason}")
    click.echo("")
