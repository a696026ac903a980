"""``logbook demo``: build the demo logbook and say what there is to find in it."""

from __future__ import annotations

import click
from rich.console import Console
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

from logbook.services.demo import DEFAULT_DEMO_DB, DemoSummary, build_demo, demo_data_dir


@click.command("demo")
@click.option(
    "--db",
    "db_path",
    default=DEFAULT_DEMO_DB,
    show_default=True,
    type=click.Path(dir_okay=False),
    help="SQLite file to build (an earlier demo is replaced).",
)
@click.option(
    "--regenerate",
    is_flag=True,
    help="First rewrite demo_data/ from the bench simulator (fixed seed).",
)
def demo_command(db_path: str, regenerate: bool) -> None:
    """Build a demo logbook from simulated bench captures and summarise it.

    The captures are imported through the real importer; the summary lists the
    axes, revisions and runs, and which revisions fail their spec and why.

    Example: logbook demo && logbook ui --db demo-logbook.db
    """
    if regenerate:
        from logbook.simulate import write_demo_data

        write_demo_data(demo_data_dir())
        click.echo(f"regenerated {demo_data_dir()}")
    console = Console(stderr=True)
    with Progress(
        TextColumn("importing demo captures"),
        BarColumn(),
        MofNCompleteColumn(),
        TimeElapsedColumn(),
        console=console,
        transient=True,
    ) as progress:
        task = progress.add_task("demo", total=None)
        summary = build_demo(
            db_path,
            on_total=lambda n: progress.update(task, total=n),
            on_file=lambda _result: progress.advance(task),
        )
    _print_summary(summary)


def _print_summary(summary: DemoSummary) -> None:
    click.echo(f"demo logbook: {summary.database} ({summary.imported} captures imported)")
    click.echo("")
    click.echo(f"{'axis':<12}{'revisions':>10}{'runs':>7}")
    for axis, revisions, runs in summary.axes:
        click.echo(f"{axis:<12}{revisions:>10}{runs:>7}")
    click.echo("")
    click.echo("acceptance against each axis's spec (simple rule):")
    for v in summary.verdicts:
        click.echo(f"  {v.axis} rev {v.revision} with {v.gains} ({v.runs} runs): {v.verdict}")
        for reason in v.reasons:
            click.echo(f"      {reason}")
    click.echo("")
    click.echo(
        "next: logbook regressions --axis x-stage --db "
        + summary.database
        + "   |   logbook ui --db "
        + summary.database
    )
