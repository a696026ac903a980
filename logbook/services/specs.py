"""Acceptance specs in the database: add (from a file or from parts), list, show.

A spec is identified by name and version; a changed spec is a new version, never
an edit, so issued reports keep pointing at the limits they were judged against.
Where only a name is given, the newest version (the one added last) is meant.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from logbook.acceptance.spec_file import (
    Limit,
    SpecDefinition,
    load_spec_file,
    spec_from_mapping,
)
from logbook.errors import ConflictError, InputError, NotFoundError
from logbook.services import catalog
from logbook.store.models import Spec, SpecLimit


def add_spec(session: Session, spec: SpecDefinition, *, source_text: str | None = None) -> Spec:
    """Store ``spec``; every axis it names must exist. ``source_text`` keeps the file."""
    axes = [catalog.get_axis(session, name) for name in spec.axes]
    clash = session.scalar(
        select(Spec.id).where(Spec.name == spec.name, Spec.version == spec.version)
    )
    if clash is not None:
        raise ConflictError(
            f"spec '{spec.name}' version {spec.version} already exists; a changed spec"
            " needs a new version"
        )
    row = Spec(
        name=spec.name,
        version=spec.version,
        test_kind=spec.test_kind,
        statistic=spec.statistic,
        required_runs=spec.required_runs,
        description=spec.description,
        source_text=source_text,
        limits=[
            SpecLimit(metric=metric, lower=limit.lower, upper=limit.upper, unit=limit.unit)
            for metric, limit in spec.limits.items()
        ],
        axes=axes,
    )
    session.add(row)
    session.flush()
    return row


def add_spec_file(session: Session, path: str | Path) -> Spec:
    """Read, validate and store a TOML or YAML spec file, keeping its text."""
    spec = load_spec_file(path)
    return add_spec(session, spec, source_text=Path(path).read_text(encoding="utf-8"))


def spec_from_options(
    *,
    name: str,
    version: str,
    test_kind: str,
    axes: tuple[str, ...],
    limits: tuple[tuple[str, str, str, str], ...],
    statistic: str = "every_run",
    required_runs: int = 1,
    description: str = "",
) -> SpecDefinition:
    """A spec from command-line parts; each limit is (metric, lower, upper, unit) with
    "-" for an absent bound. Validated exactly like a file."""
    table: dict[str, dict[str, Any]] = {}
    for metric, lower, upper, unit in limits:
        if metric in table:
            raise InputError(f"--limit {metric} is given twice")
        table[metric] = {
            "lower": _bound(metric, "lower", lower),
            "upper": _bound(metric, "upper", upper),
            "unit": unit,
        }
    return spec_from_mapping(
        {
            "name": name,
            "version": version,
            "test_kind": test_kind,
            "axes": list(axes),
            "statistic": statistic,
            "required_runs": required_runs,
            "description": description,
            "limits": table,
        },
        source="command line",
    )


def _bound(metric: str, side: str, text: str) -> float | None:
    if text.strip() == "-":
        return None
    try:
        return float(text)
    except ValueError:
        raise InputError(
            f"--limit {metric}: the {side} limit must be a number or '-', got {text!r}"
        ) from None


def get_spec(session: Session, name: str, version: str | None = None) -> Spec:
    """The spec ``name`` at ``version``, or its newest version; errors list what exists."""
    query = select(Spec).where(Spec.name == name)
    if version is not None:
        query = query.where(Spec.version == version)
    row = session.scalar(query.order_by(Spec.created_at.desc(), Spec.id.desc()).limit(1))
    if row is None:
        versions = list(session.scalars(select(Spec.version).where(Spec.name == name)))
        if versions:
            raise NotFoundError(
                f"spec '{name}' has no version {version} (versions: {', '.join(versions)})"
            )
        known = ", ".join(sorted(set(session.scalars(select(Spec.name))))) or "none yet"
        raise NotFoundError(f"unknown spec '{name}' (known specs: {known})")
    return row


def list_specs(session: Session) -> list[Spec]:
    return list(session.scalars(select(Spec).order_by(Spec.name, Spec.created_at, Spec.id)))


def spec_definition(row: Spec) -> SpecDefinition:
    """The stored spec as a :class:`SpecDefinition`, limits sorted by metric."""
    return SpecDefinition(
        name=row.name,
        version=row.version,
        test_kind=row.test_kind,
        axes=tuple(axis.name for axis in row.axes),
        statistic=row.statistic,
        required_runs=row.required_runs,
        description=row.description,
        limits={
            limit.metric: Limit(lower=limit.lower, upper=limit.upper, unit=limit.unit)
            for limit in sorted(row.limits, key=lambda limit: limit.metric)
        },
    )


def spec_summary(row: Spec) -> dict[str, Any]:
    """One spec as plain data for tables and ``--json``."""
    return {
        "id": row.id,
        **spec_definition(row).to_dict(),
        "created_at": row.created_at.isoformat() if row.created_at else None,
    }
