"""Profiles applied to files: columns picked, signals converted, quality recorded."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest

from logbook.errors import InputError
from logbook.ingest import read_table
from logbook.ingest.convert import AxisInfo, trace_from_profile
from logbook.ingest.profiles import load_profile, profile_from_dict
from logbook.trace import Role
from tests.ingest.quadrature_signals import quadrature_levels

GOOD = Path(__file__).parent / "good"
STAGE = AxisInfo("x-stage", "mm", counts_per_rev=2000, units_per_rev=5.0)  # 500 lines, 5 mm lead


def write_csv(path: Path, columns: dict[str, Any], **options: Any) -> Path:
    pd.DataFrame(columns).to_csv(path, index=False, **options)
    return path


def profile(**keys: Any):  # type: ignore[no-untyped-def]
    base = {
        "name": "p",
        "axis": "x-stage",
        "time_column": "t",
        "setpoint_column": "sp",
        "feedback_column": "fb",
    }
    merged = {**base, **keys}
    return profile_from_dict({k: v for k, v in merged.items() if v is not None})  # None: omit


def test_contract_profile_decodes_quadrature_to_millimetres(tmp_path: Path) -> None:
    t = np.arange(12_001) * 2e-5
    shaft = np.minimum(t / 0.2, 1.0)  # one revolution in 0.2 s (5 samples a count), then hold
    a, b = quadrature_levels(shaft, 500)
    path = write_csv(
        tmp_path / "run.csv",
        {
            "t [s]": t,
            "setpoint [mm]": np.full(len(t), 5.0),
            "A": a,
            "B": b,
            "effort [V]": np.zeros(len(t)),
        },
    )
    trace = trace_from_profile(
        read_table(path), load_profile(GOOD / "stage_quadrature.toml"), STAGE
    )
    feedback = trace.by_role(Role.FEEDBACK)
    assert feedback is not None and feedback.unit == "mm"
    # common practice: one revolution = 4 x 500 counts = one 5 mm lead
    assert feedback.values[-1] == pytest.approx(5.0)
    assert trace.quality == {"illegal_transitions": 0}
    assert [c.name for c in trace.channels] == [
        "time [s]",
        "setpoint [mm]",
        "feedback [mm]",
        "effort [V]",
    ]


def test_quadrature_without_counts_per_rev_stays_in_counts(tmp_path: Path) -> None:
    a, b = quadrature_levels(np.linspace(0, 0.5, 1000), 100)
    path = write_csv(
        tmp_path / "run.csv", {"t": np.arange(1000) * 1e-3, "sp": np.ones(1000), "A": a, "B": b}
    )
    keys = {
        "feedback_column": None,
        "feedback_signal": "quadrature",
        "quadrature_a_column": "A",
        "quadrature_b_column": "B",
    }
    trace = trace_from_profile(read_table(path), profile(**keys), AxisInfo("x-stage", "counts"))
    feedback = trace.by_role(Role.FEEDBACK)
    assert feedback is not None and (feedback.unit, feedback.values[-1]) == ("counts", 200.0)


def test_pulse_width_setpoint_in_ms_at_50_hz_becomes_degrees(tmp_path: Path) -> None:
    # common practice: frames every 20 ms; 1.0/1.5/2.0 ms -> -90/0/+90 deg
    pulse_ms = np.array([1.5, 1.5, 2.0, 2.0, 1.0, 2.2])
    path = write_csv(
        tmp_path / "servo.csv",
        {"t [ms]": np.arange(6) * 20.0, "pulse": pulse_ms, "pot": np.zeros(6)},
    )
    servo = profile(
        axis="pan",
        time_column="t [ms]",
        time_unit="ms",
        setpoint_column="pulse",
        setpoint_signal="pulse_width",
        pulse_unit="ms",
        feedback_column="pot",
    )
    trace = trace_from_profile(read_table(path), servo, AxisInfo("pan", "deg"))
    np.testing.assert_allclose(trace.time, np.arange(6) * 0.020)
    setpoint = trace.by_role(Role.SETPOINT)
    assert setpoint is not None and setpoint.unit == "deg"
    np.testing.assert_allclose(setpoint.values, [0, 0, 90, 90, -90, 126])
    assert trace.quality == {"pulse_out_of_range": 1}


def test_analogue_feedback_uses_the_axis_calibration(tmp_path: Path) -> None:
    path = write_csv(
        tmp_path / "pot.csv",
        {"t": [0.0, 0.02, 0.04], "sp": [0, 45, 45], "fb": [512.0, 600.0, 688.0]},
    )
    axis = AxisInfo("pan", "deg", cal_raw_1=512, cal_value_1=0.0, cal_raw_2=688, cal_value_2=45.0)
    trace = trace_from_profile(
        read_table(path), profile(axis="pan", feedback_signal="analogue"), axis
    )
    feedback = trace.by_role(Role.FEEDBACK)
    assert feedback is not None and feedback.unit == "deg"
    np.testing.assert_allclose(feedback.values, [0.0, 22.5, 45.0])


def test_analogue_feedback_without_calibration_is_rejected(tmp_path: Path) -> None:
    path = write_csv(
        tmp_path / "pot.csv", {"t": [0.0, 0.02, 0.04], "sp": [0, 1, 1], "fb": [1.0, 2.0, 3.0]}
    )
    with pytest.raises(InputError, match="column 'fb': analogue feedback needs the two-point"):
        trace_from_profile(
            read_table(path), profile(feedback_signal="analogue"), AxisInfo("x-stage", "deg")
        )


def test_speed_from_counts_in_counts_and_units_per_second(tmp_path: Path) -> None:
    # an encoder turning at 2 rev/s: 2 x 2000 counts/s = 4000 counts/s = 10 mm/s on a 5 mm lead
    t = np.arange(2000) * 5e-4
    counts = np.floor(4000.0 * t)  # encoder quantisation
    path = write_csv(tmp_path / "speed.csv", {"t": t, "sp": np.full(2000, 10.0), "fb": counts})
    table = read_table(path)
    in_counts = trace_from_profile(
        table, profile(feedback_signal="counts", speed=True), AxisInfo("x-stage", "counts")
    )
    in_mm = trace_from_profile(table, profile(feedback_signal="counts", speed=True), STAGE)
    for trace, unit, expected in ((in_counts, "counts/s", 4000.0), (in_mm, "mm/s", 10.0)):
        velocity = trace.by_role(Role.FEEDBACK)
        assert velocity is not None and velocity.unit == unit
        inner = velocity.values[100:-100]  # away from the ends of the window
        np.testing.assert_allclose(inner, expected, rtol=0.02)
        position = trace.by_role(Role.OTHER)
        assert position is not None and position.name == f"position [{unit[:-2]}]"


def test_scales_and_units_apply_to_plain_values(tmp_path: Path) -> None:
    path = write_csv(
        tmp_path / "v.csv",
        {"t": [0.0, 1.0, 2.0], "sp": [0, 1, 1], "fb": [0.0, 0.5, 1.0], "duty": [0, 50, 25]},
    )
    trace = trace_from_profile(
        read_table(path),
        profile(
            feedback_scale=-2.0,
            feedback_unit="mm",
            effort_column="duty",
            effort_scale=0.01,
            effort_unit="1",
        ),
        STAGE,
    )
    np.testing.assert_allclose(trace.by_role(Role.FEEDBACK).values, [0, -1, -2])  # type: ignore[union-attr]
    np.testing.assert_allclose(trace.by_role(Role.EFFORT).values, [0, 0.5, 0.25])  # type: ignore[union-attr]


def test_semicolon_file_with_decimal_comma_through_a_profile() -> None:
    deg = profile(
        axis="pan",
        time_column="t [s]",
        setpoint_column="setpoint [deg]",
        feedback_column="angle [deg]",
        delimiter=";",
        decimal=",",
        feedback_unit="deg",
    )
    table = read_table(
        GOOD / "decimal_comma_semicolon.csv", delimiter=deg.delimiter, decimal=deg.decimal
    )
    trace = trace_from_profile(table, deg, AxisInfo("pan", "deg"))
    np.testing.assert_allclose(trace.by_role(Role.FEEDBACK).values, [0, 3.5, 21.25, 44.1])  # type: ignore[union-attr]


@pytest.mark.parametrize(
    ("columns", "keys", "axis", "message"),
    [
        (
            {"t": [0, 1, 2], "sp": [0, 1, 1], "x": [0, 1, 2]},
            {},
            STAGE,
            r"line 1, column 'fb': the profile 'p' names a column the file lacks",
        ),
        (
            {"t": [0, 1, 2], "sp": [0, 1, 1], "fb": [0, 1, 2]},
            {},
            AxisInfo("y-stage", "mm"),
            r"profile 'p' is for axis 'x-stage', not 'y-stage'",
        ),
        (
            {"t": [0, 2, 1], "sp": [0, 1, 1], "fb": [0, 1, 2]},
            {},
            STAGE,
            r"line 4, column 't': time goes backwards",
        ),
        (
            {"t": [0, 1, 2], "sp": [0, 1, 1], "fb": [0, "nan", 2]},
            {},
            STAGE,
            r"line 3, column 'fb': missing value",
        ),
        (
            {"t": [0, 1, 2], "sp": [0, 1, 1], "A": [0, 1, 2], "B": [0, 0, 1]},
            {
                "feedback_signal": "quadrature",
                "quadrature_a_column": "A",
                "quadrature_b_column": "B",
                "feedback_column": None,
            },
            STAGE,
            r"line 4, column 'A': quadrature level 2.0 is not 0 or 1",
        ),
    ],
)
def test_profile_faults_are_located(
    tmp_path: Path,
    columns: dict[str, list[Any]],
    keys: dict[str, Any],
    axis: AxisInfo,
    message: str,
) -> None:
    path = write_csv(tmp_path / "f.csv", columns)
    with pytest.raises(InputError, match=message):
        trace_from_profile(read_table(path), profile(**keys), axis)


@pytest.mark.parametrize(
    ("keys", "message"),
    [
        ({"counts_per_rev": 0}, "counts_per_rev must be positive"),
        ({"cal_raw_1": 1.0}, "needs all four"),
        (
            {"cal_raw_1": 1.0, "cal_value_1": 0, "cal_raw_2": 1.0, "cal_value_2": 5},
            "share a raw reading",
        ),
    ],
)
def test_inconsistent_axis_info_is_rejected(keys: dict[str, float], message: str) -> None:
    with pytest.raises(InputError, match=message):
        AxisInfo("x", "mm", **keys)
