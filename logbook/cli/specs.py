"""``logbook spec add|list|show``: acceptance specs from the command line or a file."""

from __future__ import annotations

import click

from logbook.cli.base import db_option, json_option, open_logbook, print_json, print_table
from logbook.services import specs
from logbook.store.engine import Database
from logbook.store.models import SPEC_STATISTICS, TEST_KINDS


@click.group("spec")
def spec_group() -> None:
    """Acceptance specs: limits per metric for a test kind on one or more axes.

    Example: logbook spec add --file specs/stage-position.toml
    """


@spec_group.command("add")
@click.argument("name", required=False)
@click.option(
    "--file",
    "spec_file",
    type=click.Path(dir_okay=False),
    help="A TOML or YAML spec file (then no other options).",
)
@click.option("--version", "version", help="Version of the spec, e.g. 1.0.")
@click.option("--test-kind", type=click.Choice(TEST_KINDS), help="Test kind the spec judges.")
@click.option("--axis", "axes", multiple=True, help="An axis the spec applies to (repeatable).")
@click.option(
    "--limit",
    "limits",
    nargs=4,
    multiple=True,
    metavar="METRIC LOWER UPPER UNIT",
    help="A limit; '-' for an absent bound (repeatable), e.g. --limit overshoot_pct - 10 %.",
)
@click.option(
    "--statistic",
    type=click.Choice(SPEC_STATISTICS),
    default="every_run",
    show_default=True,
    help="What is judged: every run, the median, or the 95 % level.",
)
@click.option("--runs", "required_runs", type=int, default=1, show_default=True,
              help="Runs required.")  # fmt: skip
@click.option("--description", default="", help="What the spec is for.")
@db_option
def spec_add(
    name: str | None,
    spec_file: str | None,
    version: str | None,
    test_kind: str | None,
    axes: tuple[str, ...],
    limits: tuple[tuple[str, str, str, str], ...],
    statistic: str,
    required_runs: int,
    description: str,
    db: str | None,
) -> None:
    """Add a spec from a file, or from NAME and options.

    Example: logbook spec add stage-position --version 1.0 --test-kind position_step
    --axis x-stage --statistic median --runs 5 --limit overshoot_pct - 10 %
    --limit rise_time_s 0.005 0.080 s
    """
    database = open_logbook(db)
    _add(database, name, spec_file, version, test_kind, axes, limits, statistic,
         required_runs, description)  # fmt: skip


def _add(
    database: Database,
    name: str | None,
    spec_file: str | None,
    version: str | None,
    test_kind: str | None,
    axes: tuple[str, ...],
    limits: tuple[tuple[str, str, str, str], ...],
    statistic: str,
    required_runs: int,
    description: str,
) -> None:
    with database.session(write=True) as session:
        if spec_file is not None:
            if name or version or test_kind or axes or limits:
                raise click.UsageError("--file takes no NAME or other spec options")
            row = specs.add_spec_file(session, spec_file)
        else:
            if not (name and version and test_kind and axes and limits):
                raise click.UsageError(
                    "give --file, or NAME with --version, --test-kind, --axis and --limit"
                )
            definition = specs.spec_from_options(
                name=name,
                version=version,
                test_kind=test_kind,
                axes=axes,
                limits=limits,
                statistic=statistic,
                required_runs=required_runs,
                description=description,
            )
            row = specs.add_spec(session, definition)
        click.echo(f"added spec '{row.name}' version {row.version} ({len(row.limits)} limits)")


@spec_group.command("list")
@json_option
@db_option
def spec_list(as_json: bool, db: str | None) -> None:
    """List the specs, every version.

    Example: logbook spec list --json
    """
    database = open_logbook(db)
    with database.session() as session:
        rows = [specs.spec_summary(row) for row in specs.list_specs(session)]
    if as_json:
        print_json(rows)
        return
    for row in rows:
        row["axes"] = ", ".join(row["axes"])
        row["limits"] = ", ".join(row["limits"])
    print_table(rows, ["name", "version", "test_kind", "axes", "statistic", "required_runs",
                       "limits"])  # fmt: skip


@spec_group.command("show")
@click.argument("name")
@click.option("--version", "version", help="Version to show (default: the newest).")
@json_option
@db_option
def spec_show(name: str, version: str | None, as_json: bool, db: str | None) -> None:
    """Show one spec with its limits.

    Example: logbook spec show stage-position --version 1.0
    """
    database = open_logbook(db)
    with database.session() as session:
        row = specs.spec_summary(specs.get_spec(session, name, version))
    if as_json:
        print_json(row)
        return
    click.echo(f"spec {row['name']} version {row['version']}: {row['description']}")
    click.echo(
        f"test kind {row['test_kind']}; axes {', '.join(row['axes'])}; statistic"
        f" {row['statistic']}; {row['required_runs']} run(s) required"
    )
    print_table(
        [{"metric": metric, **limit} for metric, limit in row["limits"].items()],
        ["metric", "lower", "upper", "unit"],
    )
