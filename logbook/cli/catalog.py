"""``logbook axis|rev|gains|runs``: the catalogue from the command line."""

from __future__ import annotations

from datetime import date
from typing import Any

import click

from logbook.cli.base import (
    db_option,
    json_option,
    open_logbook,
    parse_when,
    print_json,
    print_table,
)
from logbook.services import catalog
from logbook.store.models import (
    ANTI_WINDUP_MODES,
    CHANGE_CATEGORIES,
    FEEDBACK_KINDS,
    POSITION_UNITS,
    TEST_KINDS,
    Axis,
    GainSet,
    HardwareRevision,
    TestRun,
)


def axis_json(axis: Axis) -> dict[str, Any]:
    return axis.as_dict()


def revision_json(revision: HardwareRevision) -> dict[str, Any]:
    row = revision.as_dict()
    row["axis"] = revision.axis.name
    row["parent"] = revision.parent.label if revision.parent else None
    return row


def run_json(run: TestRun) -> dict[str, Any]:
    row = run.as_dict()
    row.update(axis=run.axis.name, revision=run.revision.label, gains=gain_label(run.gain_set))
    return row


def gain_label(gain_set: GainSet) -> str:
    return catalog.gain_label(gain_set.name, gain_set.id)


# --- axis ------------------------------------------------------------------------


@click.group("axis")
def axis_group() -> None:
    """Motion axes under test.

    Example: logbook axis add x-stage --unit mm --feedback encoder --counts-per-rev 2000
    """


@axis_group.command("add")
@click.argument("name")
@click.option(
    "--unit",
    "position_unit",
    type=click.Choice(POSITION_UNITS),
    required=True,
    help="Position unit of the axis.",
)
@click.option(
    "--feedback",
    "feedback_kind",
    type=click.Choice(FEEDBACK_KINDS),
    required=True,
    help="Kind of position feedback.",
)
@click.option("--description", default="", help="What the axis is.")
@click.option("--counts-per-rev", type=int, help="Encoder counts per revolution (4 x lines).")
@click.option(
    "--units-per-rev",
    type=float,
    help="Travel per motor revolution in the axis unit (e.g. lead-screw lead in mm).",
)
@click.option(
    "--calibration",
    nargs=4,
    type=float,
    metavar="RAW1 VALUE1 RAW2 VALUE2",
    help="Two-point calibration of analogue feedback: raw reading -> position.",
)
@click.option("--notes", default="")
@db_option
def axis_add(name: str, db: str | None, calibration: tuple[float, ...], **fields: Any) -> None:
    """Add an axis.

    Example: logbook axis add pan-servo --unit deg --feedback potentiometer
    --calibration 410 -90 3690 90
    """
    database = open_logbook(db)
    with database.session(write=True) as session:
        axis = catalog.add_axis(session, name, calibration=calibration or None, **fields)  # type: ignore[arg-type]
        click.echo(f"added axis '{axis.name}'")


@axis_group.command("list")
@json_option
@db_option
def axis_list(as_json: bool, db: str | None) -> None:
    """List the axes.

    Example: logbook axis list --json
    """
    with open_logbook(db).session() as session:
        rows = [axis_json(a) for a in catalog.list_axes(session)]
    if as_json:
        print_json(rows)
    else:
        print_table(
            rows, ["name", "position_unit", "feedback_kind", "counts_per_rev", "description"]
        )


@axis_group.command("show")
@click.argument("name")
@json_option
@db_option
def axis_show(name: str, as_json: bool, db: str | None) -> None:
    """Show one axis with its revision lineage.

    Example: logbook axis show x-stage
    """
    with open_logbook(db).session() as session:
        axis = catalog.get_axis(session, name)
        row = axis_json(axis)
        row["revisions"] = [revision_json(r) for r in catalog.lineage_order(axis.revisions)]
    if as_json:
        print_json(row)
        return
    for key, value in row.items():
        if key != "revisions":
            click.echo(f"{key}: {'-' if value is None else value}")
    click.echo("revisions:")
    print_table(
        row["revisions"], ["label", "parent", "revision_date", "change_category", "change_summary"]
    )


# --- rev -------------------------------------------------------------------------


@click.group("rev")
def rev_group() -> None:
    """Hardware revisions of an axis and their lineage.

    Example: logbook rev add --axis x-stage B --parent A --category mechanical
    --summary "stiffer coupling"
    """


@rev_group.command("add")
@click.argument("label")
@click.option("--axis", "axis_name", required=True, help="Axis the revision belongs to.")
@click.option("--parent", help="Label of the revision this one was derived from.")
@click.option("--date", "when", help="Date of the revision (YYYY-MM-DD).")
@click.option(
    "--category",
    "change_category",
    type=click.Choice(CHANGE_CATEGORIES),
    default="other",
    show_default=True,
    help="Kind of change from the parent.",
)
@click.option("--summary", "change_summary", default="", help="What changed.")
@db_option
def rev_add(label: str, axis_name: str, when: str | None, db: str | None, **fields: Any) -> None:
    """Add a hardware revision.

    Example: logbook rev add --axis x-stage A --date 2026-03-02 --summary "first build"
    """
    revision_date = None
    if when is not None:
        try:
            revision_date = date.fromisoformat(when)
        except ValueError:
            raise click.BadParameter(
                f"{when!r} is not a YYYY-MM-DD date", param_hint="--date"
            ) from None
    with open_logbook(db).session(write=True) as session:
        revision = catalog.add_revision(
            session, axis_name, label, revision_date=revision_date, **fields
        )
        parent = f" (derived from '{revision.parent.label}')" if revision.parent else ""
        click.echo(f"added revision '{revision.label}' of axis '{axis_name}'{parent}")


@rev_group.command("list")
@click.option("--axis", "axis_name", required=True)
@json_option
@db_option
def rev_list(axis_name: str, as_json: bool, db: str | None) -> None:
    """List an axis's revisions in lineage order (parents first).

    Example: logbook rev list --axis x-stage --json
    """
    with open_logbook(db).session() as session:
        rows = [revision_json(r) for r in catalog.list_revisions(session, axis_name)]
    if as_json:
        print_json(rows)
    else:
        print_table(rows, ["label", "parent", "revision_date", "change_category", "change_summary"])


# --- gains -----------------------------------------------------------------------


@click.group("gains")
def gains_group() -> None:
    """PID gain sets (parallel form: u = Kp·e + Ki·∫e dt + Kd·de/dt).

    Example: logbook gains add baseline --kp 2.0 --ki 15 --kd 0.01 --loop-rate 1000
    """


@gains_group.command("add")
@click.argument("name", required=False)
@click.option("--kp", type=float, required=True, help="Proportional gain.")
@click.option("--ki", type=float, required=True, help="Integral gain (per second).")
@click.option("--kd", type=float, required=True, help="Derivative gain (seconds).")
@click.option("--loop-rate", "loop_rate_hz", type=float, required=True, help="Loop rate in Hz.")
@click.option("--integrator-limit", type=float, help="Bound on the integrator's output share.")
@click.option("--anti-windup", type=click.Choice(ANTI_WINDUP_MODES), help="Anti-windup strategy.")
@click.option(
    "--derivative-filter",
    "derivative_filter_hz",
    type=float,
    help="Derivative low-pass corner in Hz.",
)
@click.option("--feedforward", type=float, help="Velocity feedforward gain.")
@db_option
def gains_add(name: str | None, db: str | None, **fields: Any) -> None:
    """Store a gain set; identical gains are stored once.

    Example: logbook gains add stiff --kp 4 --ki 20 --kd 0.02 --loop-rate 2000 --anti-windup clamp
    """
    with open_logbook(db).session(write=True) as session:
        row, created = catalog.add_gain_set(session, catalog.GainParams(**fields), name=name)
        label = gain_label(row)
        if created:
            click.echo(f"added gain set '{label}'")
        else:
            click.echo(f"these gains are already stored as '{label}'")


@gains_group.command("list")
@json_option
@db_option
def gains_list(as_json: bool, db: str | None) -> None:
    """List the gain sets.

    Example: logbook gains list
    """
    with open_logbook(db).session() as session:
        rows = [g.as_dict() | {"name": gain_label(g)} for g in catalog.list_gain_sets(session)]
    if as_json:
        print_json(rows)
    else:
        print_table(
            rows, ["name", "kp", "ki", "kd", "loop_rate_hz", "integrator_limit", "anti_windup"]
        )


# --- runs ------------------------------------------------------------------------


@click.group("runs")
def runs_group() -> None:
    """Test runs in the logbook.

    Example: logbook runs list --axis x-stage --since 2026-11-01
    """


@runs_group.command("list")
@click.option("--axis", "axis_name", help="Only runs of this axis.")
@click.option("--rev", "revision", help="Only runs of this revision (needs --axis).")
@click.option("--gains", help="Only runs with this gain set.")
@click.option("--test-kind", type=click.Choice(TEST_KINDS))
@click.option("--operator")
@click.option("--since", help="Taken at or after (ISO date or date-time; UTC if no zone).")
@click.option("--until", help="Taken at or before (ISO date or date-time; UTC if no zone).")
@json_option
@db_option
def runs_list(
    axis_name: str | None,
    since: str | None,
    until: str | None,
    as_json: bool,
    db: str | None,
    **filters: Any,
) -> None:
    """List test runs, oldest first.

    Example: logbook runs list --axis x-stage --rev C --test-kind position_step --json
    """
    with open_logbook(db).session() as session:
        runs = catalog.list_runs(
            session,
            axis=axis_name,
            since=parse_when(since, "--since") if since else None,
            until=parse_when(until, "--until") if until else None,
            **filters,
        )
        rows = [run_json(r) for r in runs]
    if as_json:
        print_json(rows)
    else:
        print_table(
            rows,
            ["id", "axis", "revision", "gains", "test_kind", "taken_at", "operator", "source_name"],
        )
