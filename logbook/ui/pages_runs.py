"""Runs: filter an axis's runs, see their key figures, open one or overlay several.

Only the table is read up front (from the metric table, never the traces); a
trace is loaded when its run is opened by ticking its row.
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from datetime import date

import streamlit as st
from streamlit.delta_generator import DeltaGenerator

from logbook.services import views
from logbook.store.models import TEST_KINDS
from logbook.ui import figures
from logbook.ui.common import axis_names, axis_picker, metric_label, read, shown_errors

ANY = "(any)"
MAX_OPENED = 12  # runs overlaid at once; more make an unreadable plot
TABLE_HEIGHT = 360
FIGURES_HEIGHT = 36 * 12  # a dozen rows of the figure table, then it scrolls


def _choice(value: str) -> str | None:
    return None if value == ANY else value


def filters_for(axis: str, cols: Sequence[DeltaGenerator]) -> views.RunFilter:
    """The filter widgets of the page, for ``axis``, in the columns ``cols``."""
    choices = read(views.axis_choices, axis)
    revision = cols[0].selectbox("Revision", [ANY, *choices.revisions], key=f"runs_revision_{axis}")
    gains = cols[1].selectbox("Gain set", [ANY, *choices.gains], key=f"runs_gains_{axis}")
    kinds = [k for k in TEST_KINDS if k in choices.test_kinds]
    test_kind = cols[2].selectbox("Test kind", [ANY, *kinds], key=f"runs_kind_{axis}")
    operator = cols[3].selectbox("Operator", [ANY, *choices.operators], key=f"runs_operator_{axis}")
    since, until = choices.first_day, choices.last_day
    days = cols[4].date_input(
        "Taken between (UTC days)",
        value=(since, until) if since and until else (),
        min_value=since,
        max_value=until,
        key=f"runs_days_{axis}",
    )
    first, last = _days(days)
    return views.RunFilter(
        axis=axis,
        revision=_choice(revision),
        gains=_choice(gains),
        test_kind=_choice(test_kind),
        operator=_choice(operator),
        since=first,
        until=last,
    )


def _days(days: object) -> tuple[date | None, date | None]:
    """The (first, last) of a date range widget; a half-chosen range is open at the end."""
    if isinstance(days, tuple | list):
        first = days[0] if len(days) > 0 else None
        last = days[1] if len(days) > 1 else None
        return first, last
    return None, None


def table_key(filters: views.RunFilter) -> str:
    """A widget key per filter set, so ticked rows never carry over to other runs."""
    return "runs_table_" + hashlib.sha256(repr(filters).encode()).hexdigest()[:12]


def show_table(table: views.RunTable, key: str) -> list[int]:
    """The run table; returns the ids of the ticked runs."""
    frame = table.frame
    config = {
        "run_id": st.column_config.NumberColumn("run", format="%d"),
        "taken_at": st.column_config.DatetimeColumn("taken at (UTC)", format="YYYY-MM-DD HH:mm"),
        "lineage_index": None,
        "source_name": st.column_config.TextColumn("source file"),
        "locked": st.column_config.CheckboxColumn(
            "locked", help="used by an issued acceptance report; it can no longer change"
        ),
        "test_kind": st.column_config.TextColumn("test kind"),
    }
    for name in table.metrics:
        config[name] = st.column_config.NumberColumn(
            metric_label(name, table.units.get(name)), format="%.4g"
        )
    order = ["run_id", "taken_at", "revision", "gains", *table.metrics]
    order += ["operator", "test_kind", "source_name", "locked"]
    event = st.dataframe(
        frame,
        column_order=order,
        key=key,
        on_select="rerun",
        selection_mode="multi-row",
        hide_index=True,
        column_config=config,
        height=TABLE_HEIGHT,
    )
    rows = [i for i in event.selection.rows if i < len(frame)]
    return [int(frame["run_id"].iloc[i]) for i in rows]


def show_one(run: views.OpenedRun) -> None:
    step = 0
    if len(run.steps) > 1:
        step = st.selectbox(
            "Step",
            range(len(run.steps)),
            format_func=lambda i: f"step {i + 1} at {run.steps[i].get('t_step_s') or 0:.4g} s",
            key="runs_step",
        )
    st.plotly_chart(figures.step_response_figure(run, step), config={"displaylogo": False})
    st.caption("The plot opens on the transient; double-click it to see the whole trace.")
    left, right = st.columns([2, 3])
    with left:
        st.markdown(f"**{run.label}**")
        facts = {
            "axis": run.axis,
            "revision": run.revision,
            "gain set": run.gains,
            "test kind": run.test_kind,
            "taken at (UTC)": f"{run.taken_at:%Y-%m-%d %H:%M}",
            "operator": run.operator or "—",
            "source file": run.source_name,
            "notes": run.notes or "—",
        }
        st.table({"": list(facts), "value": list(facts.values())}, border="horizontal")
        if run.locked:
            st.info(
                "This run is used by an issued acceptance report, so it is locked:"
                " it can no longer be edited or deleted.",
                icon=":material/lock:",
            )
    with right:
        frame = views.side_by_side([run], step=step)
        st.dataframe(
            frame.rename(columns={run.label: "value"}),
            hide_index=True,
            column_config={"value": st.column_config.NumberColumn(format="%.5g")},
            height=FIGURES_HEIGHT,
        )


def show_several(runs: list[views.OpenedRun]) -> None:
    normalise = st.toggle(
        "Show as a fraction of each step (compares steps of different size)",
        key="runs_normalise",
    )
    st.plotly_chart(
        figures.overlay_figure(runs, normalise=normalise), config={"displaylogo": False}
    )
    st.markdown("**Figures side by side** (first step of each run)")
    frame = views.side_by_side(runs)
    st.dataframe(
        frame,
        hide_index=True,
        column_config={r.label: st.column_config.NumberColumn(format="%.5g") for r in runs},
        height=FIGURES_HEIGHT,
    )


def main() -> None:
    st.title("Runs")
    with shown_errors():
        cols = st.columns([1.2, 1, 1, 1, 1, 2])
        with cols[0]:
            axis = axis_picker(read(axis_names))
        if axis is None:
            return
        filters = filters_for(axis, cols[1:])
        table = read(views.run_table, filters)
        st.caption(
            f"{len(table.frame)} runs; tick rows to open them (one: its trace with the figures"
            f" marked; several: overlaid at the step, up to {MAX_OPENED})."
        )
        chosen = show_table(table, table_key(filters))
        if not chosen:
            st.info("Tick a run in the table to see its trace.", icon=":material/touch_app:")
            return
        if len(chosen) > MAX_OPENED:
            st.warning(f"{len(chosen)} runs ticked; showing the first {MAX_OPENED}.")
        opened = [read(views.open_run, run_id) for run_id in chosen[:MAX_OPENED]]
        if len(opened) == 1:
            show_one(opened[0])
        else:
            show_several(opened)


main()
