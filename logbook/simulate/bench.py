"""Closed-loop bench runs: motor, sensor and PID firmware simulated together.

A batch of runs is integrated in one loop over time (every run is one array
element), at a fixed simulation rate that is an integer multiple of each run's
loop rate. On a controller tick the firmware reads its sensor, runs the PID and
updates the held output; between ticks the voltage stays put. Everything a bench
capture could log is recorded at every simulation step; capture files are made
by picking samples from these records.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import TypeVar

import numpy as np

from logbook.ingest.conversions import pulse_width_to_angle
from logbook.simulate.controller import PidBank, PidGains
from logbook.simulate.motor import LOAD_ANGLE, MOTOR_ANGLE, MOTOR_SPEED, MotorBank, MotorParams
from logbook.simulate.sensors import (
    PulseWidthMapping,
    TwoPointCalibration,
    adc_reading,
    encoder_counts,
    latched_pulse_width,
)


@dataclass(frozen=True)
class EncoderSensor:
    """An incremental encoder read by the firmware (4× decoded counts).

    ``units_per_rev``: feedback units per revolution of the encoder's shaft (the
    lead of a lead screw in mm, 360 for degrees, counts_per_rev for counts).
    ``on_output`` False puts it on the motor shaft. ``speed`` True closes the loop
    on speed instead of position: the count change over the last
    ``speed_window_s`` (a moving window, refreshed every tick) in units per second.
    """

    counts_per_rev: int
    units_per_rev: float
    on_output: bool = True
    phase: float = 0.0
    speed: bool = False
    speed_window_s: float = 0.004


@dataclass(frozen=True)
class PotentiometerSensor:
    """A potentiometer on the output, read through an ADC and the axis calibration."""

    calibration: TwoPointCalibration
    noise_counts: float
    resolution_counts: float = 1.0
    bits: int = 12


SensorT = TypeVar("SensorT", "EncoderSensor", "PotentiometerSensor")


@dataclass(frozen=True)
class StepCommand:
    """A setpoint step from ``before`` to ``after`` (feedback units) at ``t_step_s``.

    With ``pulse_width`` set the setpoint reaches the axis as a hobby-servo pulse
    (whole microseconds, one frame every 20 ms starting at ``frame_phase_s``) and the
    firmware turns the width it measured back into an angle.
    """

    t_step_s: float
    before: float
    after: float
    pulse_width: PulseWidthMapping | None = None
    frame_phase_s: float = 0.0


@dataclass(frozen=True)
class BenchRun:
    """Everything that defines one simulated bench run."""

    motor: MotorParams
    gains: PidGains
    sensor: EncoderSensor | PotentiometerSensor
    command: StepCommand
    supply_voltage_v: float
    duty_limit: float = 1.0
    seed: int = 0


@dataclass(frozen=True)
class BenchRecord:
    """One run sampled at the simulation rate; setpoint and measured in feedback units."""

    time: np.ndarray
    setpoint: np.ndarray
    measured: np.ndarray
    effort: np.ndarray
    output_angle: np.ndarray
    motor_speed: np.ndarray
    counts: np.ndarray | None = None
    adc_raw: np.ndarray | None = None
    pulse_us: np.ndarray | None = None


def simulate_bench(
    runs: Sequence[BenchRun], *, duration_s: float, sim_rate_hz: float
) -> list[BenchRecord]:
    """Simulate ``runs`` for ``duration_s`` at ``sim_rate_hz``; records in input order.

    Runs are batched by sensor kind; each run's loop rate must divide the
    simulation rate.
    """
    records: list[BenchRecord | None] = [None] * len(runs)
    loops: tuple[tuple[type, type[_Loop]], ...] = (
        (EncoderSensor, _EncoderLoop),
        (PotentiometerSensor, _PotentiometerLoop),
    )
    for kind, loop in loops:
        members = [i for i, run in enumerate(runs) if isinstance(run.sensor, kind)]
        if members:
            batch = loop([runs[i] for i in members], duration_s, sim_rate_hz)
            for i, record in zip(members, batch.run(), strict=True):
                records[i] = record
    return [r for r in records if r is not None]


class _Loop(ABC):
    """Runs sharing one sensor kind, integrated together; subclasses say how the
    firmware measures."""

    def __init__(self, runs: Sequence[BenchRun], duration_s: float, sim_rate_hz: float) -> None:
        self.runs = runs
        self.dt = 1.0 / sim_rate_hz
        self.steps = int(round(duration_s * sim_rate_hz))
        self.time = np.arange(self.steps) * self.dt
        ticks = [sim_rate_hz / run.gains.loop_rate_hz for run in runs]
        if any(abs(t - round(t)) > 1e-9 for t in ticks):
            raise ValueError(f"every loop rate must divide the simulation rate {sim_rate_hz} Hz")
        self.steps_per_tick = np.array([round(t) for t in ticks])
        self.motors = MotorBank([run.motor for run in runs])
        self.pid = PidBank([run.gains for run in runs])
        self.output_limit = np.array([run.supply_voltage_v * run.duty_limit for run in runs])
        shape = (self.steps, len(runs))
        self.pulse = np.full(shape, np.nan)
        self.setpoint = self._setpoints()
        self.measured = np.empty(shape)
        self.effort = np.empty(shape)
        self.angle = np.empty(shape)
        self.speed = np.empty(shape)

    def _setpoints(self) -> np.ndarray:
        columns = []
        for j, run in enumerate(self.runs):
            c = run.command
            wanted = np.where(self.time < c.t_step_s, c.before, c.after)
            if c.pulse_width is not None:
                commanded = np.round(c.pulse_width.to_pulse_us(wanted))
                self.pulse[:, j] = latched_pulse_width(
                    self.time, commanded, frame_phase_s=c.frame_phase_s
                )
                wanted = pulse_width_to_angle(
                    self.pulse[:, j],
                    center_us=c.pulse_width.center_us,
                    half_span_us=c.pulse_width.half_span_us,
                    half_travel_deg=c.pulse_width.half_travel_deg,
                ).angle_deg
            columns.append(wanted)
        return np.stack(columns, axis=1)

    @abstractmethod
    def initial_output_angle(self) -> np.ndarray:
        """The output angle (rad) at which each run starts, at rest."""

    @abstractmethod
    def measure(self, k: int, state: np.ndarray, active: np.ndarray) -> np.ndarray:
        """What the firmware reads at step ``k``; ``active`` marks controller ticks."""

    def run(self) -> list[BenchRecord]:
        state = self.motors.rest_state(self.initial_output_angle())
        self.pid.reset(self.measure(0, state, np.ones(len(self.runs), dtype=bool)))
        for k in range(self.steps):
            active = k % self.steps_per_tick == 0
            y = self.measure(k, state, active)
            if active.any():
                self.pid.update(self.setpoint[k], y, self.output_limit, active)
            self.measured[k] = y
            self.effort[k] = self.pid.output
            self.angle[k] = state[LOAD_ANGLE]
            self.speed[k] = state[MOTOR_SPEED]
            state = self.motors.step(state, self.pid.output, self.dt)
        return [self.record(j) for j in range(len(self.runs))]

    def record(self, j: int) -> BenchRecord:
        return BenchRecord(
            time=self.time,
            setpoint=self.setpoint[:, j].copy(),
            measured=self.measured[:, j].copy(),
            effort=self.effort[:, j].copy(),
            output_angle=self.angle[:, j].copy(),
            motor_speed=self.speed[:, j].copy(),
            pulse_us=None if np.isnan(self.pulse[0, j]) else self.pulse[:, j].copy(),
        )

    def sensors(self, kind: type[SensorT]) -> list[SensorT]:
        sensors = [run.sensor for run in self.runs]
        if not all(isinstance(s, kind) for s in sensors):
            raise TypeError(f"a batch mixes {kind.__name__} with other sensors")
        return sensors  # type: ignore[return-value]


class _EncoderLoop(_Loop):
    def __init__(self, runs: Sequence[BenchRun], duration_s: float, sim_rate_hz: float) -> None:
        super().__init__(runs, duration_s, sim_rate_hz)
        sensors = self.sensors(EncoderSensor)
        self.cpr = np.array([s.counts_per_rev for s in sensors], dtype=float)
        self.units_per_count = np.array([s.units_per_rev for s in sensors]) / self.cpr
        self.on_output = np.array([s.on_output for s in sensors])
        self.phase = np.array([s.phase for s in sensors])
        self.is_speed = np.array([s.speed for s in sensors])
        self.counts = np.empty((self.steps, len(runs)), dtype=np.int64)
        self.window = np.array([max(1, round(s.speed_window_s / self.dt)) for s in sensors])
        self.columns = np.arange(len(runs))
        self.estimate = np.zeros(len(runs))

    def initial_output_angle(self) -> np.ndarray:
        before = np.array([run.command.before for run in self.runs])
        if np.any(self.is_speed & (before != 0)):
            raise ValueError("speed steps start from standstill (before = 0)")
        shaft = np.where(self.is_speed, 0.0, before / self.units_per_count / self.cpr * 2 * np.pi)
        return np.where(self.on_output, shaft, shaft / self.motors.n)

    def measure(self, k: int, state: np.ndarray, active: np.ndarray) -> np.ndarray:
        angle = np.where(self.on_output, state[LOAD_ANGLE], state[MOTOR_ANGLE])
        counts = encoder_counts(angle, self.cpr, self.phase)
        self.counts[k] = counts
        if active.any():
            # Before a full window has passed the axis is at rest: the start count holds.
            earlier = self.counts[np.maximum(k - self.window, 0), self.columns]
            fresh = (counts - earlier) * self.units_per_count / (self.window * self.dt)
            self.estimate = np.where(active, fresh, self.estimate)
        return np.where(self.is_speed, self.estimate, counts * self.units_per_count)

    def record(self, j: int) -> BenchRecord:
        return replace(super().record(j), counts=self.counts[:, j].copy())


class _PotentiometerLoop(_Loop):
    def __init__(self, runs: Sequence[BenchRun], duration_s: float, sim_rate_hz: float) -> None:
        super().__init__(runs, duration_s, sim_rate_hz)
        sensors = self.sensors(PotentiometerSensor)
        self.noise = np.stack(
            [np.random.default_rng(run.seed).standard_normal(self.steps) for run in runs], axis=1
        )
        self.raw = np.empty((self.steps, len(runs)))
        self.noise_counts = np.array([s.noise_counts for s in sensors])
        self.resolution = np.array([s.resolution_counts for s in sensors])
        self.bits = np.array([s.bits for s in sensors])
        self.raw_1 = np.array([s.calibration.raw_1 for s in sensors])
        self.value_1 = np.array([s.calibration.value_1 for s in sensors])
        self.slope = np.array([s.calibration.slope for s in sensors])  # value per count

    def initial_output_angle(self) -> np.ndarray:
        return np.radians([run.command.before for run in self.runs])

    def measure(self, k: int, state: np.ndarray, active: np.ndarray) -> np.ndarray:
        # The potentiometer follows the output; the firmware applies the calibration.
        ideal = self.raw_1 + (np.degrees(state[LOAD_ANGLE]) - self.value_1) / self.slope
        raw = adc_reading(
            ideal,
            self.noise[k],
            noise_counts=self.noise_counts,
            resolution_counts=self.resolution,
            bits=self.bits,
        )
        self.raw[k] = raw
        return self.value_1 + (raw - self.raw_1) * self.slope

    def record(self, j: int) -> BenchRecord:
        return replace(super().record(j), adc_raw=self.raw[:, j].copy())
