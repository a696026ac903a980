"""Setup: the axes, their revisions, the gain sets, specs and import profiles.

Each tab lists what is stored and offers a form to add to it through the catalogue
and spec services, which validate every field and name the one that is wrong. A
spec is never edited: a changed spec is a new version (pasted as TOML or YAML).
"""

from __future__ import annotations

from datetime import date

import streamlit as st

from logbook.acceptance.spec_file import parse_spec_text
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


def saved(what: str) -> None:
    flash(f"{what} saved.")


def axes_tab() -> None:
    st.dataframe(read(views.axis_summary), hide_index=True)
    with st.form("setup_axis", clear_on_submit=True):
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


def revisions_tab() -> None:
    axis = axis_picker(read(axis_names))
    if axis is None:
        return
    table = read(views.revision_table, axis)
    st.dataframe(table.drop(columns=["lineage_index"]), hide_index=True)
    with st.form("setup_revision", clear_on_submit=True):
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


def gains_tab() -> None:
    st.dataframe(read(views.gain_table), hide_index=True)
    with st.form("setup_gains", clear_on_submit=True):
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


def specs_tab() -> None:
    st.dataframe(read(views.spec_table), hide_index=True)
    with st.form("setup_spec", clear_on_submit=False):
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


def main() -> None:
    st.title("Setup")
    show_flash()
    st.caption(
        "Runs used by an issued acceptance report are locked: the logbook refuses to change"
        " or delete them, and says so."
    )
    tabs = st.tabs(["Axes", "Revisions", "Gain sets", "Specs", "Import profiles"])
    for tab, body in zip(
        tabs, (axes_tab, revisions_tab, gains_tab, specs_tab, profiles_tab), strict=True
    ):
        with tab, shown_errors():
            body()


main()
