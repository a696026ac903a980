"""Overview: per axis, the latest revision, its runs, its verdict and recent findings.

The findings come from a full regression scan of each axis and test kind, which is
slow on a large logbook; it runs on a worker thread and the cards fill in when it
is done (see :mod:`logbook.ui.background`).
"""

from __future__ import annotations

import streamlit as st

from logbook.services import regressions, views
from logbook.ui.background import poll_until_done, read_soon
from logbook.ui.common import read, shown_errors, verdict_badge

RECENT_FINDINGS = 5


def recent_findings(axis: str, test_kinds: tuple[str, ...]) -> list[regressions.Finding] | None:
    """The findings of the axis's regression scans (one per test kind), newest revision
    first in lineage order; None while a scan is still running."""
    found: list[tuple[int, regressions.Finding]] = []
    order = {r: i for i, r in enumerate(read(views.axis_choices, axis).revisions)}
    for kind in test_kinds:
        scan = read_soon(regressions.find_regressions, axis, test_kind=kind)
        if scan is None:
            return None
        found += [(order.get(f.revision, -1), f) for f in scan.findings]
    found.sort(key=lambda pair: -pair[0])
    return [f for _, f in found]


def finding_line(f: regressions.Finding) -> str:
    arrow = ":red[worse]" if f.direction == "worse" else ":green[better]"
    unit = f" {f.unit}" if f.unit else ""
    return (
        f"rev **{f.revision}** {arrow} than {f.parent} in `{f.metric}`: median"
        f" {f.median_before:.4g} → {f.median_after:.4g}{unit} (p = {f.p_adjusted:.2g},"
        f" {f.n_before} → {f.n_after} runs)"
    )


def axis_card(row: dict[str, object], verdicts: list[dict[str, object]]) -> bool:
    """One axis's card; returns True while its findings are still being looked for."""
    axis = str(row["axis"])
    with st.container(border=True):
        st.subheader(axis)
        st.caption(
            f"{row['revisions']} revisions, {row['runs']} runs, position in"
            f" {row['position_unit']}, {row['feedback_kind']} feedback"
        )
        if row["latest_revision"] is None:
            st.info("No revisions yet.")
            return False
        st.markdown(
            f"Latest revision **{row['latest_revision']}**: {row['latest_revision_runs']} runs"
        )
        if not verdicts:
            st.caption("No spec covers this axis.")
        for v in verdicts:
            cols = st.columns([3, 2])
            cols[0].markdown(f"{v['spec']} · gains {v['gains'] or '—'} · {v['runs']} runs")
            with cols[1]:
                verdict_badge(str(v["verdict"]))
            if v["not_passed"]:
                st.caption(f"Not passed: {v['not_passed']}")
        choices = read(views.axis_choices, axis)
        findings = recent_findings(axis, choices.test_kinds)
        st.markdown("**Recent findings**")
        if findings is None:
            st.caption("Comparing each revision with its parent…")
            return True
        if not findings:
            st.caption("No significant change between revisions.")
        for f in findings[:RECENT_FINDINGS]:
            st.markdown(f"- {finding_line(f)}")
        if len(findings) > RECENT_FINDINGS:
            st.caption(f"… and {len(findings) - RECENT_FINDINGS} more on the Trends page.")
        return False


def main() -> None:
    st.title("Overview")
    with shown_errors():
        summary = read(views.axis_summary)
        if summary.empty:
            st.info(
                "The logbook is empty. Add axes, revisions and gain sets on the Setup page,"
                " then import captures on the Import page."
            )
            return
        verdicts = read(views.latest_verdicts)
        rows = summary.to_dict("records")
        columns = st.columns(min(len(rows), 3))
        pending = False
        for i, row in enumerate(rows):
            mine = [v for v in verdicts.to_dict("records") if v["axis"] == row["axis"]]
            with columns[i % len(columns)]:
                pending = axis_card(row, mine) or pending
        poll_until_done(pending)


main()
