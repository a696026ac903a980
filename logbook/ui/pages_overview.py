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
SCANNING = "Comparing each revision with its parent…"
#: What an axis without a spec is watched for.
WATCHED = ("rise_time_s", "overshoot_pct", "settling_time_s", "abs_steady_state_error")


def scans(axis: str, test_kinds: tuple[str, ...]) -> list[regressions.RegressionScan] | None:
    """The axis's regression scans, one per test kind; None while one is still running."""
    done = [read_soon(regressions.find_regressions, axis, test_kind=k) for k in test_kinds]
    return None if any(scan is None for scan in done) else done  # type: ignore[return-value]


def recent_findings(
    scans: list[regressions.RegressionScan], lineage: tuple[str, ...], watched: tuple[str, ...]
) -> list[regressions.Finding]:
    """The findings in the ``watched`` metrics, the newest revision in lineage order
    first, worse before better."""
    order = {label: i for i, label in enumerate(lineage)}
    found = [f for scan in scans for f in scan.findings if f.metric in watched]
    return sorted(found, key=lambda f: (-order.get(f.revision, -1), f.direction != "worse"))


def first_bad_line(scans: list[regressions.RegressionScan], watched: tuple[str, ...]) -> str | None:
    """``C: overshoot_pct, settling_time_s (fixed by D)``: first bad revisions of the
    ``watched`` metrics, by revision."""
    by_revision: dict[tuple[str, tuple[str, ...]], list[str]] = {}
    for scan in scans:
        for metric, first in scan.first_bad.items():
            if first is not None and metric in watched:
                by_revision.setdefault((first.finding.revision, first.fixed_by), []).append(metric)
    parts = [
        f"**{revision}**: {', '.join(f'`{m}`' for m in metrics)}"
        + (f" (fixed by {', '.join(fixed)})" if fixed else " (not fixed yet)")
        for (revision, fixed), metrics in by_revision.items()
    ]
    return "; ".join(parts) if parts else None


def finding_line(f: regressions.Finding) -> str:
    arrow = ":red[worse]" if f.direction == "worse" else ":green[better]"
    unit = f" {f.unit}" if f.unit else ""
    return (
        f"rev **{f.revision}** {arrow} than {f.parent} in `{f.metric}`: median"
        f" {f.median_before:.4g} → {f.median_after:.4g}{unit} (p = {f.p_adjusted:.2g},"
        f" {f.n_before} → {f.n_after} runs)"
    )


def coverage_note(watched: tuple[str, ...], *, judged: bool, found: int, others: int) -> str:
    """Which metrics the card's findings cover, and how many it leaves to the Trends page."""
    which = "the metrics its spec judges" if judged else "the usual step figures"
    hidden = max(found - RECENT_FINDINGS, 0)
    note = f"Findings in {which} ({', '.join(watched)}): {found}"
    note += f", {hidden} not listed here." if hidden else "."
    if others:
        note += f" {others} more in other metrics on the Trends page."
    return note


def verdict_line(v: dict[str, object]) -> str:
    badge = verdict_badge(str(v["verdict"]))
    return f"{badge} {v['spec']} · gains {v['gains'] or '—'} · {v['runs']} runs"


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
            st.markdown(verdict_line(v))
            if v["not_passed"]:
                st.caption(f"Not passed: {v['not_passed']}")
        choices = read(views.axis_choices, axis)
        done = scans(axis, choices.test_kinds)
        if done is None:
            st.caption(SCANNING)
            return True
        judged = read(views.judged_metrics, axis)
        watched = judged or WATCHED
        first_bad = first_bad_line(done, watched)
        if first_bad:
            st.markdown(f"First bad revisions: {first_bad}")
        findings = recent_findings(done, choices.revisions, watched)
        st.markdown("**Recent findings**")
        if not findings:
            st.caption("No significant change between revisions.")
        for f in findings[:RECENT_FINDINGS]:
            st.markdown(f"- {finding_line(f)}")
        others = sum(len(scan.findings) for scan in done) - len(findings)
        st.caption(coverage_note(watched, judged=bool(judged), found=len(findings), others=others))
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
        verdicts = read(views.latest_verdicts).to_dict("records")
        rows = summary.to_dict("records")
        columns = st.columns(min(len(rows), 3))
        pending = False
        for i, row in enumerate(rows):
            mine = [v for v in verdicts if v["axis"] == row["axis"]]
            with columns[i % len(columns)]:
                pending = axis_card(row, mine) or pending
        poll_until_done(pending)


main()
