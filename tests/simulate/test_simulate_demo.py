"""The generated demo folder: its shape, its files read by the project's own readers,
and the planted story visible in the analysed traces beyond the run-to-run spread."""

from __future__ import annotations

import json
import tomllib
from collections import defaultdict
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from logbook.acceptance.spec_file import load_spec_file
from logbook.analysis import analyze_trace
from logbook.ingest.convert import AxisInfo, trace_from_profile
from logbook.ingest.metadata import parse_run_fields
from logbook.ingest.profiles import load_profile
from logbook.ingest.reader import read_table
from logbook.simulate.__main__ import main
from logbook.simulate.captures import LAYOUTS
from logbook.simulate.demo import simulate_plans, write_demo_data
from logbook.simulate.scenario import plan_runs
from logbook.store.models import (
    ANTI_WINDUP_MODES,
    CHANGE_CATEGORIES,
    FEEDBACK_KINDS,
    POSITION_UNITS,
    TEST_KINDS,
)

SIZE_LIMIT = 5_000_000  # bytes, from the issue


@dataclass(frozen=True)
class Analysed:
    entry: dict[str, Any]
    figures: dict[str, float | None]
    quality: dict[str, float]


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("demo")
    write_demo_data(folder)
    return folder


@pytest.fixture(scope="module")
def manifest(demo: Path) -> dict[str, Any]:
    return json.loads((demo / "scenario.json").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def analysed(demo: Path, manifest: dict[str, Any]) -> list[Analysed]:
    """Every capture imported the way the logbook imports it, and analysed."""
    axes = {
        a["name"]: AxisInfo(
            name=a["name"],
            position_unit=a["position_unit"],
            counts_per_rev=a["counts_per_rev"],
            units_per_rev=a["units_per_rev"],
            cal_raw_1=a["cal_raw_1"],
            cal_value_1=a["cal_value_1"],
            cal_raw_2=a["cal_raw_2"],
            cal_value_2=a["cal_value_2"],
        )
        for a in manifest["axes"]
    }
    profiles = {p["name"]: load_profile(demo / p["path"]) for p in manifest["profiles"]}
    results = []
    for entry in manifest["captures"]:
        table = read_table(demo / entry["path"])
        trace = trace_from_profile(table, profiles[entry["profile"]], axes[entry["axis"]])
        (step,) = analyze_trace(trace).steps
        results.append(Analysed(entry, step.to_json(), dict(trace.quality)))
    return results


def figures(analysed: list[Analysed], metric: str, **match: str) -> np.ndarray:
    values = [
        a.figures[metric]
        for a in analysed
        if all(a.entry[key] == value for key, value in match.items())
    ]
    assert values, f"no runs match {match}"
    return np.array([np.nan if v is None else v for v in values], dtype=float)


def test_folder_holds_what_the_manifest_lists_and_stays_small(demo: Path, manifest: dict) -> None:
    files = {p.relative_to(demo).as_posix() for p in demo.rglob("*") if p.is_file()}
    listed = {c["path"] for c in manifest["captures"]}
    listed |= {p["path"] for p in manifest["profiles"]} | {s["path"] for s in manifest["specs"]}
    assert files == listed | {"scenario.json"}
    assert sum((demo / f).stat().st_size for f in files) < SIZE_LIMIT


def test_axes_revisions_and_gain_sets_fit_the_schema(manifest: dict) -> None:
    axes = {a["name"]: a for a in manifest["axes"]}
    assert len(axes) == 3
    assert {a["feedback_kind"] for a in axes.values()} == {"encoder", "potentiometer"}
    for axis in axes.values():
        assert axis["position_unit"] in POSITION_UNITS
        assert axis["feedback_kind"] in FEEDBACK_KINDS
    by_axis = defaultdict(dict)
    for rev in manifest["revisions"]:
        assert rev["change_category"] in CHANGE_CATEGORIES
        assert rev["change_summary"]
        by_axis[rev["axis"]][rev["label"]] = rev
    for name, revisions in by_axis.items():
        assert 4 <= len(revisions) <= 6, name
        roots = [r for r in revisions.values() if r["parent"] is None]
        assert len(roots) == 1
        for rev in revisions.values():
            # Parents belong to the same axis and predate their children.
            assert rev["parent"] is None or revisions[rev["parent"]]["date"] < rev["date"]
    gain_axes = defaultdict(int)
    for gains in manifest["gain_sets"]:
        assert gains["anti_windup"] in ANTI_WINDUP_MODES
        assert gains["loop_rate_hz"] > 0
        gain_axes[gains["axis"]] += 1
    assert all(gain_axes[a] >= 2 for a in axes)


def test_repeated_runs_on_different_days_by_different_operators(demo: Path, manifest: dict) -> None:
    campaigns = defaultdict(list)
    for entry in manifest["captures"]:
        table = read_table(demo / entry["path"])
        fields = parse_run_fields(table.metadata, file=entry["path"])
        assert (fields.axis, fields.revision, fields.gains, fields.test_kind) == (
            entry["axis"],
            entry["revision"],
            entry["gains"],
            entry["test_kind"],
        )
        assert entry["test_kind"] in TEST_KINDS
        assert fields.date is not None and fields.supply_voltage_v is not None
        assert fields.temperature_c is not None and fields.load_unit in {"kg", "g"}
        # Units in brackets on every header except the quadrature lines.
        assert all("[" in name for name in table.columns if name not in ("A", "B"))
        campaigns[(entry["axis"], entry["revision"], entry["gains"])].append(fields)
    operators_per_axis = defaultdict(set)
    for (axis, _, _), runs in campaigns.items():
        assert len(runs) >= 5
        assert len({r.date.date() for r in runs}) >= 2
        operators_per_axis[axis] |= {r.operator for r in runs}
    assert all(len(ops) >= 2 for ops in operators_per_axis.values())


def test_profiles_and_specs_read_back_with_the_project_readers(demo: Path, manifest: dict) -> None:
    for item in manifest["profiles"]:
        text = (demo / item["path"]).read_text(encoding="utf-8")
        assert tomllib.loads(text) == dict(LAYOUTS[item["name"]].profile)
        assert load_profile(demo / item["path"]).name == item["name"]
    kinds = set()
    for item in manifest["specs"]:
        spec = load_spec_file(demo / item["path"])
        kinds |= {(axis, spec.test_kind) for axis in spec.axes}
    assert kinds == {(c["axis"], c["test_kind"]) for c in manifest["captures"]}


def test_conversions_are_exercised_and_quadrature_is_clean_but_for_the_plant(
    manifest: dict, analysed: list[Analysed]
) -> None:
    signals = {
        (p["setpoint_signal"], p["feedback_signal"], p["speed"])
        for p in (dict(LAYOUTS[i["name"]].profile) for i in manifest["profiles"])
    }
    assert ("value", "quadrature", False) in signals
    assert ("pulse_width", "analogue", False) in signals
    assert ("value", "counts", True) in signals
    planted = manifest["planted"]["quadrature_glitches"]
    quadrature = [a for a in analysed if "illegal_transitions" in a.quality]
    assert len(quadrature) >= 5
    for a in quadrature:
        expected = planted["illegal_transitions"] if a.entry["path"] == planted["path"] else 0
        assert a.quality["illegal_transitions"] == expected


def test_degraded_revision_costs_damping_and_the_next_one_fixes_it(
    manifest: dict, analysed: list[Analysed]
) -> None:
    story = manifest["planted"]["degraded_revision"]
    axis, bad, parent = story["axis"], story["revision"], story["parent"]
    fix = manifest["planted"]["fixing_revision"]["revision"]
    for metric in story["metrics"]:
        for gains in ("stage-pid-v1", "stage-pd-soft"):
            before = figures(analysed, metric, axis=axis, revision=parent, gains=gains)
            after = figures(analysed, metric, axis=axis, revision=bad, gains=gains)
            fixed = figures(analysed, metric, axis=axis, revision=fix, gains=gains)
            # Beyond the spread: every degraded run is worse than every run before and after.
            assert after.min() > before.max() and after.min() > fixed.max(), (metric, gains)
    overshoot = figures(analysed, "overshoot_pct", axis=axis, revision=bad, gains="stage-pid-v1")
    assert np.median(overshoot) > 3 * np.median(
        figures(analysed, "overshoot_pct", axis=axis, revision=parent, gains="stage-pid-v1")
    )


def test_windup_gain_set_overshoots_after_saturation(
    manifest: dict, analysed: list[Analysed]
) -> None:
    story = manifest["planted"]["windup"]
    axis = story["axis"]
    for revision in story["revisions"]:
        hot = figures(
            analysed, "windup_overshoot_pct", axis=axis, revision=revision, gains=story["gains"]
        )
        saturated = figures(
            analysed, "saturation_time_s", axis=axis, revision=revision, gains=story["gains"]
        )
        tame = figures(analysed, "overshoot_pct", axis=axis, revision=revision, gains="spindle-pi")
        assert np.all(saturated > 0.02)  # tens of milliseconds at the supply limit
        assert hot.min() > 2 * tame.max()
    # Same gains with conditional integration: the overshoot is the gains', not windup's.
    aw = figures(
        analysed,
        "overshoot_pct",
        axis=axis,
        revision="B",
        gains=story["same_gains_with_anti_windup"],
    )
    hot_b = figures(analysed, "overshoot_pct", axis=axis, revision="B", gains=story["gains"])
    assert hot_b.min() > 2 * aw.max()


def test_hunting_configuration_is_flagged_and_no_other(
    manifest: dict, analysed: list[Analysed]
) -> None:
    story = manifest["planted"]["hunting"]
    axis = story["axis"]
    quiet_pp = []
    for a in analysed:
        if a.entry["axis"] != axis:
            continue
        hunting = a.entry["gains"] == story["gains"] and a.entry["revision"] in story["revisions"]
        assert a.figures["hunting_flag"] == (1.0 if hunting else 0.0), a.entry["path"]
        if not hunting:
            quiet_pp.append(a.figures["hunting_pp"])
    for revision in story["revisions"]:
        pp = figures(analysed, "hunting_pp", axis=axis, revision=revision, gains=story["gains"])
        assert pp.min() > 2 * max(quiet_pp)


def test_specs_pass_some_revisions_and_fail_others(
    demo: Path, manifest: dict, analysed: list[Analysed]
) -> None:
    verdicts: dict[tuple[str, str, str], set[str]] = {}
    for item in manifest["specs"]:
        spec = load_spec_file(demo / item["path"])
        groups = {
            (a.entry["axis"], a.entry["revision"], a.entry["gains"])
            for a in analysed
            if a.entry["axis"] in spec.axes
        }
        for key in groups:
            failed = set()
            for metric, limit in spec.limits.items():
                values = figures(analysed, metric, axis=key[0], revision=key[1], gains=key[2])
                median = float(np.median(values))  # a missing figure (NaN) fails
                if not (
                    np.isfinite(median)
                    and (limit.lower is None or median >= limit.lower)
                    and (limit.upper is None or median <= limit.upper)
                ):
                    failed.add(metric)
            verdicts[key] = failed
    assert verdicts[("x-stage", "C", "stage-pid-v1")] == {"overshoot_pct", "settling_time_s"}
    assert verdicts[("x-stage", "B", "stage-pid-v1")] == set()
    assert verdicts[("x-stage", "D", "stage-pid-v1")] == set()
    assert "hunting_pp" in verdicts[("tilt-servo", "B", "servo-stiff")]
    assert verdicts[("tilt-servo", "D", "servo-stiff")] == set()
    assert "overshoot_pct" in verdicts[("spindle", "B", "spindle-pi-hot")]
    assert verdicts[("spindle", "B", "spindle-pi")] == set()
    assert sum(not failed for failed in verdicts.values()) > len(verdicts) / 2


def test_the_plan_and_a_simulated_batch_repeat_exactly() -> None:
    first, second = plan_runs(), plan_runs()
    assert first == second
    subset = [p for p in first if p.capture == "stage-firmware-log"][:2]
    for a, b in zip(simulate_plans(subset), simulate_plans(subset), strict=True):
        assert np.array_equal(a.measured, b.measured) and np.array_equal(a.effort, b.effort)


@pytest.mark.slow
def test_regenerating_gives_identical_bytes(demo: Path, tmp_path: Path) -> None:
    main([str(tmp_path)])  # the module entry: python -m logbook.simulate FOLDER
    files = sorted(p.relative_to(demo) for p in demo.rglob("*") if p.is_file())
    assert files == sorted(p.relative_to(tmp_path) for p in tmp_path.rglob("*") if p.is_file())
    for name in files:
        assert (demo / name).read_bytes() == (tmp_path / name).read_bytes(), name
