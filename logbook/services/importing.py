"""Turning capture files into test runs: one transaction per file, all or nothing.

For each file: hash the bytes and skip it if the axis already has a run from the
same bytes; read it; merge its ``# key: value`` metadata with what the caller
gave (the caller wins, and every disagreement is reported); convert it through an
import profile (a stored one, or one assembled from column options and header
names); analyse it and encode it for storage; then, in one write transaction,
check its revision and gain set and write the run, its trace, its original bytes
and its figures. Everything before that transaction needs no database, so other
writers wait only for the inserts.

A batch never stops at a bad file: each file ends as imported, duplicate,
rejected (with a one-line reason naming file, line and column) or, in a dry run,
checked.
"""

from __future__ import annotations

import glob
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass, field
from datetime import UTC, datetime
from enum import StrEnum
from pathlib import Path
from typing import Any

from sqlalchemy import select
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
from logbook.services.profiles import list_profiles, unknown_profile
from logbook.store.blobs import compress_raw
from logbook.store.engine import Database
from logbook.store.models import TEST_KINDS, Axis, GainSet, HardwareRevision, TestRun
from logbook.store.runs import (
    RunConditions,
    RunEvidence,
    add_run,
    file_digest,
    find_run_by_hash,
    save_analysis,
)

CAPTURE_SUFFIXES = (".csv", ".tsv", ".txt", ".parquet")
COLUMNS_PROFILE = "(columns)"  # name of the one-off profile built from column options
COMMIT_ATTEMPTS = 3  # a file's transaction is retried after a unique-key clash
#: Files prepared ahead of the one being written, and the most bytes of them.
PREPARE_AHEAD = 2
PREPARE_AHEAD_BYTES = 64 << 20
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


@dataclass(frozen=True)
class CatalogSnapshot:
    """What preparing a file needs from the database, read once per batch.

    Files are prepared from this copy without touching the database; each file's
    transaction checks everything again.
    """

    axes: Mapping[str, AxisInfo]
    profiles: Mapping[tuple[str, str], ImportProfile]  # (axis, name) -> profile
    digests: Mapping[str, Mapping[str, int]]  # axis -> source SHA-256 -> run id

    def axis(self, name: str) -> AxisInfo:
        if name not in self.axes:
            raise catalog.unknown_axis(name, self.axes)
        return self.axes[name]

    def profile(self, axis: str, name: str) -> ImportProfile:
        if (axis, name) not in self.profiles:
            raise unknown_profile(name, axis, [p for a, p in self.profiles if a == axis])
        return self.profiles[(axis, name)]


def load_snapshot(database: Database) -> CatalogSnapshot:
    """Read the axes, their import profiles and the SHA-256 of every stored run."""
    with database.session() as session:
        axes = {a.name: _axis_info(a) for a in catalog.list_axes(session)}
        stored = {(p.axis, p.name): p for p in list_profiles(session)}
        digests: dict[str, dict[str, int]] = {name: {} for name in axes}
        for axis_name, sha256, run_id in session.execute(
            select(Axis.name, TestRun.source_sha256, TestRun.id).join(
                TestRun, TestRun.axis_id == Axis.id
            )
        ):
            digests[axis_name][sha256] = run_id
    return CatalogSnapshot(axes, stored, digests)


def import_files(
    database: Database,
    paths: Sequence[str],
    request: ImportRequest,
    *,
    on_file: Callable[[FileResult], None] | None = None,
) -> list[FileResult]:
    """Import every file under ``paths`` with one request; see :func:`import_batch`."""
    files, missing = expand_paths(paths)
    for result in missing:
        if on_file:
            on_file(result)
    return missing + import_batch(database, [(f, request) for f in files], on_file=on_file)


def import_batch(
    database: Database,
    jobs: Sequence[tuple[Path, ImportRequest]],
    *,
    on_file: Callable[[FileResult], None] | None = None,
) -> list[FileResult]:
    """Import each (file, request), in order, each in its own write transaction.

    The catalogue is read once for the batch; each file is then prepared (read,
    converted, analysed, encoded) without the database and written in one short
    transaction. ``on_file`` is called after each file.

    While one file is written, helper threads prepare the next ones: the parser, the
    hashing and the compressors release the GIL, and so does SQLite while it writes,
    so they overlap on two cores (see :func:`_prepared_in_turn` for the bounds). A
    pool of worker processes was measured slower (benchmarks/bench_import.py).
    """
    snapshot = load_snapshot(database)
    results = []
    for prepared in _prepared_in_turn(jobs, snapshot):
        result = prepared if isinstance(prepared, FileResult) else _commit(database, prepared)
        results.append(result)
        if on_file:
            on_file(result)
    return results


def _prepared_in_turn(
    jobs: Sequence[tuple[Path, ImportRequest]], snapshot: CatalogSnapshot
) -> Iterator[Prepared | FileResult]:
    """Each job prepared, in order. While the caller writes one file, helper threads
    prepare the next: up to PREPARE_AHEAD files and PREPARE_AHEAD_BYTES of them (but
    always one), which bounds the memory a batch of large files takes. A single file
    is prepared on this thread: it has nothing to overlap with, and a helper thread's
    malloc arena would add to a large file's peak memory."""
    if len(jobs) <= 1:
        yield from (prepare_file(path, request, snapshot) for path, request in jobs)
        return
    waiting = deque(jobs)
    coming: deque[tuple[Future[Prepared | FileResult], int]] = deque()
    with ThreadPoolExecutor(PREPARE_AHEAD, thread_name_prefix="logbook-prepare") as helper:

        def fill() -> None:
            while waiting and len(coming) < PREPARE_AHEAD:
                size = _file_size(waiting[0][0])
                if coming and sum(s for _, s in coming) + size > PREPARE_AHEAD_BYTES:
                    return
                path, request = waiting.popleft()
                coming.append((helper.submit(prepare_file, path, request, snapshot), size))

        fill()
        while coming:
            current = coming.popleft()[0].result()
            fill()
            yield current


def _file_size(path: Path) -> int:
    """The file's size, 0 when it cannot be read (its preparation then says why)."""
    try:
        return path.stat().st_size
    except OSError:
        return 0


@dataclass(frozen=True)
class Prepared:
    """A file read, converted, analysed and encoded, ready for its transaction
    (``evidence`` is None in a dry run, which stores nothing)."""

    name: str
    axis: str
    request: ImportRequest
    fields: RunFields
    conflicts: tuple[str, ...]
    sha256: str
    evidence: RunEvidence | None
    analysis: TraceAnalysis
    test_kind: str
    modified_at: datetime

    @property
    def steps(self) -> tuple[dict[str, float | None], ...]:
        return tuple(step.to_json() for step in self.analysis.steps)


def prepare_file(
    path: Path, request: ImportRequest, snapshot: CatalogSnapshot
) -> Prepared | FileResult:
    """Everything but the write, from ``snapshot`` alone; a bad file gives its rejection."""
    name = str(path)
    try:
        return _prepare(path, request, snapshot)
    except InputError as exc:
        error = exc if exc.file is not None else exc.located(name)
        return FileResult(name, Outcome.REJECTED, str(error))
    except LogbookError as exc:
        return FileResult(name, Outcome.REJECTED, f"{name}: {exc}")


def _prepare(
    path: Path, request: ImportRequest, snapshot: CatalogSnapshot
) -> Prepared | FileResult:
    name = str(path)
    try:
        raw = path.read_bytes()
        modified_at = datetime.fromtimestamp(path.stat().st_mtime, UTC)
    except OSError as exc:
        raise InputError(f"cannot read the file: {exc.strerror or exc}", file=name) from None
    digest = file_digest(raw)
    if request.axis is not None:  # skip a known file before parsing it
        run_id = snapshot.digests.get(request.axis, {}).get(digest)
        if run_id is not None:
            return _duplicate(name, run_id, "already in the logbook")
    # Compressed before the parse, so that the file's bytes can go once the trace
    # exists: they are not in memory while the trace is encoded (peak memory).
    compressed = None if request.dry_run else compress_raw(raw)
    size = len(raw)
    named = (
        snapshot.profile(request.axis, request.profile)
        if request.profile is not None and request.axis is not None
        else None
    )
    if named is not None:
        table = read_table(path, delimiter=named.delimiter, decimal=named.decimal, data=raw)
    else:
        table = read_table(path, data=raw)
    fields, conflicts = merge_run_fields(
        parse_run_fields(table.metadata, file=name), request.run_fields
    )
    axis_name = request.axis or fields.axis
    if axis_name is None:
        raise InputError("no axis: give --axis or a '# axis:' line", file=name)
    axis = snapshot.axis(axis_name)
    run_id = snapshot.digests.get(axis_name, {}).get(digest)
    if run_id is not None:
        return _duplicate(name, run_id, "already in the logbook")
    if request.profile is not None:
        profile = named or snapshot.profile(axis_name, request.profile)
    else:
        profile = profile_for_columns(table, axis_name, request.columns)
    trace = trace_from_profile(table, profile, axis)
    del table, raw  # the trace holds what is needed; free the rest before analysing
    try:
        analysis = analyze_trace(trace, settings=request.settings)
    except InputError as exc:
        raise exc.located(name) from None
    test_kind = fields.test_kind or ("speed_step" if profile.speed else "position_step")
    catalog.require_choice("test kind", test_kind, TEST_KINDS)
    evidence = None
    if compressed is not None:
        evidence = RunEvidence.from_compressed(
            path.name,
            digest,
            size,
            compressed,
            trace,
            profile_name=None if profile.name == COLUMNS_PROFILE else profile.name,
        )
    return Prepared(
        name,
        axis_name,
        request,
        fields,
        tuple(conflicts),
        digest,
        evidence,
        analysis,
        test_kind,
        modified_at,
    )


def _duplicate(name: str, run_id: int, how: str) -> FileResult:
    return FileResult(
        name,
        Outcome.DUPLICATE,
        f"{name}: {how} as run {run_id} (same SHA-256); skipped",
        run_id=run_id,
    )


def _commit(database: Database, prepared: Prepared) -> FileResult:
    """Check the references and write the prepared file in one transaction.

    A unique-key clash means another writer got there first: with this file (the
    retry then finds its run and reports a duplicate) or with a shared row such
    as the analysis settings or inline gains (the retry then uses that row). Only
    PostgreSQL lets writers overlap like this; SQLite write sessions queue.
    """
    for _attempt in range(COMMIT_ATTEMPTS):
        try:
            return _commit_once(database, prepared)
        except IntegrityError:
            continue
        except InputError as exc:
            located = exc if exc.file is not None else exc.located(prepared.name)
            return FileResult(prepared.name, Outcome.REJECTED, str(located))
        except LogbookError as exc:
            return FileResult(prepared.name, Outcome.REJECTED, f"{prepared.name}: {exc}")
    return FileResult(
        prepared.name,
        Outcome.REJECTED,
        f"{prepared.name}: kept clashing with other writers ({COMMIT_ATTEMPTS} tries); "
        "import it again",
    )


def _commit_once(database: Database, prepared: Prepared) -> FileResult:
    """One try at the file's transaction (a read-only one in a dry run)."""
    name, evidence = prepared.name, prepared.evidence
    with database.session(write=evidence is not None) as session:
        axis = catalog.get_axis(session, prepared.axis)
        existing = find_run_by_hash(session, axis, prepared.sha256)
        if existing is not None:  # imported earlier in this batch, or by another process
            return _duplicate(name, existing.id, "imported meanwhile")
        revision, gain_set = _references(session, axis, prepared)
        if evidence is None:
            return FileResult(
                name,
                Outcome.CHECKED,
                _summary(prepared, "would import"),
                conflicts=prepared.conflicts,
                steps=prepared.steps,
            )
        run_id = _write(session, axis, revision, gain_set, prepared, evidence)
    return FileResult(
        name,
        Outcome.IMPORTED,
        _summary(prepared, f"run {run_id}"),
        run_id=run_id,
        conflicts=prepared.conflicts,
        steps=prepared.steps,
    )


def _references(
    session: Session, axis: Axis, prepared: Prepared
) -> tuple[HardwareRevision, GainSet]:
    """The run's revision and gain set (inline gains are stored once, by content)."""
    fields, request = prepared.fields, prepared.request
    if fields.revision is None:
        raise InputError(
            "no hardware revision: give --rev or a '# revision:' line", file=prepared.name
        )
    revision = catalog.get_revision(session, axis.name, fields.revision)
    if request.inline_gains is not None:
        gain_set, _ = catalog.add_gain_set(session, request.inline_gains, name=request.gains)
        return revision, gain_set
    gains = request.gains or fields.gains
    if gains is None:
        raise InputError(
            "no gain set: give --gains NAME, inline --kp/--ki/--kd/--loop-rate, "
            "or a '# gains:' line",
            file=prepared.name,
        )
    return revision, catalog.get_gain_set(session, gains)


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
    axis: Axis,
    revision: HardwareRevision,
    gain_set: GainSet,
    prepared: Prepared,
    evidence: RunEvidence,
) -> int:
    fields = prepared.fields
    notes = fields.notes or ""
    taken_at = fields.date
    if taken_at is None:
        taken_at = prepared.modified_at
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
        evidence=evidence,
    )
    save_analysis(session, run, prepared.analysis)
    return run.id


def _summary(prepared: Prepared, what: str) -> str:
    steps = prepared.analysis.steps
    first = steps[0].figures if steps else {}
    overshoot = first.get("overshoot_pct")
    settling = first.get("settling_time_s")
    parts = [f"{prepared.name}: {what}", f"{len(steps)} step{'s' if len(steps) != 1 else ''}"]
    if overshoot is not None and overshoot.value is not None:
        parts.append(f"overshoot {overshoot.value:.3g} %")
    if settling is not None and settling.value is not None:
        parts.append(f"settling {settling.value:.3g} s")
    return ", ".join(parts)
