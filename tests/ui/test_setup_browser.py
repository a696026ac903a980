"""The setup page's run correction in a real browser: a run locked by an issued report
is refused with the report named. Saves ``setup-edit.png`` (to $LOGBOOK_SCREENSHOT_DIR
too when it is set, as the other browser test does)."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.ui.small_logbook import build_small_logbook
from tests.ui.test_browser import (  # noqa: F401  (page and server are fixtures)
    body,
    choose,
    page,
    pytestmark,
    server,
    settle,
    shoot,
    visit,
)
from tests.ui.test_setup_edits import first_run, lock_revision_c


@pytest.fixture(scope="module")
def logbook_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The small logbook with a report issued on x-stage revision C (its runs locked)."""
    folder = tmp_path_factory.mktemp("setup-browser")
    path = folder / "logbook.db"
    build_small_logbook(path, folder / "captures")
    lock_revision_c(path, folder / "report.html")
    return path


def test_a_locked_run_is_refused_in_the_browser(
    server: str,  # noqa: F811
    page: object,  # noqa: F811
    logbook_file: Path,
    tmp_path: Path,
) -> None:
    tab = page
    visit(tab, f"{server}/setup", "Setup")
    tab.get_by_role("tab", name="Runs").click()  # type: ignore[attr-defined]
    panel = tab.get_by_role("tabpanel", name="Runs")  # type: ignore[attr-defined]
    panel.get_by_text("Run to correct").wait_for()
    settle(tab)
    choose(tab, 1, "C", within=panel)  # the revision
    run_id, _ = first_run(logbook_file, "C")
    assert f"Run {run_id} is used by issued acceptance report 1" in body(tab)
    operator = panel.get_by_label("Operator")
    operator.fill("someone else")
    operator.press("Enter")
    settle(tab)
    panel.get_by_role("button", name="Save run").click()
    tab.get_by_text(f"run {run_id} is locked").wait_for()  # type: ignore[attr-defined]
    settle(tab)
    text = body(tab)
    assert f"run {run_id} is locked: it is used by issued acceptance report 1" in text
    assert "record a corrected run instead of editing this one" in text
    assert "Traceback" not in text
    shoot(tab, tmp_path, "setup-edit")
