"""Turning capture files into test runs: one transaction per file, all or nothing.

For each file: hash the bytes and skip it if the axis already has a run from the
same bytes; read it; merge its ``# key: value`` metadata with what the caller
gave (the caller wins, and every disagreement is reported); convert it through an
import profile (a stored one, or one assembled from column options and header
names); analyse it; then write the run, its trace, its original bytes and its
figures in one write transaction. Parsing and analysis happen before that
transaction opens, so other writers wait only for the inserts.

A batch never stops at a bad file: each file ends as imported, duplicate,
rejected (with a one-line reason naming file, line and column) or, in a dry run,
checked.
"""

from __future__ import annotations

import glob
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from enum import StrEnum
from pathlib import Path
from typing import Any

from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from logbook.analysis import AnalysisSettings, TraceAnalysis, analyze_trace
from logbook.errors import InputError, LogbookError
from logbook.ingest.columns import choose_columns, header_time_unit, unit_of
from logbook.ingest.convert import AxisInfo, trace_from_profile
from logbook.ingest.metadata import RunFields, merge_run_fields, parse_run_fields
from logbook.ingest.profiles import ImportProfile
from logbook.ingest.reader import RawTable, read_table
from logbook.services import catalog
from logbook.services.profiles import get_profile
from logbook.store.engine import Database
from logbook.store.models import TEST_KINDS, Axis
from logbook.store.runs import (
    RunConditions,
    RunEvidence,
    add_run,
    file_digest,
    find_run_by_hash,
    save_analysis,
)
from logbook.trace import Trace

CAPTURE_SUFFIXES = (".csv", ".tsv", ".txt", ".parquet")
COLUMNS_PROFILE = "(columns)"  # name of the one-off profile built from column options
_GLOB_CHARS = set("*?[")


class Outcome(StrEnum):
    IMPORTED = "imported"
    DUPLICATE = "duplicate"
    REJECTED = "rejected"
    CHECKED = "checked"  # a dry run that would have imported


@dataclass(frozen=True)
class ColumnChoice:
    """Column and unit options for files imported without a stored profile.

    A column left as None is found by name (see ``logbook.ingest.columns``); a unit
    left as None is read from the header's brackets.
    """

    time: str | None = None
    setpoint: str | None = None
    feedback: str | None = None
    effort: str | None = None
    time_unit: str | None = None
    setpoint_unit: str | None = None
    feedback_unit: str | None = None
    effort_unit: str | None = None
    speed: bool = False


@dataclass(frozen=True)
class ImportRequest:
    """What the caller says about a batch; None means "take it from the file".

    ``gains`` names a stored gain set; ``inline_gains`` gives the gains directly
    (stored once, by content). ``run_fields`` carries the command line's operator,
    date, bench conditions, revision, test kind and notes.
    """

    axis: str | None = None
    gains: str | None = None
    inline_gains: catalog.GainParams | None = None
    profile: str | None = None
    columns: ColumnChoice = field(default_factory=ColumnChoice)
    run_fields: RunFields = field(default_factory=RunFields)
    settings: AnalysisSettings = field(default_factory=AnalysisSettings)
    dry_run: bool = False


@dataclass(frozen=True)
class FileResult:
    """How one file ended."""

    path: str
    outcome: Outcome
    message: str
    run_id: int | None = None
    conflicts: tuple[str, ...] = ()
    steps: tuple[dict[str, float | None], ...] = ()

    def to_json(self) -> dict[str, Any]:
        return {
            "file": self.path,
            "outcome": self.outcome.value,
            "message": self.message,
            "run_id": self.run_id,
            "conflicts": list(self.conflicts),
            "steps": list(self.steps),
        }


def expand_paths(paths: Iterable[str]) -> tuple[list[Path], list[FileResult]]:
    """Files named, found in folders (recursively) or matched by glob patterns.

    Returns the files in a stable order and a rejection for every path that names
    nothing, so the batch can report it beside the others.
    """
    files: list[Path] = []
    missing: list[FileResult] = []
    for given in paths:
        if _GLOB_CHARS & set(given):
            matches = [Path(m) for m in sorted(glob.glob(given, recursive=True))]
            found = [m for m in matches if m.is_file()]
        elif Path(given).is_dir():
            found = sorted(
                p
                for p in Path(given).rglob("*")
                if p.is_file() and p.suffix.lower() in CAPTURE_SUFFIXES
            )
        elif Path(given).is_file():
            found = [Path(given)]
        else:
            found = []
        if not found:
            missing.append(
                FileResult(
                    given, Outcome.REJECTED, f"{given}: no such file, or no capture files there"
                )
            )
        files.extend(f for f in found if f not in files)
    return files, missing


def import_files(
    database: Database,
    paths: Sequence[str],
    request: ImportRequest,
    *,
    on_file: Callable[[FileResult], None] | None = None,
) -> list[FileResult]:
    """Import every file under ``paths``; ``on_file`` is called after each one."""
    files, results = expand_paths(paths)
    for result in results:
        if on_file:
            on_file(result)
    for path in files:
        result = import_file(database, path, request)
        results.append(result)
        if on_file:
            on_file(result)
    return results


def import_file(database: Database, path: Path, request: ImportRequest) -> FileResult:
    """Import one file in its own transaction; never raises for a bad file."""
    name = str(path)
    try:
        return _import(database, path, request)
    except InputError as exc:
        error = exc if exc.file is not None else exc.located(name)
        return FileResult(name, Outcome.REJECTED, str(error))
    except LogbookError as exc:
        return FileResult(name, Outcome.REJECTED, f"{name}: {exc}")


@dataclass(frozen=True)
class _Prepared:
    """Everything known about a file before the write transaction."""

    fields: RunFields
    conflicts: tuple[str, ...]
    profile: ImportProfile
    trace: Trace
    analysis: TraceAnalysis
    test_kind: str


def _import(database: Database, path: Path, request: ImportRequest) -> FileResult:
    name = str(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", file=name) from None
    digest = file_digest(raw)

    with database.session() as session:
        table = _read(session, path, request)
        file_fields = parse_run_fields(table.metadata, file=name)
        fields, conflicts = merge_run_fields(file_fields, request.run_fields)
        axis_name = request.axis or fields.axis
        if axis_name is None:
            raise InputError("no axis: give --axis or a '# axis:' line", file=name)
        axis = catalog.get_axis(session, axis_name)
        existing = find_run_by_hash(session, axis, digest)
        if existing is not None:
            return FileResult(
                name,
                Outcome.DUPLICATE,
                f"{name}: already in the logbook as run {existing.id} (same SHA-256); skipped",
                run_id=existing.id,
            )
        profile = _profile(session, table, axis, request)
        _check_references(session, axis, fields, request, name)
        axis_info = _axis_info(axis)

    trace = trace_from_profile(table, profile, axis_info)
    try:
        analysis = analyze_trace(trace, settings=request.settings)
    except InputError as exc:
        raise exc.located(name) from None
    test_kind = fields.test_kind or ("speed_step" if profile.speed else "position_step")
    catalog.require_choice("test kind", test_kind, TEST_KINDS)
    prepared = _Prepared(fields, tuple(conflicts), profile, trace, analysis, test_kind)
    steps = tuple(step.to_json() for step in analysis.steps)
    if request.dry_run:
        return FileResult(
            name,
            Outcome.CHECKED,
            _summary(name, prepared, "would import"),
            conflicts=prepared.conflicts,
            steps=steps,
        )
    try:
        with database.session(write=True) as session:
            existing = find_run_by_hash(session, catalog.get_axis(session, axis.name), digest)
            if existing is not None:  # another process imported it meanwhile
                return FileResult(
                    name,
                    Outcome.DUPLICATE,
                    f"{name}: imported meanwhile as run {existing.id}; skipped",
                    run_id=existing.id,
                )
            run_id = _write(session, axis.name, name, raw, digest, request, prepared)
    except IntegrityError:
        return FileResult(
            name, Outcome.DUPLICATE, f"{name}: imported meanwhile by another process; skipped"
        )
    return FileResult(
        name,
        Outcome.IMPORTED,
        _summary(name, prepared, f"run {run_id}"),
        run_id=run_id,
        conflicts=prepared.conflicts,
        steps=steps,
    )


def _read(session: Session, path: Path, request: ImportRequest) -> RawTable:
    """Read with the stored profile's delimiter and decimal mark when one is named."""
    if request.profile is not None and request.axis is not None:
        profile = get_profile(session, request.axis, request.profile)
        return read_table(path, delimiter=profile.delimiter, decimal=profile.decimal)
    return read_table(path)


def _profile(
    session: Session, table: RawTable, axis: Axis, request: ImportRequest
) -> ImportProfile:
    if request.profile is not None:
        return get_profile(session, axis.name, request.profile)
    return profile_for_columns(table, axis.name, request.columns)


def profile_for_columns(table: RawTable, axis_name: str, choice: ColumnChoice) -> ImportProfile:
    """A one-off profile from column options, falling back to the by-name rule."""
    roles = choose_columns(
        table,
        time=choice.time,
        setpoint=choice.setpoint,
        feedback=choice.feedback,
        effort=choice.effort,
    )
    try:
        time_unit = choice.time_unit or header_time_unit(roles.time)
    except InputError as exc:
        raise exc.located(table.path) from None
    return ImportProfile(
        name=COLUMNS_PROFILE,
        axis=axis_name,
        time_column=roles.time,
        time_unit=time_unit,
        setpoint_column=roles.setpoint,
        setpoint_unit=choice.setpoint_unit or unit_of(roles.setpoint),
        feedback_column=roles.feedback,
        feedback_unit=choice.feedback_unit or unit_of(roles.feedback),
        effort_column=roles.effort,
        effort_unit=(choice.effort_unit or unit_of(roles.effort)) if roles.effort else "",
        speed=choice.speed,
    )


def _check_references(
    session: Session, axis: Axis, fields: RunFields, request: ImportRequest, name: str
) -> None:
    """Fail early (before parsing the samples) on an unknown revision or gain set."""
    if fields.revision is None:
        raise InputError("no hardware revision: give --rev or a '# revision:' line", file=name)
    catalog.get_revision(session, axis.name, fields.revision)
    if request.inline_gains is not None:
        request.inline_gains.validate()
        return
    gains = request.gains or fields.gains
    if gains is None:
        raise InputError(
            "no gain set: give --gains NAME, inline --kp/--ki/--kd/--loop-rate, "
            "or a '# gains:' line",
            file=name,
        )
    catalog.get_gain_set(session, gains)


def _axis_info(axis: Axis) -> AxisInfo:
    return AxisInfo(
        name=axis.name,
        position_unit=axis.position_unit,
        counts_per_rev=axis.counts_per_rev,
        units_per_rev=axis.units_per_rev,
        cal_raw_1=axis.cal_raw_1,
        cal_value_1=axis.cal_value_1,
        cal_raw_2=axis.cal_raw_2,
        cal_value_2=axis.cal_value_2,
    )


def _write(
    session: Session,
    axis_name: str,
    name: str,
    raw: bytes,
    digest: str,
    request: ImportRequest,
    prepared: _Prepared,
) -> int:
    fields = prepared.fields
    axis = catalog.get_axis(session, axis_name)
    assert fields.revision is not None  # checked before parsing
    revision = catalog.get_revision(session, axis_name, fields.revision)
    if request.inline_gains is not None:
        gain_set, _ = catalog.add_gain_set(session, request.inline_gains, name=request.gains)
    else:
        gain_set = catalog.get_gain_set(session, request.gains or fields.gains or "")
    notes = fields.notes or ""
    taken_at = fields.date
    if taken_at is None:
        taken_at = datetime.fromtimestamp(Path(name).stat().st_mtime, UTC)
        notes = (notes + " " if notes else "") + "(time taken from the file's modification time)"
    run = add_run(
        session,
        axis=axis,
        revision=revision,
        gain_set=gain_set,
        test_kind=prepared.test_kind,
        conditions=RunConditions(
            taken_at=taken_at,
            operator=fields.operator or "",
            supply_voltage_v=fields.supply_voltage_v,
            load_value=fields.load_value,
            load_unit=fields.load_unit,
            temperature_c=fields.temperature_c,
            notes=notes,
        ),
        evidence=RunEvidence(
            source_name=Path(name).name,
            raw_bytes=raw,
            sha256=digest,
            trace=prepared.trace,
            profile_name=None
            if prepared.profile.name == COLUMNS_PROFILE
            else prepared.profile.name,
        ),
    )
    save_analysis(session, run, prepared.analysis)
    return run.id


def _summary(name: str, prepared: _Prepared, what: str) -> str:
    steps = prepared.analysis.steps
    first = steps[0].figures if steps else {}
    overshoot = first.get("overshoot_pct")
    settling = first.get("settling_time_s")
    parts = [f"{name}: {what}", f"{len(steps)} step{'s' if len(steps) != 1 else ''}"]
    if overshoot is not None and overshoot.value is not None:
        parts.append(f"overshoot {overshoot.value:.3g} %")
    if settling is not None and settling.value is not None:
        parts.append(f"settling {settling.value:.3g} s")
    return ", ".join(parts)
