"""Analytic step responses and setpoints for the analysis tests.

The second-order response is the analysis' own closed form, which
``test_analysis_model_fit`` checks against python-control's simulation first.
"""

from __future__ import annotations

import numpy as np

from logbook.analysis.model_fit import second_order_step


def setpoint(t: np.ndarray, steps: list[tuple[float, float]], start: float = 0.0) -> np.ndarray:
    """A setpoint that is ``start`` and becomes ``value`` at each ``(time, value)``."""
    sp = np.full(len(t), start, dtype=float)
    for when, value in steps:
        sp[t >= when] = value
    return sp


def first_order(
    t: np.ndarray, t_step: float, tau: float, initial: float = 0.0, final: float = 1.0
) -> np.ndarray:
    """initial + (final - initial) * (1 - exp(-(t - t_step)/tau)) after t_step."""
    tau_since = np.maximum(t - t_step, 0.0)
    return initial + (final - initial) * (1.0 - np.exp(-tau_since / tau))


def second_order(
    t: np.ndarray, t_step: float, zeta: float, wn: float, initial: float = 0.0, final: float = 1.0
) -> np.ndarray:
    """initial + (final - initial) * g(t - t_step) for the standard second-order g."""
    return initial + (final - initial) * second_order_step(t - t_step, zeta, wn)


def responses(
    t: np.ndarray, steps: list[tuple[float, float]], zeta: float, wn: float, start: float = 0.0
) -> np.ndarray:
    """Response of a linear unity-gain second-order system to a staircase setpoint:
    the sum of one step response per setpoint change (superposition)."""
    y = np.full(len(t), start, dtype=float)
    level = start
    for when, value in steps:
        y += (value - level) * second_order_step(t - when, zeta, wn)
        level = value
    return y
