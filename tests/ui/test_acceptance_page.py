"""The acceptance page: a verdict per revision and spec; issuing a report locks its runs."""

from __future__ import annotations

from pathlib import Path

from streamlit.testing.v1 import AppTest

from logbook.reports.pdf import find_chromium
from logbook.reports.readback import read_report
from logbook.services import views
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from tests.ui.conftest import open_page, rerun, texts


def verdict(at: AppTest) -> str:
    return next(m.value for m in at.markdown if m.value.startswith("**Verdict**"))


def metric_verdicts(at: AppTest) -> dict[str, str]:
    table = at.dataframe[0].value
    return dict(zip(table["Metric"], table["Verdict"], strict=True))


def test_a_passing_and_a_failing_revision(app: AppTest) -> None:
    at = open_page(app, "pages_acceptance.py")
    # Revision C: tau 20 ms, settling tau·ln 50 = 78 ms against the 100 ms limit.
    assert verdict(at) == "**Verdict** :green-badge[pass]"
    assert set(metric_verdicts(at).values()) == {"pass"}
    at.selectbox(key="acceptance_revision_x-stage").set_value("B")
    rerun(at)
    # Revision B: tau 30 ms, settling 117 ms > 100 ms; rise tau·ln 9 = 66 ms < 80 ms.
    assert verdict(at) == "**Verdict** :red-badge[fail]"
    verdicts = metric_verdicts(at)
    assert verdicts["settling_time_s"] == "fail" and verdicts["rise_time_s"] == "pass"
    assert "Simple acceptance" in texts(at)
    at.radio(key="acceptance_rule").set_value("guarded")
    rerun(at)
    assert "Guarded acceptance" in texts(at)
    assert "± U" in at.dataframe[0].value.columns


def test_issuing_a_report_offers_it_for_download_and_locks_its_runs(
    app: AppTest, small_logbook: Path
) -> None:
    at = open_page(app, "pages_acceptance.py")
    at.text_input(key="acceptance_issued_by").set_value("R. Tester")
    if find_chromium() is not None:  # without it the PDF box is disabled (and unticked)
        at.checkbox[0].set_value(True)
    at.button[0].click()
    rerun(at)
    assert at.success[0].value.startswith("Report 1 issued: pass")
    labels = [b.label for b in at.get("download_button")]
    expected = ["Download HTML", "Download table (CSV)"]
    if find_chromium() is not None:
        expected.insert(1, "Download PDF")
    assert labels == expected
    html = at.session_state["acceptance_issued"]["html"].decode()
    assert read_report(html).verdict == "pass"
    database = Database(resolve_url(str(small_logbook)))
    try:
        with database.session() as session:
            runs = views.run_table(session, views.RunFilter("x-stage")).frame
    finally:
        database.dispose()
    assert set(runs.loc[runs["locked"], "revision"]) == {"C"}
    assert runs["locked"].sum() == 3
