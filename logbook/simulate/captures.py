"""Capture layouts: how each bench tool writes a run to a file, and its import profile.

A layout fixes the capture's length, sample rate, step time and the simulation
rate needed to produce it, the columns it writes (with units in brackets), the
delimiter and decimal mark, and the import profile (contract keys) that reads it
back. Four tools appear in the demo:

* the stage firmware's log (position in mm, 1 kHz);
* a logic analyser on the stage encoder's A and B lines (50 kHz, time in µs);
* the servo bench DAQ box (time in ms, pulse width in µs, potentiometer in ADC
  counts, semicolon-separated with a decimal comma);
* the spindle firmware's log, either its speed estimate (counts/s, 1 kHz) or the
  raw encoder count (2 kHz), from which the importer derives speed.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from logbook.simulate.bench import BenchRecord
from logbook.simulate.sensors import quadrature_channels, with_line_glitches

#: Metadata keys written at the top of every capture, in this order.
METADATA_KEYS = (
    "axis",
    "revision",
    "gains",
    "test_kind",
    "operator",
    "date",
    "supply_voltage_v",
    "temperature_c",
    "load",
    "notes",
)


@dataclass(frozen=True)
class Column:
    header: str
    values: np.ndarray
    fmt: str  # printf-style, e.g. "%.3f"


@dataclass(frozen=True)
class CaptureLayout:
    """One bench tool's file layout and the import profile that reads it."""

    name: str
    axis: str
    duration_s: float
    sample_rate_hz: float
    sim_rate_hz: float
    step_time_s: float
    profile: Mapping[str, Any]
    columns: Callable[[BenchRecord, slice, Sequence[int]], list[Column]]

    @property
    def delimiter(self) -> str:
        return str(self.profile["delimiter"])

    @property
    def decimal(self) -> str:
        return str(self.profile["decimal"])

    def samples(self) -> slice:
        """Which simulation steps the capture keeps."""
        every = round(self.sim_rate_hz / self.sample_rate_hz)
        return slice(0, None, every)

    def text(
        self, record: BenchRecord, metadata: Mapping[str, str], glitches: Sequence[int] = ()
    ) -> str:
        """The whole file: metadata lines, header row, data rows (LF line ends)."""
        columns = self.columns(record, self.samples(), glitches)
        cells = [np.char.mod(c.fmt, c.values) for c in columns]
        if self.decimal != ".":
            cells = [np.char.replace(c, ".", self.decimal) for c in cells]
        lines = [f"# {key}: {metadata[key]}" for key in METADATA_KEYS if key in metadata]
        lines.append(self.delimiter.join(c.header for c in columns))
        lines.extend(
            self.delimiter.join(row) for row in zip(*(c.tolist() for c in cells), strict=True)
        )
        return "\n".join(lines) + "\n"


def _profile(
    name: str,
    axis: str,
    *,
    setpoint: tuple[str, ...],
    feedback: tuple[str | None, str, str],
    time: tuple[str, str] = ("t [s]", "s"),
    delimiter: str = ",",
    decimal: str = ".",
    effort: bool = True,
    speed: bool = False,
    **conversion: Any,
) -> dict[str, Any]:
    """An import profile in the contract's key order; every scale is 1.

    ``setpoint`` is (column, unit[, signal]), ``feedback`` (column or None for
    quadrature, unit after conversion, signal); ``conversion`` holds the quadrature
    or pulse-width keys.
    """
    setpoint_column, setpoint_unit, *setpoint_signal = setpoint
    feedback_column, feedback_unit, feedback_signal = feedback
    profile: dict[str, Any] = {
        "name": name,
        "axis": axis,
        "delimiter": delimiter,
        "decimal": decimal,
        "time_column": time[0],
        "time_unit": time[1],
        "setpoint_column": setpoint_column,
        "setpoint_unit": setpoint_unit,
        "setpoint_scale": 1.0,
        "setpoint_signal": setpoint_signal[0] if setpoint_signal else "value",
    }
    if feedback_column is not None:
        profile["feedback_column"] = feedback_column
    profile |= {"feedback_unit": feedback_unit, "feedback_scale": 1.0}
    profile["feedback_signal"] = feedback_signal
    if effort:
        profile |= {"effort_column": "effort [V]", "effort_unit": "V", "effort_scale": 1.0}
    return profile | conversion | {"speed": speed}


def _stage_log(record: BenchRecord, keep: slice, glitches: Sequence[int]) -> list[Column]:
    return [
        Column("t [s]", record.time[keep], "%.3f"),
        Column("setpoint [mm]", record.setpoint[keep], "%.3f"),
        Column("position [mm]", record.measured[keep], "%.3f"),
        Column("effort [V]", record.effort[keep], "%.2f"),
    ]


def _stage_lines(record: BenchRecord, keep: slice, glitches: Sequence[int]) -> list[Column]:
    assert record.counts is not None
    counts = record.counts[keep] - record.counts[0]  # the analyser's counter starts at zero
    if np.abs(np.diff(counts)).max() > 1:
        raise ValueError("the logic analyser's sample rate is too low for this motion")
    a, b = quadrature_channels(counts)
    if glitches:
        a, b = with_line_glitches(a, b, np.asarray(glitches))
    return [
        Column("t [us]", np.round(record.time[keep] * 1e6), "%.0f"),
        Column("setpoint [mm]", record.setpoint[keep], "%.3f"),
        Column("A", a, "%d"),
        Column("B", b, "%d"),
    ]


def _servo_daq(record: BenchRecord, keep: slice, glitches: Sequence[int]) -> list[Column]:
    assert record.pulse_us is not None and record.adc_raw is not None
    raw = record.adc_raw[keep]
    whole = bool(np.all(raw == np.round(raw)))
    return [
        Column("t [ms]", record.time[keep] * 1e3, "%.1f"),
        Column("command [us]", record.pulse_us[keep], "%.0f"),
        Column("pot [counts]", raw, "%.0f" if whole else "%.2f"),
        Column("effort [V]", record.effort[keep], "%.2f"),
    ]


def _spindle_log(record: BenchRecord, keep: slice, glitches: Sequence[int]) -> list[Column]:
    return [
        Column("t [s]", record.time[keep], "%.3f"),
        Column("setpoint [counts/s]", record.setpoint[keep], "%.0f"),
        Column("speed [counts/s]", record.measured[keep], "%.0f"),
        Column("effort [V]", record.effort[keep], "%.2f"),
    ]


def _spindle_counts(record: BenchRecord, keep: slice, glitches: Sequence[int]) -> list[Column]:
    assert record.counts is not None
    return [
        Column("t [s]", record.time[keep], "%.4f"),
        Column("setpoint [counts/s]", record.setpoint[keep], "%.0f"),
        Column("encoder [counts]", record.counts[keep] - record.counts[0], "%d"),
        Column("effort [V]", record.effort[keep], "%.2f"),
    ]


LAYOUTS: dict[str, CaptureLayout] = {
    layout.name: layout
    for layout in (
        CaptureLayout(
            name="stage-firmware-log",
            axis="x-stage",
            duration_s=0.4,
            sample_rate_hz=1000.0,
            sim_rate_hz=10_000.0,
            step_time_s=0.05,
            profile=_profile(
                "stage-firmware-log",
                "x-stage",
                setpoint=("setpoint [mm]", "mm"),
                feedback=("position [mm]", "mm", "value"),
            ),
            columns=_stage_log,
        ),
        CaptureLayout(
            name="stage-logic-analyser",
            axis="x-stage",
            duration_s=0.2,
            sample_rate_hz=50_000.0,
            sim_rate_hz=50_000.0,
            step_time_s=0.02,
            profile=_profile(
                "stage-logic-analyser",
                "x-stage",
                time=("t [us]", "us"),
                setpoint=("setpoint [mm]", "mm"),
                feedback=(None, "mm", "quadrature"),
                effort=False,
                quadrature_a_column="A",
                quadrature_b_column="B",
            ),
            columns=_stage_lines,
        ),
        CaptureLayout(
            name="servo-daq",
            axis="tilt-servo",
            duration_s=1.0,
            sample_rate_hz=1000.0,
            sim_rate_hz=10_000.0,
            step_time_s=0.1,
            profile=_profile(
                "servo-daq",
                "tilt-servo",
                delimiter=";",
                decimal=",",
                time=("t [ms]", "ms"),
                setpoint=("command [us]", "deg", "pulse_width"),
                feedback=("pot [counts]", "deg", "analogue"),
                pulse_unit="us",
                pulse_center_us=1500.0,
                pulse_half_span_us=500.0,
                pulse_half_travel_deg=90.0,
            ),
            columns=_servo_daq,
        ),
        CaptureLayout(
            name="spindle-firmware-log",
            axis="spindle",
            duration_s=0.5,
            sample_rate_hz=1000.0,
            sim_rate_hz=10_000.0,
            step_time_s=0.05,
            profile=_profile(
                "spindle-firmware-log",
                "spindle",
                setpoint=("setpoint [counts/s]", "counts/s"),
                feedback=("speed [counts/s]", "counts/s", "value"),
            ),
            columns=_spindle_log,
        ),
        CaptureLayout(
            name="spindle-count-log",
            axis="spindle",
            duration_s=0.5,
            sample_rate_hz=2000.0,
            sim_rate_hz=10_000.0,
            step_time_s=0.05,
            profile=_profile(
                "spindle-count-log",
                "spindle",
                setpoint=("setpoint [counts/s]", "counts/s"),
                feedback=("encoder [counts]", "counts/s", "counts"),
                speed=True,
            ),
            columns=_spindle_counts,
        ),
    )
}
