"""Sampled A/B channels of an ideal incremental encoder, for the conversion tests."""

from __future__ import annotations

import numpy as np


def quadrature_levels(shaft_rev: np.ndarray, lines: int) -> tuple[np.ndarray, np.ndarray]:
    """A and B (0/1) for a shaft at ``shaft_rev`` revolutions, A leading B by 90 deg.

    Each line gives one full electrical cycle; A is high in the first half of the
    cycle and B the same a quarter cycle later (common practice for quadrature).
    """
    cycle = np.mod(np.asarray(shaft_rev) * lines, 1.0)
    a = (cycle < 0.5).astype(np.float64)
    b = (np.mod(cycle - 0.25, 1.0) < 0.5).astype(np.float64)
    return a, b
