"""Signal conversions against facts of the trade."""

from __future__ import annotations

import numpy as np
import pytest

from logbook.errors import InputError
from logbook.ingest.conversions import (
    counts_to_units,
    decode_quadrature,
    encoder_counts_per_rev,
    pulse_width_to_angle,
    two_point_calibration,
)
from tests.ingest.quadrature_signals import quadrature_levels


def test_servo_pulse_ends_and_centre() -> None:
    # common practice: 1.0 ms = -90 deg, 1.5 ms = centre (0 deg), 2.0 ms = +90 deg
    result = pulse_width_to_angle(np.array([1000.0, 1250.0, 1500.0, 1750.0, 2000.0]))
    np.testing.assert_allclose(result.angle_deg, [-90.0, -45.0, 0.0, 45.0, 90.0])
    assert result.out_of_range == 0


def test_servo_pulses_at_50_hz_frames_follow_a_sweep() -> None:
    # common practice: one command pulse every 20 ms (50 Hz); a 1 s sweep is 50 frames
    frames = np.arange(50) * 0.020
    pulse_us = 1000.0 + 1000.0 * frames / frames[-1]
    angle = pulse_width_to_angle(pulse_us).angle_deg
    np.testing.assert_allclose(angle[[0, -1]], [-90.0, 90.0])
    np.testing.assert_allclose(np.diff(angle), 180.0 / 49)


def test_servo_centre_span_and_travel_are_configurable() -> None:
    # a servo with a 1.52 ms centre and +/-0.6 ms for +/-135 deg of travel
    angle = pulse_width_to_angle(
        np.array([920.0, 1520.0, 2120.0]),
        center_us=1520.0,
        half_span_us=600.0,
        half_travel_deg=135.0,
    ).angle_deg
    np.testing.assert_allclose(angle, [-135.0, 0.0, 135.0])


def test_out_of_range_pulses_are_counted_not_clipped() -> None:
    result = pulse_width_to_angle(np.array([900.0, 1000.0, 1500.0, 2000.0, 2100.0]))
    assert result.out_of_range == 2
    np.testing.assert_allclose(result.angle_deg[[0, -1]], [-108.0, 108.0])


def test_one_forward_revolution_counts_four_times_the_lines() -> None:
    # common practice: 4x decoding counts every edge of A and B, 4 x lines per rev
    lines = 100
    a, b = quadrature_levels(np.linspace(0.0, 1.0, 40_001), lines)
    decoded = decode_quadrature(a, b)
    assert decoded.counts[-1] == encoder_counts_per_rev(lines) == 400
    assert decoded.illegal_transitions == 0
    assert np.all(np.diff(decoded.counts) >= 0)


def test_a_lagging_b_counts_backwards() -> None:
    # common practice: A leading B is forward, so turning back gives negative counts
    a, b = quadrature_levels(np.linspace(0.0, -2.5, 50_001), 50)
    assert decode_quadrature(a, b).counts[-1] == -2.5 * 4 * 50


def test_forward_then_back_returns_to_zero() -> None:
    shaft = np.concatenate([np.linspace(0, 0.73, 5000), np.linspace(0.73, 0, 5000)])
    a, b = quadrature_levels(shaft, 64)
    counts = decode_quadrature(a, b).counts
    assert counts.max() == pytest.approx(0.73 * 256, abs=1) and counts[-1] == 0


def test_undersampled_encoder_counts_illegal_transitions() -> None:
    # sampled every half electrical cycle: both channels change between samples
    a, b = quadrature_levels(np.arange(11) * 0.5 / 10 + 0.125 / 10, 10)
    decoded = decode_quadrature(a, b)
    assert decoded.illegal_transitions == 10
    np.testing.assert_array_equal(decoded.counts, 0.0)


def test_quadrature_levels_must_be_zero_or_one() -> None:
    with pytest.raises(InputError, match="channel B holds 0.5 at sample 1"):
        decode_quadrature(np.array([0, 1, 1]), np.array([0, 0.5, 1]))


def test_counts_to_lead_screw_millimetres() -> None:
    # a 500-line encoder decoded 4x (2000 counts/rev) on a 5 mm lead screw
    mm = counts_to_units(np.array([0, 1000, -2000, 3]), counts_per_rev=2000, units_per_rev=5.0)
    np.testing.assert_allclose(mm, [0.0, 2.5, -5.0, 0.0075])


def test_counts_to_degrees() -> None:
    deg = counts_to_units(
        np.array([500.0]), counts_per_rev=encoder_counts_per_rev(500), units_per_rev=360.0
    )
    np.testing.assert_allclose(deg, [90.0])


def test_two_point_calibration_of_a_potentiometer() -> None:
    # a 10-bit ADC reading a pot: 102 counts at -135 deg, 921 counts at +135 deg
    raw = np.array([102.0, 921.0, 511.5, 0.0, 1023.0])
    angle = two_point_calibration(raw, raw_1=102, value_1=-135.0, raw_2=921, value_2=135.0)
    line = np.polyfit([102.0, 921.0], [-135.0, 135.0], 1)  # the straight line, by numpy
    np.testing.assert_allclose(angle, np.polyval(line, raw), atol=1e-9)
    np.testing.assert_allclose(angle[:3], [-135.0, 135.0, 0.0])


def test_calibration_in_volts_with_a_falling_slope() -> None:
    angle = two_point_calibration(
        np.array([0.5, 4.5, 2.5]), raw_1=0.5, value_1=90.0, raw_2=4.5, value_2=-90.0
    )
    np.testing.assert_allclose(angle, [90.0, -90.0, 0.0])


@pytest.mark.parametrize(
    ("call", "message"),
    [
        (
            lambda: two_point_calibration(np.ones(2), raw_1=1, value_1=0, raw_2=1, value_2=5),
            "same raw reading",
        ),
        (
            lambda: counts_to_units(np.ones(2), counts_per_rev=0, units_per_rev=5),
            "must be positive",
        ),
        (lambda: pulse_width_to_angle(np.ones(2), half_span_us=0.0), "must be positive"),
    ],
)
def test_impossible_conversion_settings_are_rejected(call, message: str) -> None:  # type: ignore[no-untyped-def]
    with pytest.raises(InputError, match=message):
        call()
