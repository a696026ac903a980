"""Printing the report to PDF with Chromium, and the message when there is none."""

from __future__ import annotations

import pytest

from logbook.errors import LogbookError
from logbook.reports import pdf
from logbook.reports.html import render_html
from logbook.reports.pdf import find_chromium, print_pdf

needs_chromium = pytest.mark.skipif(
    find_chromium() is None, reason="no Chromium installed (Debian package 'chromium')"
)


def test_no_chromium_gives_a_clear_error(tmp_path, monkeypatch):
    monkeypatch.delenv(pdf.CHROMIUM_ENV, raising=False)
    monkeypatch.setattr(pdf.shutil, "which", lambda name: None)
    monkeypatch.setattr(pdf, "DEBIAN_CHROMIUM", str(tmp_path / "no-such-chromium"))
    assert find_chromium() is None
    page = tmp_path / "r.html"
    page.write_text("<html></html>")
    with pytest.raises(LogbookError, match="cannot print to PDF: no Chromium browser found"):
        print_pdf(page, tmp_path / "r.pdf")


def test_a_browser_that_fails_is_reported(tmp_path):
    page = tmp_path / "r.html"
    page.write_text("<html></html>")
    with pytest.raises(LogbookError, match="cannot print to PDF with /bin/false"):
        print_pdf(page, tmp_path / "r.pdf", browser="/bin/false")


@pytest.mark.browser
@needs_chromium
def test_pdf_text_carries_verdict_table_and_caution(report_data, tmp_path):
    pypdf = pytest.importorskip("pypdf", reason="PDF text extraction needs pypdf")
    page = tmp_path / "report.html"
    page.write_text(render_html(report_data, report_id=3), encoding="utf-8")
    target = print_pdf(page, tmp_path / "report.pdf")
    reader = pypdf.PdfReader(str(target))
    first = reader.pages[0].extract_text()
    text = " ".join(" ".join(p.extract_text() for p in reader.pages).split())
    compact = text.replace(" ", "")  # names wrapped in narrow cells come back split
    assert "Acceptance report: bench-x, revision C" in first
    assert "PASS" in first  # the verdict is on the first page
    assert "Metrics against limits" in first
    assert f"page 1 of {len(reader.pages)}" in first
    for metric in report_data.evaluation.metrics:
        assert metric.metric in compact
    for run in report_data.runs:
        assert run.source_name in compact
    assert "Tested by" in text and "Reviewed by" in text
    assert "ISO 12100" in text and "IEC 60204-1" in text
