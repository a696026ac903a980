"""The import page: upload, preview, dry run, import; a malformed file is rejected with
its reason and leaves nothing behind."""

from __future__ import annotations

from pathlib import Path

from sqlalchemy import func, select
from streamlit.testing.v1 import AppTest

from logbook.services import profiles
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from logbook.store.models import AnalysisResult, TestRun, Trace
from tests.services.capture_files import write_capture
from tests.ui.conftest import open_page, rerun, texts

METADATA = {
    "axis": "x-stage",
    "revision": "C",
    "gains": "stiff",
    "operator": "kim",
    "date": "2026-06-01T10:00:00+00:00",
}
# A non-numeric feedback cell on physical line 3 (header on line 1).
MALFORMED = b"t [s],setpoint [mm],position [mm]\n0,0,0\n0.001,1,oops\n0.002,1,1\n"


def counts(path: Path) -> tuple[int, int, int]:
    database = Database(resolve_url(str(path)))
    try:
        with database.session() as session:
            return tuple(  # type: ignore[return-value]
                session.scalar(select(func.count()).select_from(model))
                for model in (TestRun, Trace, AnalysisResult)
            )
    finally:
        database.dispose()


def upload(at: AppTest, files: list[tuple[str, bytes]]) -> AppTest:
    at.file_uploader(key="import_upload").set_value([(n, b, "text/csv") for n, b in files])
    return rerun(at)


def press(at: AppTest, label: str) -> AppTest:
    next(b for b in at.button if b.label == label).click()
    return rerun(at)


def results(at: AppTest):
    return at.dataframe[-1].value


def test_a_file_is_previewed_checked_and_imported(
    app: AppTest, small_logbook: Path, tmp_path: Path
) -> None:
    good = write_capture(tmp_path / "bench_0601.csv", seed=99, metadata=METADATA)
    before = counts(small_logbook)
    at = upload(open_page(app, "pages_import.py"), [(good.name, good.read_bytes())])
    assert "300 rows. Columns found by name: time: t [s], setpoint: setpoint [mm]" in texts(at)
    press(at, "Check (dry run)")
    assert "Dry run (nothing was written): 1 checked" in texts(at)
    assert counts(small_logbook) == before
    press(at, "Import")
    assert "Import: 1 imported" in texts(at)
    row = results(at).iloc[0]
    assert (row["file"], row["outcome"]) == ("bench_0601.csv", "imported")
    runs, traces, figures = counts(small_logbook)
    assert (runs, traces) == (before[0] + 1, before[1] + 1) and figures > before[2]


def test_a_malformed_file_is_rejected_with_its_reason_and_nothing_is_half_imported(
    app: AppTest, small_logbook: Path, tmp_path: Path
) -> None:
    good = write_capture(tmp_path / "fine.csv", seed=98, metadata=METADATA)
    before = counts(small_logbook)
    at = upload(
        open_page(app, "pages_import.py"),
        [("broken.csv", MALFORMED), (good.name, good.read_bytes())],
    )
    assert any("broken.csv, line 3, column 'position [mm]'" in e.value for e in at.error)
    at.selectbox(key="import_axis").set_value("x-stage")
    rerun(at)
    at.selectbox(key="import_revision").set_value("C")
    at.selectbox(key="import_gains").set_value("stiff")
    rerun(at)
    press(at, "Import")
    table = results(at).set_index("file")
    assert table.loc["broken.csv", "outcome"] == "rejected"
    assert table.loc["broken.csv", "message"].startswith("broken.csv, line 3, column 'position")
    assert "/tmp" not in table.loc["broken.csv", "message"]  # no staging folder in messages
    assert table.loc["fine.csv", "outcome"] == "imported"
    assert any(e.value.startswith("broken.csv, line 3") for e in at.error)
    runs, traces, _ = counts(small_logbook)
    assert (runs, traces) == (before[0] + 1, before[1] + 1)  # only the good file went in


def test_a_new_profile_is_saved_from_the_uploaded_columns(
    app: AppTest, small_logbook: Path, tmp_path: Path
) -> None:
    good = write_capture(tmp_path / "p.csv", seed=97, metadata=METADATA)
    at = open_page(app, "pages_import.py")
    at.selectbox(key="import_axis").set_value("x-stage")
    upload(at, [(good.name, good.read_bytes())])
    form = at.get("form")[0]
    form.text_input[0].set_value("stage-csv")
    selects = {s.label: s for s in form.selectbox}
    selects["Time column"].set_value("t [s]")
    selects["Setpoint column"].set_value("setpoint [mm]")
    selects["Feedback column"].set_value("position [mm]")
    selects["Effort column"].set_value("effort [V]")
    form.button[0].click()
    rerun(at)
    assert "Profile stage-csv saved for axis x-stage." in texts(at)
    database = Database(resolve_url(str(small_logbook)))
    try:
        with database.session() as session:
            [profile] = profiles.list_profiles(session, "x-stage")
    finally:
        database.dispose()
    assert (profile.feedback_column, profile.effort_column) == ("position [mm]", "effort [V]")
    at.selectbox(key="import_profile_x-stage").set_value("stage-csv")
    rerun(at)
    press(at, "Import")
    assert results(at).iloc[0]["outcome"] == "imported"
