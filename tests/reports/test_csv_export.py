"""CSV export of the metric table: numbers stay numbers, formulas are neutralised."""

from __future__ import annotations

import csv
import io
from dataclasses import replace

import pytest

from logbook.acceptance.rules import RunValues, evaluate
from logbook.acceptance.spec_file import Limit, SpecDefinition
from logbook.reports.csv_export import (
    CSV_COLUMNS,
    metric_table_csv,
    neutralise_text,
    write_metric_csv,
)


def failing_evaluation(unit: str = "mm"):
    spec = SpecDefinition(
        name="s",
        version="1",
        test_kind="position_step",
        axes=("x",),
        statistic="every_run",
        required_runs=1,
        description="",
        limits={
            "overshoot_pct": Limit(None, 10.0, "%"),
            "steady_state_error": Limit(-0.01, 0.01, unit),
        },
    )
    runs = [RunValues("a", "position_step", {"overshoot_pct": 15.0, "steady_state_error": -0.004})]
    return evaluate(spec, runs)


def parse(text: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(text)))


# common practice (OWASP "CSV injection"): these leading characters start a formula
@pytest.mark.parametrize("prefix", ["=", "+", "-", "@", "\t", "\r"])
def test_formula_prefixes_get_an_apostrophe(prefix):
    assert (
        neutralise_text(prefix + 'HYPERLINK("http://x")') == "'" + prefix + 'HYPERLINK("http://x")'
    )


def test_plain_text_is_unchanged():
    assert neutralise_text("rise_time_s") == "rise_time_s"
    assert neutralise_text("'quoted") == "'quoted"


def test_negative_numbers_stay_numeric_text_does_not():
    evaluation = failing_evaluation()
    rows = {row["metric"]: row for row in parse(metric_table_csv(evaluation))}
    overshoot = rows["overshoot_pct"]
    assert overshoot["margin"] == "-5.0"  # a number written by the exporter: not a formula
    assert float(overshoot["margin"]) == evaluation.metrics[0].margin
    assert overshoot["margin_pct"] == "-50.0"
    assert overshoot["verdict"] == "fail"
    error = rows["steady_state_error"]
    assert error["lower"] == "-0.01"
    assert float(error["value"]) == evaluation.metrics[1].value
    assert overshoot["lower"] == ""  # no bound
    assert overshoot["uncertainty"] == ""  # simple rule


def test_hostile_text_cells_are_neutralised():
    evaluation = failing_evaluation(unit='=HYPERLINK("http://evil","x")')
    metrics = tuple(replace(m, reason="-2+3 @SUM(A1)") for m in evaluation.metrics)
    rows = parse(metric_table_csv(replace(evaluation, metrics=metrics)))
    error = next(r for r in rows if r["metric"] == "steady_state_error")
    assert error["unit"] == '\'=HYPERLINK("http://evil","x")'
    assert all(r["reason"] == "'-2+3 @SUM(A1)" for r in rows)


def test_header_and_file_with_bom(tmp_path):
    path = write_metric_csv(failing_evaluation(), tmp_path / "table.csv")
    raw = path.read_bytes()
    assert raw.startswith(b"\xef\xbb\xbf")  # UTF-8 BOM so spreadsheets read it as UTF-8
    text = raw.decode("utf-8-sig")
    assert next(csv.reader(io.StringIO(text))) == list(CSV_COLUMNS)
    assert len(parse(text)) == 2
