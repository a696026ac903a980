"""Acceptance: judge a revision against a spec, then issue the report and download it.

The verdict table is computed on every change of the choices (nothing is recorded);
issuing records the report in the logbook, which locks the runs it used, and offers
the HTML (and, where Chromium is installed, the PDF) for download.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import pandas as pd
import streamlit as st

from logbook.acceptance.rules import DecisionRule, describe_rule
from logbook.reports.html import metric_rows
from logbook.reports.pdf import find_chromium
from logbook.services import reporting, views
from logbook.ui.common import (
    axis_names,
    axis_picker,
    clear_caches,
    database,
    read,
    shown_errors,
    verdict_badge,
)

ISSUED_KEY = "acceptance_issued"


def choose() -> dict[str, object] | None:
    """The choice widgets; the keyword arguments of the evaluation, or None."""
    cols = st.columns([1, 1, 2, 1, 1])
    with cols[0]:
        axis = axis_picker(read(axis_names))
    if axis is None:
        return None
    spec_rows = read(views.spec_table, axis)
    if spec_rows.empty:
        st.info(f"No spec covers axis {axis}; add one on the Setup page.")
        return None
    choices = read(views.axis_choices, axis)
    if not choices.revisions:
        st.info(f"Axis {axis} has no revisions yet.")
        return None
    revision = cols[1].selectbox(
        "Revision",
        list(reversed(choices.revisions)),
        key=f"acceptance_revision_{axis}",
        help="newest in lineage order first",
    )
    labels = [f"{s} {v}" for s, v in zip(spec_rows["spec"], spec_rows["version"], strict=True)]
    spec_index = cols[2].selectbox(
        "Spec", range(len(labels)), format_func=labels.__getitem__, key=f"acceptance_spec_{axis}"
    )
    spec = spec_rows.iloc[spec_index]
    used = read(views.revision_gains, axis, revision, test_kind=str(spec["test_kind"]))
    if not used:
        st.info(f"Revision {revision} has no {spec['test_kind']} runs to judge.")
        return None
    gains = cols[3].selectbox(
        "Gain set",
        list(used),
        format_func=lambda g: f"{g} ({used[g]} runs)",
        key=f"acceptance_gains_{axis}_{revision}",
        help="the gain sets run on this revision, the most used first",
    )
    rule = cols[4].radio(
        "Decision rule", [r.value for r in DecisionRule], key="acceptance_rule", horizontal=True
    )
    return {
        "axis": axis,
        "revision": revision,
        "spec": str(spec["spec"]),
        "version": str(spec["version"]),
        "gains": gains,
        "rule": DecisionRule(rule),
    }


def show_evaluation(choice: dict[str, object]) -> None:
    evaluation = read(views.evaluation, **choice)
    cols = st.columns([1, 4])
    cols[0].markdown(f"**Verdict** {verdict_badge(str(evaluation.verdict))}")
    cols[1].caption(
        describe_rule(evaluation.rule, evaluation.spec.statistic, evaluation.coverage_factor)
    )
    st.dataframe(pd.DataFrame(metric_rows(evaluation.to_dict())), hide_index=True)
    for m in evaluation.metrics:
        if m.reason:
            st.caption(f"{m.metric}: {m.reason}")
    judged = ", ".join(evaluation.runs) or "none"
    st.caption(f"Runs judged ({len(evaluation.runs)}): {judged}")
    if evaluation.excluded:
        st.caption(f"Left out (other test kind): {', '.join(evaluation.excluded)}")


def issue_form(choice: dict[str, object]) -> None:
    chromium = find_chromium()
    with st.form("acceptance_issue"):
        st.markdown("**Issue the report**")
        issued_by = st.text_input("Issued by", key="acceptance_issued_by")
        pdf = st.checkbox(
            "Also print it to PDF",
            value=chromium is not None,
            disabled=chromium is None,
            help=None if chromium else "no Chromium browser is installed on the server",
        )
        st.caption(
            "Issuing records the report in the logbook and locks the runs it uses: they can"
            " no longer be edited or deleted."
        )
        if not st.form_submit_button("Issue report", type="primary"):
            return
    with tempfile.TemporaryDirectory(prefix="logbook-report-") as folder:
        name = f"acceptance-{choice['axis']}-{choice['revision']}"
        out = Path(folder) / f"{name}.html"
        issued = reporting.issue_report(
            database(),
            out=out,
            issued_by=issued_by,
            pdf_path=Path(folder) / f"{name}.pdf" if pdf else None,
            csv_path=Path(folder) / f"{name}.csv",
            **choice,  # type: ignore[arg-type]
        )
        st.session_state[ISSUED_KEY] = {
            "report_id": issued.report_id,
            "verdict": issued.verdict,
            "hash": issued.content_hash,
            "name": name,
            "html": out.read_bytes(),
            "csv": issued.csv_path.read_bytes() if issued.csv_path else None,
            "pdf": issued.pdf_path.read_bytes() if issued.pdf_path else None,
        }
    clear_caches()


def show_issued() -> None:
    issued = st.session_state.get(ISSUED_KEY)
    if not issued:
        return
    st.success(
        f"Report {issued['report_id']} issued: {issued['verdict']}"
        f" (content hash {issued['hash'][:16]}…).",
        icon=":material/task_alt:",
    )
    cols = st.columns(3)
    cols[0].download_button(
        "Download HTML", issued["html"], file_name=f"{issued['name']}.html", mime="text/html"
    )
    if issued["pdf"] is not None:
        cols[1].download_button(
            "Download PDF", issued["pdf"], file_name=f"{issued['name']}.pdf", mime="application/pdf"
        )
    if issued["csv"] is not None:
        cols[2].download_button(
            "Download table (CSV)",
            issued["csv"],
            file_name=f"{issued['name']}.csv",
            mime="text/csv",
        )


def main() -> None:
    st.title("Acceptance")
    with shown_errors():
        choice = choose()
        if choice is None:
            return
        show_evaluation(choice)
        issue_form(choice)
    show_issued()


main()
