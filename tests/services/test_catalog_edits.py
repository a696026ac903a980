"""Corrections to the catalogue: axes, revisions (re-parenting), gain-set names and
runs; runs used by an issued report stay locked and the refusal names the report."""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta, timezone
from pathlib import Path

import pytest
from click.testing import CliRunner, Result

from logbook.cli import main
from logbook.errors import ConflictError, InputError, LockedError, NotFoundError
from logbook.ingest.profiles import ImportProfile
from logbook.services import catalog, profiles
from logbook.services.reporting import IssuedReport, issue_report, verify_report
from logbook.store.engine import Database
from tests.reports.sample_report import seed_bench
from tests.store.helpers import seed_axis, seed_run


@pytest.fixture
def seeded(database: Database) -> Database:
    """x-stage (A -> B -> C, A -> D) with one run on B, and y-stage with revision R1."""
    with database.session(write=True) as session:
        seed_axis(session)
        seed_run(session)
        catalog.add_axis(session, "y-stage", position_unit="deg", feedback_kind="potentiometer")
        catalog.add_revision(session, "y-stage", "R1")
    return database


@pytest.fixture
def reported(database: Database, tmp_path: Path) -> tuple[Database, IssuedReport]:
    """The bench logbook (bench-x, A -> B -> C) with a report issued on revision C."""
    seed_bench(database)
    issued = issue_report(
        database,
        axis="bench-x",
        revision="C",
        spec="bench-x-position",
        out=tmp_path / "report-C.html",
        issued_by="R. Tester",
    )
    return database, issued


def db_url(database: Database) -> str:
    return database.url.render_as_string(hide_password=False)


def labels(revisions: list) -> list[str]:
    return [r.label for r in revisions]


# --- axes -------------------------------------------------------------------------


def test_axis_edit_changes_only_the_given_fields(seeded: Database) -> None:
    with seeded.session(write=True) as session:
        catalog.update_axis(
            session,
            "x-stage",
            description=" belt stage ",
            units_per_rev=5.0,
            calibration=(410.0, -90.0, 3690.0, 90.0),
        )
    with seeded.session(write=True) as session:
        catalog.update_axis(session, "x-stage", counts_per_rev=None, notes="encoder removed")
    with seeded.session() as session:
        axis = catalog.get_axis(session, "x-stage")
        assert axis.description == "belt stage"
        assert axis.notes == "encoder removed"
        assert axis.counts_per_rev is None
        assert axis.units_per_rev == 5.0
        calibration = (axis.cal_raw_1, axis.cal_value_1, axis.cal_raw_2, axis.cal_value_2)
        assert calibration == (410.0, -90.0, 3690.0, 90.0)
        assert (axis.position_unit, axis.feedback_kind) == ("mm", "encoder")  # untouched


def test_axis_rename_must_be_unique_and_its_profiles_follow(seeded: Database) -> None:
    with seeded.session(write=True) as session:
        profiles.add_profile(
            session,
            ImportProfile(
                name="bench-csv",
                axis="x-stage",
                time_column="t [s]",
                setpoint_column="setpoint [mm]",
                feedback_column="position [mm]",
            ),
        )
    with seeded.session(write=True) as session:
        catalog.update_axis(session, "x-stage", new_name="x-bench")
    with seeded.session() as session:
        assert [a.name for a in catalog.list_axes(session)] == ["x-bench", "y-stage"]
        assert labels(catalog.list_revisions(session, "x-bench")) == ["A", "B", "C", "D"]
        assert profiles.get_profile(session, "x-bench", "bench-csv").axis == "x-bench"
        assert len(catalog.list_runs(session, axis="x-bench")) == 1
    with (
        pytest.raises(ConflictError, match="axis 'y-stage' already exists"),
        seeded.session(write=True) as session,
    ):
        catalog.update_axis(session, "x-bench", new_name="y-stage")


@pytest.mark.parametrize(
    ("changes", "message"),
    [
        ({"counts_per_rev": 0}, "counts per revolution must be positive; got 0"),
        ({"units_per_rev": -2.0}, "travel per revolution must be positive"),
        ({"calibration": (1.0, 2.0, None, 4.0)}, "calibration needs all four numbers"),
        ({"calibration": (1.0, 2.0, 1.0, 4.0)}, "two different raw readings"),
        ({"new_name": "  "}, "axis name must not be empty"),
        ({"position_unit": "deg"}, "no editable field 'position_unit'"),
    ],
)
def test_axis_edit_errors_name_the_field(seeded: Database, changes: dict, message: str) -> None:
    with pytest.raises(InputError, match=message), seeded.session(write=True) as session:
        catalog.update_axis(session, "x-stage", **changes)
    with seeded.session() as session:
        axis = catalog.get_axis(session, "x-stage")
        assert (axis.counts_per_rev, axis.units_per_rev, axis.cal_raw_1) == (2000, None, None)


# --- revisions --------------------------------------------------------------------


def test_revision_fields_and_parent_are_edited(seeded: Database) -> None:
    with seeded.session(write=True) as session:
        catalog.update_revision(
            session,
            "x-stage",
            "C",
            parent="A",
            change_category="electrical",
            change_summary="new driver board",
            revision_date=date(2026, 5, 4),
        )
        catalog.update_revision(session, "x-stage", "D", parent=None)
    with seeded.session() as session:
        c = catalog.get_revision(session, "x-stage", "C")
        assert (c.change_category, c.change_summary) == ("electrical", "new driver board")
        assert c.revision_date == date(2026, 5, 4)
        assert labels(catalog.ancestors(session, c)) == ["A"]
        a = catalog.get_revision(session, "x-stage", "A")
        assert labels(catalog.descendants(session, a)) == ["B", "C"]
        assert catalog.get_revision(session, "x-stage", "D").parent_id is None


@pytest.mark.parametrize(
    ("label", "parent", "error", "message"),
    [
        ("A", "C", ConflictError, "'C' is derived from 'A'.*lineage would loop"),
        ("B", "C", ConflictError, "'C' is derived from 'B'"),
        ("B", "B", ConflictError, "cannot be its own parent"),
        ("B", "R1", ConflictError, "'R1' belongs to axis 'y-stage', not 'x-stage'"),
        ("B", "Q", NotFoundError, r"unknown revision 'Q'.*known revisions: A, B, C, D"),
        ("Q", "A", NotFoundError, "unknown revision 'Q'"),
    ],
)
def test_a_parent_that_would_break_the_lineage_is_refused(
    seeded: Database, label: str, parent: str, error: type, message: str
) -> None:
    with pytest.raises(error, match=message), seeded.session(write=True) as session:
        catalog.update_revision(session, "x-stage", label, parent=parent)
    with seeded.session() as session:
        c = catalog.get_revision(session, "x-stage", "C")
        assert labels(catalog.ancestors(session, c)) == ["B", "A"]


def test_unknown_change_category_is_named(seeded: Database) -> None:
    with (
        pytest.raises(InputError, match="change category must be one of mechanical"),
        seeded.session(write=True) as session,
    ):
        catalog.update_revision(session, "x-stage", "B", change_category="optical")


# --- gain sets --------------------------------------------------------------------


def test_gain_set_rename_keeps_the_gains(seeded: Database) -> None:
    with seeded.session(write=True) as session:
        before = catalog.get_gain_set(session, "base")
        digest, gain_id = before.content_hash, before.id
        unnamed, _ = catalog.add_gain_set(
            session, catalog.GainParams(kp=1.0, ki=0.0, kd=0.0, loop_rate_hz=500.0)
        )
        catalog.rename_gain_set(session, "base", "soft-start")
        catalog.rename_gain_set(session, f"#{unnamed.id}", "p-only")
    with seeded.session() as session:
        renamed = catalog.get_gain_set(session, "soft-start")
        assert (renamed.id, renamed.content_hash) == (gain_id, digest)
        assert catalog.get_gain_set(session, "p-only").id == unnamed.id
        assert catalog.list_runs(session, gains="soft-start")[0].gain_set_id == gain_id
    with (
        pytest.raises(ConflictError, match="'p-only' is already used by other gains"),
        seeded.session(write=True) as session,
    ):
        catalog.rename_gain_set(session, "soft-start", "p-only")


# --- runs -------------------------------------------------------------------------


def test_run_fields_are_corrected(seeded: Database) -> None:
    with seeded.session() as session:
        run_id = catalog.list_runs(session, axis="x-stage")[0].id
    cet = timezone(timedelta(hours=1))
    with seeded.session(write=True) as session:
        catalog.update_run(
            session,
            run_id,
            operator=" J. Amsel ",
            notes="coupling re-torqued",
            taken_at=datetime(2026, 11, 3, 11, 15, 30, tzinfo=cet),
            supply_voltage_v=24.0,
            temperature_c=21.5,
            load_value=0.5,
            load_unit="kg",
            revision="C",
            gains="#1",
        )
    with seeded.session() as session:
        run = catalog.get_run(session, run_id)
        assert (run.operator, run.notes) == ("J. Amsel", "coupling re-torqued")
        assert run.taken_at == datetime(2026, 11, 3, 10, 15, 30, tzinfo=UTC)
        assert (run.supply_voltage_v, run.temperature_c) == (24.0, 21.5)
        assert (run.load_value, run.load_unit) == (0.5, "kg")
        assert run.revision.label == "C" and run.gain_set.name == "base"
    with seeded.session(write=True) as session:
        catalog.update_run(session, run_id, load_value=None, load_unit=None, temperature_c=None)
    with seeded.session() as session:
        run = catalog.get_run(session, run_id)
        assert (run.load_value, run.load_unit, run.temperature_c) == (None, None, None)
        assert run.supply_voltage_v == 24.0


@pytest.mark.parametrize(
    ("changes", "error", "message"),
    [
        ({"taken_at": datetime(2026, 11, 3, 9, 0)}, InputError, "taken at: .* has no time zone"),
        ({"load_unit": "kg"}, InputError, "load unit 'kg' is given without a load value"),
        ({"temperature_c": float("nan")}, InputError, "temperature must be a finite number"),
        ({"revision": "R1"}, NotFoundError, "unknown revision 'R1' of axis 'x-stage'"),
        ({"gains": "stiff"}, NotFoundError, "unknown gain set 'stiff'"),
        ({"test_kind": "ramp"}, InputError, "a run has no editable field 'test_kind'"),
    ],
)
def test_run_edit_errors_name_the_field(
    seeded: Database, changes: dict, error: type, message: str
) -> None:
    with seeded.session() as session:
        run_id = catalog.list_runs(session, axis="x-stage")[0].id
    with pytest.raises(error, match=message), seeded.session(write=True) as session:
        catalog.update_run(session, run_id, operator="someone", **changes)
    with seeded.session() as session:
        assert catalog.get_run(session, run_id).operator == "tester"


def test_an_unknown_run_is_named(seeded: Database) -> None:
    with pytest.raises(NotFoundError, match="no run 999"), seeded.session(write=True) as session:
        catalog.update_run(session, 999, operator="x")


# --- the locks of issued reports ----------------------------------------------------


def test_a_locked_run_is_refused_naming_its_report(reported) -> None:
    database, issued = reported
    with database.session() as session:
        locked = catalog.list_runs(session, axis="bench-x", revision="C")[0]
        free = catalog.list_runs(session, axis="bench-x", revision="B")[0]
        before = locked.as_dict()
    pattern = (
        rf"run {locked.id} is locked: it is used by issued acceptance report"
        rf" {issued.report_id} \(spec bench-x-position .*by R\. Tester\)"
    )
    with pytest.raises(LockedError, match=pattern), database.session(write=True) as session:
        catalog.update_run(session, locked.id, operator="someone else", notes="fixed")
    with database.session(write=True) as session:  # runs no report used stay editable
        catalog.update_run(session, free.id, operator="someone else")
    with database.session() as session:
        assert catalog.get_run(session, locked.id).as_dict() == before
        assert catalog.get_run(session, free.id).operator == "someone else"
        assert verify_report(session, issued.html_path).matches


def test_the_database_trigger_still_guards_a_locked_run(
    reported, monkeypatch: pytest.MonkeyPatch
) -> None:
    """With the service's look-up bypassed, the run-lock trigger refuses the update."""
    database, _ = reported
    monkeypatch.setattr(catalog, "locking_report", lambda session, run_id: None)
    with database.session() as session:
        locked = catalog.list_runs(session, axis="bench-x", revision="C")[0]
    with (
        pytest.raises(LockedError, match="referenced by an issued acceptance report"),
        database.session(write=True) as session,
    ):
        catalog.update_run(session, locked.id, operator="someone else")
    with database.session() as session:
        assert catalog.get_run(session, locked.id).operator == locked.operator


def test_names_and_lineage_a_report_covers_stay_so_it_keeps_verifying(reported) -> None:
    database, issued = reported
    refused = [
        (catalog.rename_gain_set, ("stage-tuned-3", "tuned"), {}, "gain set 'stage-tuned-3'"),
        (catalog.update_axis, ("bench-x",), {"new_name": "bench-y"}, "axis 'bench-x'"),
        (catalog.update_revision, ("bench-x", "C"), {"parent": "A"}, "revision 'C'"),
        (catalog.update_revision, ("bench-x", "B"), {"parent": None}, "revision 'B'"),
    ]
    for edit, args, changes, what in refused:
        with (
            pytest.raises(LockedError, match=f"{what}.*acceptance report {issued.report_id}"),
            database.session(write=True) as session,
        ):
            edit(session, *args, **changes)
    with database.session(write=True) as session:  # what the report's hash does not cover
        catalog.update_axis(session, "bench-x", description="rebuilt stage", notes="n")
        catalog.update_revision(session, "bench-x", "C", change_summary="clarified")
        catalog.add_revision(session, "bench-x", "D", parent="C")
        catalog.update_revision(session, "bench-x", "D", parent="A")
        catalog.rename_gain_set(session, "stage-tuned-3", "stage-tuned-3")  # unchanged
    with database.session() as session:
        assert verify_report(session, issued.html_path).matches


# --- the command line -------------------------------------------------------------


def invoke(*args: str) -> Result:
    return CliRunner().invoke(main, list(args))


def one_line_error(result: Result) -> str:
    assert result.exit_code == 1, result.output
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), result.output
    return lines[0]


def test_edit_commands(seeded: Database) -> None:
    db = db_url(seeded)
    result = invoke("axis", "edit", "x-stage", "--rename", "x-bench", "--clear", "counts-per-rev",
                    "--notes", "spare encoder", "--db", db)  # fmt: skip
    assert result.exit_code == 0, result.output
    assert result.output == "updated axis 'x-stage': counts_per_rev, new_name, notes\n"
    result = invoke("rev", "edit", "C", "--axis", "x-bench", "--parent", "A", "--date",
                    "2026-05-04", "--category", "firmware", "--db", db)  # fmt: skip
    assert result.exit_code == 0, result.output
    assert invoke("gains", "rename", "base", "soft", "--db", db).exit_code == 0
    result = invoke("runs", "edit", "1", "--operator", "J. Amsel", "--taken-at",
                    "2026-11-03T10:00:00+01:00", "--load-value", "0.5", "--load-unit", "kg",
                    "--rev", "D", "--db", db)  # fmt: skip
    assert result.exit_code == 0, result.output
    with seeded.session() as session:
        axis = catalog.get_axis(session, "x-bench")
        assert (axis.counts_per_rev, axis.notes) == (None, "spare encoder")
        c = catalog.get_revision(session, "x-bench", "C")
        assert (c.parent.label, c.revision_date, c.change_category) == (
            "A",
            date(2026, 5, 4),
            "firmware",
        )
        run = catalog.get_run(session, 1)
        assert (run.operator, run.revision.label, run.gain_set.name) == ("J. Amsel", "D", "soft")
        assert run.taken_at == datetime(2026, 11, 3, 9, 0, tzinfo=UTC)
        assert (run.load_value, run.load_unit) == (0.5, "kg")

    loop = invoke("rev", "edit", "A", "--axis", "x-bench", "--parent", "C", "--db", db)
    assert "lineage would loop" in one_line_error(loop)
    assert "no run 7" in one_line_error(invoke("runs", "edit", "7", "--notes", "x", "--db", db))
    usage = [
        ("runs", "edit", "1", "--db", db),  # nothing to change
        ("runs", "edit", "1", "--load-value", "1", "--clear", "load", "--db", db),
        ("rev", "edit", "A", "--axis", "x-bench", "--parent", "B", "--no-parent", "--db", db),
        ("rev", "edit", "A", "--axis", "x-bench", "--date", "May 4", "--db", db),
    ]
    for args in usage:
        assert invoke(*args).exit_code == 2, args


def test_runs_edit_of_a_locked_run_exits_1_naming_the_report(reported) -> None:
    database, issued = reported
    with database.session() as session:
        locked = catalog.list_runs(session, axis="bench-x", revision="C")[0]
    result = invoke("runs", "edit", str(locked.id), "--notes", "x", "--db", db_url(database))
    message = one_line_error(result)
    assert f"run {locked.id} is locked" in message
    assert f"acceptance report {issued.report_id} (spec bench-x-position" in message
    with database.session() as session:
        assert catalog.get_run(session, locked.id).notes == locked.notes
