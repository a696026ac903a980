"""The setup page: list and add axes, revisions, gain sets and specs; bad input is
refused with the service's message and changes nothing."""

from __future__ import annotations

from streamlit.testing.v1 import AppTest

from tests.ui.conftest import open_page, rerun

BAD_SPEC = """name = "typo"
version = "1"
test_kind = "position_step"
axes = ["x-stage"]
[limits.overshot_pct]
upper = 5.0
unit = "%"
"""


def form(at: AppTest, index: int):
    return at.get("form")[index]


def test_an_axis_is_added_and_a_duplicate_is_refused(app: AppTest) -> None:
    at = open_page(app, "pages_setup.py")
    axes = form(at, 0)
    axes.text_input[0].set_value("pan-servo")
    axes.selectbox[0].set_value("deg")
    axes.selectbox[1].set_value("potentiometer")
    axes.button[0].click()
    rerun(at)
    assert at.success[0].value == "Axis pan-servo saved."
    assert "pan-servo" in set(at.dataframe[0].value["axis"])
    axes = form(at, 0)
    axes.text_input[0].set_value("x-stage")
    axes.button[0].click()
    rerun(at)
    assert at.error[0].value == "axis 'x-stage' already exists"
    assert list(at.dataframe[0].value["axis"]).count("x-stage") == 1


def test_a_revision_is_added_below_its_parent(app: AppTest) -> None:
    at = open_page(app, "pages_setup.py")
    revisions = form(at, 1)
    revisions.text_input[0].set_value("D")
    revisions.selectbox[0].set_value("C")
    revisions.text_input[1].set_value("new driver board")
    revisions.button[0].click()
    rerun(at)
    table = at.dataframe[1].value.set_index("revision")
    assert table.loc["D", "parent"] == "C"
    assert table.loc["D", "change_summary"] == "new driver board"
    assert list(table.index) == ["A", "B", "C", "D"]  # lineage order


def test_a_gain_set_is_added_once(app: AppTest) -> None:
    at = open_page(app, "pages_setup.py")
    gains = form(at, 2)
    gains.text_input[0].set_value("soft")
    gains.number_input[0].set_value(1.5)
    gains.button[0].click()
    rerun(at)
    assert "soft" in set(at.dataframe[2].value["gains"])
    gains = form(at, 2)
    gains.text_input[0].set_value("")
    gains.number_input[0].set_value(1.5)
    gains.button[0].click()
    rerun(at)
    assert at.info[0].value == "These gains are already stored as soft."


def test_a_spec_is_added_and_an_unknown_metric_is_named(app: AppTest) -> None:
    at = open_page(app, "pages_setup.py")
    specs = form(at, 3)
    specs.button[0].click()  # the example spec in the text box
    rerun(at)
    assert at.success[0].value == "Spec stage-position-acceptance 1.0 saved."
    table = at.dataframe[3].value
    assert "overshoot_pct ≤ 10 %" in set(table["limits"])
    specs = form(at, 3)
    specs.text_area[0].set_value(BAD_SPEC)
    specs.button[0].click()
    rerun(at)
    assert "overshot_pct" in at.error[0].value
    assert "typo" not in set(at.dataframe[3].value["spec"])
