"""The HTML report parsed back: verdict first, the table and data block agree with
the evaluation, the hashes, self-containment, tamper detection and escaping."""

from __future__ import annotations

import hashlib
import json
from dataclasses import replace
from html.parser import HTMLParser

import pytest
from plotly.offline import get_plotlyjs

from logbook.acceptance.rules import DecisionRule, RunValues, Verdict, evaluate
from logbook.errors import InputError
from logbook.reports.data import content_hash, evidence
from logbook.reports.html import SAFETY_CAUTION, format_value, render_html
from logbook.reports.readback import read_report, self_check

from .sample_report import HOSTILE, build_report


class _Elements(HTMLParser):
    """Every start tag with its attributes, and the text outside <script>/<style>."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.text: list[str] = []
        self._raw = 0

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        if tag in ("script", "style"):
            self._raw += 1

    def handle_endtag(self, tag):
        if tag in ("script", "style"):
            self._raw -= 1

    def handle_data(self, data):
        if not self._raw:
            self.text.append(data)


def elements(page: str) -> _Elements:
    parser = _Elements()
    parser.feed(page)
    parser.close()
    return parser


@pytest.fixture(scope="module")
def page(report_data) -> str:
    return render_html(report_data, report_id=12)


def test_verdict_and_metric_table_read_back(report_data, page):
    report = read_report(page)
    evaluation = report_data.evaluation
    assert report.verdict == str(evaluation.verdict) == "pass"
    assert [row["Metric"] for row in report.rows] == [m.metric for m in evaluation.metrics]
    for row, metric in zip(report.rows, evaluation.metrics, strict=True):
        assert row["Verdict"] == str(metric.verdict)
        assert row["Measured"] == format_value(metric.value)
        assert row["Upper"] == format_value(metric.limit.upper)
        assert row["Lower"] == format_value(metric.limit.lower)
        assert row["Runs"] == "5"
    assert "± U" not in report.columns  # simple rule: no uncertainty column
    assert self_check(report) == []


def test_data_block_carries_verdict_limits_and_hashes(report_data, page):
    report = read_report(page)
    assert report.report_id == 12
    assert report.content_hash == content_hash(report_data)
    judged = report.evidence["evaluation"]
    assert judged["verdict"] == "pass"
    limits = {m["metric"]: (m["lower"], m["upper"]) for m in judged["metrics"]}
    spec_limits = report_data.evaluation.spec.limits
    assert limits == {name: (lim.lower, lim.upper) for name, lim in spec_limits.items()}
    values = {m["metric"]: m["value"] for m in judged["metrics"]}
    assert values == {m.metric: m.value for m in report_data.evaluation.metrics}  # exact floats
    assert [r["source_sha256"] for r in report.evidence["runs"]] == [
        r.source_sha256 for r in report_data.runs
    ]


def test_content_hash_is_sha256_of_the_canonical_evidence(report_data):
    canonical = json.dumps(
        evidence(report_data), sort_keys=True, separators=(",", ":"), ensure_ascii=False
    )
    assert content_hash(report_data) == hashlib.sha256(canonical.encode("utf-8")).hexdigest()
    assert content_hash(report_data) == content_hash(build_report())  # deterministic


def test_content_hash_follows_the_evidence_only(report_data):
    base = content_hash(report_data)
    run = report_data.runs[0]
    changed_file = replace(
        report_data, runs=(replace(run, source_sha256="0" * 64),) + report_data.runs[1:]
    )
    plot = report_data.plots[0]
    changed_samples = replace(
        report_data,
        plots=(replace(plot, feedback=(plot.feedback[0] + 1e-12,) + plot.feedback[1:]),)
        + report_data.plots[1:],
    )
    changed_settings = replace(
        report_data, analysis_settings={**report_data.analysis_settings, "band": 0.05}
    )
    for changed in (changed_file, changed_samples, changed_settings):
        assert content_hash(changed) != base
    # context, not evidence: the ancestors' trend and the free-text descriptions
    assert content_hash(replace(report_data, trends=())) == base
    assert content_hash(replace(report_data, axis_description="renamed")) == base


def test_sections_in_order_and_complete(report_data, page):
    assert (
        page.index('id="verdict"') < page.index('id="metrics"') < page.index('id="decision-rule"')
    )
    text = " ".join(elements(page).text)
    assert "Simple acceptance (ILAC-G8:09/2019)" in text
    assert SAFETY_CAUTION in text
    assert "ISO 12100" in text and "IEC 60204-1" in text
    assert "Tested by" in text and "Reviewed by" in text
    for run in report_data.runs:
        assert run.source_name in text
        assert run.source_sha256 in text
    for revision in report_data.lineage:
        assert revision.change_summary in text
    assert f"logbook {report_data.software_version}" in text
    assert report_data.analysis_version in text
    assert content_hash(report_data) in text
    divs = {attrs.get("id") for tag, attrs in elements(page).tags if tag == "div"}
    assert {f"step-{i}" for i in range(len(report_data.plots))} <= divs
    assert {f"trend-{i}" for i in range(len(report_data.trends))} <= divs


def test_self_contained_plotly_inlined_no_external_scripts(page):
    scripts = [attrs for tag, attrs in elements(page).tags if tag == "script"]
    assert all("src" not in attrs for attrs in scripts)
    assert not [attrs for tag, attrs in elements(page).tags if tag == "link"]
    assert get_plotlyjs() in page  # the whole library, inlined
    assert "mathjax" not in page.lower().split("<body>")[1]


def test_guarded_report_shows_uncertainty_and_conditional_verdict():
    data = build_report(zetas=(0.60, 0.45, 0.58, 0.50, 0.59), rule=DecisionRule.GUARDED)
    assert data.evaluation.verdict is Verdict.CONDITIONAL_PASS
    report = read_report(render_html(data))
    assert report.verdict == "conditional pass"
    assert "± U" in report.columns
    overshoot = next(r for r in report.rows if r["Metric"] == "overshoot_pct")
    assert overshoot["Verdict"] == "conditional pass"
    assert overshoot["± U"] == format_value(data.evaluation.metrics[1].uncertainty)
    assert report.report_id is None
    assert self_check(report) == []


@pytest.mark.parametrize(
    ("before", "after", "problem"),
    [
        ('<span id="verdict">pass</span>', '<span id="verdict">fail</span>', "visible verdict"),
        ('<td class="num">9.4652', '<td class="num">1.0', "metric table"),
        ('"verdict": "pass"}', '"verdict": "fail"}', "content hash"),
    ],
)
def test_self_check_finds_edited_reports(page, before, after, problem):
    assert before in page
    report = read_report(page.replace(before, after, 1))
    assert any(problem in p for p in self_check(report))


def test_a_page_without_the_data_block_is_refused():
    with pytest.raises(InputError, match=r"other\.html: expected one report-data block, found 0"):
        read_report("<html><body>hello</body></html>", source="other.html")


def test_hostile_text_is_escaped_everywhere(hostile_report_data):
    page = render_html(hostile_report_data)
    parsed = elements(page)
    tags = [tag for tag, _ in parsed.tags]
    assert "img" not in tags
    for tag, attrs in parsed.tags:
        assert not [name for name in attrs if name.startswith("on")], (tag, attrs)
    scripts = [attrs for tag, attrs in parsed.tags if tag == "script"]
    figures = len(hostile_report_data.plots) + len(hostile_report_data.trends)
    assert len(scripts) == 1 + figures + 1  # plotly.js, one per figure, the data block
    assert "<img src=x" not in page
    assert "</script><!--" not in page
    # the text arrives intact as text: in the heading, the run table, the data block
    assert any(HOSTILE in chunk for chunk in parsed.text)
    report = read_report(page)
    assert report.evidence["axis"] == HOSTILE
    assert report.evidence["runs"][0]["operator"] == HOSTILE
    assert report.evidence["evaluation"]["spec"]["name"] == HOSTILE
    assert self_check(report) == []


def test_report_without_runs_of_the_spec_kind_says_so(report_data):
    spec = replace(report_data.evaluation.spec, test_kind="speed_step")
    runs = [RunValues(r.label, "position_step", {}) for r in report_data.runs]
    evaluation = evaluate(spec, runs)
    data = replace(report_data, evaluation=evaluation, plots=(), trends=())
    report = read_report(render_html(data))
    assert report.verdict == "wrong test kind"
    assert all(row["Verdict"] == "wrong test kind" for row in report.rows)
    text = " ".join(elements(render_html(data)).text)
    assert "Left out as not speed_step" in text
    assert "No step data to plot." in text
    assert self_check(report) == []
