"""Import profiles: TOML keys, validation naming the field, round trip."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path
from typing import Any

import pytest

from logbook.errors import InputError
from logbook.ingest.profiles import ImportProfile, load_profile, profile_from_dict

GOOD = Path(__file__).parent / "good"
MINIMAL: dict[str, Any] = {
    "name": "servo-bench",
    "axis": "pan-servo",
    "time_column": "t [ms]",
    "setpoint_column": "pulse [us]",
    "feedback_column": "pot [V]",
}


def test_contract_example_loads_with_every_key() -> None:
    profile = load_profile(GOOD / "stage_quadrature.toml")
    assert profile.feedback_signal == "quadrature"
    assert profile.feedback_column is None
    assert profile.columns == ("t [s]", "setpoint [mm]", "A", "B", "effort [V]")
    assert profile_from_dict(profile.to_dict()) == profile


def test_to_dict_holds_exactly_the_profile_keys() -> None:
    profile = load_profile(GOOD / "stage_quadrature.toml")
    with open(GOOD / "stage_quadrature.toml", "rb") as fh:
        assert profile.to_dict() == tomllib.load(fh)


def test_defaults_follow_the_common_servo_pulse() -> None:
    profile = profile_from_dict(MINIMAL)
    # common practice: 1.5 ms centre, 1.0-2.0 ms for -90..+90 deg
    assert (profile.pulse_center_us, profile.pulse_half_span_us) == (1500.0, 500.0)
    assert profile.pulse_half_travel_deg == 90.0
    assert profile.delimiter is None and profile.decimal is None  # sniffed


def test_integers_are_accepted_for_float_fields() -> None:
    profile = profile_from_dict({**MINIMAL, "pulse_center_us": 1520, "setpoint_scale": 2})
    assert profile.pulse_center_us == 1520.0 and isinstance(profile.setpoint_scale, float)


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"colour": "red"}, "unknown profile field 'colour'"),
        ({"time_unit": "min"}, "profile field 'time_unit': 'min' is not one of 's', 'ms', 'us'"),
        ({"delimiter": "|"}, "profile field 'delimiter'"),
        ({"decimal": ",", "delimiter": ","}, "profile field 'decimal'"),
        ({"feedback_signal": "resolver"}, "profile field 'feedback_signal'"),
        ({"setpoint_signal": "pwm"}, "profile field 'setpoint_signal'"),
        ({"pulse_unit": "s"}, "profile field 'pulse_unit'"),
        ({"speed": "yes"}, "profile field 'speed' must be true or false"),
        ({"feedback_scale": "2"}, "profile field 'feedback_scale' must be a number"),
        ({"feedback_scale": 0.0}, "profile field 'feedback_scale' must not be zero"),
        ({"effort_scale": float("nan")}, "profile field 'effort_scale' must be a finite number"),
        ({"pulse_half_span_us": -500.0}, "profile field 'pulse_half_span_us' must be positive"),
        ({"name": " "}, "profile field 'name' is empty"),
        ({"time_column": 3}, "profile field 'time_column' must be text"),
        (
            {"setpoint_signal": "pulse_width", "setpoint_unit": "mm"},
            "profile field 'setpoint_unit'",
        ),
        ({"feedback_signal": "quadrature"}, "profile field 'quadrature_a_column' is required"),
        (
            {
                "feedback_signal": "quadrature",
                "quadrature_a_column": "A",
                "quadrature_b_column": "B",
            },
            "profile field 'feedback_column' must be omitted",
        ),
    ],
)
def test_invalid_profiles_name_the_field(change: dict[str, Any], message: str) -> None:
    with pytest.raises(InputError, match="^profile.toml: " + re.escape(message)):
        profile_from_dict({**MINIMAL, **change}, file="profile.toml")


def test_missing_required_key_is_named() -> None:
    data = {k: v for k, v in MINIMAL.items() if k != "setpoint_column"}
    with pytest.raises(InputError, match="profile field 'setpoint_column' is required"):
        profile_from_dict(data)
    with pytest.raises(InputError, match="profile field 'feedback_column' is required"):
        profile_from_dict({k: v for k, v in MINIMAL.items() if k != "feedback_column"})


def test_bad_toml_names_the_line(tmp_path: Path) -> None:
    path = tmp_path / "bad.toml"
    path.write_text('name = "a"\naxis = x-stage\n', encoding="utf-8")
    with pytest.raises(InputError, match=re.escape(f"{path}, line 2: not valid TOML")):
        load_profile(path)


def test_direct_construction_is_validated_too() -> None:
    with pytest.raises(InputError, match="profile field 'time_unit'"):
        ImportProfile(
            name="a",
            axis="b",
            time_column="t",
            setpoint_column="s",
            feedback_column="y",
            time_unit="h",
        )


def test_one_column_in_two_fields_is_rejected() -> None:
    with pytest.raises(
        InputError,
        match="profile fields 'time_column' and 'effort_column' name the same column 't \\[ms\\]'",
    ):
        profile_from_dict({**MINIMAL, "effort_column": "t [ms]"})
