"""The app shell: a missing or outdated logbook gets a page saying what to run; every
page renders on a small logbook."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from logbook.services import catalog
from logbook.store.config import ENV_VAR, resolve_url
from logbook.store.engine import Database
from logbook.store.migrate import init_database
from tests.ui.conftest import APP, open_page, texts


def test_a_missing_logbook_is_reported_with_the_commands_to_run_and_not_created(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    missing = tmp_path / "nowhere.db"
    monkeypatch.setenv(ENV_VAR, str(missing))
    at = AppTest.from_file(APP, default_timeout=30).run()
    assert not at.exception
    assert at.title[0].value == "The logbook cannot be opened"
    assert f"there is no logbook file at {missing}" in at.error[0].value
    commands = at.code[0].value
    assert f"logbook init --db {missing}" in commands
    assert f"logbook demo --db {missing}" in commands
    assert not missing.exists()


def test_an_outdated_logbook_asks_for_an_upgrade(
    small_logbook: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    with sqlite3.connect(small_logbook) as connection:  # pretend an older schema revision
        connection.execute("UPDATE alembic_version SET version_num = '0000'")
    monkeypatch.setenv(ENV_VAR, str(small_logbook))
    at = AppTest.from_file(APP, default_timeout=30).run()
    assert not at.exception
    assert "schema revision 0000" in at.error[0].value
    assert at.code[0].value == f"logbook db upgrade --db {small_logbook}"


@pytest.mark.parametrize(
    ("page", "expected"),
    [
        ("pages_overview.py", "Latest revision **C**: 3 runs"),
        ("pages_runs.py", "19 runs; tick rows"),
        ("pages_trends.py", "16 runs of x-stage, position_step, gain set base"),
        ("pages_acceptance.py", "Runs judged (3): run 17, run 18, run 19"),
        ("pages_import.py", "Import"),
        ("pages_setup.py", "Add an axis"),
    ],
)
def test_every_page_renders_on_a_small_logbook(app: AppTest, page: str, expected: str) -> None:
    at = open_page(app, page)
    assert not at.error, [e.value for e in at.error]
    assert expected in texts(at)


@pytest.mark.parametrize(
    "page",
    [
        "pages_overview.py",
        "pages_runs.py",
        "pages_trends.py",
        "pages_acceptance.py",
        "pages_import.py",
        "pages_setup.py",
    ],
)
@pytest.mark.parametrize("with_axis", [False, True], ids=["empty", "axis-without-runs"])
def test_every_page_renders_on_a_logbook_without_runs(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, page: str, with_axis: bool
) -> None:
    path = tmp_path / "new.db"
    database = Database(resolve_url(str(path)))
    init_database(database)
    if with_axis:
        with database.session(write=True) as session:
            catalog.add_axis(session, "x-stage", position_unit="mm", feedback_kind="encoder")
            catalog.add_revision(session, "x-stage", "A")
    database.dispose()
    monkeypatch.setenv(ENV_VAR, str(path))
    at = open_page(AppTest.from_file(APP, default_timeout=30), page)
    assert not at.error, [e.value for e in at.error]
    assert at.title[0].value != "The logbook cannot be opened"
