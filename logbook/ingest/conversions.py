"""Signal conversions applied at import: pure numpy, no files, no database.

* hobby-servo pulse width -> angle (linear about the centre pulse);
* quadrature A/B channels -> signed count by 4x decoding;
* encoder counts -> position units through counts per revolution;
* analogue (ADC counts or volts) -> position through a two-point calibration.

Conversions never clip or drop samples; what looks wrong is counted and returned
so the importer can store it as a data-quality figure of the run.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from logbook.errors import InputError

#: Common hobby-servo command: 1.5 ms centre, +/-0.5 ms to the ends of +/-90 deg.
PULSE_CENTER_US = 1500.0
PULSE_HALF_SPAN_US = 500.0
PULSE_HALF_TRAVEL_DEG = 90.0


@dataclass(frozen=True)
class PulseAngles:
    """Angles from pulse widths, and how many pulses lay outside the configured span."""

    angle_deg: np.ndarray
    out_of_range: int


def pulse_width_to_angle(
    pulse_us: np.ndarray,
    *,
    center_us: float = PULSE_CENTER_US,
    half_span_us: float = PULSE_HALF_SPAN_US,
    half_travel_deg: float = PULSE_HALF_TRAVEL_DEG,
) -> PulseAngles:
    """angle = (pulse - centre) / half_span * half_travel.

    Pulses beyond centre +/- half_span are converted on the same line (not clipped)
    and counted in ``out_of_range``: a servo would stop at its end of travel, so
    such a command is a fault of the controller or of the capture worth reporting.
    """
    if not half_span_us > 0:
        raise InputError(f"pulse half span must be positive, not {half_span_us!r}")
    offset = np.asarray(pulse_us, dtype=np.float64) - center_us
    outside = np.abs(offset) > half_span_us
    return PulseAngles(offset * (half_travel_deg / half_span_us), int(np.count_nonzero(outside)))


@dataclass(frozen=True)
class QuadratureCount:
    """Signed 4x count (starting at 0) and the number of illegal transitions."""

    counts: np.ndarray
    illegal_transitions: int


# Position of each (A, B) state in the forward cycle 00 -> 10 -> 11 -> 01 (A leads B).
_PHASE = np.array([0, 3, 1, 2])  # indexed by 2*A + B
# Count change for each phase difference mod 4; 2 means both channels changed.
_STEP = np.array([0, 1, 0, -1])


def decode_quadrature(a: np.ndarray, b: np.ndarray) -> QuadratureCount:
    """Decode sampled A/B levels (0 or 1) by counting every edge of both channels.

    A leading B (A changes first) counts up. When both channels change between two
    samples the direction is unknowable: that step adds nothing to the count and is
    counted as an illegal transition (the capture was too slow for the shaft).
    Raises InputError for levels other than 0 and 1.
    """
    a = np.asarray(a)
    b = np.asarray(b)
    for name, levels in (("A", a), ("B", b)):
        row = first_non_binary(levels)
        if row is not None:
            raise InputError(
                f"quadrature channel {name} holds {float(levels[row])!r} at "
                f"sample {row}, not 0 or 1"
            )
    phase = _PHASE[(2 * a + b).astype(np.intp)]
    delta = (np.diff(phase) % 4) if len(phase) else np.array([], dtype=np.intp)
    counts = np.zeros(len(phase), dtype=np.float64)
    np.cumsum(_STEP[delta], out=counts[1:])
    return QuadratureCount(counts, int(np.count_nonzero(delta == 2)))


def first_non_binary(levels: np.ndarray) -> int | None:
    """Index of the first sample that is neither 0 nor 1, or None."""
    bad = (levels != 0) & (levels != 1)
    return int(np.argmax(bad)) if bad.any() else None


def encoder_counts_per_rev(lines: int) -> int:
    """Counts per revolution of a line-count (incremental) encoder decoded 4x."""
    return 4 * lines


def counts_to_units(
    counts: np.ndarray, *, counts_per_rev: float, units_per_rev: float
) -> np.ndarray:
    """Position in units (mm, deg, rad) from encoder counts."""
    if not counts_per_rev > 0 or not units_per_rev > 0:
        raise InputError("counts_per_rev and units_per_rev must be positive")
    return np.asarray(counts, dtype=np.float64) * (units_per_rev / counts_per_rev)


def two_point_calibration(
    raw: np.ndarray, *, raw_1: float, value_1: float, raw_2: float, value_2: float
) -> np.ndarray:
    """The straight line through (raw_1, value_1) and (raw_2, value_2) applied to ``raw``."""
    if raw_1 == raw_2:
        raise InputError("the two calibration points have the same raw reading")
    slope = (value_2 - value_1) / (raw_2 - raw_1)
    return value_1 + (np.asarray(raw, dtype=np.float64) - raw_1) * slope
