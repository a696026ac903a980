"""The invented demo scenario: a small team building a motorised sample scanner.

Three axes are tested on the bench: ``x-stage`` (a lead-screw stage, encoder
position loop, mm), ``tilt-servo`` (a hobby-style servo on the filter arm,
commanded by pulse width, potentiometer feedback, deg) and ``spindle`` (the
sample-rotation motor, encoder speed loop, counts/s). Each axis has a lineage of
hardware revisions; each revision lists only what it changed relative to its
parent, and the effective build is the root build with every change along the
lineage applied in order.

The planted story (see docs/demo-scenario.md):

* ``x-stage`` rev C fits a 12 mm lead screw whose inertia costs damping
  (overshoot up, settling longer); rev D fits a larger motor and fixes it;
* ``spindle`` gain set ``spindle-pi-hot`` has too much integral gain and no
  anti-windup: after the effort saturates on spin-up the speed overshoots hard;
* ``tilt-servo`` revs B and C (plastic gears, wide backlash) hunt at standstill
  with the stiff gain set ``servo-stiff``; rev D's anti-backlash gear stops it.

Everything random is drawn from generators seeded from :data:`MASTER_SEED`, so
the plan (and the data simulated from it) is the same on every call.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, fields, replace
from datetime import date, datetime, timedelta, timezone
from typing import Any

import numpy as np

from logbook.simulate.controller import PidGains
from logbook.simulate.motor import MotorParams

MASTER_SEED = 20250113
SCENARIO_TITLE = "Benchtop sample scanner: bench tests of three axes"
SCENARIO_DESCRIPTION = (
    "A small lab-automation team builds a benchtop sample scanner: a lead-screw "
    "stage moves the sample under the optics, a hobby-style servo swings the filter "
    "arm, and a spindle spins the sample carrier. Every hardware change is step-tested "
    "on the bench by whoever is on shift; the captures come from the firmware's "
    "log, a logic analyser and a bench data-acquisition box."
)
LAB_TIME = timezone(timedelta(hours=1))
#: Copper's temperature coefficient of resistance near 20 °C (per kelvin).
COPPER_TEMPCO_PER_K = 0.00393


@dataclass(frozen=True)
class Build:
    """What the bench simulates for one revision: motor, drive train and electronics."""

    motor: MotorParams
    supply_voltage_v: float
    pot_noise_counts: float = 0.0
    pot_resolution_counts: float = 1.0

    def changed(self, changes: Mapping[str, float]) -> Build:
        """This build with ``changes`` applied (keys: Build or MotorParams fields)."""
        own = {f.name for f in fields(self)} - {"motor"}
        motor_changes = {k: v for k, v in changes.items() if k not in own}
        return replace(
            self,
            motor=replace(self.motor, **motor_changes),
            **{k: v for k, v in changes.items() if k in own},
        )


@dataclass(frozen=True)
class AxisInfo:
    """An axis as the logbook stores it, plus what the bench needs to test it."""

    name: str
    description: str
    position_unit: str
    feedback_kind: str
    counts_per_rev: int | None
    units_per_rev: float | None
    calibration: tuple[float, float, float, float] | None  # raw_1, value_1, raw_2, value_2
    notes: str
    test_kind: str
    feedback_unit: str  # unit of the loop's feedback (position unit, or per second)
    load_unit: str
    load_range: tuple[float, float]
    operators: tuple[str, ...]
    root_build: Build

    def to_manifest(self) -> dict[str, Any]:
        cal = self.calibration or (None, None, None, None)
        return {
            "name": self.name,
            "description": self.description,
            "position_unit": self.position_unit,
            "feedback_kind": self.feedback_kind,
            "counts_per_rev": self.counts_per_rev,
            "units_per_rev": self.units_per_rev,
            "cal_raw_1": cal[0],
            "cal_value_1": cal[1],
            "cal_raw_2": cal[2],
            "cal_value_2": cal[3],
            "notes": self.notes,
        }


@dataclass(frozen=True)
class RevisionInfo:
    """One hardware revision; ``changes`` are relative to the parent's build."""

    axis: str
    label: str
    parent: str | None
    date: date
    change_category: str
    change_summary: str
    changes: Mapping[str, float] = field(default_factory=dict)

    def to_manifest(self) -> dict[str, Any]:
        return {
            "axis": self.axis,
            "label": self.label,
            "parent": self.parent,
            "date": self.date.isoformat(),
            "change_category": self.change_category,
            "change_summary": self.change_summary,
        }


@dataclass(frozen=True)
class GainSetInfo:
    """A named gain set of one axis; ``extra`` holds firmware settings beyond PID."""

    axis: str
    name: str
    gains: PidGains
    extra: Mapping[str, Any]

    def to_manifest(self) -> dict[str, Any]:
        g = self.gains
        return {
            "axis": self.axis,
            "name": self.name,
            "kp": g.kp,
            "ki": g.ki,
            "kd": g.kd,
            "integrator_limit": g.integrator_limit,
            "anti_windup": g.anti_windup,
            "derivative_filter_hz": g.derivative_filter_hz,
            "feedforward": g.feedforward,
            "loop_rate_hz": g.loop_rate_hz,
            "extra": dict(self.extra),
        }


@dataclass(frozen=True)
class Campaign:
    """Repeated runs of one revision with one gain set, captured one way."""

    axis: str
    revision: str
    gains: str
    capture: str  # capture layout (= import profile) name
    runs: int = 5
    notes: str = ""


@dataclass(frozen=True)
class RunPlan:
    """One planned bench run: its conditions and the seed of its random draws."""

    axis: str
    revision: str
    gains: str
    capture: str
    number: int  # 1-based within its campaign
    operator: str
    taken_at: datetime
    supply_voltage_v: float
    temperature_c: float
    load_value: float
    step_from: float
    step_to: float
    friction_factor: float
    encoder_phase: float
    frame_phase_s: float
    seed: int
    notes: str

    @property
    def load_text(self) -> str:
        unit = AXES[self.axis].load_unit
        return f"{self.load_value:.2f} {unit}" if unit == "kg" else f"{self.load_value:.0f} {unit}"


# --- Axes --------------------------------------------------------------------------

_STAGE_MOTOR = MotorParams(
    resistance_ohm=1.6,
    inductance_h=0.6e-3,
    torque_constant_nm_per_a=0.028,
    back_emf_v_s_per_rad=0.028,
    rotor_inertia_kg_m2=8e-6,
    viscous_nm_s_per_rad=2e-6,
    coulomb_nm=1e-3,
    load_inertia_kg_m2=6e-6,  # 8 mm screw, nut and carriage, at the screw
    load_viscous_nm_s_per_rad=1e-5,
    load_coulomb_nm=1.5e-3,
    coupling_stiffness_nm_per_rad=150.0,  # bellows coupling
    coupling_damping_nm_s_per_rad=2e-3,
    friction_smoothing_rad_s=0.05,
)
_SERVO_MOTOR = MotorParams(
    resistance_ohm=4.0,
    inductance_h=0.5e-3,
    torque_constant_nm_per_a=0.006,
    back_emf_v_s_per_rad=0.006,
    rotor_inertia_kg_m2=1.5e-7,
    viscous_nm_s_per_rad=1e-7,
    coulomb_nm=1.5e-4,
    gear_ratio=180.0,
    load_inertia_kg_m2=1.0e-4,  # empty filter arm, at the output
    load_viscous_nm_s_per_rad=1e-4,
    load_coulomb_nm=0.01,
    coupling_stiffness_nm_per_rad=40.0,  # gear-train stiffness at the output
    coupling_damping_nm_s_per_rad=0.02,
    backlash_rad=math.radians(0.25),
    friction_smoothing_rad_s=0.005,
)
_SPINDLE_MOTOR = MotorParams(
    resistance_ohm=1.2,
    inductance_h=0.4e-3,
    torque_constant_nm_per_a=0.025,
    back_emf_v_s_per_rad=0.025,
    rotor_inertia_kg_m2=1.2e-5,
    viscous_nm_s_per_rad=5e-6,
    coulomb_nm=3e-3,
    load_inertia_kg_m2=2.5e-5,  # aluminium platter, direct drive
    load_viscous_nm_s_per_rad=2e-5,
    load_coulomb_nm=2e-3,
    friction_smoothing_rad_s=0.05,
)

AXES: dict[str, AxisInfo] = {
    a.name: a
    for a in (
        AxisInfo(
            name="x-stage",
            description="Lead-screw stage under the optics; 2 mm lead, encoder on the screw.",
            position_unit="mm",
            feedback_kind="encoder",
            counts_per_rev=400,
            units_per_rev=2.0,
            calibration=None,
            notes="100-line encoder read 4x (400 counts/rev) on the screw end; 0.005 mm/count.",
            test_kind="position_step",
            feedback_unit="mm",
            load_unit="kg",
            load_range=(0.25, 1.0),
            operators=("Mara T.", "Jonas K.", "Ines V."),
            root_build=Build(motor=_STAGE_MOTOR, supply_voltage_v=24.0),
        ),
        AxisInfo(
            name="tilt-servo",
            description="Hobby-style servo swinging the filter arm; pulse-width command.",
            position_unit="deg",
            feedback_kind="potentiometer",
            counts_per_rev=None,
            units_per_rev=None,
            calibration=(700.0, -90.0, 3400.0, 90.0),
            notes="Output potentiometer on a 12-bit ADC; calibrated at -90 and +90 deg.",
            test_kind="position_step",
            feedback_unit="deg",
            load_unit="g",
            load_range=(15.0, 25.0),
            operators=("Jonas K.", "Priya N.", "Theo B."),
            root_build=Build(motor=_SERVO_MOTOR, supply_voltage_v=6.0, pot_noise_counts=0.6),
        ),
        AxisInfo(
            name="spindle",
            description="Sample-carrier spindle; speed loop on a motor-shaft encoder.",
            position_unit="counts",
            feedback_kind="encoder",
            counts_per_rev=4096,
            units_per_rev=4096.0,
            calibration=None,
            notes="1024-line encoder read 4x on the motor; speed is counts/s of the motor.",
            test_kind="speed_step",
            feedback_unit="counts/s",
            load_unit="g",
            load_range=(90.0, 110.0),
            operators=("Ines V.", "Theo B.", "Priya N."),
            root_build=Build(motor=_SPINDLE_MOTOR, supply_voltage_v=12.0),
        ),
    )
}

# --- Revisions ---------------------------------------------------------------------

REVISIONS: list[RevisionInfo] = [
    RevisionInfo(
        "x-stage",
        "A",
        None,
        date(2025, 1, 13),
        "other",
        "First build: 8 mm lead screw (2 mm lead) on a bellows coupling, "
        "28 mN·m/A brushed motor, driver board v1 at 24 V.",
    ),
    RevisionInfo(
        "x-stage",
        "B",
        "A",
        date(2025, 2, 10),
        "electrical",
        "Driver board v2: lower on-resistance bridge (armature circuit 1.60 -> 1.45 ohm).",
        {"resistance_ohm": 1.45},
    ),
    RevisionInfo(
        "x-stage",
        "C",
        "B",
        date(2025, 3, 17),
        "mechanical",
        "12 mm lead screw (same 2 mm lead) for the 300 mm travel, with a heavier "
        "nut; screw-side inertia 6 -> 20 g·cm².",
        {"load_inertia_kg_m2": 20e-6},
    ),
    RevisionInfo(
        "x-stage",
        "D",
        "C",
        date(2025, 4, 22),
        "electrical",
        "Larger motor sized for the 12 mm screw (45 mN·m/A, 1.25 ohm incl. driver, "
        "rotor 12 g·cm²).",
        {
            "torque_constant_nm_per_a": 0.045,
            "back_emf_v_s_per_rad": 0.045,
            "resistance_ohm": 1.25,
            "rotor_inertia_kg_m2": 12e-6,
        },
    ),
    RevisionInfo(
        "x-stage",
        "E",
        "D",
        date(2025, 6, 2),
        "mechanical",
        "Bellows coupling replaced by a disc coupling (stiffer, easier to align).",
        {"coupling_stiffness_nm_per_rad": 400.0},
    ),
    RevisionInfo(
        "tilt-servo",
        "A",
        None,
        date(2025, 1, 20),
        "other",
        "First build: coreless motor, 180:1 metal spur gears (backlash about 0.25 deg "
        "at the output), conductive-plastic potentiometer, servo board v1 at 6 V.",
    ),
    RevisionInfo(
        "tilt-servo",
        "B",
        "A",
        date(2025, 2, 24),
        "mechanical",
        "Plastic (POM) gear train: lighter and quieter, backlash about 1 deg at the output.",
        {"backlash_rad": math.radians(1.0), "coupling_stiffness_nm_per_rad": 30.0},
    ),
    RevisionInfo(
        "tilt-servo",
        "C",
        "B",
        date(2025, 3, 31),
        "electrical",
        "Servo board v2: lower-resistance H-bridge (armature circuit 4.0 -> 3.4 ohm).",
        {"resistance_ohm": 3.4},
    ),
    RevisionInfo(
        "tilt-servo",
        "D",
        "C",
        date(2025, 5, 5),
        "mechanical",
        "Spring-loaded anti-backlash gear on the output stage (backlash about 0.1 deg).",
        {"backlash_rad": math.radians(0.1)},
    ),
    RevisionInfo(
        "tilt-servo",
        "E",
        "D",
        date(2025, 6, 9),
        "firmware",
        "Firmware 1.3: potentiometer read 4x oversampled and averaged "
        "(quarter-count resolution, half the noise).",
        {"pot_noise_counts": 0.3, "pot_resolution_counts": 0.25},
    ),
    RevisionInfo(
        "spindle",
        "A",
        None,
        date(2025, 1, 27),
        "other",
        "First build: direct-drive aluminium platter, 25 mN·m/A motor, 1024-line "
        "encoder, driver board v1 at 12 V.",
    ),
    RevisionInfo(
        "spindle",
        "B",
        "A",
        date(2025, 3, 3),
        "mechanical",
        "Steel platter for smoother rotation (platter inertia 25 -> 60 g·cm²).",
        {"load_inertia_kg_m2": 6e-5},
    ),
    RevisionInfo(
        "spindle",
        "C",
        "B",
        date(2025, 4, 7),
        "electrical",
        "Driver board v2: lower-resistance bridge (armature circuit 1.2 -> 1.0 ohm).",
        {"resistance_ohm": 1.0},
    ),
    RevisionInfo(
        "spindle",
        "D",
        "C",
        date(2025, 5, 12),
        "firmware",
        "Firmware 2.0: control loop 1 kHz -> 2 kHz (gain set spindle-pi-2k).",
        {},
    ),
    RevisionInfo(
        "spindle",
        "E",
        "C",
        date(2025, 5, 19),
        "mechanical",
        "Trial branch from C: 1.5:1 belt drive to the platter (encoder stays on the motor).",
        {"gear_ratio": 1.5},
    ),
]

# --- Gain sets ---------------------------------------------------------------------


def _position_gains(axis: str, name: str, unit: str, **gains: Any) -> GainSetInfo:
    """A position-loop gain set (derivative on the measurement, full duty)."""
    extra = {"units": f"V per {unit}", "derivative_on": "measurement", "duty_limit": 1.0}
    return GainSetInfo(axis, name, PidGains(loop_rate_hz=1000.0, **gains), extra)


def _spindle_gains(name: str, ki: float, **gains: Any) -> GainSetInfo:
    """A spindle PI with back-EMF feedforward and the 4 ms speed window."""
    extra = {"units": "V per count/s", "speed_window_ms": 4.0, "duty_limit": 1.0}
    gains.setdefault("loop_rate_hz", 1000.0)
    pid = PidGains(kp=1.6e-4, ki=ki, feedforward=3.8e-5, **gains)
    return GainSetInfo("spindle", name, pid, extra)


GAIN_SETS: dict[str, GainSetInfo] = {
    g.name: g
    for g in (
        _position_gains(
            "x-stage",
            "stage-pid-v1",
            "mm",
            kp=20.0,
            ki=10.0,
            kd=0.22,
            derivative_filter_hz=200.0,
            anti_windup="conditional",
        ),
        _position_gains(
            "x-stage", "stage-pd-soft", "mm", kp=12.0, kd=0.16, derivative_filter_hz=200.0
        ),
        _position_gains(
            "tilt-servo",
            "servo-soft",
            "deg",
            kp=0.5,
            ki=8.0,
            kd=0.005,
            derivative_filter_hz=100.0,
            integrator_limit=1.0,
            anti_windup="clamp",
        ),
        _position_gains(
            "tilt-servo",
            "servo-stiff",
            "deg",
            kp=1.5,
            ki=10.0,
            kd=0.02,
            derivative_filter_hz=100.0,
            integrator_limit=1.0,
            anti_windup="clamp",
        ),
        _spindle_gains("spindle-pi", 2.3e-3, anti_windup="conditional"),
        _spindle_gains("spindle-pi-hot", 6.0e-3),
        _spindle_gains("spindle-pi-hot-aw", 6.0e-3, anti_windup="conditional"),
        _spindle_gains("spindle-pi-2k", 2.3e-3, anti_windup="conditional", loop_rate_hz=2000.0),
    )
}

# --- Test campaigns ----------------------------------------------------------------

CAMPAIGNS: list[Campaign] = [
    Campaign("x-stage", "A", "stage-pid-v1", "stage-firmware-log"),
    Campaign("x-stage", "B", "stage-pid-v1", "stage-firmware-log"),
    Campaign(
        "x-stage",
        "B",
        "stage-pd-soft",
        "stage-logic-analyser",
        notes="logic-analyser capture of the encoder lines to check the new driver board",
    ),
    Campaign("x-stage", "C", "stage-pid-v1", "stage-firmware-log"),
    Campaign("x-stage", "C", "stage-pd-soft", "stage-firmware-log"),
    Campaign("x-stage", "D", "stage-pid-v1", "stage-firmware-log"),
    Campaign("x-stage", "D", "stage-pd-soft", "stage-firmware-log"),
    Campaign("x-stage", "E", "stage-pid-v1", "stage-firmware-log"),
    Campaign("tilt-servo", "A", "servo-soft", "servo-daq"),
    Campaign("tilt-servo", "A", "servo-stiff", "servo-daq"),
    Campaign("tilt-servo", "B", "servo-soft", "servo-daq"),
    Campaign("tilt-servo", "B", "servo-stiff", "servo-daq", notes="buzzes at standstill"),
    Campaign("tilt-servo", "C", "servo-soft", "servo-daq"),
    Campaign("tilt-servo", "C", "servo-stiff", "servo-daq"),
    Campaign("tilt-servo", "D", "servo-stiff", "servo-daq"),
    Campaign("tilt-servo", "D", "servo-soft", "servo-daq"),
    Campaign("tilt-servo", "E", "servo-stiff", "servo-daq"),
    Campaign("spindle", "A", "spindle-pi", "spindle-firmware-log"),
    Campaign("spindle", "A", "spindle-pi-hot", "spindle-firmware-log"),
    Campaign("spindle", "B", "spindle-pi", "spindle-firmware-log"),
    Campaign("spindle", "B", "spindle-pi-hot", "spindle-firmware-log"),
    Campaign("spindle", "B", "spindle-pi-hot-aw", "spindle-firmware-log"),
    Campaign("spindle", "C", "spindle-pi", "spindle-count-log"),
    Campaign("spindle", "C", "spindle-pi-hot-aw", "spindle-firmware-log"),
    Campaign("spindle", "D", "spindle-pi-2k", "spindle-firmware-log"),
    Campaign("spindle", "E", "spindle-pi", "spindle-firmware-log"),
]

# --- Acceptance specs --------------------------------------------------------------


def _median_spec(
    name: str, axis: str, test_kind: str, description: str, limits: Mapping[str, tuple[float, str]]
) -> dict[str, Any]:
    """A spec (contract TOML keys) judging the median of five runs against upper limits."""
    return {
        "name": name,
        "version": "1.0",
        "test_kind": test_kind,
        "axes": [axis],
        "statistic": "median",
        "required_runs": 5,
        "description": description,
        "limits": {
            metric: {"upper": upper, "unit": unit} for metric, (upper, unit) in limits.items()
        },
    }


#: One spec per axis and test kind. The limits make the story visible: x-stage rev C
#: fails on overshoot and settling, tilt-servo revs B and C fail on hunting with
#: servo-stiff, the spindle fails with the hot gain sets.
SPECS: list[dict[str, Any]] = [
    _median_spec(
        "stage-position-acceptance",
        "x-stage",
        "position_step",
        "2 mm moves of the sample stage: fast, well damped, on target.",
        {
            "overshoot_pct": (10.0, "%"),
            "settling_time_s": (0.080, "s"),
            "rise_time_s": (0.040, "s"),
            "abs_steady_state_error": (0.015, "mm"),
        },
    ),
    _median_spec(
        "servo-position-acceptance",
        "tilt-servo",
        "position_step",
        "60 deg swings of the filter arm: settled and quiet at rest.",
        {
            "overshoot_pct": (5.0, "%"),
            "settling_time_s": (0.40, "s"),
            "rise_time_s": (0.20, "s"),
            "abs_steady_state_error": (0.5, "deg"),
            "hunting_pp": (1.2, "deg"),
        },
    ),
    _median_spec(
        "spindle-speed-acceptance",
        "spindle",
        "speed_step",
        "Spin-up from rest to 100000 counts/s without a speed overshoot.",
        {
            "overshoot_pct": (12.0, "%"),
            "settling_time_s": (0.30, "s"),
            "rise_time_s": (0.080, "s"),
            "abs_steady_state_error": (1000.0, "counts/s"),
        },
    ),
]

#: Setpoint steps per axis: (candidate start values, step size).
STEPS: dict[str, tuple[tuple[float, ...], float]] = {
    "x-stage": ((10.0, 25.0, 40.0, 60.0, 80.0), 2.0),
    "tilt-servo": ((-45.0, -30.0, -20.0), 60.0),
    "spindle": ((0.0,), 100_000.0),
}
#: The logic analyser's counter is zeroed at home, so its steps start there.
HOME_START = {"stage-logic-analyser": 0.0}


def build_of(axis: str, revision: str) -> Build:
    """The effective build of ``revision``: the root build plus every change on the way."""
    by_label = {r.label: r for r in REVISIONS if r.axis == axis}
    lineage: list[RevisionInfo] = []
    label: str | None = revision
    while label is not None:
        lineage.append(by_label[label])
        label = by_label[label].parent
    build = AXES[axis].root_build
    for rev in reversed(lineage):
        build = build.changed(rev.changes)
    return build


def plan_runs() -> list[RunPlan]:
    """Every planned run of every campaign, in campaign order."""
    plans: list[RunPlan] = []
    for index, campaign in enumerate(CAMPAIGNS):
        rng = np.random.default_rng([MASTER_SEED, index])
        plans.extend(_plan_campaign(campaign, rng))
    return plans


def _plan_campaign(campaign: Campaign, rng: np.random.Generator) -> list[RunPlan]:
    axis = AXES[campaign.axis]
    revision = next(
        r for r in REVISIONS if r.axis == campaign.axis and r.label == campaign.revision
    )
    nominal = build_of(campaign.axis, campaign.revision).supply_voltage_v
    starts, size = STEPS[campaign.axis]
    days = _bench_days(revision.date, rng, count=min(3, campaign.runs))
    day_of_run = np.sort(rng.integers(0, len(days), campaign.runs))
    day_of_run[: len(days)] = np.arange(len(days))  # every chosen day gets a run
    day_of_run = np.sort(day_of_run)
    plans = []
    clock: dict[int, datetime] = {}
    operator: dict[int, str] = {}
    room: dict[int, float] = {}
    for number, d in enumerate(day_of_run, start=1):
        day = int(d)
        if day in clock:
            clock[day] += timedelta(minutes=int(rng.integers(8, 26)))
        else:
            clock[day] = datetime.combine(days[day], datetime.min.time(), LAB_TIME) + timedelta(
                hours=9 + int(rng.integers(0, 7)), minutes=int(rng.integers(0, 60))
            )
            operator[day] = axis.operators[int(rng.integers(0, len(axis.operators)))]
            room[day] = 20.0 + 6.0 * rng.random()
        start = HOME_START.get(campaign.capture, starts[int(rng.integers(0, len(starts)))])
        plans.append(
            RunPlan(
                axis=campaign.axis,
                revision=campaign.revision,
                gains=campaign.gains,
                capture=campaign.capture,
                number=number,
                operator=operator[day],
                taken_at=clock[day],
                supply_voltage_v=round(nominal * (1 + 0.006 * rng.standard_normal()), 2),
                temperature_c=round(room[day] + 0.3 * rng.standard_normal(), 1),
                load_value=_load(axis, rng),
                step_from=start,
                step_to=start + size,
                friction_factor=float(np.exp(0.15 * rng.standard_normal())),
                encoder_phase=float(rng.random()),
                frame_phase_s=float(0.020 * rng.random()),
                seed=int(rng.integers(0, 2**31)),
                notes=campaign.notes,
            )
        )
    return plans


def _bench_days(start: date, rng: np.random.Generator, *, count: int) -> list[date]:
    """``count`` distinct weekdays within three weeks after ``start``."""
    weekdays = [start + timedelta(days=k) for k in range(1, 22)]
    weekdays = [d for d in weekdays if d.weekday() < 5]
    picked = rng.choice(len(weekdays), size=count, replace=False)
    return sorted(weekdays[int(i)] for i in picked)


def _load(axis: AxisInfo, rng: np.random.Generator) -> float:
    low, high = axis.load_range
    if axis.load_unit == "kg":
        return float(rng.choice(np.arange(low, high + 1e-9, 0.25)))
    return float(round(low + (high - low) * rng.random()))


def motor_for_run(plan: RunPlan) -> MotorParams:
    """The build's motor under the run's conditions.

    Winding resistance follows copper's temperature coefficient; friction varies
    from run to run; the load adds guide friction (stage, per kg), arm inertia
    (servo: a point mass at 80 mm) or carrier inertia (spindle: a disc of 20 mm
    radius).
    """
    motor = build_of(plan.axis, plan.revision).motor
    heat = 1 + COPPER_TEMPCO_PER_K * (plan.temperature_c - 20.0)
    changes: dict[str, float] = {
        "resistance_ohm": motor.resistance_ohm * heat,
        "coulomb_nm": motor.coulomb_nm * plan.friction_factor,
        "load_coulomb_nm": motor.load_coulomb_nm * plan.friction_factor,
    }
    kilograms = plan.load_value if AXES[plan.axis].load_unit == "kg" else plan.load_value / 1000
    if plan.axis == "x-stage":
        changes["load_coulomb_nm"] *= 1 + 0.15 * kilograms
    elif plan.axis == "tilt-servo":
        changes["load_inertia_kg_m2"] = motor.load_inertia_kg_m2 + kilograms * 0.080**2
    else:
        changes["load_inertia_kg_m2"] = motor.load_inertia_kg_m2 + kilograms * 0.020**2 / 2
    return replace(motor, **changes)
