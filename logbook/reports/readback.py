"""Reading an HTML acceptance report back: its data block and its visible verdict
and metric table, and checking that they agree with each other.

This is what ``logbook report --verify`` stands on: :func:`self_check` finds a
report whose data block was edited (the evidence no longer gives its content
hash) or whose visible text was edited (the verdict or a table cell no longer
matches the data block). Whether the evidence still matches the database is the
service's part.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

from logbook.errors import InputError
from logbook.reports.data import REPORT_FORMAT, hash_evidence
from logbook.reports.html import metric_rows


@dataclass(frozen=True)
class ReportReadback:
    """What a report file says: its data block and what a reader sees."""

    payload: dict[str, Any]
    verdict: str
    columns: tuple[str, ...]
    rows: tuple[dict[str, str], ...]

    @property
    def content_hash(self) -> str:
        return str(self.payload["content_hash"])

    @property
    def report_id(self) -> int | None:
        return self.payload.get("report_id")

    @property
    def evidence(self) -> dict[str, Any]:
        return self.payload["evidence"]


class _ReportParser(HTMLParser):
    """Collects the #report-data script, the #verdict text and the #metrics table."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.data_parts: list[str] = []
        self.data_blocks = 0
        self.verdict_parts: list[str] = []
        self.columns: list[str] = []
        self.rows: list[list[str]] = []
        self._in_data = self._in_verdict = self._in_metrics = False
        self._in_metric_row = False
        self._cell: list[str] | None = None

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        attr = dict(attrs)
        if tag == "script" and attr.get("id") == "report-data":
            self._in_data = True
            self.data_blocks += 1
        elif attr.get("id") == "verdict":
            self._in_verdict = True
        elif tag == "table" and attr.get("id") == "metrics":
            self._in_metrics = True
        elif self._in_metrics and tag == "tr" and "data-metric" in attr:
            self._in_metric_row = True
            self.rows.append([])
        elif self._in_metrics and tag in ("th", "td"):
            self._cell = []

    def handle_endtag(self, tag: str) -> None:
        if tag == "script":
            self._in_data = False
        elif tag == "span":
            self._in_verdict = False
        elif tag == "table":
            self._in_metrics = False
        elif tag == "tr":
            self._in_metric_row = False
        elif tag in ("th", "td") and self._cell is not None:
            text = "".join(self._cell).strip()
            if tag == "th":
                self.columns.append(text)
            elif self._in_metric_row:
                self.rows[-1].append(text)
            self._cell = None

    def handle_data(self, data: str) -> None:
        if self._in_data:
            self.data_parts.append(data)
        if self._in_verdict:
            self.verdict_parts.append(data)
        if self._cell is not None:
            self._cell.append(data)


def read_report(text: str, *, source: str = "<report>") -> ReportReadback:
    """Parse a rendered report; an InputError names ``source`` when it is not one."""
    parser = _ReportParser()
    parser.feed(text)
    parser.close()
    if parser.data_blocks != 1:
        raise InputError(
            f"expected one report-data block, found {parser.data_blocks}; is this a logbook"
            " acceptance report?",
            file=source,
        )
    try:
        payload = json.loads("".join(parser.data_parts))
    except json.JSONDecodeError as exc:
        raise InputError(f"the report-data block is not valid JSON: {exc}", file=source) from exc
    if not isinstance(payload, dict) or payload.get("format") != REPORT_FORMAT:
        raise InputError(f"the report-data block is not in format {REPORT_FORMAT}", file=source)
    columns = tuple(parser.columns)
    rows = tuple(dict(zip(columns, cells, strict=False)) for cells in parser.rows)
    return ReportReadback(
        payload=payload,
        verdict="".join(parser.verdict_parts).strip(),
        columns=columns,
        rows=rows,
    )


def read_report_file(path: str | Path) -> ReportReadback:
    """:func:`read_report` on a file."""
    try:
        text = Path(path).read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read report: {exc}", file=str(path)) from exc
    return read_report(text, source=str(path))


def self_check(report: ReportReadback) -> list[str]:
    """Disagreements inside the report file; an empty list means it is consistent."""
    problems = []
    if hash_evidence(report.evidence) != report.content_hash:
        problems.append("the data block's evidence does not give its content hash")
    evaluation = report.evidence["evaluation"]
    if report.verdict != evaluation["verdict"]:
        problems.append(
            f"the visible verdict '{report.verdict}' differs from the recorded"
            f" '{evaluation['verdict']}'"
        )
    expected = metric_rows(evaluation)
    if len(expected) != len(report.rows):
        problems.append(
            f"the metric table has {len(report.rows)} rows, the data block {len(expected)}"
        )
    for want, seen in zip(expected, report.rows, strict=False):
        for column, text in want.items():
            if seen.get(column) != text:
                problems.append(
                    f"metric table, {want['Metric']}, {column}: shows '{seen.get(column)}',"
                    f" the data block says '{text}'"
                )
    return problems
