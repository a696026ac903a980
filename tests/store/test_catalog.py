"""Catalogue: lineage queries, gain-set de-duplication and clear errors."""

from __future__ import annotations

import pytest
from sqlalchemy.exc import IntegrityError

from logbook.errors import ConflictError, InputError, NotFoundError
from logbook.services import catalog
from logbook.store.engine import Database
from logbook.store.models import HardwareRevision
from tests.store.helpers import seed_axis


def labels(revisions: list[HardwareRevision]) -> list[str]:
    return [r.label for r in revisions]


def test_lineage_ancestors_descendants_and_order(database: Database) -> None:
    with database.session(write=True) as session:
        seed_axis(session)
    with database.session() as session:
        c = catalog.get_revision(session, "x-stage", "C")
        a = catalog.get_revision(session, "x-stage", "A")
        assert labels(catalog.ancestors(session, c)) == ["B", "A"]
        assert labels(catalog.ancestors(session, a)) == []
        assert labels(catalog.descendants(session, a)) == ["B", "D", "C"]
        assert labels(catalog.descendants(session, c)) == []
        assert labels(catalog.list_revisions(session, "x-stage")) == ["A", "B", "C", "D"]


def test_lineage_is_per_axis(database: Database) -> None:
    with database.session(write=True) as session:
        seed_axis(session, "x-stage")
        seed_axis(session, "y-stage")
    with database.session() as session:
        c = catalog.get_revision(session, "y-stage", "C")
        assert [r.axis.name for r in catalog.ancestors(session, c)] == ["y-stage", "y-stage"]


def test_parent_of_another_axis_is_refused_by_the_database(database: Database) -> None:
    with database.session(write=True) as session:
        seed_axis(session, "x-stage")
        seed_axis(session, "y-stage")
    with pytest.raises(IntegrityError), database.session(write=True) as session:
        y_b = catalog.get_revision(session, "y-stage", "B")
        y_b.parent_id = catalog.get_revision(session, "x-stage", "A").id


def test_identical_gain_sets_are_one_row(database: Database) -> None:
    with database.session(write=True) as session:
        first, created = catalog.add_gain_set(
            session, catalog.GainParams(kp=2, ki=10, kd=0.0, loop_rate_hz=1000), name="base"
        )
        assert created
        again, created_again = catalog.add_gain_set(
            session, catalog.GainParams(kp=2.0, ki=10.0, kd=-0.0, loop_rate_hz=1000.0)
        )
        assert not created_again and again.id == first.id
        other, created_other = catalog.add_gain_set(
            session, catalog.GainParams(kp=2.0, ki=10.0, kd=0.0, loop_rate_hz=2000.0), name="fast"
        )
        assert created_other and other.id != first.id
        assert len(catalog.list_gain_sets(session)) == 2


def test_gain_set_name_clash_and_bad_values(database: Database) -> None:
    with database.session(write=True) as session:
        catalog.add_gain_set(
            session, catalog.GainParams(kp=1, ki=0, kd=0, loop_rate_hz=500), name="g"
        )
        with pytest.raises(ConflictError, match="'g' is already used"):
            catalog.add_gain_set(
                session, catalog.GainParams(kp=3, ki=0, kd=0, loop_rate_hz=500), name="g"
            )
        with pytest.raises(InputError, match="loop rate must be positive"):
            catalog.add_gain_set(session, catalog.GainParams(kp=1, ki=0, kd=0, loop_rate_hz=0))
        with pytest.raises(InputError, match="anti-windup must be one of"):
            catalog.add_gain_set(
                session, catalog.GainParams(kp=1, ki=0, kd=0, loop_rate_hz=5, anti_windup="magic")
            )


def test_unknown_axis_and_revision_errors_list_what_exists(database: Database) -> None:
    with database.session(write=True) as session:
        seed_axis(session)
    with database.session() as session:
        with pytest.raises(NotFoundError, match=r"unknown axis 'z-stage' \(known axes: x-stage\)"):
            catalog.get_axis(session, "z-stage")
        with pytest.raises(
            NotFoundError,
            match=r"unknown revision 'Q' of axis 'x-stage' \(known revisions: A, B, C, D\)",
        ):
            catalog.get_revision(session, "x-stage", "Q")
        with pytest.raises(NotFoundError, match="unknown gain set 'nope'"):
            catalog.get_gain_set(session, "nope")


def test_duplicates_and_bad_axis_fields(database: Database) -> None:
    with database.session(write=True) as session:
        seed_axis(session)
        with pytest.raises(ConflictError, match="axis 'x-stage' already exists"):
            catalog.add_axis(session, "x-stage", position_unit="mm", feedback_kind="encoder")
        with pytest.raises(ConflictError, match="already has a revision 'A'"):
            catalog.add_revision(session, "x-stage", "A")
        with pytest.raises(InputError, match="position unit must be one of"):
            catalog.add_axis(session, "w", position_unit="furlong", feedback_kind="encoder")
        with pytest.raises(InputError, match="two different raw readings"):
            catalog.add_axis(
                session,
                "w",
                position_unit="deg",
                feedback_kind="potentiometer",
                calibration=(1, 0, 1, 90),
            )


def test_rotary_axes_default_their_travel_per_revolution(database: Database) -> None:
    with database.session(write=True) as session:
        deg = catalog.add_axis(session, "pan", position_unit="deg", feedback_kind="potentiometer")
        mm = catalog.add_axis(session, "lift", position_unit="mm", feedback_kind="encoder")
        assert deg.units_per_rev == 360.0
        assert mm.units_per_rev is None
