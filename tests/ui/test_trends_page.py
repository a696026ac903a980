"""The trends page: a metric across the lineage and by date, findings marked, filters."""

from __future__ import annotations

from streamlit.testing.v1 import AppTest

from tests.ui.conftest import open_page, plotly_specs, rerun, texts, values


def test_a_slower_revision_is_marked_as_the_first_bad_one(app: AppTest) -> None:
    at = open_page(app, "pages_trends.py")
    at.selectbox(key="trends_metric").set_value("settling_time_s")
    rerun(at)
    by_revision, by_date = plotly_specs(at)
    boxes = [trace for trace in by_revision["data"] if trace["type"] == "box"]
    assert [b["name"] for b in boxes] == ["A", "B"]  # the reference gain set ran on A and B
    assert [len(values(b["y"])) for b in boxes] == [8, 8]
    notes = [a["text"] for a in by_revision["layout"]["annotations"]]
    assert any(n.startswith("<b>first bad</b> vs A") for n in notes)
    # Spec limit 0.1 s, drawn as a line with its spec's name.
    assert any(n == "upper limit 0.1 (x-stage-step 1.0)" for n in notes)
    assert by_revision["layout"]["yaxis"]["title"]["text"] == "settling_time_s [s]"
    shown = texts(at)
    assert "First bad revision for settling_time_s: B" in shown
    assert "softer coupling" in shown
    # The by-date chart has one series per revision, every run a point.
    assert [t["name"] for t in by_date["data"]] == ["rev A", "rev B"]


def test_the_gain_set_and_metric_choices_change_the_chart(app: AppTest) -> None:
    at = open_page(app, "pages_trends.py")
    at.selectbox(key="trends_gains_x-stage").set_value("stiff")
    rerun(at)
    [boxes] = [[t for t in plotly_specs(at)[0]["data"] if t["type"] == "box"]]
    assert [b["name"] for b in boxes] == ["C"]
    assert "3 runs of x-stage, position_step, gain set stiff" in texts(at)
    at.selectbox(key="trends_gains_x-stage").set_value("(all gain sets: no findings)")
    at.selectbox(key="trends_metric").set_value("rise_time_s")
    rerun(at)
    boxes = [t for t in plotly_specs(at)[0]["data"] if t["type"] == "box"]
    assert [b["name"] for b in boxes] == ["A", "B", "C"]
    assert "19 runs of x-stage" in texts(at)
