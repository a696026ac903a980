"""The overview: per axis the latest revision, its verdict and the regression findings."""

from __future__ import annotations

import time

from streamlit.testing.v1 import AppTest

from tests.ui.conftest import open_page, rerun, texts

SCANNING = "Comparing each revision with its parent…"


def settled(at: AppTest, timeout_s: float = 30.0) -> AppTest:
    """Rerun until the background regression scans have reported."""
    deadline = time.monotonic() + timeout_s
    while SCANNING in texts(at):
        assert time.monotonic() < deadline, "the regression scans did not finish"
        time.sleep(0.1)
        rerun(at)
    return at


def test_each_axis_shows_its_latest_revision_verdict_and_findings(app: AppTest) -> None:
    at = settled(open_page(app, "pages_overview.py"))
    shown = texts(at)
    assert [s.value for s in at.subheader] == ["x-stage", "y-stage"]
    assert "Latest revision **C**: 3 runs" in shown
    # C settles in tau·ln 50 = 78 ms against the spec's 100 ms limit.
    assert ":green-badge[pass] x-stage-step 1.0 · gains stiff · 3 runs" in shown
    assert "No spec covers this axis." in shown
    # B (tau 30 ms) against A (tau 20 ms): slower rise and settling, 8 runs each.
    findings = [m.value for m in at.markdown if m.value.startswith("- rev **B** :red[worse]")]
    assert any("`settling_time_s`" in f for f in findings)
    assert any("`rise_time_s`" in f for f in findings)
    first_bad = next(m.value for m in at.markdown if m.value.startswith("First bad revisions:"))
    assert "**B**: " in first_bad and "`settling_time_s`" in first_bad
