"""Spec files: TOML and YAML read to the same definition; bad specs named precisely."""

from __future__ import annotations

import pytest

from logbook.acceptance.spec_file import Limit, load_spec_file, parse_spec_text
from logbook.errors import InputError

TOML_SPEC = """
name = "stage-position-acceptance"
version = "1.0"
test_kind = "position_step"
axes = ["x-stage"]
statistic = "median"
required_runs = 5
description = "Positioning stage, 2 mm steps"
[limits.overshoot_pct]
upper = 10.0
unit = "%"
[limits.rise_time_s]
lower = 0.005
upper = 0.080
unit = "s"
[limits.abs_steady_state_error]
upper = 0.01
unit = "mm"
"""

YAML_SPEC = """
name: stage-position-acceptance
version: "1.0"
test_kind: position_step
axes: [x-stage]
statistic: median
required_runs: 5
description: Positioning stage, 2 mm steps
limits:
  overshoot_pct: {upper: 10.0, unit: "%"}
  rise_time_s: {lower: 0.005, upper: 0.080, unit: s}
  abs_steady_state_error: {upper: 0.01, unit: mm}
"""


def test_toml_and_yaml_give_the_same_spec(tmp_path):
    toml_path = tmp_path / "stage.toml"
    yaml_path = tmp_path / "stage.yaml"
    toml_path.write_text(TOML_SPEC)
    yaml_path.write_text(YAML_SPEC)
    from_toml = load_spec_file(toml_path)
    assert from_toml == load_spec_file(yaml_path)
    assert from_toml.name == "stage-position-acceptance"
    assert from_toml.axes == ("x-stage",)
    assert from_toml.statistic == "median"
    assert from_toml.required_runs == 5
    assert from_toml.limits["rise_time_s"] == Limit(lower=0.005, upper=0.080, unit="s")
    assert from_toml.limits["overshoot_pct"].lower is None
    assert list(from_toml.limits) == sorted(from_toml.limits)


def test_defaults_are_every_run_and_one_run():
    spec = parse_spec_text(
        'name = "s"\nversion = "1"\ntest_kind = "speed_step"\naxes = ["m"]\n'
        '[limits.rise_time_s]\nupper = 0.1\nunit = "s"\n',
        fmt="toml",
        source="s.toml",
    )
    assert spec.statistic == "every_run"
    assert spec.required_runs == 1
    assert spec.description == ""


def _with_limit(limit_lines: str) -> str:
    return 'name = "s"\nversion = "1"\ntest_kind = "position_step"\naxes = ["x"]\n' + limit_lines


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (_with_limit('[limits.overshot_pct]\nupper = 1\nunit = "%"\n'),
         r"limits\.overshot_pct: unknown metric 'overshot_pct'; did you mean 'overshoot_pct'"),
        (_with_limit('[limits.rise_time_s]\nlower = 0.2\nupper = 0.1\nunit = "s"\n'),
         r"limits\.rise_time_s: lower limit 0\.2 is above upper limit 0\.1"),
        (_with_limit('[limits.rise_time_s]\nunit = "s"\n'),
         r"limits\.rise_time_s: needs a lower or an upper limit"),
        (_with_limit('[limits.rise_time_s]\nupper = 80\nunit = "ms"\n'),
         r"limits\.rise_time_s\.unit: 'ms' does not match the catalogue unit 's'"),
        (_with_limit("[limits.rise_time_s]\nupper = 0.1\n"),
         r"limits\.rise_time_s\.unit: missing; the catalogue unit of rise_time_s is 's'"),
        (_with_limit('[limits.rise_time_s]\nuper = 0.1\nunit = "s"\n'),
         r"limits\.rise_time_s\.uper: unknown key"),
        (_with_limit('[limits.rise_time_s]\nupper = "fast"\nunit = "s"\n'),
         r"limits\.rise_time_s\.upper: must be a number, got 'fast'"),
        (_with_limit('[limits.rise_time_s]\nupper = nan\nunit = "s"\n'),
         r"limits\.rise_time_s\.upper: must be a finite number"),
        (_with_limit('[limits.hunting_flag]\nupper = true\nunit = "bool"\n'),
         r"limits\.hunting_flag\.upper: must be a number, got True"),
        (_with_limit(""), r"limits: must be a table with at least one metric"),
        (_with_limit('statistic = "mean"\n[limits.rise_time_s]\nupper = 1\nunit = "s"\n'),
         r"statistic: 'mean' is not one of every_run, median, p95"),
        (_with_limit('required_runs = 0\n[limits.rise_time_s]\nupper = 1\nunit = "s"\n'),
         r"required_runs: must be a whole number of at least 1"),
        ('name = "s"\nversion = "1"\ntest_kind = "sine"\naxes = ["x"]\n',
         r"test_kind: 'sine' is not one of position_step"),
        ('name = "s"\nversion = "1"\ntest_kind = "ramp"\naxes = []\n',
         r"axes: must be a non-empty list"),
        ('version = "1"\ntest_kind = "ramp"\naxes = ["x"]\n', r"name: missing"),
        ('name = "s"\nversion = 1.1\ntest_kind = "ramp"\naxes = ["x"]\n',
         r"version: must be text \(quote it\)"),
        ('name = "s"\nversoin = "1"\n', r"versoin: unknown key"),
    ],
)  # fmt: skip
def test_bad_specs_name_the_file_and_field(text, message):
    with pytest.raises(InputError, match=r"^bad\.toml: " + message):
        parse_spec_text(text, fmt="toml", source="bad.toml")


def test_feedback_unit_metrics_take_the_axis_unit_as_written():
    # steady-state error is in the feedback channel's unit, which depends on the axis
    spec = parse_spec_text(
        _with_limit('[limits.abs_steady_state_error]\nupper = 0.5\nunit = "deg"\n'),
        fmt="toml",
        source="s.toml",
    )
    assert spec.limits["abs_steady_state_error"].unit == "deg"


def test_lower_equal_to_upper_is_allowed():
    spec = parse_spec_text(
        _with_limit('[limits.hunting_flag]\nlower = 0\nupper = 0\nunit = "bool"\n'),
        fmt="toml",
        source="s.toml",
    )
    assert spec.limits["hunting_flag"] == Limit(lower=0.0, upper=0.0, unit="bool")


def test_syntax_errors_name_the_file_and_yaml_line(tmp_path):
    bad_yaml = tmp_path / "bad.yaml"
    bad_yaml.write_text("name: s\nlimits: [unclosed\n")
    with pytest.raises(InputError, match=r"bad\.yaml, line \d+: not valid YAML"):
        load_spec_file(bad_yaml)
    bad_toml = tmp_path / "bad.toml"
    bad_toml.write_text("name = \n")
    with pytest.raises(InputError, match=r"bad\.toml: not valid TOML"):
        load_spec_file(bad_toml)


def test_unknown_suffix_and_missing_file(tmp_path):
    with pytest.raises(InputError, match=r"spec\.json: unknown spec file type"):
        load_spec_file(tmp_path / "spec.json")
    with pytest.raises(InputError, match=r"absent\.toml: cannot read spec file"):
        load_spec_file(tmp_path / "absent.toml")


def test_yaml_list_at_top_level_is_rejected():
    with pytest.raises(InputError, match=r"^l\.yaml: a spec must be a table"):
        parse_spec_text("- a\n- b\n", fmt="yaml", source="l.yaml")
