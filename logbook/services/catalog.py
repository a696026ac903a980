"""Axes, hardware revisions, gain sets and the run list: the logbook's catalogue.

Every function takes an open :class:`~sqlalchemy.orm.Session` (from
``Database.session``) and raises :class:`~logbook.errors.LogbookError` subclasses
with messages that name the offending field, so the CLI and the UI can show them
as they are.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import asdict, dataclass, field
from datetime import date, datetime
from typing import Any, TypedDict, Unpack

from sqlalchemy import Integer, literal, select
from sqlalchemy.orm import Session, aliased

from logbook.errors import ConflictError, InputError, LockedError, NotFoundError
from logbook.store.models import (
    ANTI_WINDUP_MODES,
    CHANGE_CATEGORIES,
    FEEDBACK_KINDS,
    GAIN_FORM,
    POSITION_UNITS,
    TEST_KINDS,
    AcceptanceReport,
    Axis,
    GainSet,
    HardwareRevision,
    ImportProfile,
    ReportRun,
    Spec,
    TestRun,
)


def require_choice(field_name: str, value: str, allowed: Sequence[str]) -> str:
    """Return ``value`` if it is one of ``allowed``, else a clear InputError."""
    if value not in allowed:
        raise InputError(f"{field_name} must be one of {', '.join(allowed)}; got {value!r}")
    return value


def _require_name(field_name: str, value: str) -> str:
    value = value.strip()
    if not value:
        raise InputError(f"{field_name} must not be empty")
    return value


# --- axes -------------------------------------------------------------------------


def add_axis(
    session: Session,
    name: str,
    *,
    position_unit: str,
    feedback_kind: str,
    description: str = "",
    counts_per_rev: int | None = None,
    units_per_rev: float | None = None,
    calibration: tuple[float, float, float, float] | None = None,
    notes: str = "",
) -> Axis:
    """Create an axis. ``calibration`` is (raw_1, value_1, raw_2, value_2).

    For rotary units the travel per revolution defaults to 360 deg or 2π rad.
    """
    name = _require_name("axis name", name)
    require_choice("position unit", position_unit, POSITION_UNITS)
    require_choice("feedback kind", feedback_kind, FEEDBACK_KINDS)
    _check_counts_per_rev(counts_per_rev)
    if units_per_rev is None:
        units_per_rev = {"deg": 360.0, "rad": 2 * math.pi}.get(position_unit)
    _check_units_per_rev(units_per_rev)
    raw_1, value_1, raw_2, value_2 = _calibration_points(calibration)
    _require_free_axis_name(session, name)
    axis = Axis(
        name=name,
        description=description,
        position_unit=position_unit,
        feedback_kind=feedback_kind,
        counts_per_rev=counts_per_rev,
        units_per_rev=units_per_rev,
        cal_raw_1=raw_1,
        cal_value_1=value_1,
        cal_raw_2=raw_2,
        cal_value_2=value_2,
        notes=notes,
    )
    session.add(axis)
    session.flush()
    return axis


def _check_counts_per_rev(counts_per_rev: int | None) -> None:
    if counts_per_rev is not None and counts_per_rev <= 0:
        raise InputError(f"counts per revolution must be positive; got {counts_per_rev}")


def _check_units_per_rev(units_per_rev: float | None) -> None:
    if units_per_rev is not None and units_per_rev <= 0:
        raise InputError(f"travel per revolution must be positive; got {units_per_rev}")


def _calibration_points(
    calibration: Sequence[float | None] | None,
) -> tuple[float | None, float | None, float | None, float | None]:
    """(raw_1, value_1, raw_2, value_2) of a two-point calibration, or four Nones."""
    if calibration is None:
        return None, None, None, None
    if len(calibration) != 4 or any(v is None for v in calibration):
        raise InputError("calibration needs all four numbers: raw 1, value 1, raw 2, value 2")
    raw_1, value_1, raw_2, value_2 = calibration
    if raw_1 == raw_2:
        raise InputError("calibration needs two different raw readings")
    return raw_1, value_1, raw_2, value_2


def _require_free_axis_name(session: Session, name: str) -> None:
    if session.scalar(select(Axis.id).where(Axis.name == name)) is not None:
        raise ConflictError(f"axis '{name}' already exists")


def get_axis(session: Session, name: str) -> Axis:
    """The axis called ``name``; the error lists the known axes."""
    axis = session.scalar(select(Axis).where(Axis.name == name))
    if axis is None:
        raise unknown_axis(name, session.scalars(select(Axis.name)))
    return axis


def unknown_axis(name: str, known: Iterable[str]) -> NotFoundError:
    """The error for an axis that does not exist, listing those that do."""
    listed = ", ".join(sorted(known)) or "none yet"
    return NotFoundError(f"unknown axis '{name}' (known axes: {listed})")


def list_axes(session: Session) -> list[Axis]:
    return list(session.scalars(select(Axis).order_by(Axis.name)))


# --- hardware revisions -----------------------------------------------------------


def add_revision(
    session: Session,
    axis_name: str,
    label: str,
    *,
    parent: str | None = None,
    revision_date: date | None = None,
    change_category: str = "other",
    change_summary: str = "",
) -> HardwareRevision:
    """Create a revision of an axis, derived from ``parent`` (a label) if given."""
    axis = get_axis(session, axis_name)
    label = _require_name("revision label", label)
    require_choice("change category", change_category, CHANGE_CATEGORIES)
    if session.scalar(
        select(HardwareRevision.id).where(
            HardwareRevision.axis_id == axis.id, HardwareRevision.label == label
        )
    ):
        raise ConflictError(f"axis '{axis.name}' already has a revision '{label}'")
    parent_row = get_revision(session, axis.name, parent) if parent is not None else None
    revision = HardwareRevision(
        axis_id=axis.id,
        label=label,
        parent_id=parent_row.id if parent_row else None,
        revision_date=revision_date,
        change_category=change_category,
        change_summary=change_summary,
    )
    session.add(revision)
    session.flush()
    return revision


def get_revision(session: Session, axis_name: str, label: str) -> HardwareRevision:
    """The revision ``label`` of ``axis_name``; the error lists the axis's revisions."""
    axis = get_axis(session, axis_name)
    revision = session.scalar(
        select(HardwareRevision).where(
            HardwareRevision.axis_id == axis.id, HardwareRevision.label == label
        )
    )
    if revision is None:
        known = ", ".join(r.label for r in lineage_order(axis.revisions)) or "none yet"
        raise NotFoundError(
            f"unknown revision '{label}' of axis '{axis.name}' (known revisions: {known})"
        )
    return revision


def list_revisions(session: Session, axis_name: str) -> list[HardwareRevision]:
    """The axis's revisions in lineage order (every parent before its children)."""
    return lineage_order(get_axis(session, axis_name).revisions)


def lineage_order(revisions: Iterable[HardwareRevision]) -> list[HardwareRevision]:
    """Depth-first order from the roots; siblings by date, then creation order."""
    revisions = list(revisions)
    children: dict[int | None, list[HardwareRevision]] = {}
    ids = {r.id for r in revisions}
    for r in revisions:
        children.setdefault(r.parent_id if r.parent_id in ids else None, []).append(r)
    for siblings in children.values():
        siblings.sort(key=lambda r: (r.revision_date or date.min, r.id))
    ordered: list[HardwareRevision] = []
    stack = list(reversed(children.get(None, [])))
    while stack:
        revision = stack.pop()
        ordered.append(revision)
        stack.extend(reversed(children.get(revision.id, [])))
    return ordered


def ancestors(session: Session, revision: HardwareRevision) -> list[HardwareRevision]:
    """The revision's parent, grandparent, … up to the root (nearest first)."""
    tree = (
        select(HardwareRevision.id, HardwareRevision.parent_id, _depth(0))
        .where(HardwareRevision.id == revision.parent_id)
        .cte("ancestry", recursive=True)
    )
    step = aliased(HardwareRevision)
    tree = tree.union_all(
        select(step.id, step.parent_id, tree.c.depth + 1).where(step.id == tree.c.parent_id)
    )
    return _revisions_by_depth(session, tree)


def descendants(session: Session, revision: HardwareRevision) -> list[HardwareRevision]:
    """Every revision derived from this one, directly or not (nearest first)."""
    tree = (
        select(HardwareRevision.id, HardwareRevision.parent_id, _depth(0))
        .where(HardwareRevision.parent_id == revision.id)
        .cte("descent", recursive=True)
    )
    step = aliased(HardwareRevision)
    tree = tree.union_all(
        select(step.id, step.parent_id, tree.c.depth + 1).where(step.parent_id == tree.c.id)
    )
    return _revisions_by_depth(session, tree)


def _depth(value: int) -> Any:
    return literal(value, Integer).label("depth")


def _revisions_by_depth(session: Session, tree: Any) -> list[HardwareRevision]:
    rows = session.execute(
        select(HardwareRevision)
        .join(tree, tree.c.id == HardwareRevision.id)
        .order_by(tree.c.depth, HardwareRevision.id)
    )
    return list(rows.scalars())


# --- gain sets --------------------------------------------------------------------


@dataclass(frozen=True)
class GainParams:
    """PID gains in parallel form: u = Kp·e + Ki·∫e dt + Kd·de/dt.

    integrator_limit bounds the integrator's contribution to the output (in output
    units); anti_windup names the strategy; derivative_filter_hz is the corner of
    the derivative's low-pass filter; feedforward is a velocity feedforward gain.
    """

    kp: float
    ki: float
    kd: float
    loop_rate_hz: float
    integrator_limit: float | None = None
    anti_windup: str | None = None
    derivative_filter_hz: float | None = None
    feedforward: float | None = None
    extra: dict[str, Any] = field(default_factory=dict)

    def validate(self) -> None:
        for name in ("kp", "ki", "kd", "loop_rate_hz"):
            value = getattr(self, name)
            if not math.isfinite(value):
                raise InputError(f"{name} must be a finite number; got {value}")
        if self.loop_rate_hz <= 0:
            raise InputError(f"loop rate must be positive; got {self.loop_rate_hz} Hz")
        if self.integrator_limit is not None and self.integrator_limit < 0:
            raise InputError(f"integrator limit must not be negative; got {self.integrator_limit}")
        if self.anti_windup is not None:
            require_choice("anti-windup", self.anti_windup, ANTI_WINDUP_MODES)

    def content_hash(self) -> str:
        """SHA-256 of a canonical form: equal gains give equal hashes, whatever the name.

        Floats are written with ``repr`` (shortest round-tripping form) and -0.0 is
        folded into 0.0, so 1, 1.0 and 1.000 are one gain.
        """
        payload = {k: _canonical(v) for k, v in asdict(self).items()}
        payload["form"] = GAIN_FORM
        text = json.dumps(payload, sort_keys=True, separators=(",", ":"))
        return hashlib.sha256(text.encode()).hexdigest()


def _canonical(value: Any) -> Any:
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int | float):
        return repr(float(value) + 0.0)
    if isinstance(value, dict):
        return {str(k): _canonical(v) for k, v in sorted(value.items())}
    if isinstance(value, list | tuple):
        return [_canonical(v) for v in value]
    return str(value)


def add_gain_set(
    session: Session, params: GainParams, *, name: str | None = None
) -> tuple[GainSet, bool]:
    """Store ``params`` once; return (row, created).

    An identical gain set already stored is returned instead of a new row; if it
    has no name yet it takes ``name``. A name already used by different gains is a
    conflict.
    """
    params.validate()
    digest = params.content_hash()
    existing = session.scalar(select(GainSet).where(GainSet.content_hash == digest))
    if name is not None:
        name = _require_name("gain set name", name)
        named = session.scalar(select(GainSet).where(GainSet.name == name))
        if named is not None and named is not existing:
            raise ConflictError(f"gain set name '{name}' is already used by other gains")
    if existing is not None:
        if existing.name is None and name is not None:
            existing.name = name
        return existing, False
    row = GainSet(name=name, content_hash=digest, form=GAIN_FORM, **asdict(params))
    session.add(row)
    session.flush()
    return row, True


def get_gain_set(session: Session, name: str) -> GainSet:
    """A gain set by name, or by ``#id`` / hash prefix for unnamed ones."""
    row = session.scalar(select(GainSet).where(GainSet.name == name))
    if row is None and name.startswith("#") and name[1:].isdigit():
        row = session.get(GainSet, int(name[1:]))
    if row is None and len(name) >= 8:
        row = session.scalar(select(GainSet).where(GainSet.content_hash.startswith(name)))
    if row is None:
        known = ", ".join(n for n in session.scalars(select(GainSet.name)) if n) or "none named"
        raise NotFoundError(f"unknown gain set '{name}' (known gain sets: {known})")
    return row


def gain_params(row: GainSet) -> GainParams:
    """The parameters of a stored gain set."""
    return GainParams(
        kp=row.kp,
        ki=row.ki,
        kd=row.kd,
        loop_rate_hz=row.loop_rate_hz,
        integrator_limit=row.integrator_limit,
        anti_windup=row.anti_windup,
        derivative_filter_hz=row.derivative_filter_hz,
        feedforward=row.feedforward,
        extra=dict(row.extra or {}),
    )


def gain_label(name: str | None, gain_set_id: int) -> str:
    """A gain set's name, or ``#id`` for an unnamed one (as ``logbook gains list`` shows it)."""
    return name or f"#{gain_set_id}"


def list_gain_sets(session: Session) -> list[GainSet]:
    return list(session.scalars(select(GainSet).order_by(GainSet.name, GainSet.id)))


# --- runs -------------------------------------------------------------------------


def list_runs(
    session: Session,
    *,
    axis: str | None = None,
    revision: str | None = None,
    gains: str | None = None,
    test_kind: str | None = None,
    operator: str | None = None,
    since: datetime | None = None,
    until: datetime | None = None,
) -> list[TestRun]:
    """Runs matching every given filter, oldest first. ``revision`` needs ``axis``."""
    query = select(TestRun).order_by(TestRun.taken_at, TestRun.id)
    if revision is not None and axis is None:
        raise InputError("a revision filter needs the axis it belongs to")
    if axis is not None:
        query = query.where(TestRun.axis_id == get_axis(session, axis).id)
    if revision is not None and axis is not None:
        query = query.where(TestRun.revision_id == get_revision(session, axis, revision).id)
    if gains is not None:
        query = query.where(TestRun.gain_set_id == get_gain_set(session, gains).id)
    if test_kind is not None:
        query = query.where(TestRun.test_kind == require_choice("test kind", test_kind, TEST_KINDS))
    if operator is not None:
        query = query.where(TestRun.operator == operator)
    if since is not None:
        query = query.where(TestRun.taken_at >= since)
    if until is not None:
        query = query.where(TestRun.taken_at <= until)
    return list(session.scalars(query))


# --- corrections: editing what is stored ------------------------------------------
#
# Edits take only the fields they change (absent keys stay as they are; None clears
# an optional field). Issued acceptance reports keep the logbook honest: their runs
# are locked by database triggers, and the names and lineage a report's content hash
# covers (axis name, gain-set name, the reported revision's ancestry) may not change
# either, or the report would no longer verify against the database.


@dataclass(frozen=True)
class ReportRef:
    """An issued acceptance report, as an edit refusal names it."""

    report_id: int
    spec: str  # "name version"
    issued_at: datetime
    issued_by: str

    def describe(self) -> str:
        """``acceptance report 3 (spec x-stage-step 1.0, issued 2026-12-01 by R. Tester)``."""
        by = f" by {self.issued_by}" if self.issued_by else ""
        return (
            f"acceptance report {self.report_id} (spec {self.spec},"
            f" issued {self.issued_at:%Y-%m-%d}{by})"
        )


def _first_report(session: Session, *conditions: Any) -> ReportRef | None:
    """The earliest issued report matching ``conditions`` (on reports or report_runs)."""
    row = session.execute(
        select(
            AcceptanceReport.id,
            Spec.name,
            Spec.version,
            AcceptanceReport.issued_at,
            AcceptanceReport.issued_by,
        )
        .join(Spec, Spec.id == AcceptanceReport.spec_id)
        .outerjoin(ReportRun, ReportRun.report_id == AcceptanceReport.id)
        .where(*conditions)
        .order_by(AcceptanceReport.id)
        .limit(1)
    ).first()
    if row is None:
        return None
    report_id, name, version, issued_at, issued_by = row
    return ReportRef(report_id, f"{name} {version}", issued_at, issued_by)


def locking_report(session: Session, run_id: int) -> ReportRef | None:
    """The issued report that locks run ``run_id``, or None when the run is free.

    Only for the message: the database's triggers are what refuse the change.
    """
    return _first_report(session, ReportRun.run_id == run_id)


def _refuse_if_reported(what: str, change: str, report: ReportRef | None) -> None:
    if report is not None:
        raise LockedError(
            f"{what} is named by issued {report.describe()}: {change} would change"
            " that report's evidence, which must keep verifying"
        )


def _check_fields(kind: str, changes: Mapping[str, Any], allowed: frozenset[str]) -> None:
    unknown = sorted(set(changes) - allowed)
    if unknown:
        raise InputError(
            f"{kind} has no editable field {unknown[0]!r} (editable: {', '.join(sorted(allowed))})"
        )


class AxisChanges(TypedDict, total=False):
    """Editable axis fields. Position unit and feedback kind are fixed: the stored
    traces were converted with them. Stored runs keep the samples they were imported
    with; new counts or calibration apply to later imports."""

    new_name: str
    description: str
    notes: str
    counts_per_rev: int | None
    units_per_rev: float | None
    calibration: Sequence[float | None] | None  # (raw_1, value_1, raw_2, value_2)


def update_axis(session: Session, name: str, **changes: Unpack[AxisChanges]) -> Axis:
    """Change the fields of axis ``name`` given in ``changes`` (see :class:`AxisChanges`).

    A new name must be free; the axis's import profiles follow the rename. An axis
    named by an issued acceptance report keeps its name (LockedError).
    """
    _check_fields("an axis", changes, AxisChanges.__optional_keys__)
    axis = get_axis(session, name)
    if "counts_per_rev" in changes:
        _check_counts_per_rev(changes["counts_per_rev"])
        axis.counts_per_rev = changes["counts_per_rev"]
    if "units_per_rev" in changes:
        _check_units_per_rev(changes["units_per_rev"])
        axis.units_per_rev = changes["units_per_rev"]
    if "calibration" in changes:
        (axis.cal_raw_1, axis.cal_value_1, axis.cal_raw_2, axis.cal_value_2) = _calibration_points(
            changes["calibration"]
        )
    if "description" in changes:
        axis.description = changes["description"].strip()
    if "notes" in changes:
        axis.notes = changes["notes"].strip()
    if "new_name" in changes:
        new_name = _require_name("axis name", changes["new_name"])
        if new_name != axis.name:
            _refuse_if_reported(
                f"axis '{axis.name}'",
                "renaming it",
                _first_report(session, AcceptanceReport.axis_id == axis.id),
            )
            _require_free_axis_name(session, new_name)
            axis.name = new_name
            for profile in session.scalars(
                select(ImportProfile).where(ImportProfile.axis_id == axis.id)
            ):
                profile.settings = {**profile.settings, "axis": new_name}
    session.flush()
    return axis


class RevisionChanges(TypedDict, total=False):
    """Editable revision fields; ``parent`` is a label of the same axis, None for a root."""

    change_summary: str
    change_category: str
    revision_date: date | None
    parent: str | None


def update_revision(
    session: Session, axis: str, label: str, **changes: Unpack[RevisionChanges]
) -> HardwareRevision:
    """Change the fields of revision ``label`` of ``axis`` given in ``changes``.

    A new parent must be another revision of the same axis that is not derived from
    this one (the lineage stays a tree). The ancestry of a revision an issued report
    judged (this one or one derived from it) is part of that report and stays.
    """
    _check_fields("a revision", changes, RevisionChanges.__optional_keys__)
    revision = get_revision(session, axis, label)
    if "change_category" in changes:
        revision.change_category = require_choice(
            "change category", changes["change_category"], CHANGE_CATEGORIES
        )
    if "change_summary" in changes:
        revision.change_summary = changes["change_summary"].strip()
    if "revision_date" in changes:
        revision.revision_date = changes["revision_date"]
    if "parent" in changes:
        parent = _new_parent(session, revision, changes["parent"])
        if (parent.id if parent else None) != revision.parent_id:
            lineage = [revision.id, *(r.id for r in descendants(session, revision))]
            _refuse_if_reported(
                f"the lineage of revision '{revision.label}' of axis '{revision.axis.name}'",
                "re-parenting it",
                _first_report(session, AcceptanceReport.revision_id.in_(lineage)),
            )
            revision.parent_id = parent.id if parent else None
    session.flush()
    return revision


def _new_parent(
    session: Session, revision: HardwareRevision, label: str | None
) -> HardwareRevision | None:
    """The revision ``label`` as a parent for ``revision``, refused if it would close a loop."""
    if label is None:
        return None
    axis = revision.axis
    try:
        parent = get_revision(session, axis.name, label)
    except NotFoundError:
        elsewhere = session.scalar(
            select(Axis.name)
            .join(HardwareRevision, HardwareRevision.axis_id == Axis.id)
            .where(HardwareRevision.label == label)
            .order_by(Axis.name)
            .limit(1)
        )
        if elsewhere is None:
            raise
        raise ConflictError(
            f"parent: revision '{label}' belongs to axis '{elsewhere}', not '{axis.name}';"
            " a revision is derived from one of its own axis"
        ) from None
    if parent.id == revision.id:
        raise ConflictError(f"parent: revision '{label}' cannot be its own parent")
    if parent.id in {r.id for r in descendants(session, revision)}:
        raise ConflictError(
            f"parent: revision '{label}' is derived from '{revision.label}', so it cannot"
            " also be its parent (the lineage would loop)"
        )
    return parent


def rename_gain_set(session: Session, old: str, new: str) -> GainSet:
    """Give gain set ``old`` (a name, ``#id`` or hash prefix) the name ``new``.

    Only the name can change: a gain set is stored once per content (its hash over
    Kp, Ki, Kd and the rest), so other gains are a new gain set, never an edit. A
    gain set named by an issued acceptance report keeps its name (LockedError).
    """
    row = get_gain_set(session, old)
    new = _require_name("gain set name", new)
    if new == row.name:
        return row
    _refuse_if_reported(
        f"gain set '{gain_label(row.name, row.id)}'",
        "renaming it",
        _first_report(session, AcceptanceReport.gain_set_id == row.id),
    )
    if session.scalar(select(GainSet.id).where(GainSet.name == new)) is not None:
        raise ConflictError(f"gain set name '{new}' is already used by other gains")
    row.name = new
    session.flush()
    return row


def get_run(session: Session, run_id: int) -> TestRun:
    """Run ``run_id``, or a NotFoundError."""
    run = session.get(TestRun, run_id)
    if run is None:
        raise NotFoundError(f"no run {run_id} in the logbook")
    return run


class RunChanges(TypedDict, total=False):
    """Run fields an operator may correct. ``revision`` is a label of the run's axis,
    ``gains`` a gain-set name (or ``#id``); ``taken_at`` must carry a time zone. The
    axis, test kind and the captured evidence are what was recorded and stay."""

    operator: str
    notes: str
    taken_at: datetime
    supply_voltage_v: float | None
    temperature_c: float | None
    load_value: float | None
    load_unit: str | None
    revision: str
    gains: str


def update_run(session: Session, run_id: int, **changes: Unpack[RunChanges]) -> TestRun:
    """Correct the fields of run ``run_id`` given in ``changes``.

    A run used by an issued acceptance report is refused with a LockedError naming
    that report, before anything is changed; the database's run-lock triggers
    refuse it too, whatever the caller.
    """
    _check_fields("a run", changes, RunChanges.__optional_keys__)
    run = get_run(session, run_id)
    report = locking_report(session, run.id)
    if report is not None:
        raise LockedError(
            f"run {run.id} is locked: it is used by issued {report.describe()};"
            " record a corrected run instead of editing this one"
        )
    if "operator" in changes:
        run.operator = changes["operator"].strip()
    if "notes" in changes:
        run.notes = changes["notes"].strip()
    if "taken_at" in changes:
        taken_at = changes["taken_at"]
        if taken_at.tzinfo is None or taken_at.utcoffset() is None:
            raise InputError(f"taken at: {taken_at.isoformat()} has no time zone (add e.g. +00:00)")
        run.taken_at = taken_at
    if "supply_voltage_v" in changes:
        run.supply_voltage_v = _optional_finite("supply voltage", changes["supply_voltage_v"])
    if "temperature_c" in changes:
        run.temperature_c = _optional_finite("temperature", changes["temperature_c"])
    if "load_value" in changes:
        run.load_value = _optional_finite("load", changes["load_value"])
    if "load_unit" in changes:
        run.load_unit = (changes["load_unit"] or "").strip() or None
    if run.load_value is None and run.load_unit is not None:
        raise InputError(f"load unit '{run.load_unit}' is given without a load value")
    if "revision" in changes:
        run.revision_id = get_revision(session, run.axis.name, changes["revision"]).id
    if "gains" in changes:
        run.gain_set_id = get_gain_set(session, changes["gains"]).id
    session.flush()
    session.expire(run, ["revision", "gain_set"])
    return run


def _optional_finite(label: str, value: float | None) -> float | None:
    if value is not None and not math.isfinite(value):
        raise InputError(f"{label} must be a finite number; got {value}")
    return value
