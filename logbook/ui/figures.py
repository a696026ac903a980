"""Plotly figures of the web front end. They draw; they compute no figure of merit.

Every figure takes stored results as input (an :class:`~logbook.services.views.OpenedRun`
with its step figures, a trend frame from :mod:`logbook.services.trends`, findings
from :mod:`logbook.services.regressions`) and only places them on the plot. Axes
carry units; each revision keeps one colour on every page, chosen by its position in
the axis's lineage order (:func:`revision_colour`). Text from users (revision
labels, run labels) is HTML-escaped, since Plotly reads a subset of HTML in labels.
The figures reference no web resources: Streamlit ships the Plotly library.
"""

from __future__ import annotations

import html
from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.colors import qualitative
from plotly.subplots import make_subplots

from logbook.services.regressions import ChangePointFinding, Finding
from logbook.services.views import OpenedRun

#: Revision colours, by lineage position (cycled past ten revisions).
REVISION_PALETTE = tuple(qualitative.D3)
SETPOINT_COLOUR = "#555555"
LIMIT_COLOUR = "#b22222"
WORSE_COLOUR = "#c0392b"
BETTER_COLOUR = "#1e8449"
_RISE_FILL = "rgba(46, 139, 87, 0.22)"
_BAND_FILL = "rgba(230, 145, 56, 0.25)"
_DASHES = ("solid", "dash", "dot", "dashdot", "longdash", "longdashdot")
_LAYOUT = {
    "template": "plotly_white",
    "margin": {"l": 70, "r": 30, "t": 50, "b": 50},
    "legend": {"orientation": "h", "yanchor": "bottom", "y": 1.02, "xanchor": "left", "x": 0},
    "hovermode": "closest",
}


def revision_colour(lineage_index: int) -> str:
    """The colour of the revision at ``lineage_index`` (0 = first in lineage order)."""
    return REVISION_PALETTE[lineage_index % len(REVISION_PALETTE)]


def text(value: object) -> str:
    """``value`` as plain text for Plotly labels (HTML special characters escaped)."""
    return html.escape(str(value), quote=False)


def seconds(value: float) -> str:
    """A duration for a label: milliseconds below one second, else seconds."""
    return f"{value * 1000:.3g} ms" if abs(value) < 1.0 else f"{value:.4g} s"


def _bracket(unit: str) -> str:
    return f" [{text(unit)}]" if unit else ""


# --- one run --------------------------------------------------------------------------


def step_response_figure(run: OpenedRun, step: int = 0) -> go.Figure:
    """The run's setpoint, feedback (and effort, when recorded) against time, with the
    figures of step ``step`` marked: the rise interval shaded, the peak, the settling
    band with the settling time, and the steady-state error at the end of the step.

    The time axis opens on that step's transient (:func:`transient_window`);
    double-clicking the plot shows the whole trace."""
    with_effort = run.effort is not None
    fig = make_subplots(
        rows=2 if with_effort else 1,
        cols=1,
        shared_xaxes=True,
        row_heights=[0.74, 0.26] if with_effort else [1.0],
        vertical_spacing=0.06,
    )
    colour = revision_colour(run.lineage_index)
    fig.add_trace(
        go.Scatter(
            x=run.time,
            y=run.setpoint,
            name="setpoint",
            line={"color": SETPOINT_COLOUR, "dash": "dash", "width": 1.5},
        ),
        row=1,
        col=1,
    )
    fig.add_trace(
        go.Scatter(x=run.time, y=run.feedback, name="feedback", line={"color": colour}),
        row=1,
        col=1,
    )
    if with_effort:
        fig.add_trace(
            go.Scatter(
                x=run.time,
                y=run.effort,
                name="effort",
                line={"color": "#7f7f7f", "width": 1},
            ),
            row=2,
            col=1,
        )
        fig.update_yaxes(title_text=f"effort{_bracket(run.effort_unit)}", row=2, col=1)
    if 0 <= step < len(run.steps):
        window = transient_window(run.steps[step])
        t_step = run.steps[step].get("t_step_s")
        view_end = float(run.time[-1])
        if window is not None and t_step is not None:
            view_end = min(view_end, t_step + window)
            start = max(float(run.time[0]), t_step - 0.3 * window)
            fig.update_xaxes(range=[start, view_end])
        _mark_step(fig, run, step, view_end)
    fig.update_xaxes(title_text="time [s]", row=2 if with_effort else 1, col=1)
    fig.update_yaxes(title_text=f"position{_bracket(run.feedback_unit)}", row=1, col=1)
    if run.test_kind == "speed_step":
        fig.update_yaxes(title_text=f"speed{_bracket(run.feedback_unit)}", row=1, col=1)
    fig.update_layout(
        title={"text": text(run.label), "x": 0, "xanchor": "left", "y": 0.98},
        height=520 if with_effort else 420,
        **_LAYOUT,
    )
    fig.update_layout(margin={"t": 90})
    return fig


def _mark_step(fig: go.Figure, run: OpenedRun, step: int, view_end: float) -> None:
    """Mark step ``step``; labels at the step's end go no further right than ``view_end``."""
    figures = run.steps[step]
    t_step = figures.get("t_step_s")
    if t_step is None:
        return
    end = run.steps[step + 1].get("t_step_s") if step + 1 < len(run.steps) else None
    end = float(run.time[-1]) if end is None else end
    label_x = min(end, view_end)
    final, amplitude = figures.get("final"), figures.get("amplitude")
    rise_start, rise_time = figures.get("rise_start_s"), figures.get("rise_time_s")
    if rise_start is not None and rise_time is not None:
        fig.add_vrect(
            x0=t_step + rise_start,
            x1=t_step + rise_start + rise_time,
            fillcolor=_RISE_FILL,
            line_width=0,
            layer="below",
            annotation_text=f"rise {run.rise_low:.0%}–{run.rise_high:.0%}: {seconds(rise_time)}",
            annotation_position="top left",
            row=1,
            col=1,
        )
    if final is not None and amplitude is not None:
        half = run.band * abs(amplitude)
        fig.add_shape(
            type="rect",
            x0=t_step,
            x1=end,
            y0=final - half,
            y1=final + half,
            fillcolor=_BAND_FILL,
            line_width=0,
            layer="below",
            row=1,
            col=1,
        )
        fig.add_annotation(
            x=label_x,
            y=final + half,
            text=f"±{run.band:.0%} settling band",
            showarrow=False,
            xanchor="right",
            yanchor="bottom",
            row=1,
            col=1,
        )
        peak_time, overshoot = figures.get("peak_time_s"), figures.get("overshoot_pct")
        if peak_time is not None and overshoot is not None:
            peak = final + np.sign(amplitude) * overshoot / 100.0 * abs(amplitude)
            fig.add_trace(
                go.Scatter(
                    x=[t_step + peak_time],
                    y=[peak],
                    mode="markers",
                    name=f"peak: {overshoot:.3g} % overshoot at {seconds(peak_time)}",
                    marker={"symbol": "triangle-down", "size": 12, "color": WORSE_COLOUR},
                ),
                row=1,
                col=1,
            )
        target, error = figures.get("setpoint_after"), figures.get("steady_state_error")
        if target is not None and error is not None:
            unit = run.units.get("steady_state_error", "")
            fig.add_trace(
                go.Scatter(
                    x=[label_x, label_x],
                    y=[final, target],
                    mode="lines+markers",
                    name=f"steady-state error: {error:.3g}{' ' + text(unit) if unit else ''}",
                    line={"color": "#8e44ad", "width": 3},
                    marker={"symbol": "line-ew", "size": 14, "line": {"width": 2}},
                ),
                row=1,
                col=1,
            )
    settling = figures.get("settling_time_s")
    if settling is not None:
        fig.add_vline(
            x=t_step + settling,
            line={"color": "#8e44ad", "dash": "dot", "width": 2},
            annotation_text=f"settled after {seconds(settling)}",
            annotation_position="bottom right",
            row=1,
            col=1,
        )


def overlay_figure(runs: Sequence[OpenedRun], *, normalise: bool = False) -> go.Figure:
    """The responses of several runs on one time axis starting at each run's first step.

    Each response is drawn from its level before the step, y − initial, so steps from
    different positions line up; with ``normalise`` as a fraction of its step,
    (y − initial) / amplitude, so steps of different size compare too. Runs of one
    revision share its colour and differ in dash. The time axis opens on the
    transients (see :func:`transient_window`); double-click shows everything.
    """
    fig = go.Figure()
    seen: dict[int, int] = {}
    units = {run.feedback_unit for run in runs}
    windows = []
    for run in runs:
        first = run.steps[0] if run.steps else {}
        t_step = first.get("t_step_s") or 0.0
        initial, amplitude = first.get("initial"), first.get("amplitude")
        y = run.feedback - (initial or 0.0)
        if normalise and amplitude:
            y = y / amplitude
        dash = _DASHES[seen.get(run.lineage_index, 0) % len(_DASHES)]
        seen[run.lineage_index] = seen.get(run.lineage_index, 0) + 1
        fig.add_trace(
            go.Scatter(
                x=run.time - t_step,
                y=y,
                name=text(run.label),
                line={"color": revision_colour(run.lineage_index), "dash": dash},
            )
        )
        windows.append(transient_window(first))
    if normalise:
        fig.add_hline(y=1.0, line={"color": SETPOINT_COLOUR, "dash": "dash", "width": 1})
        y_title = "response [fraction of the step]"
    else:
        unit = _bracket(units.pop()) if len(units) == 1 else ""
        y_title = f"change from the level before the step{unit}"
    fig.add_vline(x=0.0, line={"color": SETPOINT_COLOUR, "width": 1})
    if windows and all(w is not None for w in windows):
        longest = max(w for w in windows if w is not None)
        fig.update_xaxes(range=[-0.2 * longest, longest])
    fig.update_layout(
        xaxis_title="time from the step [s]",
        yaxis_title=y_title,
        height=440,
        **_LAYOUT,
    )
    return fig


def transient_window(figures: Mapping[str, float | None]) -> float | None:
    """How long after the step a plot should open: three settling times (or, unsettled,
    ten rise times), so the transient fills the view; None when neither is known."""
    settling, rise = figures.get("settling_time_s"), figures.get("rise_time_s")
    start = figures.get("rise_start_s") or 0.0
    if settling is not None and settling > 0:
        return 3.0 * settling
    if rise is not None and rise > 0:
        return 10.0 * (start + rise)
    return None


# --- trends ---------------------------------------------------------------------------


def trend_figure(
    trend: pd.DataFrame,
    summary: pd.DataFrame,
    *,
    metric: str,
    unit: str,
    findings: Sequence[Finding] = (),
    first_bad: str | None = None,
) -> go.Figure:
    """A metric across the revision lineage: each run a point, each revision's spread a
    box (median and quartiles), the spec limits as lines and the findings marked.

    ``trend`` and ``summary`` are :func:`logbook.services.trends.metric_trend` and
    :func:`~logbook.services.trends.trend_summary` frames; revisions without runs keep
    their place on the axis. ``first_bad`` names the first bad revision, if any.
    """
    fig = go.Figure()
    order = [text(r) for r in summary["revision"]]
    for index, revision in enumerate(summary["revision"]):
        runs = trend[trend["revision"] == revision]
        if runs.empty:
            continue
        colour = revision_colour(int(runs["lineage_index"].iloc[0]))
        fig.add_trace(
            go.Box(
                x=[text(revision)] * len(runs),
                y=runs["value"],
                name=text(revision),
                boxpoints="all",
                jitter=0.35,
                pointpos=0,
                marker={"color": colour, "size": 6, "opacity": 0.8},
                line={"color": colour},
                fillcolor="rgba(0,0,0,0)",
                customdata=np.stack([runs["run_id"], runs["gains"]], axis=-1),
                hovertemplate="run %{customdata[0]} (%{customdata[1]}): %{y:.4g}<extra>"
                + text(revision)
                + "</extra>",
                legendrank=index,
            )
        )
    _limit_lines(fig, summary)
    top = trend.groupby("revision")["value"].max() if len(trend) else pd.Series(dtype=float)
    for finding in findings:
        if finding.metric != metric or finding.revision not in top.index:
            continue
        worse = finding.direction == "worse"
        label = "first bad" if finding.revision == first_bad and worse else finding.direction
        fig.add_annotation(
            x=text(finding.revision),
            y=top[finding.revision],
            text=(
                f"<b>{label}</b> vs {text(finding.parent)}<br>"
                f"median {finding.median_before:.3g} → {finding.median_after:.3g}, "
                f"p = {finding.p_adjusted:.2g}"
            ),
            showarrow=True,
            arrowhead=2,
            ay=-45,
            font={"color": WORSE_COLOUR if worse else BETTER_COLOUR},
            arrowcolor=WORSE_COLOUR if worse else BETTER_COLOUR,
        )
    fig.update_layout(
        xaxis={
            "title": "hardware revision (lineage order, parents first)",
            "type": "category",
            "categoryorder": "array",
            "categoryarray": order,
        },
        yaxis_title=f"{text(metric)}{_bracket(unit)}",
        showlegend=False,
        height=440,
        **{k: v for k, v in _LAYOUT.items() if k != "legend"},
    )
    return fig


def trend_by_date_figure(
    trend: pd.DataFrame,
    summary: pd.DataFrame,
    *,
    metric: str,
    unit: str,
    change_points: Sequence[ChangePointFinding] = (),
) -> go.Figure:
    """The same runs by the date they were taken, coloured by revision, with the spec
    limits and any level shifts found in the run history."""
    fig = go.Figure()
    for revision in summary["revision"]:
        runs = trend[trend["revision"] == revision]
        if runs.empty:
            continue
        fig.add_trace(
            go.Scatter(
                x=runs["taken_at"],
                y=runs["value"],
                mode="markers",
                name=f"rev {text(revision)}",
                marker={"color": revision_colour(int(runs["lineage_index"].iloc[0])), "size": 7},
                customdata=runs["run_id"],
                hovertemplate="run %{customdata}: %{y:.4g}<br>%{x}<extra></extra>",
            )
        )
    _limit_lines(fig, summary)
    for point in change_points:
        if point.metric != metric:
            continue
        fig.add_vline(
            x=point.taken_at.timestamp() * 1000.0,  # a date axis counts milliseconds
            line={
                "color": WORSE_COLOUR if point.direction == "worse" else BETTER_COLOUR,
                "dash": "dot",
            },
            annotation_text=f"shift ({point.direction}) at run {point.run_id}",
            annotation_position="top left",
        )
    fig.update_layout(
        xaxis_title="taken at (UTC)",
        yaxis_title=f"{text(metric)}{_bracket(unit)}",
        height=400,
        **_LAYOUT,
    )
    return fig


def _limit_lines(fig: go.Figure, summary: pd.DataFrame) -> None:
    if summary.empty:
        return
    first = summary.iloc[0]
    for side in ("lower", "upper"):
        bound = first[f"{side}_limit"]
        if bound is not None and not pd.isna(bound):
            fig.add_hline(
                y=float(bound),
                line={"color": LIMIT_COLOUR, "dash": "dash"},
                annotation_text=f"{side} limit {float(bound):g} ({text(first['spec'])})",
                annotation_position="top left" if side == "upper" else "bottom left",
                annotation_font_color=LIMIT_COLOUR,
            )
