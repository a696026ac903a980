"""``logbook report``: issue an acceptance report, or verify one against the database."""

from __future__ import annotations

from pathlib import Path

import click

from logbook.acceptance.rules import DecisionRule
from logbook.cli.base import db_option, open_logbook
from logbook.services import reporting


@click.command("report")
@click.option("--axis", help="Axis judged.")
@click.option("--rev", "revision", help="Hardware revision judged.")
@click.option("--spec", help="Spec name (its newest version unless --spec-version).")
@click.option("--spec-version", help="Spec version.")
@click.option("--gains", help="Gain set (needed when the revision's runs use several).")
@click.option(
    "--rule",
    type=click.Choice([r.value for r in DecisionRule]),
    default=DecisionRule.SIMPLE.value,
    show_default=True,
    help="Decision rule: simple acceptance, or guarded by the run-to-run spread.",
)
@click.option("--out", type=click.Path(dir_okay=False), help="HTML file to write.")
@click.option("--pdf", "pdf_path", type=click.Path(dir_okay=False), help="Also print a PDF.")
@click.option("--csv", "csv_path", type=click.Path(dir_okay=False), help="Also write the table.")
@click.option("--issued-by", default="", help="Name recorded as the report's issuer.")
@click.option(
    "--verify",
    "verify_path",
    type=click.Path(dir_okay=False, exists=True),
    help="Check an issued report file against the database instead.",
)
@db_option
def report_command(
    axis: str | None,
    revision: str | None,
    spec: str | None,
    spec_version: str | None,
    gains: str | None,
    rule: str,
    out: str | None,
    pdf_path: str | None,
    csv_path: str | None,
    issued_by: str,
    verify_path: str | None,
    db: str | None,
) -> None:
    """Issue an acceptance report for a revision against a spec, and lock its runs.

    Example: logbook report --axis x-stage --rev C --spec stage-position
    --out x-stage-C.html --pdf x-stage-C.pdf

    Example: logbook report --verify x-stage-C.html
    """
    database = open_logbook(db)
    if verify_path is not None:
        if axis or revision or spec or out:
            raise click.UsageError("--verify takes only the report file")
        with database.session() as session:
            result = reporting.verify_report(session, verify_path)
        if result.matches:
            click.echo(f"report no. {result.report_id} matches the database ({result.file_hash})")
            return
        for problem in result.problems:
            click.echo(f"mismatch: {problem}", err=True)
        raise click.exceptions.Exit(1)
    if not (axis and revision and spec and out):
        raise click.UsageError("give --axis, --rev, --spec and --out (or --verify FILE)")
    issued = reporting.issue_report(
        database,
        axis=axis,
        revision=revision,
        spec=spec,
        version=spec_version,
        gains=gains,
        rule=DecisionRule(rule),
        out=Path(out),
        issued_by=issued_by,
        csv_path=csv_path,
        pdf_path=pdf_path,
    )
    click.echo(f"report no. {issued.report_id}: {issued.verdict} -> {issued.html_path}")
    for extra in (issued.csv_path, issued.pdf_path):
        if extra is not None:
            click.echo(f"also written: {extra}")
