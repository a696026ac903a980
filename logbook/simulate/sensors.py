"""Sensor and command models: incremental encoder, quadrature lines, potentiometer
through an ADC, and the hobby-servo pulse-width command.

Conventions (common practice): a line-count encoder read with 4× decoding gives
4 × lines counts per revolution; with A leading B by a quarter cycle the shaft
turns forward (counts increase). A hobby servo receives one pulse every 20 ms
(50 Hz); 1.5 ms is the centre and 1.0 / 2.0 ms are the ends of ±90° travel.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Quadrature (A, B) levels for count mod 4, in forward order: A rises first.
QUADRATURE_STATES = np.array([(0, 0), (1, 0), (1, 1), (0, 1)], dtype=np.uint8)
SERVO_FRAME_S = 0.020


def encoder_counts(angle_rad: np.ndarray, counts_per_rev: float, phase: float = 0.0) -> np.ndarray:
    """The signed count of an incremental encoder at ``angle_rad``.

    ``phase`` (in counts, 0 to 1) places the first edge relative to angle 0, so
    repeated runs do not all quantise the same way. The count changes when the
    angle crosses an edge: it is the floor, not the nearest integer.
    """
    return np.floor(np.asarray(angle_rad) / (2 * np.pi) * counts_per_rev + phase).astype(np.int64)


def quadrature_channels(counts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The A and B line levels (0/1) for a sequence of counts; A leads B going forward."""
    levels = QUADRATURE_STATES[np.mod(counts, 4)]
    return levels[:, 0].copy(), levels[:, 1].copy()


def with_line_glitches(
    a: np.ndarray, b: np.ndarray, indices: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Copies of ``a``, ``b`` with both lines inverted at the samples ``indices``.

    A one-sample glitch on both lines (electrical noise) is two illegal transitions
    for a 4× decoder: one into the glitch and one out of it.
    """
    a, b = a.copy(), b.copy()
    a[indices] ^= 1
    b[indices] ^= 1
    return a, b


@dataclass(frozen=True)
class TwoPointCalibration:
    """Raw reading -> position through two known points (the axis's calibration)."""

    raw_1: float
    value_1: float
    raw_2: float
    value_2: float

    def __post_init__(self) -> None:
        if self.raw_1 == self.raw_2:
            raise ValueError("calibration points need different raw readings")

    @property
    def slope(self) -> float:
        """Position units per raw count."""
        return (self.value_2 - self.value_1) / (self.raw_2 - self.raw_1)


def adc_reading(
    ideal_raw: np.ndarray,
    noise: np.ndarray,
    *,
    noise_counts: float | np.ndarray,
    resolution_counts: float | np.ndarray = 1.0,
    bits: int | np.ndarray = 12,
) -> np.ndarray:
    """An ADC's reading of a potentiometer whose noiseless reading is ``ideal_raw``.

    ``noise`` holds standard-normal draws, scaled by ``noise_counts``; the result is
    rounded to ``resolution_counts`` (1 for a plain conversion, 0.25 for firmware
    that averages four) and clipped to the converter's range 0 … 2^bits − 1.
    """
    raw = np.asarray(ideal_raw) + noise_counts * np.asarray(noise)
    raw = np.round(raw / resolution_counts) * resolution_counts
    return np.clip(raw, 0.0, 2.0 ** np.asarray(bits) - 1)


@dataclass(frozen=True)
class PulseWidthMapping:
    """Hobby-servo command: centre ± half span (µs) = ± half travel (deg)."""

    center_us: float = 1500.0
    half_span_us: float = 500.0
    half_travel_deg: float = 90.0

    def to_pulse_us(self, angle_deg: np.ndarray) -> np.ndarray:
        """The pulse width (µs) commanding ``angle_deg``; the servo board decodes it
        with :func:`logbook.ingest.conversions.pulse_width_to_angle`."""
        return self.center_us + np.asarray(angle_deg) / self.half_travel_deg * self.half_span_us


def latched_pulse_width(
    time_s: np.ndarray,
    pulse_at: np.ndarray,
    *,
    frame_phase_s: float,
    frame_s: float = SERVO_FRAME_S,
) -> np.ndarray:
    """The pulse width a servo board has measured at each of ``time_s``.

    Frames start at ``frame_phase_s + k·frame_s``; a frame's pulse is as wide as the
    command at its start (``pulse_at``, µs, sampled at ``time_s``) and is known to the
    board at its falling edge. Before the first falling edge the board holds the
    width of the frame before the capture (the command at the first sample).
    """
    time_s = np.asarray(time_s)
    starts = frame_phase_s + frame_s * np.arange(
        np.ceil((time_s[0] - frame_phase_s) / frame_s),
        np.floor((time_s[-1] - frame_phase_s) / frame_s) + 1,
    )
    at_start = pulse_at[np.clip(np.searchsorted(time_s, starts), 0, len(time_s) - 1)]
    falling = starts + at_start * 1e-6
    latest = np.searchsorted(falling, time_s, side="right") - 1
    return np.where(latest >= 0, at_start[np.maximum(latest, 0)], pulse_at[0])
