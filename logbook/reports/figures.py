"""Plotly figures of an acceptance report: step responses with their figures marked,
and the trend of a judged metric across the revision lineage.

Time on step plots is seconds from the step, the origin of the step figures
(rise start, peak, settling time). Text that came from users (revision labels,
run labels) is HTML-escaped before Plotly sees it, since Plotly reads a subset of
HTML in labels and titles.
"""

from __future__ import annotations

import html

import numpy as np
import plotly.graph_objects as go

from logbook.acceptance.spec_file import Limit
from logbook.reports.data import MetricTrend, StepPlot

FIGURE_WIDTH_PX = 700  # fits an A4 page with 12 mm margins at 96 px/inch
_RISE_FILL = "rgba(46, 139, 87, 0.30)"
_BAND_FILL = "rgba(230, 145, 56, 0.40)"
_LIMIT_COLOUR = "#b22222"


def _text(value: str) -> str:
    # Plotly forms tags only from "<"; it decodes &lt; &gt; &amp; but not &quot;.
    return html.escape(value, quote=False)


def step_figure(plot: StepPlot) -> go.Figure:
    """Setpoint and feedback against time from the step, with the rise interval
    shaded, the peak marked, the settling band drawn and the settling time lined."""
    marks = plot.marks
    t = np.asarray(plot.time, dtype=float) - marks.t_step_s
    unit = _text(plot.unit)
    fig = go.Figure()
    fig.add_trace(
        go.Scatter(x=t, y=plot.setpoint, name="setpoint", line={"color": "#777", "dash": "dash"})
    )
    fig.add_trace(go.Scatter(x=t, y=plot.feedback, name="feedback", line={"color": "#1f5fa8"}))
    if marks.rise_start_s is not None and marks.rise_time_s is not None:
        fig.add_vrect(
            x0=marks.rise_start_s,
            x1=marks.rise_start_s + marks.rise_time_s,
            fillcolor=_RISE_FILL,
            line_width=0,
            annotation_text=f"rise {marks.rise_low:.0%}–{marks.rise_high:.0%}",
            annotation_position="bottom left",
        )
    if marks.final is not None and marks.amplitude is not None:
        half = marks.band * abs(marks.amplitude)
        fig.add_hrect(
            y0=marks.final - half,
            y1=marks.final + half,
            fillcolor=_BAND_FILL,
            line_width=0,
            annotation_text=f"±{marks.band:.0%} band",
            annotation_position="bottom right",
        )
        if marks.peak_time_s is not None and marks.overshoot_pct is not None:
            peak = marks.final + np.sign(marks.amplitude) * marks.overshoot_pct / 100.0 * abs(
                marks.amplitude
            )
            fig.add_trace(
                go.Scatter(
                    x=[marks.peak_time_s],
                    y=[peak],
                    mode="markers",
                    name=f"peak ({marks.overshoot_pct:.3g} % overshoot)",
                    marker={"symbol": "triangle-down", "size": 11, "color": "#c0392b"},
                )
            )
    if marks.settling_time_s is not None:
        fig.add_vline(
            x=marks.settling_time_s,
            line={"color": "#8e44ad", "dash": "dot", "width": 2},
            annotation_text=f"settled {marks.settling_time_s:.4g} s",
            annotation_position="top right",
        )
    fig.update_layout(
        title={"text": _text(plot.run_label), "x": 0.0, "xanchor": "left"},
        xaxis_title="time from step [s]",
        yaxis_title=f"feedback [{unit}]" if unit else "feedback",
        **_layout(height=320),
    )
    return fig


def trend_figure(trend: MetricTrend, limit: Limit | None) -> go.Figure:
    """The judged statistic per revision, root first, with the spec's limits as lines;
    the reported revision (the last point) is drawn larger."""
    labels = [_text(p.revision) for p in trend.points]
    values = [p.value for p in trend.points]
    sizes = [8] * len(labels)
    if sizes:
        sizes[-1] = 14
    fig = go.Figure(
        go.Scatter(
            x=labels,
            y=values,
            mode="lines+markers",
            name=trend.metric,
            marker={"size": sizes, "color": "#1f5fa8"},
            customdata=[p.n_runs for p in trend.points],
            hovertemplate="%{x}: %{y:.5g} (%{customdata} runs)<extra></extra>",
        )
    )
    if limit is not None:
        for name, bound in (("lower", limit.lower), ("upper", limit.upper)):
            if bound is not None:
                fig.add_hline(
                    y=bound,
                    line={"color": _LIMIT_COLOUR, "dash": "dash"},
                    annotation_text=f"{name} limit {bound:g}",
                    annotation_position="top left",
                )
    fig.update_layout(
        title={"text": f"{trend.metric} [{_text(trend.unit)}]", "x": 0.0, "xanchor": "left"},
        xaxis={"type": "category", "title": "hardware revision (oldest first)"},
        showlegend=False,
        **_layout(height=240),
    )
    return fig


def _layout(*, height: int) -> dict[str, object]:
    return {
        "template": "simple_white",
        "width": FIGURE_WIDTH_PX,
        "height": height,
        "margin": {"l": 60, "r": 20, "t": 40, "b": 45},
        "legend": {"orientation": "h", "yanchor": "bottom", "y": 1.0, "xanchor": "right", "x": 1},
        "font": {"size": 11},
    }
