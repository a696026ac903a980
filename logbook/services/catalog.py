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
from collections.abc import Iterable, Sequence
from dataclasses import asdict, dataclass, field
from datetime import date, datetime
from typing import Any

from sqlalchemy import Integer, literal, select
from sqlalchemy.orm import Session, aliased

from logbook.errors import ConflictError, InputError, NotFoundError
from logbook.store.models import (
    ANTI_WINDUP_MODES,
    CHANGE_CATEGORIES,
    FEEDBACK_KINDS,
    GAIN_FORM,
    POSITION_UNITS,
    TEST_KINDS,
    Axis,
    GainSet,
    HardwareRevision,
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
    if counts_per_rev is not None and counts_per_rev <= 0:
        raise InputError(f"counts per revolution must be positive; got {counts_per_rev}")
    if units_per_rev is None:
        units_per_rev = {"deg": 360.0, "rad": 2 * math.pi}.get(position_unit)
    if units_per_rev is not None and units_per_rev <= 0:
        raise InputError(f"travel per revolution must be positive; got {units_per_rev}")
    if calibration is not None and calibration[0] == calibration[2]:
        raise InputError("calibration needs two different raw readings")
    if session.scalar(select(Axis.id).where(Axis.name == name)) is not None:
        raise ConflictError(f"axis '{name}' already exists")
    raw_1, value_1, raw_2, value_2 = calibration or (None, None, None, None)
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


def get_axis(session: Session, name: str) -> Axis:
    """The axis called ``name``; the error lists the known axes."""
    axis = session.scalar(select(Axis).where(Axis.name == name))
    if axis is None:
        known = ", ".join(session.scalars(select(Axis.name).order_by(Axis.name))) or "none yet"
        raise NotFoundError(f"unknown axis '{name}' (known axes: {known})")
    return axis


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
