"""Trends: a metric across the revision lineage and by date, with the findings.

The metrics offered are those with a better direction (the ones that can get worse).
The runs compared share one test kind and, by default, the axis's reference gain
set (the one run on most revisions), as the regression finder compares them; the
findings and change points shown are that finder's.
"""

from __future__ import annotations

import pandas as pd
import streamlit as st

from logbook.analysis.catalog import METRICS
from logbook.services import regressions, trends, views
from logbook.store.models import TEST_KINDS
from logbook.ui import figures
from logbook.ui.common import axis_names, axis_picker, metric_label, read, shown_errors

REFERENCE = "(reference gain set)"
ALL_GAINS = "(all gain sets: no findings)"
DEFAULT_METRIC = "overshoot_pct"


def findings_frame(scan: regressions.RegressionScan, metric: str) -> pd.DataFrame:
    """The scan's findings for ``metric`` as a table, in lineage order."""
    rows = [f.to_json() for f in scan.findings if f.metric == metric]
    columns = [
        "revision",
        "parent",
        "direction",
        "n_before",
        "n_after",
        "median_before",
        "median_after",
        "change",
        "effect_size",
        "p_value",
        "p_adjusted",
        "threshold",
    ]
    return pd.DataFrame(rows, columns=columns)


def show_first_bad(first: regressions.FirstBadRevision) -> None:
    f = first.finding
    lines = [
        f"**First bad revision for {first.metric}: {f.revision}** (compared with {f.parent}):"
        f" median {f.median_before:.4g} → {f.median_after:.4g} {f.unit or ''},"
        f" {f.n_before} → {f.n_after} runs, p = {f.p_adjusted:.2g} after correction,"
        f" Cliff's delta {f.effect_size:+.2f}.",
        f"What changed ({first.change_category}): {first.change_summary or '—'}",
    ]
    if first.stretch:
        lines.append(f"Stayed worse through: {', '.join(first.stretch)}.")
    if first.fixed_by:
        lines.append(f"Fixed by: {', '.join(first.fixed_by)}.")
    if first.gain_differences:
        changes = ", ".join(f"{d.parameter} {d.before} → {d.after}" for d in first.gain_differences)
        lines.append(f"Usual gains changed too: {changes}.")
    st.warning("  \n".join(lines), icon=":material/report:")


def main() -> None:
    st.title("Trends")
    with shown_errors():
        cols = st.columns([1, 2, 1, 1])
        with cols[0]:
            axis = axis_picker(read(axis_names))
        if axis is None:
            return
        choices = read(views.axis_choices, axis)
        if not choices.test_kinds:
            st.info(f"Axis {axis} has no runs yet.")
            return
        names = list(regressions.DIRECTED_METRICS)
        metric = cols[1].selectbox(
            "Metric",
            names,
            index=names.index(DEFAULT_METRIC),
            format_func=lambda m: f"{m} — {METRICS[m].description}",
            key="trends_metric",
            persist_state="session",
        )
        kinds = [k for k in TEST_KINDS if k in choices.test_kinds]
        test_kind = cols[2].selectbox("Test kind", kinds, key=f"trends_kind_{axis}")
        gains = cols[3].selectbox(
            "Gain set", [REFERENCE, *choices.gains, ALL_GAINS], key=f"trends_gains_{axis}"
        )
        scan = None
        compared = None
        if gains != ALL_GAINS:
            scan = read(
                regressions.find_regressions,
                axis,
                metric,
                test_kind=test_kind,
                gains=None if gains == REFERENCE else gains,
            )
            compared = scan.gains
        trend = read(trends.metric_trend, axis, metric, test_kind=test_kind, gains=compared)
        summary = read(trends.trend_summary, axis, metric, test_kind=test_kind, gains=compared)
        unit = str(trend["unit"].iloc[0]) if len(trend) else ""
        st.caption(
            f"{len(trend)} runs of {axis}, {test_kind}, gain set {compared or 'any'};"
            f" {METRICS[metric].better or 'no'} is better."
        )
        if trend.empty:
            st.info("No runs have this figure for the chosen test kind and gain set.")
            return
        findings = scan.findings if scan is not None else ()
        first = scan.first_bad.get(metric) if scan is not None else None
        st.plotly_chart(
            figures.trend_figure(
                trend,
                summary,
                metric=metric,
                unit=unit,
                findings=findings,
                first_bad=first.finding.revision if first else None,
            ),
            config={"displaylogo": False},
        )
        if first is not None:
            show_first_bad(first)
        by_revision, by_date, found = st.tabs(["Per revision", "By date", "Findings"])
        with by_revision:
            st.dataframe(
                summary,
                hide_index=True,
                column_config={
                    c: st.column_config.NumberColumn(format="%.4g")
                    for c in ("median", "q1", "q3", "iqr", "min", "max")
                },
            )
        with by_date:
            st.plotly_chart(
                figures.trend_by_date_figure(
                    trend,
                    summary,
                    metric=metric,
                    unit=unit,
                    change_points=scan.change_points if scan is not None else (),
                ),
                config={"displaylogo": False},
            )
        with found:
            if scan is None:
                st.info("Findings compare runs of one gain set: choose one above.")
            else:
                frame = findings_frame(scan, metric)
                st.caption(
                    f"Each revision against its parent: Mann–Whitney U, {scan.correction}"
                    f" correction over {scan.family_size} comparisons, alpha {scan.alpha}."
                )
                if frame.empty:
                    st.success(f"No significant change of {metric_label(metric, unit)} found.")
                else:
                    st.dataframe(frame, hide_index=True)


main()
