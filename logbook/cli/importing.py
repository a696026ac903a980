"""``logbook import`` and ``logbook profile add|list|show``."""

from __future__ import annotations

from typing import Any

import click
from rich.console import Console
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

from logbook.cli.base import (
    analysis_settings,
    db_option,
    json_option,
    open_logbook,
    parse_when,
    print_json,
    print_table,
)
from logbook.cli.heap import keep_freed_memory
from logbook.ingest.metadata import RunFields
from logbook.ingest.profiles import load_profile
from logbook.services import catalog, profiles
from logbook.services.importing import (
    ColumnChoice,
    FileResult,
    ImportRequest,
    Outcome,
    expand_paths,
    import_batch,
)
from logbook.store.models import TEST_KINDS

PROGRESS_FROM = 5  # files; smaller batches need no bar


@click.command("import")
@click.argument("paths", nargs=-1, required=True)
@click.option("--axis", help="Axis of the runs (else each file's '# axis:' line).")
@click.option("--rev", "revision", help="Hardware revision (else '# revision:').")
@click.option("--gains", help="Stored gain-set name (else '# gains:'); names inline gains too.")
@click.option("--kp", type=float, help="Inline gains: proportional gain.")
@click.option("--ki", type=float, help="Inline gains: integral gain.")
@click.option("--kd", type=float, help="Inline gains: derivative gain.")
@click.option("--loop-rate", type=float, help="Inline gains: loop rate in Hz.")
@click.option("--test-kind", type=click.Choice(TEST_KINDS), help="Default: position_step.")
@click.option("--operator", help="Who took the runs.")
@click.option("--date", "when", help="When they were taken (ISO 8601; UTC if no zone).")
@click.option("--supply-voltage", type=float, help="Supply voltage in V.")
@click.option("--temperature", type=float, help="Temperature in °C.")
@click.option("--notes")
@click.option("--profile", help="Stored import profile of the axis.")
@click.option("--time", "time_col", help="Time column (without a profile).")
@click.option("--setpoint", "setpoint_col", help="Setpoint column.")
@click.option("--feedback", "feedback_col", help="Feedback column.")
@click.option("--effort", "effort_col", help="Effort (controller output) column.")
@click.option("--time-unit", type=click.Choice(["s", "ms", "us"]), help="Unit of the time column.")
@click.option("--setpoint-unit", help="Unit of setpoint (else from the header).")
@click.option("--feedback-unit", help="Unit of feedback (else from the header).")
@click.option("--effort-unit", help="Unit of effort (else from the header).")
@click.option("--speed", is_flag=True, help="Feedback is a position: analyse its velocity.")
@click.option("--band", type=float, help="Settling band in percent (default 2).")
@click.option("--rise", help="Rise-time levels LOW-HIGH in percent (default 10-90).")
@click.option("--dry-run", is_flag=True, help="Read, convert, check and analyse; write nothing.")
@json_option
@db_option
def import_command(
    paths: tuple[str, ...],
    axis: str | None,
    gains: str | None,
    kp: float | None,
    ki: float | None,
    kd: float | None,
    loop_rate: float | None,
    when: str | None,
    profile: str | None,
    band: float | None,
    rise: str | None,
    dry_run: bool,
    as_json: bool,
    db: str | None,
    **options: Any,
) -> None:
    """Import capture files (CSV, TSV, Parquet) as test runs, one transaction per file.

    PATHS are files, folders (searched recursively) or glob patterns. Files already
    in the logbook (same SHA-256) are skipped. Exit code 1 when any file is rejected.

    Example: logbook import captures/ --axis x-stage --rev C --gains baseline --profile quad
    """
    inline = [kp, ki, kd, loop_rate]
    if any(v is not None for v in inline) and any(v is None for v in inline):
        raise click.UsageError("inline gains need all of --kp, --ki, --kd and --loop-rate")
    request = ImportRequest(
        axis=axis,
        gains=gains,
        inline_gains=catalog.GainParams(kp=kp, ki=ki, kd=kd, loop_rate_hz=loop_rate)  # type: ignore[arg-type]
        if kp is not None
        else None,
        profile=profile,
        columns=ColumnChoice(
            time=options.pop("time_col"),
            setpoint=options.pop("setpoint_col"),
            feedback=options.pop("feedback_col"),
            effort=options.pop("effort_col"),
            time_unit=options.pop("time_unit"),
            setpoint_unit=options.pop("setpoint_unit"),
            feedback_unit=options.pop("feedback_unit"),
            effort_unit=options.pop("effort_unit"),
            speed=options.pop("speed"),
        ),
        run_fields=RunFields(
            operator=options["operator"],
            date=parse_when(when, "--date") if when else None,
            supply_voltage_v=options["supply_voltage"],
            temperature_c=options["temperature"],
            revision=options["revision"],
            test_kind=options["test_kind"],
            notes=options["notes"],
        ),
        settings=analysis_settings(band, rise),
        dry_run=dry_run,
    )
    database = open_logbook(db)
    files, results = expand_paths(paths)
    keep_freed_memory()
    console = Console(stderr=True)
    with Progress(
        TextColumn("importing"),
        BarColumn(),
        MofNCompleteColumn(),
        TimeRemainingColumn(),
        console=console,
        transient=True,
        disable=len(files) < PROGRESS_FROM or as_json,
    ) as progress:
        task = progress.add_task("import", total=len(files))
        results += import_batch(
            database,
            [(path, request) for path in files],
            on_file=lambda _result: progress.advance(task),
        )
    _report(results, as_json)
    if any(r.outcome is Outcome.REJECTED for r in results):
        raise SystemExit(1)


def _report(results: list[FileResult], as_json: bool) -> None:
    if as_json:
        for result in results:
            print_json(result.to_json())
        return
    for result in results:
        click.echo(f"{result.outcome.value:9} {result.message}")
        for conflict in result.conflicts:
            click.echo(f"          conflict: {conflict}")
    counts = {o: sum(r.outcome is o for r in results) for o in Outcome}
    summary = ", ".join(f"{n} {o.value}" for o, n in counts.items() if n)
    click.echo(
        f"{len(results)} file{'s' if len(results) != 1 else ''}: {summary or 'nothing to do'}"
    )


# --- profiles --------------------------------------------------------------------


@click.group("profile")
def profile_group() -> None:
    """Saved import profiles: which columns mean what, their units and conversions.

    Example: logbook profile add demo_data/profiles/stage-quadrature.toml
    """


@profile_group.command("add")
@click.argument("file", type=click.Path(dir_okay=False))
@click.option("--replace", is_flag=True, help="Overwrite a stored profile of the same name.")
@db_option
def profile_add(file: str, replace: bool, db: str | None) -> None:
    """Store the profile in a TOML FILE for the axis it names.

    Example: logbook profile add servo-pulse.toml --replace
    """
    profile = load_profile(file)
    with open_logbook(db).session(write=True) as session:
        profiles.add_profile(session, profile, replace=replace)
    click.echo(f"stored profile '{profile.name}' for axis '{profile.axis}'")


@profile_group.command("list")
@click.option("--axis", help="Only this axis's profiles.")
@json_option
@db_option
def profile_list(axis: str | None, as_json: bool, db: str | None) -> None:
    """List stored profiles.

    Example: logbook profile list --axis x-stage
    """
    with open_logbook(db).session() as session:
        rows = [p.to_dict() for p in profiles.list_profiles(session, axis)]
    if as_json:
        print_json(rows)
    else:
        print_table(
            rows, ["axis", "name", "time_column", "setpoint_column", "feedback_signal", "speed"]
        )


@profile_group.command("show")
@click.argument("name")
@click.option("--axis", required=True)
@json_option
@db_option
def profile_show(name: str, axis: str, as_json: bool, db: str | None) -> None:
    """Show one stored profile.

    Example: logbook profile show stage-quadrature --axis x-stage
    """
    with open_logbook(db).session() as session:
        row = profiles.get_profile(session, axis, name).to_dict()
    if as_json:
        print_json(row)
    else:
        for key, value in row.items():
            click.echo(f"{key} = {value!r}")
