"""A self-contained HTML acceptance report: readable offline, printable, parseable.

The page carries everything it needs: the Plotly library is inlined (no CDN, no
MathJax), styles are inline and a print style sheet lays it out on A4. Order:
the verdict first, the metric table against the limits, the decision rule, the
per-run values, a step-response plot per run, the trend of each judged metric
across the revision lineage, full traceability, sign-off boxes and the safety
caution.

Every piece of text that did not come from this module goes through
:func:`html.escape` (names, notes, file names, units, revision summaries).
A ``<script type="application/json" id="report-data">`` block carries the
report's evidence and content hash, with ``<``, ``>`` and ``&`` written as JSON
``\\u`` escapes so no text inside can end the script element;
:mod:`logbook.reports.readback` parses it back.
"""

from __future__ import annotations

import html
import json
from collections.abc import Iterable, Mapping
from typing import Any

import plotly.graph_objects as go
from plotly.offline import get_plotlyjs

from logbook.acceptance.rules import DecisionRule, Evaluation, MetricVerdict, describe_rule
from logbook.reports.data import REPORT_FORMAT, ReportData, content_hash, evidence
from logbook.reports.figures import step_figure, trend_figure

SAFETY_CAUTION = (
    "This report records the bench performance of the axis under the conditions stated"
    " above, and nothing more. It is not a safety assessment: it does not replace the risk"
    " assessment of a machine (ISO 12100) or the assessment of its electrical equipment"
    " (IEC 60204-1), which remain to be done under the local codes and by licensed"
    " practitioners."
)
STATISTIC_LABELS = {"every_run": "worst run", "median": "median", "p95": "95 % level"}
METRIC_COLUMNS = (
    "Metric",
    "Unit",
    "Statistic",
    "Lower",
    "Upper",
    "Measured",
    "± U",
    "Margin",
    "Margin %",
    "Runs",
    "Verdict",
)
_PLOT_CONFIG = {"displaylogo": False, "displayModeBar": False, "responsive": False}

_CSS = """
:root { --ink: #1d2329; --muted: #5b6470; --rule: #c9ced6; }
* { box-sizing: border-box; }
body { font: 13px/1.45 "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: var(--ink);
  max-width: 186mm; margin: 16px auto; padding: 0 8px; }
h1 { font-size: 22px; margin: 0 0 2px; }
h2 { font-size: 16px; margin: 22px 0 6px; border-bottom: 1px solid var(--rule);
  padding-bottom: 2px; break-after: avoid; }
h3 { font-size: 13px; margin: 14px 0 4px; break-after: avoid; }
.subtitle { color: var(--muted); margin: 0 0 12px; }
table { border-collapse: collapse; width: 100%; margin: 4px 0 8px; }
th, td { border-bottom: 1px solid var(--rule); padding: 3px 5px; text-align: left;
  vertical-align: top; }
th { background: #eef1f5; font-weight: 600; }
#metrics, #run-values { font-size: 12px; }
#metrics th, #metrics td { padding: 3px 4px; }
#metrics th { white-space: nowrap; }
#metrics td.v { min-width: 7em; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.reason td { color: var(--muted); font-size: 12px; border-bottom: 1px solid var(--rule);
  padding-top: 0; }
tr.has-reason td { border-bottom: none; }
table.kv th { width: 32%; background: none; font-weight: 600; }
.hash { font-family: "DejaVu Sans Mono", monospace; font-size: 11px; word-break: break-all; }
.verdict-box { border: 2px solid; border-radius: 6px; padding: 10px 14px; margin: 10px 0 12px; }
.verdict-box .label { font-size: 12px; text-transform: uppercase; letter-spacing: 0.05em; }
#verdict { font-size: 28px; font-weight: 700; text-transform: uppercase; display: block; }
.v { font-weight: 600; }
.v-pass { color: #1e7b34; border-color: #1e7b34; background-color: #eaf6ec; }
.v-conditional-pass { color: #5d7a12; border-color: #8aa62a; background-color: #f4f8e6; }
.v-conditional-fail { color: #9a5b00; border-color: #d08a1e; background-color: #fdf3e2; }
.v-fail { color: #b3201b; border-color: #b3201b; background-color: #fbeaea; }
.v-no-data, .v-insufficient-runs, .v-wrong-test-kind { color: #55606b; border-color: #7d8792;
  background-color: #f0f2f4; }
td.v, span.v { background: none; }
td.v { border-color: var(--rule); }
.rule { background: #f6f7f9; border-left: 3px solid var(--rule); padding: 6px 10px; }
.plot { break-inside: avoid; margin: 6px 0 10px; }
.signatures { display: grid; grid-template-columns: 1fr 1fr; gap: 14px; break-inside: avoid; }
.signature { border: 1px solid var(--ink); padding: 8px 10px; min-height: 40mm; }
.signature .line { border-bottom: 1px solid var(--muted); height: 9mm; margin-top: 3mm;
  color: var(--muted); font-size: 11px; }
.caution { border: 1px solid #b3201b; padding: 8px 10px; margin-top: 16px; break-inside: avoid; }
.muted { color: var(--muted); }
@page { size: A4; margin: 12mm 12mm 14mm;
  @bottom-right { content: "page " counter(page) " of " counter(pages);
    font: 9px "DejaVu Sans", sans-serif; color: #5b6470; } }
@media print {
  body { margin: 0; padding: 0; max-width: none; }
  * { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  .section-plots, .section-trend, .section-trace { break-before: page; }
  tr { break-inside: avoid; }
}
"""


def e(value: object) -> str:
    """HTML-escape any value for text or a quoted attribute."""
    return html.escape(str(value), quote=True)


def format_value(value: float | None) -> str:
    """A judged number as shown in the report: five significant digits, '—' for none."""
    return "—" if value is None else f"{value:.5g}"


def format_percent(value: float | None) -> str:
    return "—" if value is None else f"{value:.1f}"


def verdict_class(verdict: str) -> str:
    return "v-" + verdict.replace(" ", "-")


def render_html(data: ReportData, *, report_id: int | None = None) -> str:
    """The report page for ``data``; ``report_id`` is the stored report's number."""
    evaluation = data.evaluation
    spec = evaluation.spec
    title = f"Acceptance report: {data.axis} at revision {data.revision}"
    sections = [
        _header(data, report_id),
        _verdict_box(evaluation),
        _metric_table(evaluation),
        _section("Decision rule", _rule(evaluation)),
        _section("Values per run", _run_values(evaluation)),
        _section(
            "Step responses",
            "".join(_figure(step_figure(plot), f"step-{i}") for i, plot in enumerate(data.plots))
            or '<p class="muted">No step data to plot.</p>',
            css="section-plots",
        ),
        _section("Trend across the revision lineage", _trends(data), css="section-trend"),
        _section("Traceability", _traceability(data, report_id), css="section-trace"),
        _section("Sign-off", _signatures()),
        f'<div class="caution"><strong>Caution.</strong> {e(SAFETY_CAUTION)}</div>',
        _data_block(data, report_id),
    ]
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f'<meta name="generator" content="logbook {e(data.software_version)}">\n'
        f"<title>{e(title)} ({e(spec.name)} {e(spec.version)})</title>\n"
        f"<style>{_CSS}</style>\n"
        f'<script type="text/javascript">{get_plotlyjs()}</script>\n'
        "</head>\n<body>\n" + "\n".join(sections) + "\n</body>\n</html>\n"
    )


def _section(heading: str, body: str, *, css: str = "") -> str:
    cls = f' class="{css}"' if css else ""
    return f"<section{cls}><h2>{e(heading)}</h2>{body}</section>"


def _header(data: ReportData, report_id: int | None) -> str:
    spec = data.evaluation.spec
    number = f"Report no. {report_id}" if report_id is not None else "Draft (not issued)"
    return (
        f"<header><h1>Acceptance report: {e(data.axis)}, revision {e(data.revision)}</h1>"
        f'<p class="subtitle">{e(number)} · spec {e(spec.name)} version {e(spec.version)}'
        f" · gain set {e(data.gain_set)} · issued {e(when(data.issued_at))}</p></header>"
    )


def _verdict_box(evaluation: Evaluation) -> str:
    verdict = str(evaluation.verdict)
    metrics = evaluation.metrics
    passed = sum(m.verdict == "pass" for m in metrics)
    others = [m for m in metrics if m.verdict != "pass"]
    summary = (
        f"{passed} of {len(metrics)} metrics pass; {len(evaluation.runs)} "
        f"{evaluation.spec.test_kind} run(s) judged under {evaluation.rule} acceptance."
    )
    if others:
        summary += " Not passing: " + "; ".join(f"{m.metric} ({m.verdict})" for m in others) + "."
    return (
        f'<div class="verdict-box {verdict_class(verdict)}">'
        '<span class="label">Overall verdict</span>'
        f'<span id="verdict">{e(verdict)}</span>'
        f'<span id="verdict-summary">{e(summary)}</span></div>'
    )


def _metric_table(evaluation: Evaluation) -> str:
    rows_by_column = metric_rows(evaluation.to_dict())
    columns = list(rows_by_column[0]) if rows_by_column else list(METRIC_COLUMNS)
    head = "".join(f"<th>{e(c)}</th>" for c in columns)
    rows = []
    for m, cells in zip(evaluation.metrics, rows_by_column, strict=True):
        row_class = ' class="has-reason"' if m.reason else ""
        tds = "".join(
            f'<td class="{_cell_class(col, m)}">{_breakable(text)}</td>'
            for col, text in cells.items()
        )
        rows.append(f'<tr data-metric="{e(m.metric)}"{row_class}>{tds}</tr>')
        if m.reason:
            rows.append(f'<tr class="reason"><td colspan="{len(columns)}">{e(m.reason)}</td></tr>')
    return (
        "<section><h2>Metrics against limits</h2>"
        f'<table id="metrics"><thead><tr>{head}</tr></thead><tbody>{"".join(rows)}</tbody>'
        "</table></section>"
    )


def metric_rows(evaluation: Mapping[str, Any]) -> list[dict[str, str]]:
    """The visible metric table, column -> text, from an evaluation's ``to_dict()``.

    Works on the JSON form so that a report read back can be checked against its
    own data block. The "± U" column is shown under the guarded rule only.
    """
    guarded = evaluation["rule"] == DecisionRule.GUARDED
    n_runs = str(len(evaluation["runs"]))
    rows = []
    for m in evaluation["metrics"]:
        cells = {
            "Metric": m["metric"],
            "Unit": m["unit"],
            "Statistic": STATISTIC_LABELS[m["statistic"]],
            "Lower": format_value(m["lower"]),
            "Upper": format_value(m["upper"]),
            "Measured": format_value(m["value"]),
            "± U": format_value(m["uncertainty"]),
            "Margin": format_value(m["margin"]),
            "Margin %": format_percent(m["margin_pct"]),
            "Runs": n_runs,
            "Verdict": m["verdict"],
        }
        if not guarded:
            del cells["± U"]
        rows.append(cells)
    return rows


def _breakable(text: str) -> str:
    """Escaped text that may wrap after underscores (long metric names in narrow columns)."""
    return e(text).replace("_", "_<wbr>")


def when(iso: str) -> str:
    """An ISO 8601 timestamp for reading: a space instead of the 'T'."""
    return iso.replace("T", " ", 1)


def _cell_class(column: str, m: MetricVerdict) -> str:
    if column == "Verdict":
        return f"v {verdict_class(str(m.verdict))}"
    if column in ("Metric", "Unit", "Statistic"):
        return "text"
    return "num"


def _rule(evaluation: Evaluation) -> str:
    text = describe_rule(evaluation.rule, evaluation.spec.statistic, evaluation.coverage_factor)
    body = f'<p class="rule" id="decision-rule">{e(text)}</p>'
    if evaluation.excluded:
        body += (
            f"<p>Left out as not {e(evaluation.spec.test_kind)}: "
            f"{e(', '.join(evaluation.excluded))}.</p>"
        )
    return body


def _run_values(evaluation: Evaluation) -> str:
    if not evaluation.runs:
        return '<p class="muted">No runs of the spec\'s test kind.</p>'
    head = "<th>Run</th>" + "".join(
        f"<th>{e(m.metric)} [{e(m.unit)}]</th>" for m in evaluation.metrics
    )
    rows = []
    for i, label in enumerate(evaluation.runs):
        cells = "".join(
            f'<td class="num">{e(format_value(m.run_values[i]))}</td>' for m in evaluation.metrics
        )
        rows.append(f"<tr><td>{e(label)}</td>{cells}</tr>")
    return (
        f'<table id="run-values"><thead><tr>{head}</tr></thead>'
        f"<tbody>{''.join(rows)}</tbody></table>"
    )


def _figure(fig: go.Figure, div_id: str) -> str:
    inner = fig.to_html(
        full_html=False,
        include_plotlyjs=False,
        include_mathjax=False,
        div_id=div_id,
        config=_PLOT_CONFIG,
    )
    return f'<div class="plot">{inner}</div>'


def _trends(data: ReportData) -> str:
    limits = data.evaluation.spec.limits
    figures = "".join(
        _figure(trend_figure(trend, limits.get(trend.metric)), f"trend-{i}")
        for i, trend in enumerate(data.trends)
    )
    intro = (
        "<p>The judged statistic of each revision from the root of the lineage to the"
        f" reported revision (largest marker), for gain set {e(data.gain_set)}; dashed"
        " lines are the spec's limits. Context only: the verdict rests on the reported"
        " revision's runs alone.</p>"
    )
    return intro + (figures or '<p class="muted">No earlier revisions.</p>')


def _kv_table(pairs: Iterable[tuple[str, object]], *, table_id: str = "") -> str:
    ident = f' id="{table_id}"' if table_id else ""
    rows = "".join(
        f"<tr><th>{e(k)}</th><td>{e('—' if v is None else v)}</td></tr>" for k, v in pairs
    )
    return f'<table class="kv"{ident}>{rows}</table>'


def _traceability(data: ReportData, report_id: int | None) -> str:
    spec = data.evaluation.spec
    lineage_rows = "".join(
        f"<tr><td>{e(r.label)}</td><td>{e(r.date or '—')}</td><td>{e(r.change_category)}</td>"
        f"<td>{e(r.change_summary)}</td></tr>"
        for r in data.lineage
    )
    run_rows = "".join(
        f"<tr><td>{e(r.label)}</td><td>{e(when(r.taken_at))}</td><td>{e(r.operator)}</td>"
        f"<td>{e(r.conditions())}</td><td>{e(r.source_name)}</td>"
        f'<td class="hash">{e(r.source_sha256)}</td><td>{e(r.notes)}</td></tr>'
        for r in data.runs
    )
    return (
        "<h3>Axis</h3>"
        + _kv_table([("Axis", data.axis), ("Description", data.axis_description)])
        + "<h3>Hardware revision and lineage (root first)</h3>"
        '<table id="lineage"><thead><tr><th>Revision</th><th>Date</th><th>Change</th>'
        f"<th>What changed</th></tr></thead><tbody>{lineage_rows}</tbody></table>"
        + "<h3>Gain set</h3>"
        + _kv_table([("Gain set", data.gain_set), *_plain_items(data.gains)], table_id="gains")
        + "<h3>Spec</h3>"
        + _kv_table(
            [
                ("Name", spec.name),
                ("Version", spec.version),
                ("Test kind", spec.test_kind),
                ("Axes", ", ".join(spec.axes)),
                ("Statistic", spec.statistic),
                ("Required runs", spec.required_runs),
                ("Description", spec.description),
            ]
        )
        + "<h3>Analysis</h3>"
        + _kv_table(
            [
                ("Analysis version", data.analysis_version),
                *_plain_items(data.analysis_settings, skip=("analysis_version",)),
            ]
        )
        + "<h3>Runs and source files</h3>"
        '<table id="runs"><thead><tr><th>Run</th><th>Taken at</th><th>Operator</th>'
        "<th>Conditions</th><th>Source file</th><th>SHA-256</th><th>Notes</th></tr></thead>"
        f"<tbody>{run_rows}</tbody></table>"
        + "<h3>This report</h3>"
        + _kv_table(
            [
                ("Report no.", report_id),
                ("Issued at", when(data.issued_at)),
                ("Issued by", data.issued_by),
                ("Software", f"logbook {data.software_version}"),
                ("Content hash (SHA-256 of the evidence)", content_hash(data)),
            ]
        )
    )


def _plain_items(
    mapping: Mapping[str, Any], *, skip: tuple[str, ...] = ()
) -> list[tuple[str, object]]:
    return [
        (key, json.dumps(value, sort_keys=True) if isinstance(value, dict | list) else value)
        for key, value in mapping.items()
        if key not in skip
    ]


def _signatures() -> str:
    box = (
        '<div class="signature"><strong>{role}</strong>'
        '<div class="line">Name</div><div class="line">Signature</div>'
        '<div class="line">Date</div></div>'
    )
    return (
        '<div class="signatures">'
        + box.format(role="Tested by")
        + box.format(role="Reviewed by")
        + "</div>"
    )


def script_json(payload: object) -> str:
    """JSON safe inside a <script> element: <, > and & as \\u escapes."""
    text = json.dumps(payload, sort_keys=True, ensure_ascii=False, allow_nan=False)
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")


def _data_block(data: ReportData, report_id: int | None) -> str:
    payload = {
        "format": REPORT_FORMAT,
        "report_id": report_id,
        "content_hash": content_hash(data),
        "evidence": evidence(data),
    }
    return f'<script type="application/json" id="report-data">{script_json(payload)}</script>'
