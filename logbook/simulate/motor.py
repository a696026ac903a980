"""A brushed DC motor driving a load through a gear, a coupling and optional backlash.

The model is the usual one (armature circuit plus rotating masses)::

    L·di/dt  = v − R·i − Ke·ωm
    Jm·dωm/dt = Kt·i − bm·ωm − Fm(ωm) − T/N
    JL·dωL/dt = T − bL·ωL − FL(ωL)

with ``N`` the gear ratio (motor turns per output turn), ``T`` the torque the
coupling passes to the load, and Coulomb friction ``F(ω) = Fc·tanh(ω/ωs)``: a
smooth sign function, so a fixed-step integrator does not chatter at zero speed
(``ωs`` is given at the output; on the motor side it is ``N·ωs``).
The coupling is a spring and damper between the geared-down motor angle and the
load angle with a dead zone of ``backlash_rad`` (free play, no torque inside it);
a rigid coupling lumps the load into the motor (``Jm + JL/N²``). With ``L = 0``
the current follows the voltage instantly (the first-order textbook model).

Many motors are integrated together: every coefficient is an array with one
element per motor, so a batch of bench runs costs one Python loop, not one per run.
Integration is classical fourth-order Runge–Kutta with the voltage held over the
step (a zero-order hold, as a PWM driver applies it).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, fields

import numpy as np

# Rows of the state array (shape (5, n_motors)).
CURRENT, MOTOR_ANGLE, MOTOR_SPEED, LOAD_ANGLE, LOAD_SPEED = range(5)
STATE_SIZE = 5


@dataclass(frozen=True)
class MotorParams:
    """One motor and its drive train, in SI units; angles in rad at motor or output.

    ``coupling_stiffness_nm_per_rad`` None means rigid; a compliant coupling needs
    a load inertia, and backlash needs a compliant coupling (free play between two
    rigidly joined masses has no well-defined motion).
    """

    resistance_ohm: float
    inductance_h: float
    torque_constant_nm_per_a: float
    back_emf_v_s_per_rad: float
    rotor_inertia_kg_m2: float
    viscous_nm_s_per_rad: float = 0.0
    coulomb_nm: float = 0.0
    gear_ratio: float = 1.0
    load_inertia_kg_m2: float = 0.0
    load_viscous_nm_s_per_rad: float = 0.0
    load_coulomb_nm: float = 0.0
    coupling_stiffness_nm_per_rad: float | None = None
    coupling_damping_nm_s_per_rad: float = 0.0
    backlash_rad: float = 0.0
    friction_smoothing_rad_s: float = 0.01

    def __post_init__(self) -> None:
        positive = (
            "resistance_ohm",
            "torque_constant_nm_per_a",
            "back_emf_v_s_per_rad",
            "rotor_inertia_kg_m2",
            "gear_ratio",
            "friction_smoothing_rad_s",
        )
        for name in positive:
            if not getattr(self, name) > 0:
                raise ValueError(f"{name} must be positive, got {getattr(self, name)}")
        for f in fields(self):
            value = getattr(self, f.name)
            if f.name not in positive and value is not None and value < 0:
                raise ValueError(f"{f.name} must not be negative, got {value}")
        compliant = self.coupling_stiffness_nm_per_rad is not None
        if compliant and self.load_inertia_kg_m2 == 0:
            raise ValueError("a compliant coupling needs a load inertia")
        if self.backlash_rad > 0 and not compliant:
            raise ValueError("backlash needs a compliant coupling (coupling_stiffness_nm_per_rad)")


class MotorBank:
    """The coefficients of several motors as arrays, one element per motor.

    Which terms are evaluated is decided once per bank (all rigid, all compliant,
    or mixed; with or without backlash and inductance) so the inner loop does no
    more array work than the batch needs.
    """

    def __init__(self, params: Sequence[MotorParams]) -> None:
        def col(name: str) -> np.ndarray:
            return np.array([getattr(p, name) for p in params], dtype=float)

        stiffness = [p.coupling_stiffness_nm_per_rad for p in params]
        self.rigid = np.array([s is None for s in stiffness])
        self.has_inductance = col("inductance_h") > 0
        load_inertia = col("load_inertia_kg_m2")
        self.n = col("gear_ratio")
        self.r = col("resistance_ohm")
        self.inv_l = np.where(
            self.has_inductance, 1.0 / np.maximum(col("inductance_h"), 1e-300), 0.0
        )
        self.kt = col("torque_constant_nm_per_a")
        self.ke = col("back_emf_v_s_per_rad")
        # A rigid drive carries the load on the motor shaft, reflected by 1/N².
        jm = col("rotor_inertia_kg_m2") + np.where(self.rigid, load_inertia / self.n**2, 0.0)
        self.inv_jm = 1.0 / jm
        self.inv_jl = np.where(load_inertia > 0, 1.0 / np.maximum(load_inertia, 1e-300), 0.0)
        self.bm = col("viscous_nm_s_per_rad")
        self.fm = col("coulomb_nm")
        self.bl = col("load_viscous_nm_s_per_rad")
        self.fl = col("load_coulomb_nm")
        self.k = np.array([0.0 if s is None else s for s in stiffness])
        self.c = col("coupling_damping_nm_s_per_rad")
        self.half_gap = col("backlash_rad") / 2
        # Smoothing speeds are given at the output; the motor turns N times faster.
        self.inv_ws = 1.0 / col("friction_smoothing_rad_s")
        self.inv_ws_motor = self.inv_ws / self.n
        self.inv_n = 1.0 / self.n
        self._all_rigid = bool(self.rigid.all())
        self._any_rigid = bool(self.rigid.any())
        self._any_gap = bool((self.half_gap > 0).any())
        self._all_inductance = bool(self.has_inductance.all())
        self._any_inductance = bool(self.has_inductance.any())

    def __len__(self) -> int:
        return len(self.r)

    def rest_state(self, output_angle_rad: np.ndarray) -> np.ndarray:
        """Everything at rest, the output at ``output_angle_rad``, the coupling unloaded."""
        state = np.zeros((STATE_SIZE, len(self)))
        state[LOAD_ANGLE] = output_angle_rad
        state[MOTOR_ANGLE] = output_angle_rad * self.n
        return state

    def current(self, state: np.ndarray, voltage: np.ndarray) -> np.ndarray:
        """Armature current: the state, or (v − Ke·ω)/R where inductance is neglected."""
        if self._all_inductance:
            return state[CURRENT]
        algebraic = (voltage - self.ke * state[MOTOR_SPEED]) / self.r
        return (
            np.where(self.has_inductance, state[CURRENT], algebraic)
            if self._any_inductance
            else algebraic
        )

    def derivatives(self, state: np.ndarray, voltage: np.ndarray) -> np.ndarray:
        """d(state)/dt for the armature voltage ``voltage`` (one value per motor)."""
        out = np.empty_like(state)
        i = self.current(state, voltage)
        wm = state[MOTOR_SPEED]
        out[CURRENT] = (
            (voltage - self.r * i - self.ke * wm) * self.inv_l if self._any_inductance else 0.0
        )
        out[MOTOR_ANGLE] = wm
        motor_torque = self.kt * i - self.bm * wm - self.fm * np.tanh(wm * self.inv_ws_motor)
        if self._all_rigid:
            wl = wm * self.inv_n
            load_drag = self.bl * wl + self.fl * np.tanh(wl * self.inv_ws)
            # The load follows the motor exactly; its drag is reflected by 1/N.
            dwm = (motor_torque - load_drag * self.inv_n) * self.inv_jm
            out[MOTOR_SPEED] = dwm
            out[LOAD_ANGLE] = wl
            out[LOAD_SPEED] = dwm * self.inv_n
            return out
        wl = (
            np.where(self.rigid, wm * self.inv_n, state[LOAD_SPEED])
            if self._any_rigid
            else state[LOAD_SPEED]
        )
        load_drag = self.bl * wl + self.fl * np.tanh(wl * self.inv_ws)
        twist = state[MOTOR_ANGLE] * self.inv_n - state[LOAD_ANGLE]
        slip = wm * self.inv_n - wl
        if self._any_gap:
            # Spring-damper with a dead zone: no torque inside it, and it only pushes.
            engaged = twist - np.clip(twist, -self.half_gap, self.half_gap)
            coupling = self.k * engaged + self.c * slip * (engaged != 0)
            coupling *= coupling * engaged > 0
        else:
            coupling = self.k * twist + self.c * slip
        dwm = (motor_torque - coupling * self.inv_n) * self.inv_jm
        dwl = (coupling - load_drag) * self.inv_jl
        if self._any_rigid:
            dwm_rigid = (motor_torque - load_drag * self.inv_n) * self.inv_jm
            dwm = np.where(self.rigid, dwm_rigid, dwm)
            dwl = np.where(self.rigid, dwm * self.inv_n, dwl)
        out[MOTOR_SPEED] = dwm
        out[LOAD_ANGLE] = wl
        out[LOAD_SPEED] = dwl
        return out

    def step(self, state: np.ndarray, voltage: np.ndarray, dt: float) -> np.ndarray:
        """One RK4 step of ``dt`` seconds with ``voltage`` held; returns the new state."""
        k1 = self.derivatives(state, voltage)
        k2 = self.derivatives(state + (0.5 * dt) * k1, voltage)
        k3 = self.derivatives(state + (0.5 * dt) * k2, voltage)
        k4 = self.derivatives(state + dt * k3, voltage)
        return state + (dt / 6.0) * (k1 + 2.0 * (k2 + k3) + k4)


@dataclass(frozen=True)
class OpenLoopResponse:
    """Samples of one motor driven by a constant voltage from rest."""

    time: np.ndarray
    current: np.ndarray
    motor_speed: np.ndarray
    output_angle: np.ndarray
    output_speed: np.ndarray


def open_loop_step(
    params: MotorParams, voltage_v: float, *, duration_s: float, dt_s: float
) -> OpenLoopResponse:
    """Apply ``voltage_v`` at t = 0 to a motor at rest and integrate for ``duration_s``."""
    bank = MotorBank([params])
    steps = int(round(duration_s / dt_s))
    voltage = np.array([voltage_v])
    state = bank.rest_state(np.zeros(1))
    history = np.empty((steps + 1, STATE_SIZE))
    currents = np.empty(steps + 1)
    for k in range(steps + 1):
        history[k] = state[:, 0]
        currents[k] = bank.current(state, voltage)[0]
        if k < steps:
            state = bank.step(state, voltage, dt_s)
    return OpenLoopResponse(
        time=np.arange(steps + 1) * dt_s,
        current=currents,
        motor_speed=history[:, MOTOR_SPEED],
        output_angle=history[:, LOAD_ANGLE],
        output_speed=history[:, LOAD_SPEED],
    )
