"""The by-name column rule and the plain (unconverted) trace."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from logbook.errors import InputError
from logbook.ingest import RawTable, find_column, read_table, trace_from_table
from logbook.ingest.columns import (
    ColumnRoles,
    base_name,
    choose_columns,
    header_time_unit,
    unit_of,
)
from logbook.trace import Role

GOOD = Path(__file__).parent / "good"


@pytest.mark.parametrize(
    ("header", "base", "unit"),
    [
        ("t [s]", "t", "s"),
        ("Time (ms)", "time", "ms"),
        ("Set Point [mm]", "set_point", "mm"),
        ("  position-filtered  [counts] ", "position_filtered", "counts"),
        ("effort", "effort", ""),
    ],
)
def test_base_name_and_unit(header: str, base: str, unit: str) -> None:
    assert (base_name(header), unit_of(header)) == (base, unit)


@pytest.mark.parametrize(
    ("role", "names", "expected"),
    [
        (Role.TIME, ["pos", "Timestamp [us]"], "Timestamp [us]"),
        (Role.SETPOINT, ["t", "Target [deg]", "command"], "Target [deg]"),
        (Role.SETPOINT, ["t", "SP", "PV"], "SP"),
        (Role.FEEDBACK, ["t", "setpoint", "Velocity [rpm]", "position"], "Velocity [rpm]"),
        (Role.EFFORT, ["t", "PWM duty [%]", "duty"], "duty"),
        (Role.EFFORT, ["t", "u"], "u"),
        (Role.FEEDBACK, ["t", "setpoint", "temperature"], None),
        (Role.TIME, ["times", "tt"], None),
    ],
)
def test_find_column_rule(role: Role, names: list[str], expected: str | None) -> None:
    assert find_column(names, role) == expected


def test_trace_from_table_uses_the_rule_and_keeps_units() -> None:
    trace = trace_from_table(read_table(GOOD / "metadata_header.csv"))
    assert [(c.name, c.role, c.unit) for c in trace.channels] == [
        ("t [s]", Role.TIME, "s"),
        ("setpoint [mm]", Role.SETPOINT, "mm"),
        ("position [mm]", Role.FEEDBACK, "mm"),
        ("effort [V]", Role.EFFORT, "V"),
    ]


def test_time_in_milliseconds_is_converted_to_seconds() -> None:
    trace = trace_from_table(read_table(GOOD / "time_in_ms.csv"))
    np.testing.assert_allclose(trace.time, [0.0, 0.02, 0.04])


def test_explicit_columns_win_over_the_rule() -> None:
    table = read_table(GOOD / "tab_separated.tsv")
    trace = trace_from_table(table, feedback="effort [V]", effort="position [mm]")
    assert trace.by_role(Role.FEEDBACK).name == "effort [V]"  # type: ignore[union-attr]
    assert trace.by_role(Role.EFFORT).name == "position [mm]"  # type: ignore[union-attr]


def test_unknown_explicit_column_is_named() -> None:
    with pytest.raises(InputError, match=r"line 1, column 'pos': no such feedback column"):
        trace_from_table(read_table(GOOD / "tab_separated.tsv"), feedback="pos")


def test_one_column_in_two_roles_is_rejected() -> None:
    with pytest.raises(
        InputError, match="column 'position \\[mm\\]': the column is chosen as both"
    ):
        trace_from_table(read_table(GOOD / "tab_separated.tsv"), setpoint="position [mm]")


def test_nan_in_an_unused_column_is_allowed() -> None:
    nan = np.array([np.nan, 1.0, np.nan])
    columns = {"t": np.array([0.0, 1.0, 2.0]), "sp": np.ones(3), "y": np.zeros(3), "spare": nan}
    trace = trace_from_table(RawTable("mem", columns, {}, 2))
    assert len(trace) == 3 and trace.by_role(Role.EFFORT) is None


@pytest.mark.parametrize(
    ("header", "unit"),
    [
        ("t", "s"),
        ("t [s]", "s"),
        ("time (sec)", "s"),
        ("t [ms]", "ms"),
        ("t [µs]", "us"),
        ("t [us]", "us"),
    ],
)
def test_header_time_units(header: str, unit: str) -> None:
    assert header_time_unit(header) == unit


def test_microsecond_header_is_converted_to_seconds() -> None:
    columns = {"t [µs]": np.array([0.0, 500.0, 1000.0]), "sp": np.ones(3), "y": np.zeros(3)}
    trace = trace_from_table(RawTable("mem", columns, {}, 2))
    np.testing.assert_allclose(trace.time, [0.0, 5e-4, 1e-3])


def test_choose_columns_reports_the_roles() -> None:
    roles = choose_columns(read_table(GOOD / "tab_separated.tsv"))
    assert roles == ColumnRoles("t [s]", "setpoint [mm]", "position [mm]", "effort [V]")
    assert [role for role, _ in roles.items()] == [
        Role.TIME,
        Role.SETPOINT,
        Role.FEEDBACK,
        Role.EFFORT,
    ]
