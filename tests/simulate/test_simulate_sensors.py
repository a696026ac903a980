"""Sensor and command models against facts of the trade."""

from __future__ import annotations

import math

import numpy as np
import pytest

from logbook.ingest.conversions import decode_quadrature, pulse_width_to_angle
from logbook.simulate.sensors import (
    SERVO_FRAME_S,
    PulseWidthMapping,
    TwoPointCalibration,
    adc_reading,
    encoder_counts,
    latched_pulse_width,
    quadrature_channels,
    with_line_glitches,
)


def test_a_leads_b_going_forward() -> None:
    # Common practice: with A leading B by a quarter cycle the count goes up.
    a, b = quadrature_channels(np.arange(8))
    assert a.tolist() == [0, 1, 1, 0, 0, 1, 1, 0]
    assert b.tolist() == [0, 0, 1, 1, 0, 0, 1, 1]
    first_a_rise = int(np.argmax(np.diff(a) == 1)) + 1
    first_b_rise = int(np.argmax(np.diff(b) == 1)) + 1
    assert first_a_rise < first_b_rise
    # Backwards, B leads A.
    a, b = quadrature_channels(-np.arange(8))
    assert int(np.argmax(np.diff(b) == 1)) < int(np.argmax(np.diff(a) == 1))


def test_one_revolution_of_a_line_encoder_is_four_counts_per_line() -> None:
    # Common practice: 4x decoding counts both edges of both channels, 4 × lines per rev.
    lines = 100
    angle = np.linspace(0.0, 2 * math.pi, 40_001)
    counts = encoder_counts(angle, 4 * lines, phase=0.5)
    assert counts[-1] - counts[0] == 4 * lines
    a, _ = quadrature_channels(counts)
    assert np.count_nonzero(np.diff(a.astype(int)) == 1) == lines  # one A cycle per line


def test_decoding_the_lines_recovers_the_counts() -> None:
    # Cross-check with the importer's own 4x decoder (forward and back, no skipped state).
    counts = np.concatenate([np.arange(0, 50), np.arange(50, -20, -1), np.arange(-20, 5)])
    a, b = quadrature_channels(counts)
    decoded = decode_quadrature(a, b)
    assert decoded.illegal_transitions == 0
    assert np.array_equal(decoded.counts, counts - counts[0])


def test_a_glitch_on_both_lines_is_two_illegal_transitions() -> None:
    counts = np.zeros(20, dtype=np.int64)
    a, b = with_line_glitches(*quadrature_channels(counts), np.array([5, 12]))
    decoded = decode_quadrature(a, b)
    assert decoded.illegal_transitions == 4
    assert decoded.counts[-1] == 0


def test_encoder_count_is_the_floor_of_the_angle_in_counts() -> None:
    # An incremental count changes when an edge is crossed: just below an edge it
    # has not changed yet.
    per_count = 2 * math.pi / 400
    angles = np.array([0.0, 0.999 * per_count, 1.0001 * per_count, -0.001 * per_count])
    assert encoder_counts(angles, 400).tolist() == [0, 0, 1, -1]
    assert encoder_counts(angles, 400, phase=0.5).tolist() == [0, 1, 1, 0]


def test_pulse_width_mapping_of_a_hobby_servo() -> None:
    # Common practice: 1.5 ms is the centre, 1.0 and 2.0 ms the ends of ±90°.
    mapping = PulseWidthMapping()
    assert mapping.to_pulse_us(np.array([-90.0, 0.0, 45.0, 90.0])).tolist() == [
        1000.0,
        1500.0,
        1750.0,
        2000.0,
    ]
    # The importer's decoder is its inverse.
    angles = np.linspace(-90, 90, 7)
    decoded = pulse_width_to_angle(mapping.to_pulse_us(angles)).angle_deg
    assert decoded == pytest.approx(angles, abs=1e-12)


def test_pulse_width_is_known_only_at_each_frames_falling_edge() -> None:
    # Common practice: one pulse every 20 ms (50 Hz). A command change at t = 31 ms
    # reaches the board with the frame starting at 40 ms (phase 0), whose 1750 µs pulse
    # ends at 41.75 ms.
    assert SERVO_FRAME_S == 0.020
    time = np.arange(0, 0.1, 1e-4)
    command = np.where(time < 0.031, 1500.0, 1750.0)
    latched = latched_pulse_width(time, command, frame_phase_s=0.0)
    changes = np.flatnonzero(np.diff(latched)) + 1
    assert len(changes) == 1
    assert time[changes[0]] == pytest.approx(0.04175, abs=1e-4)  # within one sample
    assert latched[0] == 1500.0 and latched[-1] == 1750.0


def test_adc_noise_resolution_and_range() -> None:
    rng = np.random.default_rng(7)
    noise = rng.standard_normal(20_000)
    readings = adc_reading(np.full(20_000, 2000.3), noise, noise_counts=2.0)
    assert np.all(readings == np.round(readings))
    # Mean and spread of 20 000 draws: standard error of the mean 2/sqrt(20000) ≈ 0.014;
    # rounding to whole counts adds 1/12 count² of variance.
    assert readings.mean() == pytest.approx(2000.3, abs=0.06)
    assert readings.std() == pytest.approx(math.sqrt(4 + 1 / 12), rel=0.03)
    quarter = adc_reading(np.array([100.1]), np.zeros(1), noise_counts=0.0, resolution_counts=0.25)
    assert quarter.tolist() == [100.0]
    clipped = adc_reading(np.array([-5.0, 5000.0]), np.zeros(2), noise_counts=0.0)
    assert clipped.tolist() == [0.0, 4095.0]


def test_two_point_calibration_slope() -> None:
    calibration = TwoPointCalibration(700.0, -90.0, 3400.0, 90.0)
    assert calibration.slope == pytest.approx(180.0 / 2700.0)
    with pytest.raises(ValueError, match="different raw"):
        TwoPointCalibration(1.0, 0.0, 1.0, 5.0)
