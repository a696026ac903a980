"""Import: upload capture files, pick or create an import profile, preview, check, import.

Every action calls the importer (:func:`logbook.services.importing.import_files`),
which handles each file in its own transaction: a file that fails is rejected with
its reason and leaves nothing behind, while the others go in.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import streamlit as st

from logbook.errors import InputError, LogbookError
from logbook.ingest.metadata import RunFields
from logbook.ingest.profiles import (
    FEEDBACK_SIGNALS,
    SETPOINT_SIGNALS,
    TIME_UNITS,
    ImportProfile,
)
from logbook.services import profiles, views
from logbook.services.importing import ColumnChoice, ImportRequest, import_files
from logbook.store.models import TEST_KINDS
from logbook.ui import uploads
from logbook.ui.common import (
    axis_names,
    clear_caches,
    database,
    gain_names,
    read,
    shown_errors,
    write,
)

FROM_FILE = "(from the file)"
BY_NAME = "(by column names)"
NONE = "(none)"
RESULTS_KEY = "import_results"
FILE_TYPES = ["csv", "tsv", "txt", "parquet"]


def _given(value: str | None) -> str | None:
    return None if value in (FROM_FILE, BY_NAME, NONE, "") else value


def show_previews(files: Sequence[uploads.Upload], profile: ImportProfile | None) -> list[str]:
    """A preview of each file (first expanded); returns the first readable file's columns."""
    columns: list[str] = []
    with uploads.staged(files) as paths:
        for i, path in enumerate(paths):
            with st.expander(f"Preview: {path.name}", expanded=i == 0):
                try:
                    preview = views.preview_capture(
                        path,
                        delimiter=profile.delimiter if profile else None,
                        decimal=profile.decimal if profile else None,
                    )
                except InputError as exc:
                    st.error(uploads.without_folder(str(exc), path), icon=":material/error:")
                    continue
                columns = columns or list(preview.head.columns)
                found = ", ".join(f"{role}: {col or '—'}" for role, col in preview.detected.items())
                st.caption(f"{preview.rows} rows. Columns found by name: {found}")
                if preview.metadata:
                    st.caption(
                        "Header lines: "
                        + "; ".join(f"{k} = {v}" for k, v in preview.metadata.items())
                    )
                st.dataframe(preview.head, hide_index=True)
    return columns


def profile_form(axis: str, columns: list[str]) -> None:
    """Create an import profile for ``axis`` from the uploaded file's columns."""
    with st.expander("New import profile"), st.form("import_new_profile", clear_on_submit=False):
        options = columns or [""]
        name = st.text_input("Profile name")
        cols = st.columns(3)
        time_column = cols[0].selectbox("Time column", options)
        time_unit = cols[0].selectbox("Time unit", TIME_UNITS)
        setpoint_column = cols[1].selectbox("Setpoint column", options)
        setpoint_signal = cols[1].selectbox("Setpoint signal", SETPOINT_SIGNALS)
        setpoint_unit = cols[1].text_input("Setpoint unit", "mm")
        feedback_signal = cols[2].selectbox("Feedback signal", FEEDBACK_SIGNALS)
        feedback_column = cols[2].selectbox("Feedback column", [NONE, *options])
        feedback_unit = cols[2].text_input("Feedback unit", "mm")
        cols = st.columns(3)
        quad_a = cols[0].selectbox("Quadrature A column", [NONE, *options])
        quad_b = cols[1].selectbox("Quadrature B column", [NONE, *options])
        effort = cols[2].selectbox("Effort column", [NONE, *options])
        cols = st.columns(3)
        feedback_scale = cols[0].number_input("Feedback scale", value=1.0, format="%g")
        effort_unit = cols[1].text_input("Effort unit", "V")
        speed = cols[2].checkbox("Speed loop (feedback becomes a velocity)")
        if not st.form_submit_button("Save profile"):
            return
        try:
            profile = ImportProfile(
                name=name,
                axis=axis,
                time_column=time_column,
                time_unit=time_unit,
                setpoint_column=setpoint_column,
                setpoint_signal=setpoint_signal,
                setpoint_unit=setpoint_unit,
                feedback_signal=feedback_signal,
                feedback_column=_given(feedback_column),
                feedback_unit=feedback_unit,
                feedback_scale=float(feedback_scale),
                quadrature_a_column=_given(quad_a),
                quadrature_b_column=_given(quad_b),
                effort_column=_given(effort),
                effort_unit=effort_unit if _given(effort) else "",
                speed=speed,
            )
            write(profiles.add_profile, profile)
        except LogbookError as exc:
            st.error(str(exc), icon=":material/error:")
            return
        st.success(f"Profile {profile.name} saved for axis {axis}.")


def request_form(axis: str | None, columns: list[str]) -> ImportRequest:
    """The profile, column and run-field choices as an import request."""
    stored = read(profiles.list_profiles, axis) if axis else []
    names = [p.name for p in stored]
    profile = st.selectbox(
        "Import profile",
        [BY_NAME, *names],
        key=f"import_profile_{axis}",
        help="a stored column mapping of the axis; without one, columns are found by name",
    )
    choice = ColumnChoice()
    if profile == BY_NAME and columns:
        cols = st.columns(4)
        picked = [
            cols[i].selectbox(f"{role} column", [BY_NAME, *columns], key=f"import_col_{role}")
            for i, role in enumerate(("time", "setpoint", "feedback", "effort"))
        ]
        choice = ColumnChoice(*(_given(p) for p in picked))
    choices = read(views.axis_choices, axis) if axis else None
    cols = st.columns(4)
    revision = cols[0].selectbox(
        "Revision", [FROM_FILE, *(choices.revisions if choices else ())], key="import_revision"
    )
    gains = cols[1].selectbox("Gain set", [FROM_FILE, *read(gain_names)], key="import_gains")
    test_kind = cols[2].selectbox("Test kind", [FROM_FILE, *TEST_KINDS], key="import_kind")
    operator = cols[3].text_input("Operator", key="import_operator", placeholder=FROM_FILE)
    return ImportRequest(
        axis=axis,
        gains=_given(gains),
        profile=_given(profile),
        columns=choice,
        run_fields=RunFields(
            revision=_given(revision), test_kind=_given(test_kind), operator=_given(operator)
        ),
    )


def run_import(files: Sequence[uploads.Upload], request: ImportRequest) -> None:
    with uploads.staged(files) as paths:
        results = import_files(database(), [str(p) for p in paths], request)
    st.session_state[RESULTS_KEY] = (request.dry_run, uploads.result_table(results))
    if not request.dry_run:
        clear_caches()


def forget_results() -> None:
    """Other files were chosen: the last results no longer describe them."""
    st.session_state.pop(RESULTS_KEY, None)


def show_results() -> None:
    stored = st.session_state.get(RESULTS_KEY)
    if stored is None:
        return
    dry_run, table = stored
    outcomes = table["outcome"].value_counts().to_dict()
    summary = ", ".join(f"{n} {outcome}" for outcome, n in outcomes.items())
    title = "Dry run (nothing was written)" if dry_run else "Import"
    st.subheader(f"{title}: {summary}")
    for row in table.itertuples():
        if row.outcome == "rejected":
            st.error(row.message, icon=":material/block:")
    st.dataframe(
        table,
        hide_index=True,
        column_config={
            name: st.column_config.NumberColumn(format="%.4g") for name in uploads.RESULT_FIGURES
        },
    )


def main() -> None:
    st.title("Import")
    with shown_errors():
        axes = read(axis_names)
        if not axes:
            st.info("Add an axis on the Setup page first.")
            return
        axis = _given(
            st.selectbox(
                "Axis",
                [FROM_FILE, *axes],
                key="import_axis",
                help="the axis of every file, or each file's own '# axis:' line",
            )
        )
        files = st.file_uploader(
            "Capture files",
            type=FILE_TYPES,
            accept_multiple_files=True,
            key="import_upload",
            on_change=forget_results,
        )
        profile_name = st.session_state.get(f"import_profile_{axis}")
        stored = {p.name: p for p in read(profiles.list_profiles, axis)} if axis else {}
        columns = show_previews(files, stored.get(profile_name or "")) if files else []
        if axis is not None:
            profile_form(axis, columns)
        request = request_form(axis, columns)
        cols = st.columns([1, 1, 4])
        check = cols[0].button("Check (dry run)", disabled=not files)
        go = cols[1].button("Import", type="primary", disabled=not files)
        if files and (check or go):
            run_import(files, replace(request, dry_run=check))
    show_results()


main()
