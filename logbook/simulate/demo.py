"""Simulate the demo scenario and write ``demo_data/``: captures, profiles, specs, manifest.

``write_demo_data(folder)`` is what ``logbook demo --regenerate`` and
``python -m logbook.simulate FOLDER`` call. It replaces only what it generates
(``captures/``, ``profiles/``, ``specs/`` and ``scenario.json`` inside ``folder``)
and produces the same bytes on every call.
"""

from __future__ import annotations

import json
import shutil
from collections.abc import Mapping, Sequence
from datetime import UTC
from pathlib import Path
from typing import Any

import numpy as np

from logbook.simulate.bench import (
    BenchRecord,
    BenchRun,
    EncoderSensor,
    PotentiometerSensor,
    StepCommand,
    simulate_bench,
)
from logbook.simulate.captures import LAYOUTS
from logbook.simulate.scenario import (
    AXES,
    GAIN_SETS,
    MASTER_SEED,
    REVISIONS,
    SCENARIO_DESCRIPTION,
    SCENARIO_TITLE,
    SPECS,
    RunPlan,
    build_of,
    motor_for_run,
    plan_runs,
)
from logbook.simulate.sensors import PulseWidthMapping, TwoPointCalibration

#: Operators whose logging laptop is set to UTC; their dates carry +00:00.
UTC_LOGGERS = frozenset({"Theo B."})
#: The one logic-analyser capture with deliberate line glitches (campaign, run number).
GLITCH_RUN = ("stage-logic-analyser", 3)
GLITCH_COUNT = 3
GENERATED = ("captures", "profiles", "specs", "scenario.json")


def bench_run(plan: RunPlan) -> BenchRun:
    """The bench simulation of ``plan``: its motor, sensor, command and gains."""
    axis = AXES[plan.axis]
    layout = LAYOUTS[plan.capture]
    gain_set = GAIN_SETS[plan.gains]
    build = build_of(plan.axis, plan.revision)
    command = StepCommand(layout.step_time_s, plan.step_from, plan.step_to)
    sensor: EncoderSensor | PotentiometerSensor
    if axis.feedback_kind == "potentiometer":
        assert axis.calibration is not None
        sensor = PotentiometerSensor(
            TwoPointCalibration(*axis.calibration),
            noise_counts=build.pot_noise_counts,
            resolution_counts=build.pot_resolution_counts,
        )
        command = StepCommand(
            layout.step_time_s,
            plan.step_from,
            plan.step_to,
            pulse_width=PulseWidthMapping(),
            frame_phase_s=plan.frame_phase_s,
        )
    else:
        assert axis.counts_per_rev is not None and axis.units_per_rev is not None
        speed = axis.test_kind == "speed_step"
        sensor = EncoderSensor(
            axis.counts_per_rev,
            axis.units_per_rev,
            on_output=not speed,
            phase=plan.encoder_phase,
            speed=speed,
            speed_window_s=float(gain_set.extra.get("speed_window_ms", 4.0)) / 1000,
        )
    return BenchRun(
        motor=motor_for_run(plan),
        gains=gain_set.gains,
        sensor=sensor,
        command=command,
        supply_voltage_v=plan.supply_voltage_v,
        duty_limit=float(gain_set.extra.get("duty_limit", 1.0)),
        seed=plan.seed,
    )


def simulate_plans(plans: Sequence[RunPlan]) -> list[BenchRecord]:
    """Simulate ``plans`` (batched by capture layout); records in the same order."""
    records: list[BenchRecord | None] = [None] * len(plans)
    for name, layout in LAYOUTS.items():
        members = [i for i, p in enumerate(plans) if p.capture == name]
        if not members:
            continue
        simulated = simulate_bench(
            [bench_run(plans[i]) for i in members],
            duration_s=layout.duration_s,
            sim_rate_hz=layout.sim_rate_hz,
        )
        for i, record in zip(members, simulated, strict=True):
            records[i] = record
    return [r for r in records if r is not None]


def capture_path(plan: RunPlan) -> str:
    """Where a run's capture goes, relative to the demo folder."""
    stamp = plan.taken_at.strftime("%Y%m%d-%H%M")
    return f"captures/{plan.axis}/rev-{plan.revision}/{stamp}_{plan.gains}.csv"


def run_metadata(plan: RunPlan) -> dict[str, str]:
    """The ``# key: value`` lines of a run's capture."""
    axis = AXES[plan.axis]
    taken = plan.taken_at.astimezone(UTC) if plan.operator in UTC_LOGGERS else plan.taken_at
    unit = axis.feedback_unit
    notes = f"step {plan.step_from:g} -> {plan.step_to:g} {unit}"
    if plan.notes:
        notes += f"; {plan.notes}"
    if (plan.capture, plan.number) == GLITCH_RUN:
        notes += "; noise spikes seen on both encoder lines"
    return {
        "axis": plan.axis,
        "revision": plan.revision,
        "gains": plan.gains,
        "test_kind": axis.test_kind,
        "operator": plan.operator,
        "date": taken.isoformat(),
        "supply_voltage_v": f"{plan.supply_voltage_v:.2f}",
        "temperature_c": f"{plan.temperature_c:.1f}",
        "load": plan.load_text,
        "notes": notes,
    }


def glitch_samples(record: BenchRecord, plan: RunPlan) -> list[int]:
    """Capture samples for the planted line glitches: at standstill after settling.

    Each is a sample whose neighbours carry the same count, so inverting both
    lines there makes exactly two illegal transitions and no count change.
    """
    if (plan.capture, plan.number) != GLITCH_RUN:
        return []
    layout = LAYOUTS[plan.capture]
    assert record.counts is not None
    counts = record.counts[layout.samples()]
    time = record.time[layout.samples()]
    still = (counts[1:-1] == counts[:-2]) & (counts[1:-1] == counts[2:])
    candidates = np.flatnonzero(still & (time[1:-1] > 0.6 * layout.duration_s)) + 1
    return [int(i) for i in candidates[:: max(1, len(candidates) // GLITCH_COUNT)][:GLITCH_COUNT]]


def toml_text(table: Mapping[str, Any]) -> str:
    """A flat TOML document; nested mappings become ``[section.key]`` tables."""
    lines: list[str] = []
    nested: list[tuple[str, Mapping[str, Any]]] = []
    for key, value in table.items():
        if isinstance(value, Mapping):
            nested.extend((f"{key}.{k}", v) for k, v in value.items())
        else:
            lines.append(f"{key} = {_toml_value(value)}")
    for name, section in nested:
        lines.append("")
        lines.append(f"[{name}]")
        lines.extend(f"{k} = {_toml_value(v)}" for k, v in section.items())
    return "\n".join(lines) + "\n"


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(float(value)) if isinstance(value, float) else str(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    raise TypeError(f"no TOML form for {value!r}")


def write_demo_data(folder: Path) -> None:
    """Simulate every planned run and write the demo folder (see the module docstring)."""
    folder = Path(folder)
    for name in GENERATED:
        target = folder / name
        if target.is_dir():
            shutil.rmtree(target)
        elif target.exists():
            target.unlink()
    plans = plan_runs()
    records = simulate_plans(plans)
    captures = []
    glitch_path = None
    for plan, record in zip(plans, records, strict=True):
        path = capture_path(plan)
        glitches = glitch_samples(record, plan)
        if glitches:
            glitch_path = path
        _write(folder / path, LAYOUTS[plan.capture].text(record, run_metadata(plan), glitches))
        captures.append(
            {
                "path": path,
                "axis": plan.axis,
                "revision": plan.revision,
                "gains": plan.gains,
                "profile": plan.capture,
                "test_kind": AXES[plan.axis].test_kind,
            }
        )
    if len({c["path"] for c in captures}) != len(captures):
        raise ValueError("two demo captures would share a file name")
    profiles = []
    for name, layout in LAYOUTS.items():
        path = f"profiles/{name}.toml"
        _write(folder / path, toml_text(layout.profile))
        profiles.append({"name": name, "axis": layout.axis, "path": path})
    specs = []
    for spec in SPECS:
        path = f"specs/{spec['name']}.toml"
        _write(folder / path, toml_text(spec))
        specs.append({"name": spec["name"], "path": path})
    manifest = {
        "title": SCENARIO_TITLE,
        "description": SCENARIO_DESCRIPTION,
        "seed": MASTER_SEED,
        "axes": [a.to_manifest() for a in AXES.values()],
        "revisions": [r.to_manifest() for r in REVISIONS],
        "gain_sets": [g.to_manifest() for g in GAIN_SETS.values()],
        "profiles": profiles,
        "specs": specs,
        "captures": captures,
        "planted": _planted(glitch_path),
    }
    _write(folder / "scenario.json", json.dumps(manifest, indent=2, ensure_ascii=False) + "\n")


def _planted(glitch_path: str | None) -> dict[str, Any]:
    """What the scenario hides, for tests and for the demo's own summary."""
    return {
        "degraded_revision": {
            "axis": "x-stage",
            "revision": "C",
            "parent": "B",
            "metrics": ["overshoot_pct", "settling_time_s"],
        },
        "fixing_revision": {"axis": "x-stage", "revision": "D", "parent": "C"},
        "windup": {
            "axis": "spindle",
            "gains": "spindle-pi-hot",
            "same_gains_with_anti_windup": "spindle-pi-hot-aw",
            "revisions": ["A", "B"],
        },
        "hunting": {
            "axis": "tilt-servo",
            "gains": "servo-stiff",
            "revisions": ["B", "C"],
            "not_hunting": ["A", "D", "E"],
        },
        "quadrature_glitches": {
            "path": glitch_path,
            "illegal_transitions": 2 * GLITCH_COUNT,
        },
    }


def _write(path: Path, text: str) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(text.encode("utf-8"))
