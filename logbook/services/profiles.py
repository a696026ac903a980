"""Import profiles kept in the logbook: a named column mapping per axis."""

from __future__ import annotations

from collections.abc import Iterable

from sqlalchemy import select
from sqlalchemy.orm import Session

from logbook.errors import ConflictError, NotFoundError
from logbook.ingest.profiles import ImportProfile, profile_from_dict
from logbook.services.catalog import get_axis
from logbook.store.models import ImportProfile as ProfileRow


def add_profile(session: Session, profile: ImportProfile, *, replace: bool = False) -> ProfileRow:
    """Store ``profile`` for its axis; an existing name is a conflict unless ``replace``."""
    axis = get_axis(session, profile.axis)
    row = session.scalar(
        select(ProfileRow).where(ProfileRow.axis_id == axis.id, ProfileRow.name == profile.name)
    )
    if row is not None and not replace:
        raise ConflictError(
            f"axis '{axis.name}' already has a profile '{profile.name}' (use --replace)"
        )
    if row is None:
        row = ProfileRow(axis_id=axis.id, name=profile.name, settings=profile.to_dict())
        session.add(row)
    else:
        row.settings = profile.to_dict()
    session.flush()
    return row


def get_profile(session: Session, axis_name: str, name: str) -> ImportProfile:
    """The stored profile ``name`` of ``axis_name``; the error lists the axis's profiles."""
    axis = get_axis(session, axis_name)
    row = session.scalar(
        select(ProfileRow).where(ProfileRow.axis_id == axis.id, ProfileRow.name == name)
    )
    if row is None:
        raise unknown_profile(name, axis.name, [p.name for p in list_profiles(session, axis_name)])
    return profile_from_dict(row.settings)


def unknown_profile(name: str, axis_name: str, known: Iterable[str]) -> NotFoundError:
    """The error for a profile the axis does not have, listing those it has."""
    listed = ", ".join(sorted(known)) or "none yet"
    return NotFoundError(
        f"unknown import profile '{name}' for axis '{axis_name}' (known profiles: {listed})"
    )


def list_profiles(session: Session, axis_name: str | None = None) -> list[ImportProfile]:
    """Stored profiles, of one axis or of all, by axis and name."""
    query = select(ProfileRow).order_by(ProfileRow.axis_id, ProfileRow.name)
    if axis_name is not None:
        query = query.where(ProfileRow.axis_id == get_axis(session, axis_name).id)
    return [profile_from_dict(row.settings) for row in session.scalars(query)]
