"""The runs page: filters narrow the table; ticked runs open with their figures marked."""

from __future__ import annotations

import math
from datetime import date

import pytest
from streamlit.testing.v1 import AppTest

from tests.ui.conftest import open_page, plotly_specs, rerun, texts, values

#: The small logbook's first-order time constants (see tests/ui/small_logbook.py).
TAU_A = 0.020
SAMPLE_PERIOD = 0.001
STEP_AT = 0.05


def table(at: AppTest):
    return at.dataframe[0].value


def tick(at: AppTest, rows: list[int]) -> AppTest:
    key = at.dataframe[0].key
    at.session_state[key] = {"selection": {"rows": rows, "columns": [], "cells": []}}
    return rerun(at)


def test_each_filter_narrows_the_table(app: AppTest) -> None:
    at = open_page(app, "pages_runs.py")
    assert len(table(at)) == 19
    at.selectbox(key="runs_revision_x-stage").set_value("B")
    rerun(at)
    assert set(table(at)["revision"]) == {"B"} and len(table(at)) == 8
    at.selectbox(key="runs_revision_x-stage").set_value("(any)")
    at.selectbox(key="runs_gains_x-stage").set_value("stiff")
    rerun(at)
    assert set(table(at)["revision"]) == {"C"} and len(table(at)) == 3
    at.selectbox(key="runs_gains_x-stage").set_value("(any)")
    at.selectbox(key="runs_operator_x-stage").set_value("lee")
    rerun(at)
    assert set(table(at)["operator"]) == {"lee"} and len(table(at)) == 8
    at.selectbox(key="runs_operator_x-stage").set_value("(any)")
    at.date_input(key="runs_days_x-stage").set_value((date(2026, 3, 11), date(2026, 3, 12)))
    rerun(at)
    assert sorted(table(at)["taken_at"].dt.day) == [11, 12]  # both ends inclusive
    assert "2 runs; tick rows" in texts(at)


def test_the_axis_choice_switches_the_runs_and_is_kept_across_pages(app: AppTest) -> None:
    at = open_page(app, "pages_runs.py")
    at.selectbox(key="axis").set_value("y-stage")
    rerun(at)
    assert set(table(at)["revision"]) == {"R1"}
    at.switch_page("pages_trends.py")
    rerun(at)
    assert at.selectbox(key="axis").value == "y-stage"


def test_one_ticked_run_shows_its_trace_with_the_figures_marked(app: AppTest) -> None:
    at = open_page(app, "pages_runs.py")
    frame = table(at)
    row = int(frame.index[frame["revision"] == "A"][0])
    tick(at, [row])
    [spec] = plotly_specs(at)
    names = [t.get("name", "") for t in spec["data"]]
    assert names[:3] == ["setpoint", "feedback", "effort"]
    assert any(n.startswith("steady-state error:") for n in names)
    shapes = spec["layout"]["shapes"]
    rise = next(s for s in shapes if s["type"] == "rect" and s.get("yref") == "y domain")
    settled = next(s for s in shapes if s["type"] == "line")
    # First-order response y = 1 - exp(-t/tau): 10-90 % rise tau·ln 9 and 2 % settling
    # tau·ln 50 (follows from the exponential); within a sample period plus noise.
    assert rise["x1"] - rise["x0"] == pytest.approx(TAU_A * math.log(9), abs=2 * SAMPLE_PERIOD)
    assert settled["x0"] == pytest.approx(STEP_AT + TAU_A * math.log(50), abs=4 * SAMPLE_PERIOD)
    notes = [a["text"] for a in spec["layout"]["annotations"]]
    assert any(n.startswith("rise 10%–90%:") for n in notes)
    assert "±2% settling band" in notes
    assert any(n.startswith("settled after") for n in notes)
    assert spec["layout"]["yaxis"]["title"]["text"] == "position [mm]"
    # The view opens on the transient: three settling times after the step.
    view = spec["layout"]["xaxis"]["range"]
    assert view[1] == pytest.approx(settled["x0"] + 2 * (settled["x0"] - STEP_AT))
    assert spec["layout"]["xaxis2"]["title"]["text"] == "time [s]"


def test_several_ticked_runs_are_overlaid_at_the_step_and_compared(app: AppTest) -> None:
    at = open_page(app, "pages_runs.py")
    frame = table(at)
    rows = [int(frame.index[frame["revision"] == r][i]) for r, i in (("A", 0), ("A", 1), ("B", 0))]
    tick(at, rows)
    [spec] = plotly_specs(at)
    lines = spec["data"]
    assert len(lines) == 3
    assert all(
        values(line["x"])[0] == pytest.approx(-STEP_AT) for line in lines
    )  # aligned at the step
    colours = [line["line"]["color"] for line in lines]
    assert colours[0] == colours[1] != colours[2]  # one colour per revision
    assert lines[0]["line"]["dash"] != lines[1]["line"]["dash"]
    side = at.dataframe[1].value
    assert list(side.columns[2:]) == [line["name"] for line in lines]
    assert "rise_time_s" in set(side["metric"])
    at.toggle(key="runs_normalise").set_value(True)
    rerun(at)
    [spec] = plotly_specs(at)
    assert spec["layout"]["yaxis"]["title"]["text"] == "response [fraction of the step]"
