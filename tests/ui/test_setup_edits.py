"""The setup page's corrections: axes, revisions (re-parenting), gain-set names, new
spec versions and runs; a run locked by an issued report is refused with the report
named, and nothing changes."""

from __future__ import annotations

from pathlib import Path

from streamlit.testing.v1 import AppTest

from logbook.services import catalog, reporting
from logbook.store.config import resolve_url
from logbook.store.engine import Database
from tests.ui.conftest import open_page, rerun, texts
from tests.ui.small_logbook import SPEC_NAME


def stored(path: Path) -> Database:
    return Database(resolve_url(str(path)))


def lock_revision_c(path: Path, out: Path) -> reporting.IssuedReport:
    """Issue the spec's report on x-stage revision C of the small logbook at ``path``,
    which locks C's runs."""
    database = stored(path)
    try:
        return reporting.issue_report(
            database, axis="x-stage", revision="C", spec=SPEC_NAME, out=out, issued_by="R. Tester"
        )
    finally:
        database.dispose()


def first_run(path: Path, revision: str) -> tuple[int, str]:
    """(id, operator) of the newest run of x-stage at ``revision``, as the page lists it."""
    database = stored(path)
    try:
        with database.session() as session:
            run = catalog.list_runs(session, axis="x-stage", revision=revision)[-1]
            return run.id, run.operator
    finally:
        database.dispose()


def test_an_axis_is_edited_and_renamed_and_the_pickers_follow(app: AppTest) -> None:
    at = open_page(app, "pages_setup.py")
    at.selectbox(key="axis").set_value("y-stage")
    at.selectbox(key="setup_edit_axis").set_value("y-stage")
    rerun(at)
    key = "setup_edit_axis_2"
    at.text_input(key=f"{key}_name").set_value("y-bench")
    at.text_input(key=f"{key}_description").set_value("gantry cross axis")
    at.number_input(key=f"{key}_counts").set_value(4000)
    at.button(key=f"{key}_save").click()
    rerun(at)
    assert at.success[0].value == "Axis y-bench saved."
    assert list(at.dataframe[0].value["axis"]) == ["x-stage", "y-bench"]
    assert at.selectbox(key="setup_edit_axis").value == "y-bench"
    assert at.selectbox(key="axis").value == "y-bench"
    assert at.text_input(key=f"{key}_description").value == "gantry cross axis"
    at.text_input(key=f"{key}_name").set_value("x-stage")
    at.button(key=f"{key}_save").click()
    rerun(at)
    assert at.error[0].value == "axis 'x-stage' already exists"
    assert list(at.dataframe[0].value["axis"]) == ["x-stage", "y-bench"]


def test_a_revision_is_re_parented_and_a_loop_is_refused(app: AppTest) -> None:
    at = open_page(app, "pages_setup.py")
    at.selectbox(key="setup_edit_revision_x-stage").set_value("C")
    rerun(at)
    key = "setup_edit_revision_x-stage_C"
    assert at.selectbox(key=f"{key}_parent").value == "B"
    at.selectbox(key=f"{key}_parent").set_value("A")
    at.text_input(key=f"{key}_summary").set_value("B's coupling reverted")
    at.button(key=f"{key}_save").click()
    rerun(at)
    assert at.success[0].value == "Revision C of x-stage saved."
    table = at.dataframe[1].value.set_index("revision")
    assert table.loc["C", "parent"] == "A"
    assert table.loc["C", "change_summary"] == "B's coupling reverted"

    at.selectbox(key="setup_edit_revision_x-stage").set_value("A")
    rerun(at)
    at.selectbox(key="setup_edit_revision_x-stage_A_parent").set_value("B")
    at.button(key="setup_edit_revision_x-stage_A_save").click()
    rerun(at)
    assert "'B' is derived from 'A'" in at.error[0].value
    assert "lineage would loop" in at.error[0].value
    parents = at.dataframe[1].value.set_index("revision")["parent"].fillna("-")
    assert dict(parents) == {"A": "-", "B": "A", "C": "A"}  # as before the refused edit


def test_a_gain_set_is_renamed(app: AppTest) -> None:
    at = open_page(app, "pages_setup.py")
    assert "Only the name can change" in texts(at)
    at.selectbox(key="setup_rename_gains").set_value("stiff")
    rerun(at)
    at.text_input(key="setup_rename_gains_stiff").set_value("stiff-v1")
    at.button(key="setup_rename_gains_save").click()
    rerun(at)
    assert at.success[0].value == "Gain set stiff renamed to stiff-v1."
    assert list(at.dataframe[2].value["gains"]) == ["base", "stiff-v1"]


def test_a_spec_is_saved_as_a_new_version_and_keeps_its_name(app: AppTest) -> None:
    at = open_page(app, "pages_setup.py")
    key = f"setup_spec_version_{SPEC_NAME}_1.0"
    draft = at.text_area(key=key).value
    assert "version: '1.1'" in draft and "upper: 0.1" in draft
    at.text_area(key=key).set_value(draft.replace("upper: 0.1\n", "upper: 0.12\n"))
    at.button(key="setup_spec_version_save").click()
    rerun(at)
    assert at.success[0].value == f"Spec {SPEC_NAME} 1.1 saved."
    table = at.dataframe[3].value.set_index("version")
    assert "settling_time_s ≤ 0.1 s" in table.loc["1.0", "limits"]
    assert "settling_time_s ≤ 0.12 s" in table.loc["1.1", "limits"]
    key = f"setup_spec_version_{SPEC_NAME}_1.1"
    renamed = at.text_area(key=key).value.replace(f"name: {SPEC_NAME}", "name: other")
    at.text_area(key=key).set_value(renamed)
    at.button(key="setup_spec_version_save").click()
    rerun(at)
    assert f"must keep the name '{SPEC_NAME}'" in at.error[0].value
    assert set(at.dataframe[3].value["spec"]) == {SPEC_NAME}


def test_a_run_is_corrected(app: AppTest, small_logbook: Path) -> None:
    run_id, _ = first_run(small_logbook, "A")
    at = open_page(app, "pages_setup.py")
    assert at.selectbox(key="setup_runs_run_x-stage").value == run_id
    key = f"setup_run_{run_id}"
    at.text_input(key=f"{key}_operator").set_value("kim")
    at.number_input(key=f"{key}_temperature_c").set_value(22.5)
    at.selectbox(key=f"{key}_gains").set_value("stiff")
    at.button(key=f"{key}_save").click()
    rerun(at)
    assert at.success[0].value == f"Run {run_id} saved."
    database = stored(small_logbook)
    try:
        with database.session() as session:
            run = catalog.get_run(session, run_id)
            assert (run.operator, run.temperature_c, run.gain_set.name) == ("kim", 22.5, "stiff")
            assert run.taken_at.isoformat() == "2026-03-17T09:00:00+00:00"  # not sent, unchanged
    finally:
        database.dispose()


def test_a_locked_run_is_refused_with_the_report_named(
    app: AppTest, small_logbook: Path, tmp_path: Path
) -> None:
    issued = lock_revision_c(small_logbook, tmp_path / "report.html")
    run_id, operator = first_run(small_logbook, "C")
    at = open_page(app, "pages_setup.py")
    at.selectbox(key="setup_runs_revision_x-stage").set_value("C")
    rerun(at)
    assert at.selectbox(key="setup_runs_run_x-stage").value == run_id
    report = f"acceptance report {issued.report_id} (spec {SPEC_NAME} 1.0"
    assert report in at.warning[0].value
    at.text_input(key=f"setup_run_{run_id}_operator").set_value("someone else")
    at.button(key=f"setup_run_{run_id}_save").click()
    rerun(at)
    assert at.error[0].value.startswith(f"run {run_id} is locked: it is used by issued {report}")
    assert "by R. Tester); record a corrected run instead" in at.error[0].value
    assert not at.success
    assert first_run(small_logbook, "C") == (run_id, operator)
