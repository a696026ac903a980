"""Setup: the axes, their revisions, the gain sets, specs, import profiles and runs.

Each tab lists what is stored, offers a form to add to it and a section to correct
it, through the catalogue and spec services, which validate every field and name
the one that is wrong. The edit sections are plain widgets keyed by the row they
edit (so they show that row's values) with a save button. A spec is never edited: a
changed spec is saved as a new version. Runs used by an issued acceptance report
are locked: the service refuses the edit and says which report locks the run.
"""

from __future__ import annotations

from datetime import UTC, date, datetime
from typing import Any

import pandas as pd
import streamlit as st
import yaml
from sqlalchemy.orm import Session

from logbook.acceptance.spec_file import parse_spec_text
from logbook.errors import InputError
from logbook.ingest.profiles import load_profile
from logbook.services import catalog, profiles, specs, views
from logbook.store.models import (
    ANTI_WINDUP_MODES,
    CHANGE_CATEGORIES,
    FEEDBACK_KINDS,
    POSITION_UNITS,
)
from logbook.ui import uploads
from logbook.ui.common import (
    axis_names,
    axis_picker,
    flash,
    gain_names,
    read,
    show_flash,
    shown_errors,
    write,
)

NONE = "(none)"
SPEC_EXAMPLE = """name = "stage-position-acceptance"
version = "1.0"
test_kind = "position_step"
axes = ["x-stage"]
statistic = "median"
required_runs = 5
[limits.overshoot_pct]
upper = 10.0
unit = "%"
"""


def _optional(value: float | None) -> float | None:
    return None if value is None else float(value)


def _cell(value: Any) -> Any:
    """A table cell's value, None where the table shows a gap (NaN, NaT, None)."""
    return None if pd.isna(value) else value


def saved(what: str) -> None:
    flash(f"{what} saved.")


def axes_tab() -> None:
    st.dataframe(read(views.axis_summary), hide_index=True)
    with st.form("setup_axis", clear_on_submit=True), shown_errors():
        st.markdown("**Add an axis**")
        cols = st.columns(4)
        name = cols[0].text_input("Name", placeholder="x-stage")
        unit = cols[1].selectbox("Position unit", POSITION_UNITS)
        kind = cols[2].selectbox("Feedback kind", FEEDBACK_KINDS)
        counts = cols[3].number_input(
            "Counts per revolution", min_value=0, value=0, help="0 when there is no encoder"
        )
        cols = st.columns([1, 3])
        travel = cols[0].number_input(
            "Travel per revolution", value=None, format="%g", help="e.g. lead-screw lead in mm"
        )
        description = cols[1].text_input("Description")
        if st.form_submit_button("Add axis"):
            write(
                catalog.add_axis,
                name,
                position_unit=unit,
                feedback_kind=kind,
                counts_per_rev=int(counts) or None,
                units_per_rev=_optional(travel),
                description=description,
            )
            saved(f"Axis {name.strip()}")
    edit_axis()


def axis_fields(session: Session, name: str) -> dict[str, Any]:
    """The stored columns of axis ``name`` (plain data, for :func:`read`)."""
    return catalog.get_axis(session, name).as_dict()


def edit_axis() -> None:
    names = read(axis_names)
    if not names:
        return
    with st.container(border=True):
        st.markdown("**Edit an axis**")
        name = st.selectbox("Axis to edit", names, key="setup_edit_axis")
        row = read(axis_fields, name)
        key = f"setup_edit_axis_{row['id']}"
        cols = st.columns(4)
        new_name = cols[0].text_input("Name", value=row["name"], key=f"{key}_name")
        counts = cols[1].number_input(
            "Counts per revolution",
            min_value=0,
            value=row["counts_per_rev"] or 0,
            key=f"{key}_counts",
            help="0 when there is no encoder",
        )
        travel = cols[2].number_input(
            "Travel per revolution", value=row["units_per_rev"], format="%g", key=f"{key}_travel"
        )
        cols[3].text_input(
            "Position unit · feedback",
            value=f"{row['position_unit']} · {row['feedback_kind']}",
            disabled=True,
            key=f"{key}_fixed",
            help="fixed: the stored runs were converted with them",
        )
        description = st.text_input(
            "Description", value=row["description"], key=f"{key}_description"
        )
        notes = st.text_area("Notes", value=row["notes"], key=f"{key}_notes", height=68)
        cols = st.columns(4)
        calibration = tuple(
            col.number_input(label, value=row[column], format="%g", key=f"{key}_{column}")
            for col, label, column in zip(
                cols,
                ("Calibration raw 1", "value 1", "raw 2", "value 2"),
                ("cal_raw_1", "cal_value_1", "cal_raw_2", "cal_value_2"),
                strict=True,
            )
        )
        with shown_errors():
            if st.button("Save axis", key=f"{key}_save"):
                axis = write(
                    catalog.update_axis,
                    name,
                    new_name=new_name,
                    description=description,
                    notes=notes,
                    counts_per_rev=int(counts) or None,
                    units_per_rev=_optional(travel),
                    calibration=None if all(v is None for v in calibration) else calibration,
                )
                st.session_state[_RENAMED_AXIS] = (name, axis.name)
                saved(f"Axis {axis.name}")


def revisions_tab() -> None:
    axis = axis_picker(read(axis_names))
    if axis is None:
        return
    table = read(views.revision_table, axis)
    st.dataframe(table.drop(columns=["lineage_index"]), hide_index=True)
    with st.form("setup_revision", clear_on_submit=True), shown_errors():
        st.markdown(f"**Add a revision of {axis}**")
        cols = st.columns(4)
        label = cols[0].text_input("Label", placeholder="C")
        parents = list(table["revision"])
        parent = cols[1].selectbox(
            "Derived from", [NONE, *parents], index=len(parents), help="its parent revision"
        )
        when = cols[2].date_input("Date", value=date.today())
        category = cols[3].selectbox("Change category", CHANGE_CATEGORIES)
        summary = st.text_input("What changed", placeholder="stiffer coupling")
        if st.form_submit_button("Add revision"):
            write(
                catalog.add_revision,
                axis,
                label,
                parent=None if parent == NONE else parent,
                revision_date=when,
                change_category=category,
                change_summary=summary,
            )
            saved(f"Revision {label.strip()} of {axis}")
    edit_revision(axis, table)


def edit_revision(axis: str, table: pd.DataFrame) -> None:
    """Correct a revision's parent, date, category or summary (the table's row)."""
    if table.empty:
        return
    with st.container(border=True):
        st.markdown(f"**Edit a revision of {axis}**")
        labels = list(table["revision"])
        label = st.selectbox("Revision to edit", labels, key=f"setup_edit_revision_{axis}")
        row = table.set_index("revision").loc[label]
        key = f"setup_edit_revision_{axis}_{label}"
        cols = st.columns(4)
        parents = [NONE, *(other for other in labels if other != label)]
        parent = cols[0].selectbox(
            "Derived from",
            parents,
            index=parents.index(_cell(row["parent"]) or NONE),
            key=f"{key}_parent",
            help="its parent revision; one derived from it would make the lineage loop",
        )
        when = cols[1].date_input(
            "Date",
            value=_cell(row["revision_date"]),
            key=f"{key}_date",
        )
        category = cols[2].selectbox(
            "Change category",
            CHANGE_CATEGORIES,
            index=CHANGE_CATEGORIES.index(row["change_category"]),
            key=f"{key}_category",
        )
        summary = st.text_input("What changed", value=row["change_summary"], key=f"{key}_summary")
        with shown_errors():
            if st.button("Save revision", key=f"{key}_save"):
                write(
                    catalog.update_revision,
                    axis,
                    label,
                    parent=None if parent == NONE else parent,
                    revision_date=when,
                    change_category=category,
                    change_summary=summary,
                )
                saved(f"Revision {label} of {axis}")


def gains_tab() -> None:
    table = read(views.gain_table)
    st.dataframe(table, hide_index=True)
    with st.form("setup_gains", clear_on_submit=True), shown_errors():
        st.markdown("**Add a gain set** (parallel form: u = Kp·e + Ki·∫e dt + Kd·de/dt)")
        cols = st.columns(5)
        name = cols[0].text_input("Name")
        kp = cols[1].number_input("Kp", value=1.0, format="%g")
        ki = cols[2].number_input("Ki", value=0.0, format="%g")
        kd = cols[3].number_input("Kd", value=0.0, format="%g")
        rate = cols[4].number_input("Loop rate [Hz]", value=1000.0, min_value=0.0, format="%g")
        cols = st.columns(4)
        limit = cols[0].number_input("Integrator limit", value=None, format="%g")
        windup = cols[1].selectbox("Anti-windup", [NONE, *ANTI_WINDUP_MODES])
        d_filter = cols[2].number_input("Derivative filter [Hz]", value=None, format="%g")
        feedforward = cols[3].number_input("Velocity feedforward", value=None, format="%g")
        if st.form_submit_button("Add gain set"):
            params = catalog.GainParams(
                kp=float(kp),
                ki=float(ki),
                kd=float(kd),
                loop_rate_hz=float(rate),
                integrator_limit=_optional(limit),
                anti_windup=None if windup == NONE else windup,
                derivative_filter_hz=_optional(d_filter),
                feedforward=_optional(feedforward),
            )
            row, created = write(catalog.add_gain_set, params, name=name.strip() or None)
            label = catalog.gain_label(row.name, row.id)
            if created:
                saved(f"Gain set {label}")
            st.info(f"These gains are already stored as {label}.")
    rename_gains(list(table["gains"]))


def rename_gains(labels: list[str]) -> None:
    if not labels:
        return
    with st.container(border=True):
        st.markdown("**Rename a gain set**")
        st.caption(
            "Only the name can change: a gain set is stored once per content (a hash of its"
            " gains), so other gains are a new gain set, added with the form above."
        )
        cols = st.columns([1, 1, 2])
        old = cols[0].selectbox("Gain set", labels, key="setup_rename_gains")
        new = cols[1].text_input("New name", key=f"setup_rename_gains_{old}")
        with shown_errors():
            if st.button("Rename gain set", key="setup_rename_gains_save"):
                row = write(catalog.rename_gain_set, old, new)
                flash(f"Gain set {old} renamed to {row.name}.")


def specs_tab() -> None:
    st.dataframe(read(views.spec_table), hide_index=True)
    with st.form("setup_spec", clear_on_submit=False), shown_errors():
        st.markdown(
            "**Add a spec or a new version of one** (the same keys as a spec file;"
            " a stored version is never changed)"
        )
        fmt = st.radio("Format", ["toml", "yaml"], horizontal=True)
        source = st.text_area("Spec", value=SPEC_EXAMPLE, height=260)
        if st.form_submit_button("Add spec"):
            spec = parse_spec_text(source, fmt=fmt, source="the form")
            write(specs.add_spec, spec, source_text=source)
            saved(f"Spec {spec.name} {spec.version}")
    new_spec_version(sorted(set(read(views.spec_table)["spec"])))


def next_version(version: str) -> str:
    """A suggestion for the version after ``version``: ``1.0`` -> ``1.1``, ``2`` -> ``3``."""
    head, _, last = version.rpartition(".")
    if last.isdigit():
        return f"{head}.{int(last) + 1}" if head else str(int(last) + 1)
    return f"{version}.1"


def spec_draft(session: Session, name: str) -> tuple[str, str]:
    """(newest version, its YAML text with the next version filled in) of spec ``name``."""
    spec = specs.spec_definition(specs.get_spec(session, name)).to_dict()
    newest = spec["version"]
    spec["version"] = next_version(newest)
    spec["limits"] = {
        metric: {k: v for k, v in limit.items() if v is not None}
        for metric, limit in spec["limits"].items()
    }
    return newest, yaml.safe_dump(spec, sort_keys=False, allow_unicode=True)


def new_spec_version(names: list[str]) -> None:
    """Save a changed copy of a stored spec as its next version (stored ones never change)."""
    if not names:
        return
    with st.container(border=True):
        st.markdown("**Save a spec as a new version**")
        name = st.selectbox("Spec", names, key="setup_spec_version_name")
        newest, draft = read(spec_draft, name)
        st.caption(
            f"The newest stored version of {name} is {newest}. Reports keep pointing at the"
            " version they were judged against: change the limits below, keep or change the"
            " suggested version, and save."
        )
        source = st.text_area(
            "Spec (YAML)", value=draft, height=300, key=f"setup_spec_version_{name}_{newest}"
        )
        with shown_errors():
            if st.button("Save as new version", key="setup_spec_version_save"):
                spec = parse_spec_text(source, fmt="yaml", source="the form")
                if spec.name != name:
                    raise InputError(
                        f"name: a new version of {name} must keep the name {name!r} (got"
                        f" {spec.name!r}); add a new spec with the form above"
                    )
                write(specs.add_spec, spec, source_text=source)
                saved(f"Spec {spec.name} {spec.version}")


def profiles_tab() -> None:
    axis = axis_picker(read(axis_names), key="setup_profiles_axis")
    if axis is None:
        return
    stored = read(profiles.list_profiles, axis)
    if stored:
        st.dataframe([p.to_dict() for p in stored], hide_index=True)
    else:
        st.caption(f"No import profiles for {axis} yet (the Import page can make one too).")
    upload = st.file_uploader("Add a profile from a TOML file", type=["toml"], key="setup_toml")
    if upload is not None and st.button("Add profile"):
        with uploads.staged([upload]) as [path]:
            profile = load_profile(path)
        write(profiles.add_profile, profile)
        saved(f"Profile {profile.name} of {profile.axis}")


def run_fields(session: Session, run_id: int) -> dict[str, Any]:
    """The correctable fields of run ``run_id`` and the report that locks it, if any."""
    run = catalog.get_run(session, run_id)
    report = catalog.locking_report(session, run.id)
    return {
        "operator": run.operator,
        "notes": run.notes,
        "taken_at": run.taken_at.replace(microsecond=0),
        "supply_voltage_v": run.supply_voltage_v,
        "temperature_c": run.temperature_c,
        "load_value": run.load_value,
        "load_unit": run.load_unit,
        "revision": run.revision.label,
        "gains": catalog.gain_label(run.gain_set.name, run.gain_set.id),
        "locked_by": report.describe() if report is not None else None,
    }


def runs_tab() -> None:
    axis = axis_picker(read(axis_names), key="setup_runs_axis")
    if axis is None:
        return
    revisions = list(read(views.revision_table, axis)["revision"])
    cols = st.columns([1, 3])
    revision = cols[0].selectbox("Revision", revisions, key=f"setup_runs_revision_{axis}")
    runs = read(views.run_table, views.RunFilter(axis, revision=revision), metrics=()).frame
    if runs.empty:
        st.caption(f"Revision {revision} of {axis} has no runs.")
        return
    labels = {
        row.run_id: views.run_label(row.run_id, row.revision, row.taken_at)
        + f" · {row.operator or 'no operator'}"
        + (" · locked" if row.locked else "")
        for row in runs.itertuples()
    }
    run_id = cols[1].selectbox(
        "Run to correct", list(labels), format_func=labels.get, key=f"setup_runs_run_{axis}"
    )
    edit_run(axis, int(run_id), revisions)


def edit_run(axis: str, run_id: int, revisions: list[str]) -> None:
    """The run's correctable fields; only the changed ones are sent to the service."""
    with st.container(border=True):
        row = read(run_fields, run_id)
        if row["locked_by"] is not None:
            st.warning(
                f"Run {run_id} is used by issued {row['locked_by']}: the logbook refuses"
                " to change it.",
                icon=":material/lock:",
            )
        key = f"setup_run_{run_id}"
        gains = read(gain_names)
        taken_at = row["taken_at"]
        cols = st.columns(3)
        values: dict[str, Any] = {
            "operator": cols[0].text_input(
                "Operator", value=row["operator"], key=f"{key}_operator"
            ),
            "revision": cols[1].selectbox(
                "Revision", revisions, index=revisions.index(row["revision"]), key=f"{key}_revision"
            ),
            "gains": cols[2].selectbox(
                "Gain set", gains, index=gains.index(row["gains"]), key=f"{key}_gains"
            ),
        }
        cols = st.columns(6)
        day = cols[0].date_input("Taken on (UTC)", value=taken_at.date(), key=f"{key}_day")
        clock = cols[1].time_input("at (UTC)", value=taken_at.time(), step=1, key=f"{key}_time")
        values["taken_at"] = datetime.combine(day, clock, tzinfo=UTC)
        for col, label, column in zip(
            cols[2:5],
            ("Supply voltage [V]", "Temperature [°C]", "Load"),
            ("supply_voltage_v", "temperature_c", "load_value"),
            strict=True,
        ):
            values[column] = _optional(
                col.number_input(label, value=row[column], format="%g", key=f"{key}_{column}")
            )
        unit = cols[5].text_input("Load unit", value=row["load_unit"] or "", key=f"{key}_load_unit")
        values["load_unit"] = unit.strip() or None
        values["notes"] = st.text_area("Notes", value=row["notes"], key=f"{key}_notes", height=68)
        changes = {name: value for name, value in values.items() if value != row[name]}
        with shown_errors():
            if st.button("Save run", key=f"{key}_save"):
                write(catalog.update_run, run_id, **changes)
                flash(f"Run {run_id} saved." if changes else f"Run {run_id}: nothing was changed.")


_RENAMED_AXIS = "setup_renamed_axis"
#: The axis pickers of this page (``axis`` is shared with the other pages).
_AXIS_PICKERS = ("axis", "setup_edit_axis", "setup_profiles_axis", "setup_runs_axis")


def follow_axis_rename() -> None:
    """Keep a renamed axis chosen in every axis picker (before the pickers are drawn)."""
    old, new = st.session_state.pop(_RENAMED_AXIS, (None, None))
    for key in _AXIS_PICKERS:
        if old is not None and st.session_state.get(key) == old:
            st.session_state[key] = new


def main() -> None:
    st.title("Setup")
    follow_axis_rename()
    show_flash()
    st.caption(
        "Runs used by an issued acceptance report are locked: the logbook refuses to change"
        " or delete them, and says so."
    )
    bodies = {
        "Axes": axes_tab,
        "Revisions": revisions_tab,
        "Gain sets": gains_tab,
        "Specs": specs_tab,
        "Import profiles": profiles_tab,
        "Runs": runs_tab,
    }
    for tab, body in zip(st.tabs(list(bodies)), bodies.values(), strict=True):
        with tab, shown_errors():
            body()


main()
