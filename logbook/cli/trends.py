"""``logbook trend`` and ``logbook regressions``: a metric across revisions, and what got worse."""

from __future__ import annotations

import math
from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

import click
import pandas as pd
from sqlalchemy.orm import Session

from logbook.cli.base import (
    analysis_settings,
    db_option,
    json_option,
    open_logbook,
    print_json,
    print_table,
)
from logbook.reports.csv_export import neutralise_text
from logbook.services.regressions import RegressionScan, find_regressions
from logbook.services.trends import metric_trend, trend_summary
from logbook.store.models import TEST_KINDS


@contextmanager
def _session(db: str | None) -> Iterator[Session]:
    """A read session on the chosen logbook; the engine is closed afterwards."""
    database = open_logbook(db)
    try:
        with database.session() as session:
            yield session
    finally:
        database.dispose()


def _amplitude(
    _ctx: click.Context, _param: click.Parameter, text: str | None
) -> tuple[float, float] | None:
    if text is None:
        return None
    try:
        low, high = (float(part) for part in text.split(":", 1))
    except ValueError:
        raise click.BadParameter(f"{text!r} is not LOW:HIGH, e.g. 1.5:2.5") from None
    return low, high


def _thresholds(
    _ctx: click.Context, _param: click.Parameter, items: tuple[str, ...]
) -> dict[str, float]:
    result = {}
    for item in items:
        name, _, amount = item.partition("=")
        try:
            result[name.strip()] = float(amount)
        except ValueError:
            raise click.BadParameter(
                f"{item!r} is not METRIC=AMOUNT, e.g. overshoot_pct=1.0"
            ) from None
    return result


def _filters(func: Any) -> Any:
    """The options that hold other things equal, shared by both commands."""
    options = [
        click.option("--axis", "axis", required=True, help="Axis name."),
        click.option(
            "--test-kind",
            type=click.Choice(TEST_KINDS),
            help="Test kind (default: the axis's only one).",
        ),
        click.option("--gains", help="Only runs with this gain set."),
        click.option(
            "--amplitude",
            callback=_amplitude,
            metavar="LOW:HIGH",
            help="Only steps with LOW <= |amplitude| <= HIGH (feedback unit).",
        ),
        click.option("--band", type=float, metavar="PCT", help="Settling band of the figures [2]."),
        click.option("--rise", metavar="LOW-HIGH", help="Rise-time levels of the figures [10-90]."),
    ]
    for option in reversed(options):
        func = option(func)
    return func


@click.command("trend")
@_filters
@click.option("--metric", required=True, help="Metric name, e.g. overshoot_pct.")
@click.option("--spec", help="Spec whose limits to show (default: the newest that applies).")
@click.option("--csv", "as_csv", is_flag=True, help="Print the runs as CSV for spreadsheets.")
@json_option
@db_option
def trend_command(
    axis: str,
    test_kind: str | None,
    gains: str | None,
    amplitude: tuple[float, float] | None,
    band: float | None,
    rise: str | None,
    metric: str,
    spec: str | None,
    as_csv: bool,
    as_json: bool,
    db: str | None,
) -> None:
    """A metric's runs along the revision lineage, and a summary per revision.

    Example: logbook trend --axis x-stage --metric overshoot_pct --gains base
    """
    if as_csv and as_json:
        raise click.UsageError("choose one of --json and --csv")
    settings = analysis_settings(band, rise)
    filters = dict(test_kind=test_kind, gains=gains, amplitude_range=amplitude, settings=settings)
    with _session(db) as session:
        runs = metric_trend(session, axis, metric, **filters)
        summary = trend_summary(session, axis, metric, spec=spec, **filters)
    if as_csv:
        click.echo(_csv(runs), nl=False)
    elif as_json:
        print_json(
            {"axis": axis, "metric": metric, "runs": _records(runs), "summary": _records(summary)}
        )
    else:
        print_table(
            _records(runs),
            ["run_id", "taken_at", "revision", "gains", "operator", "steps", "value", "unit"],
        )
        click.echo()
        print_table(
            _records(summary),
            [
                "revision",
                "parent",
                "count",
                "median",
                "iqr",
                "min",
                "max",
                "lower_limit",
                "upper_limit",
                "spec",
            ],
        )


@click.command("regressions")
@_filters
@click.option("--metric", help="Scan one metric only (default: every metric with a direction).")
@click.option(
    "--alpha", type=float, default=0.05, show_default=True, help="Level of the corrected p."
)
@click.option(
    "--correction",
    type=click.Choice(["bh", "holm"]),
    default="bh",
    show_default=True,
    help="Correction over every revision x metric of the scan: Benjamini-Hochberg or Holm.",
)
@click.option(
    "--threshold",
    "thresholds",
    multiple=True,
    callback=_thresholds,
    metavar="METRIC=AMOUNT",
    help="Practical threshold of a metric in its unit (default: 10 % of the spec tolerance).",
)
@json_option
@db_option
def regressions_command(
    axis: str,
    test_kind: str | None,
    gains: str | None,
    amplitude: tuple[float, float] | None,
    band: float | None,
    rise: str | None,
    metric: str | None,
    alpha: float,
    correction: str,
    thresholds: dict[str, float],
    as_json: bool,
    db: str | None,
) -> None:
    """Which revision made which metric worse (or better), and drift in the run history.

    Example: logbook regressions --axis x-stage --metric overshoot_pct --json
    """
    with _session(db) as session:
        scan = find_regressions(
            session,
            axis,
            metric,
            test_kind=test_kind,
            gains=gains,
            amplitude_range=amplitude,
            settings=analysis_settings(band, rise),
            alpha=alpha,
            correction=correction,
            thresholds=thresholds,
        )
    if as_json:
        print_json(scan.to_json())
    else:
        _print_scan(scan)


def _print_scan(scan: RegressionScan) -> None:
    click.echo(
        f"axis {scan.axis}, {scan.test_kind}, gains {scan.gains or '-'}: "
        f"{scan.family_size} comparisons, {scan.correction} at alpha {scan.alpha}"
    )
    click.echo("\nFindings")
    print_table(
        [f.to_json() for f in scan.findings],
        [
            "metric",
            "revision",
            "parent",
            "n_before",
            "n_after",
            "median_before",
            "median_after",
            "effect_size",
            "p_adjusted",
            "direction",
        ],
    )
    click.echo("\nFirst bad revision")
    print_table(
        [
            {
                "metric": metric,
                "revision": bad.finding.revision,
                "parent": bad.finding.parent,
                "through": bad.stretch[-1] if len(bad.stretch) > 1 else "-",
                "fixed_by": ", ".join(bad.fixed_by) or None,
                "what changed": f"{bad.change_category}: {bad.change_summary}",
                "gains": ", ".join(
                    f"{d.parameter} {d.before}->{d.after}" for d in bad.gain_differences
                )
                or "same",
            }
            for metric, bad in scan.first_bad.items()
            if bad is not None
        ],
        ["metric", "revision", "parent", "through", "fixed_by", "what changed", "gains"],
    )
    if scan.explanations:
        click.echo("\nDamping or bandwidth")
        for e in scan.explanations:
            click.echo(f"{e.revision} vs {e.baseline}: {e.text}")
    click.echo("\nChange points in the run history")
    print_table(
        [c.to_json() for c in scan.change_points],
        [
            "metric",
            "index",
            "taken_at",
            "revision",
            "at_revision_change",
            "median_before",
            "median_after",
            "direction",
        ],
    )


def _records(frame: pd.DataFrame) -> list[dict[str, Any]]:
    """Rows as plain dicts; NaN becomes None so JSON gets null."""
    return [
        {k: (None if isinstance(v, float) and math.isnan(v) else v) for k, v in row.items()}
        for row in frame.astype(object).to_dict("records")
    ]


def _csv(frame: pd.DataFrame) -> str:
    """CSV text with every text cell neutralised against spreadsheet formulas."""
    safe = frame.copy()
    for column in safe.columns:
        if safe[column].dtype == object or pd.api.types.is_string_dtype(safe[column]):
            safe[column] = [None if v is None else neutralise_text(str(v)) for v in safe[column]]
    return safe.to_csv(index=False)
