"""The small brushed DC motor the simulator tests use, with the textbook's formulas.

Franklin, Powell & Emami-Naeini, *Feedback Control of Dynamic Systems*, ch. 2 (from
memory): with L neglected, τ = J·R/(R·b + Kt·Ke) and ω_ss = Kt·V/(R·b + Kt·Ke).
"""

from __future__ import annotations

from logbook.simulate.motor import MotorParams

R, KT, KE, J, B = 2.0, 0.05, 0.05, 2e-5, 1e-5
VOLTS = 12.0


def textbook_motor(**changes: float) -> MotorParams:
    """The test motor, inductance neglected, no friction, unless ``changes`` say otherwise."""
    base = dict(
        resistance_ohm=R,
        inductance_h=0.0,
        torque_constant_nm_per_a=KT,
        back_emf_v_s_per_rad=KE,
        rotor_inertia_kg_m2=J,
        viscous_nm_s_per_rad=B,
    )
    return MotorParams(**{**base, **changes})  # type: ignore[arg-type]


def textbook_tau(j: float = J, b: float = B) -> float:
    return j * R / (R * b + KT * KE)


def textbook_speed(j: float = J, b: float = B) -> float:
    return KT * VOLTS / (R * b + KT * KE)
