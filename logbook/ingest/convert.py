"""Apply an import profile to a table: pick columns, convert signals, validate.

:func:`trace_from_profile` is the profile counterpart of
:func:`logbook.ingest.columns.trace_from_table`. The axis is described by
:class:`AxisInfo` (filled by the caller from the database) so this package never
imports the database.

Channels are named after their role and unit (``"setpoint [deg]"``,
``"feedback [mm/s]"``): after conversion the file's header no longer describes
the values. With ``speed = true`` the position the velocity came from is kept as
an ``other`` channel named ``"position [<unit>]"``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from logbook.analysis import estimate_velocity
from logbook.errors import InputError
from logbook.ingest.columns import MIN_ROWS, check_finite, check_increasing, check_rows, to_seconds
from logbook.ingest.conversions import (
    counts_to_units,
    decode_quadrature,
    first_non_binary,
    pulse_width_to_angle,
    two_point_calibration,
)
from logbook.ingest.profiles import ImportProfile
from logbook.ingest.reader import RawTable
from logbook.trace import Channel, Role, Trace

_PULSE_TO_US = {"us": 1.0, "ms": 1000.0}


@dataclass(frozen=True)
class AxisInfo:
    """What a conversion needs to know about the axis (a copy of its database row).

    counts_per_rev: encoder counts per revolution after 4x decoding (4 x lines).
    units_per_rev: position units per revolution (lead-screw lead in mm, 360 deg).
    cal_*: the two-point calibration of analogue feedback, raw reading -> position.
    """

    name: str
    position_unit: str
    counts_per_rev: float | None = None
    units_per_rev: float | None = None
    cal_raw_1: float | None = None
    cal_value_1: float | None = None
    cal_raw_2: float | None = None
    cal_value_2: float | None = None

    def __post_init__(self) -> None:
        for field in ("counts_per_rev", "units_per_rev"):
            value = getattr(self, field)
            if value is not None and not value > 0:
                raise InputError(f"axis '{self.name}': {field} must be positive, not {value!r}")
        calibration = self.calibration
        given = (self.cal_raw_1, self.cal_value_1, self.cal_raw_2, self.cal_value_2)
        if calibration is None and any(v is not None for v in given):
            raise InputError(
                f"axis '{self.name}': a two-point calibration needs all four "
                "of cal_raw_1, cal_value_1, cal_raw_2, cal_value_2"
            )
        if calibration is not None and self.cal_raw_1 == self.cal_raw_2:
            raise InputError(f"axis '{self.name}': the calibration points share a raw reading")

    @property
    def calibration(self) -> tuple[float, float, float, float] | None:
        """(raw_1, value_1, raw_2, value_2), or None when not all four are known."""
        points = (self.cal_raw_1, self.cal_value_1, self.cal_raw_2, self.cal_value_2)
        if any(v is None for v in points):
            return None
        return points  # type: ignore[return-value]


def trace_from_profile(
    table: RawTable, profile: ImportProfile, axis: AxisInfo, *, min_rows: int = MIN_ROWS
) -> Trace:
    """A Trace in physical units from ``table`` as ``profile`` describes it.

    Time is converted to seconds; conversion quality figures go in
    ``Trace.quality`` (``pulse_out_of_range`` for a pulse-width setpoint,
    ``illegal_transitions`` for quadrature feedback). Rejects, with file, line and
    column: a profile for another axis, a profile column missing from the file,
    fewer than ``min_rows`` rows, NaN in a used column, time not strictly increasing,
    quadrature levels other than 0/1, and conversions the axis cannot support.
    """
    if profile.axis != axis.name:
        raise InputError(
            f"profile '{profile.name}' is for axis '{profile.axis}', not '{axis.name}'",
            file=table.path,
        )
    for column in profile.columns:
        if column not in table.columns:
            raise InputError(
                f"the profile '{profile.name}' names a column the file lacks "
                f"(the columns are {list(table.columns)})",
                file=table.path,
                line=table.header_line,
                column=column,
            )
    check_rows(table, min_rows)
    for column in profile.columns:
        check_finite(table, column)
    time = to_seconds(table.columns[profile.time_column], profile.time_unit)
    check_increasing(table, profile.time_column, time)

    quality: dict[str, float] = {}
    channels = [Channel("time [s]", Role.TIME, "s", time)]
    setpoint, setpoint_unit = _setpoint(table, profile, quality)
    channels.append(_channel(Role.SETPOINT, setpoint_unit, setpoint))
    feedback, feedback_unit = _feedback(table, profile, axis, quality)
    if profile.speed:
        channels.append(Channel(f"position [{feedback_unit}]", Role.OTHER, feedback_unit, feedback))
        feedback, feedback_unit = estimate_velocity(time, feedback), f"{feedback_unit}/s"
    channels.append(_channel(Role.FEEDBACK, feedback_unit, feedback))
    if profile.effort_column is not None:
        effort = _scaled(table.columns[profile.effort_column], profile.effort_scale)
        channels.append(_channel(Role.EFFORT, profile.effort_unit, effort))
    return Trace(tuple(channels), quality)


def _scaled(values: np.ndarray, scale: float) -> np.ndarray:
    """``values`` times ``scale``; the column itself when the scale is 1 (no copy of a
    million-row column just to multiply it by one)."""
    return values if scale == 1.0 else values * scale


def _channel(role: Role, unit: str, values: np.ndarray) -> Channel:
    return Channel(f"{role} [{unit}]" if unit else str(role), role, unit, values)


def _setpoint(
    table: RawTable, profile: ImportProfile, quality: dict[str, float]
) -> tuple[np.ndarray, str]:
    raw = _scaled(table.columns[profile.setpoint_column], profile.setpoint_scale)
    if profile.setpoint_signal == "value":
        return raw, profile.setpoint_unit
    pulses = pulse_width_to_angle(
        raw * _PULSE_TO_US[profile.pulse_unit],
        center_us=profile.pulse_center_us,
        half_span_us=profile.pulse_half_span_us,
        half_travel_deg=profile.pulse_half_travel_deg,
    )
    quality["pulse_out_of_range"] = pulses.out_of_range
    return pulses.angle_deg, "deg"


def _feedback(
    table: RawTable, profile: ImportProfile, axis: AxisInfo, quality: dict[str, float]
) -> tuple[np.ndarray, str]:
    signal = profile.feedback_signal
    if signal == "quadrature":
        a, b = _quadrature_levels(table, profile)
        decoded = decode_quadrature(a, b)
        quality["illegal_transitions"] = decoded.illegal_transitions
        return _counts(_scaled(decoded.counts, profile.feedback_scale), axis)
    assert profile.feedback_column is not None  # guaranteed by ImportProfile
    raw = _scaled(table.columns[profile.feedback_column], profile.feedback_scale)
    if signal == "value":
        return raw, profile.feedback_unit
    if signal == "counts":
        return _counts(raw, axis)
    calibration = axis.calibration  # analogue
    if calibration is None:
        raise InputError(
            f"analogue feedback needs the two-point calibration of axis "
            f"'{axis.name}', which it does not have",
            file=table.path,
            column=profile.feedback_column,
        )
    raw_1, value_1, raw_2, value_2 = calibration
    return (
        two_point_calibration(raw, raw_1=raw_1, value_1=value_1, raw_2=raw_2, value_2=value_2),
        axis.position_unit,
    )


def _counts(counts: np.ndarray, axis: AxisInfo) -> tuple[np.ndarray, str]:
    """Counts in the axis's position unit when it knows counts and units per rev."""
    if axis.counts_per_rev is None or axis.units_per_rev is None:
        return counts, "counts"
    return (
        counts_to_units(
            counts, counts_per_rev=axis.counts_per_rev, units_per_rev=axis.units_per_rev
        ),
        axis.position_unit,
    )


def _quadrature_levels(table: RawTable, profile: ImportProfile) -> tuple[np.ndarray, np.ndarray]:
    levels = []
    for column in (profile.quadrature_a_column, profile.quadrature_b_column):
        assert column is not None  # guaranteed by ImportProfile
        values = table.columns[column]
        row = first_non_binary(values)
        if row is not None:
            raise InputError(
                f"quadrature level {float(values[row])!r} is not 0 or 1",
                file=table.path,
                line=table.line_of(row),
                column=column,
            )
        levels.append(values)
    return levels[0], levels[1]
