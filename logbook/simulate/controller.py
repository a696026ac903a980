"""A discrete parallel-form PID as bench firmware runs it, for many loops at once.

At each controller tick (period ``Ts = 1/loop_rate_hz``)::

    e  = r − y
    I  = I + Ki·e·Ts                  (forward Euler; clamped to ±integrator_limit)
    D  = a·D + (1 − a)·(y − y_prev)/Ts with a = exp(−2π·f_c·Ts)
    u  = Kp·e + I − Kd·D + feedforward·r
    u  = clip(u, −u_max, +u_max)

The derivative acts on the measurement, not the error, so a setpoint step gives no
derivative kick; ``a`` is the exact discretisation of a first-order low-pass of
corner ``derivative_filter_hz`` (None: no filter, a = 0). The output is held
between ticks (zero-order hold). Anti-windup modes follow the store's names:
"none"; "clamp" (only the integrator limit); "conditional" (the integrator is not
advanced on a tick where the output is saturated and the error would drive it
further into saturation).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

ANTI_WINDUP_MODES = ("none", "clamp", "conditional")


@dataclass(frozen=True)
class PidGains:
    """One gain set. Gains are in effort units (V) per feedback unit (and per s, s⁻¹).

    ``feedforward`` is added per unit of setpoint (a speed loop uses it to supply
    the back-EMF voltage of the commanded speed).
    """

    kp: float
    ki: float = 0.0
    kd: float = 0.0
    loop_rate_hz: float = 1000.0
    derivative_filter_hz: float | None = None
    feedforward: float = 0.0
    integrator_limit: float | None = None
    anti_windup: str = "none"

    def __post_init__(self) -> None:
        if not self.loop_rate_hz > 0:
            raise ValueError(f"loop rate must be positive, got {self.loop_rate_hz}")
        if self.anti_windup not in ANTI_WINDUP_MODES:
            raise ValueError(
                f"anti_windup must be one of {ANTI_WINDUP_MODES}, got {self.anti_windup!r}"
            )
        if self.anti_windup == "clamp" and self.integrator_limit is None:
            raise ValueError("anti_windup 'clamp' needs an integrator_limit")
        if self.derivative_filter_hz is not None and not self.derivative_filter_hz > 0:
            raise ValueError("derivative_filter_hz must be positive or None")


class PidBank:
    """Several PID loops with their state; each element runs its own gains and rate."""

    def __init__(self, gains: Sequence[PidGains]) -> None:
        def col(values: Sequence[float]) -> np.ndarray:
            return np.asarray(values, dtype=float)

        self.kp = col([g.kp for g in gains])
        self.ki = col([g.ki for g in gains])
        self.kd = col([g.kd for g in gains])
        self.ff = col([g.feedforward for g in gains])
        self.period = 1.0 / col([g.loop_rate_hz for g in gains])
        self.limit = col(
            [np.inf if g.integrator_limit is None else g.integrator_limit for g in gains]
        )
        corner = col(
            [0.0 if g.derivative_filter_hz is None else g.derivative_filter_hz for g in gains]
        )
        self.alpha = np.where(corner > 0, np.exp(-2 * np.pi * corner * self.period), 0.0)
        self.conditional = np.array([g.anti_windup == "conditional" for g in gains])
        n = len(gains)
        self.integrator = np.zeros(n)
        self.rate = np.zeros(n)
        self.previous = np.zeros(n)
        self.output = np.zeros(n)

    def reset(self, measurement: np.ndarray) -> None:
        """Start from rest at ``measurement``: zero integrator, derivative and output."""
        self.integrator[:] = 0.0
        self.rate[:] = 0.0
        self.output[:] = 0.0
        self.previous[:] = measurement

    def update(
        self,
        setpoint: np.ndarray,
        measurement: np.ndarray,
        output_limit: np.ndarray,
        active: np.ndarray | None = None,
    ) -> np.ndarray:
        """Run one tick for the loops where ``active`` is true (all when None).

        Returns the held outputs of all loops (saturated at ±``output_limit``).
        """
        error = setpoint - measurement
        rate = (
            self.alpha * self.rate + (1 - self.alpha) * (measurement - self.previous) / self.period
        )
        static = self.kp * error - self.kd * rate + self.ff * setpoint
        advanced = np.clip(self.integrator + self.ki * error * self.period, -self.limit, self.limit)
        wanted = static + advanced
        saturated = np.abs(wanted) > output_limit
        pushing = np.sign(error * self.ki) == np.sign(wanted)
        hold = self.conditional & saturated & pushing
        integrator = np.where(hold, self.integrator, advanced)
        output = np.clip(static + integrator, -output_limit, output_limit)

        act = np.ones(len(error), dtype=bool) if active is None else active
        self.integrator = np.where(act, integrator, self.integrator)
        self.rate = np.where(act, rate, self.rate)
        self.previous = np.where(act, measurement, self.previous)
        self.output = np.where(act, output, self.output)
        return self.output
