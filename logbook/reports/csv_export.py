"""The metric table as CSV for spreadsheets, with formula injection neutralised.

Spreadsheets run a cell that begins with ``=``, ``+``, ``-``, ``@``, a tab or a
carriage return as a formula (common practice; see the OWASP note on CSV
injection). Every **text** cell beginning with one of them gets a leading
apostrophe, which spreadsheets show as text and do not evaluate. **Numbers** are
written by this module itself from floats (Python's shortest round-trip form,
e.g. ``-0.0125`` or ``1e-05``) and stay numeric, minus sign included, so margins
can still be summed and sorted: a number produced by ``repr(float)`` cannot carry
a formula. Text that merely looks like a number (a unit, a name) is text and is
neutralised like any other.
"""

from __future__ import annotations

import csv
import io
import math
from pathlib import Path

from logbook.acceptance.rules import Evaluation
from logbook.errors import LogbookError

FORMULA_PREFIXES = ("=", "+", "-", "@", "\t", "\r")
CSV_COLUMNS = (
    "metric",
    "unit",
    "statistic",
    "lower",
    "upper",
    "value",
    "uncertainty",
    "margin",
    "margin_pct",
    "n_runs",
    "verdict",
    "reason",
)


def neutralise_text(text: str) -> str:
    """``text`` with a leading apostrophe when a spreadsheet would run it as a formula."""
    return "'" + text if text.startswith(FORMULA_PREFIXES) else text


def _cell(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return neutralise_text(str(value))
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return repr(value) if math.isfinite(value) else ""
    return neutralise_text(str(value))


def metric_table_csv(evaluation: Evaluation) -> str:
    """The metric table of ``evaluation`` as CSV text (header row first, CRLF rows)."""
    buffer = io.StringIO()
    writer = csv.writer(buffer)
    writer.writerow(CSV_COLUMNS)
    n_runs = len(evaluation.runs)
    for m in evaluation.metrics:
        row = {**m.to_dict(), "n_runs": n_runs}
        writer.writerow(_cell(row[column]) for column in CSV_COLUMNS)
    return buffer.getvalue()


def write_metric_csv(evaluation: Evaluation, path: str | Path) -> Path:
    """Write :func:`metric_table_csv` to ``path`` (UTF-8 with BOM, for spreadsheets)."""
    path = Path(path)
    try:
        path.write_text(metric_table_csv(evaluation), encoding="utf-8-sig", newline="")
    except OSError as exc:
        raise LogbookError(f"cannot write {path}: {exc}") from exc
    return path
