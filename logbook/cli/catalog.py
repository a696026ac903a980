"""``logbook axis|rev|gains|runs``: the catalogue from the command line."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from datetime import date
from functools import partial
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

calibration_option = click.option(
    "--calibration",
    nargs=4,
    type=float,
    metavar="RAW1 VALUE1 RAW2 VALUE2",
    help="Two-point calibration of analogue feedback: raw reading -> position.",
)


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
@calibration_option
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
    revision_date = parse_date(when) if when is not None else None
    with open_logbook(db).session(write=True) as session:
        revision = catalog.add_revision(
            session, axis_name, label, revision_date=revision_date, **fields
        )
        parent = f" (derived from '{revision.parent.label}')" if revision.parent else ""
        click.echo(f"added revision '{revision.label}' of axis '{axis_name}'{parent}")


def parse_date(when: str) -> date:
    """A ``--date`` value (YYYY-MM-DD); anything else is a usage error."""
    try:
        return date.fromisoformat(when)
    except ValueError:
        raise click.BadParameter(
            f"{when!r} is not a YYYY-MM-DD date", param_hint="--date"
        ) from None


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


# --- corrections -------------------------------------------------------------------

#: ``--clear`` choice -> the fields it empties, for ``axis edit`` and ``runs edit``.
AXIS_CLEARS = {
    "counts-per-rev": ("counts_per_rev",),
    "units-per-rev": ("units_per_rev",),
    "calibration": ("calibration",),
}
RUN_CLEARS = {
    "supply-voltage": ("supply_voltage_v",),
    "temperature": ("temperature_c",),
    "load": ("load_value", "load_unit"),
}


def clear_option(fields: Mapping[str, tuple[str, ...]], what: str) -> Callable[..., Any]:
    """``--clear CHOICE`` (repeatable) over the keys of ``fields``; see :func:`add_clears`."""
    return click.option(
        "--clear",
        type=click.Choice(list(fields)),
        multiple=True,
        help=f"Remove this {what} (repeatable).",
    )


def given(**options: Any) -> dict[str, Any]:
    """The options the user gave (click passes None for the others)."""
    return {key: value for key, value in options.items() if value is not None}


def add_clears(
    changes: dict[str, Any], clear: tuple[str, ...], fields: Mapping[str, tuple[str, ...]]
) -> None:
    """Set the fields behind each ``--clear`` choice to None; a value given too is an error."""
    for option in clear:
        for key in fields[option]:
            if key in changes:
                raise click.UsageError(f"--clear {option} contradicts the value given for it")
            changes[key] = None


def apply_edit(what: str, changes: dict[str, Any], edit: Callable[..., Any]) -> None:
    """Run ``edit(**changes)`` and say which fields changed; no change is a usage error."""
    if not changes:
        raise click.UsageError("nothing to change: give at least one option (see --help)")
    edit(**changes)
    click.echo(f"updated {what}: {', '.join(sorted(changes))}")


@axis_group.command("edit")
@click.argument("name")
@click.option("--rename", "new_name", metavar="NEW", help="New name for the axis.")
@click.option("--description", help="What the axis is.")
@click.option("--notes")
@click.option("--counts-per-rev", type=int, help="Encoder counts per revolution (4 x lines).")
@click.option("--units-per-rev", type=float, help="Travel per motor revolution in the axis unit.")
@calibration_option
@clear_option(AXIS_CLEARS, "value")
@db_option
def axis_edit(
    name: str, calibration: tuple[float, ...], clear: tuple[str, ...], db: str | None, **fields: Any
) -> None:
    """Correct an axis's name, description, notes, counts, travel or calibration.

    Position unit and feedback kind stay: stored runs were converted with them. An
    axis named by an issued acceptance report keeps its name.

    Example: logbook axis edit x-stage --counts-per-rev 4000 --notes "new encoder disc"
    """
    changes: dict[str, Any] = given(**fields)
    if calibration:
        changes["calibration"] = calibration
    add_clears(changes, clear, AXIS_CLEARS)
    with open_logbook(db).session(write=True) as session:
        apply_edit(f"axis '{name}'", changes, partial(catalog.update_axis, session, name))


@rev_group.command("edit")
@click.argument("label")
@click.option("--axis", "axis_name", required=True, help="Axis the revision belongs to.")
@click.option("--summary", "change_summary", help="What changed.")
@click.option("--category", "change_category", type=click.Choice(CHANGE_CATEGORIES))
@click.option("--date", "when", help="Date of the revision (YYYY-MM-DD).")
@click.option("--parent", help="Label of the revision this one was derived from.")
@click.option("--no-parent", is_flag=True, help="Make the revision a root of the lineage.")
@db_option
def rev_edit(
    label: str,
    axis_name: str,
    when: str | None,
    parent: str | None,
    no_parent: bool,
    db: str | None,
    **fields: Any,
) -> None:
    """Correct a revision's summary, category, date or parent.

    A parent must be a revision of the same axis that is not derived from this one.

    Example: logbook rev edit C --axis x-stage --parent B --category firmware
    """
    if parent is not None and no_parent:
        raise click.UsageError("give --parent or --no-parent, not both")
    changes: dict[str, Any] = given(**fields)
    if when is not None:
        changes["revision_date"] = parse_date(when)
    if parent is not None or no_parent:
        changes["parent"] = parent
    with open_logbook(db).session(write=True) as session:
        edit = partial(catalog.update_revision, session, axis_name, label)
        apply_edit(f"revision '{label}' of axis '{axis_name}'", changes, edit)


@gains_group.command("rename")
@click.argument("old")
@click.argument("new")
@db_option
def gains_rename(old: str, new: str, db: str | None) -> None:
    """Rename a gain set (OLD may be #id for an unnamed one).

    The gains themselves never change: other gains are a new gain set.

    Example: logbook gains rename '#3' soft-start
    """
    with open_logbook(db).session(write=True) as session:
        row = catalog.rename_gain_set(session, old, new)
        click.echo(f"gain set '{old}' is now '{gain_label(row)}'")


@runs_group.command("edit")
@click.argument("run_id", type=int)
@click.option("--operator")
@click.option("--notes")
@click.option("--taken-at", help="When the run was taken (ISO 8601; UTC if no zone).")
@click.option("--supply-voltage", "supply_voltage_v", type=float, help="Supply voltage in V.")
@click.option("--temperature", "temperature_c", type=float, help="Temperature in °C.")
@click.option("--load-value", type=float, help="Load on the axis (with --load-unit).")
@click.option("--load-unit", help="Unit of the load, e.g. kg.")
@click.option("--rev", "revision", help="Hardware revision label (same axis).")
@click.option("--gains", help="Gain set name (or #id).")
@clear_option(RUN_CLEARS, "bench condition")
@db_option
def runs_edit(
    run_id: int, taken_at: str | None, clear: tuple[str, ...], db: str | None, **fields: Any
) -> None:
    """Correct a run's operator, notes, time, bench conditions, revision or gain set.

    Runs used by an issued acceptance report are locked and the edit is refused.

    Example: logbook runs edit 42 --operator "J. Amsel" --temperature 23.5 --rev C
    """
    changes: dict[str, Any] = given(**fields)
    if taken_at is not None:
        changes["taken_at"] = parse_when(taken_at, "--taken-at")
    add_clears(changes, clear, RUN_CLEARS)
    with open_logbook(db).session(write=True) as session:
        apply_edit(f"run {run_id}", changes, partial(catalog.update_run, session, run_id))
