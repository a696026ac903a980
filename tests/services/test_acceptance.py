"""Specs in the database and revisions judged against them from stored figures."""

from __future__ import annotations

import math

import pytest
from click.testing import CliRunner
from reports.sample_report import BENCH_SPEC_TOML, add_simulated_run, seed_bench

from logbook.acceptance.rules import Verdict
from logbook.acceptance.spec_file import Limit, parse_spec_text
from logbook.cli import main
from logbook.errors import ConflictError, InputError, NotFoundError
from logbook.services import catalog, specs
from logbook.services.acceptance import evaluate_revision, worst_step_values


def ogata_overshoot_pct(zeta: float) -> float:
    # Ogata, Modern Control Engineering 5th ed., sec. 5-3: Mp = exp(-zeta pi / sqrt(1 - zeta^2))
    return 100.0 * math.exp(-zeta * math.pi / math.sqrt(1.0 - zeta**2))


@pytest.fixture
def bench(database):
    return seed_bench(database)


def test_spec_file_round_trips_through_the_database(bench, tmp_path):
    path = tmp_path / "bench-x.yaml"
    path.write_text(
        "name: bench-x-position\nversion: '2.0'\ntest_kind: position_step\naxes: [bench-x]\n"
        "limits:\n  overshoot_pct: {upper: 12, unit: '%'}\n"
    )
    with bench.session(write=True) as session:
        added = specs.add_spec_file(session, path)
        assert added.source_text == path.read_text()
    with bench.session() as session:
        first = specs.get_spec(session, "bench-x-position", "1.0")
        assert specs.spec_definition(first) == parse_spec_text(
            BENCH_SPEC_TOML, fmt="toml", source="x"
        )
        newest = specs.spec_definition(specs.get_spec(session, "bench-x-position"))
        assert newest.version == "2.0"
        assert newest.limits == {"overshoot_pct": Limit(None, 12.0, "%")}
        assert [s.version for s in specs.list_specs(session)] == ["1.0", "2.0"]


def test_versions_are_new_rows_and_the_newest_is_the_default(bench):
    newer = parse_spec_text(BENCH_SPEC_TOML.replace('"1.0"', '"1.1"'), fmt="toml", source="x")
    with bench.session(write=True) as session:
        specs.add_spec(session, newer)
    with bench.session() as session:
        assert specs.get_spec(session, "bench-x-position").version == "1.1"
        assert specs.get_spec(session, "bench-x-position", "1.0").version == "1.0"
        with pytest.raises(NotFoundError, match=r"has no version 2\.0 \(versions: 1\.0, 1\.1\)"):
            specs.get_spec(session, "bench-x-position", "2.0")
        with pytest.raises(NotFoundError, match=r"unknown spec 'nope' \(known specs: bench-x"):
            specs.get_spec(session, "nope")


def test_same_version_twice_and_unknown_axes_are_refused(bench):
    spec = parse_spec_text(BENCH_SPEC_TOML, fmt="toml", source="x")
    with bench.session(write=True) as session, pytest.raises(ConflictError, match="new version"):
        specs.add_spec(session, spec)
    elsewhere = parse_spec_text(
        BENCH_SPEC_TOML.replace('"bench-x"]', '"y-stage"]').replace('"1.0"', '"9"'),
        fmt="toml",
        source="x",
    )
    with bench.session(write=True) as session, pytest.raises(NotFoundError, match="y-stage"):
        specs.add_spec(session, elsewhere)


def test_spec_from_command_line_parts():
    spec = specs.spec_from_options(
        name="s",
        version="1",
        test_kind="position_step",
        axes=("bench-x",),
        limits=(("overshoot_pct", "-", "10", "%"), ("rise_time_s", "0.005", "0.08", "s")),
    )
    assert spec.limits["overshoot_pct"] == Limit(None, 10.0, "%")
    assert spec.limits["rise_time_s"] == Limit(0.005, 0.08, "s")
    with pytest.raises(
        InputError, match=r"--limit overshoot_pct: the upper limit must be a number"
    ):
        specs.spec_from_options(name="s", version="1", test_kind="ramp", axes=("x",),
                                limits=(("overshoot_pct", "-", "ten", "%"),))  # fmt: skip
    with pytest.raises(InputError, match=r"^command line: limits\.overshoot_pct: needs a lower"):
        specs.spec_from_options(name="s", version="1", test_kind="ramp", axes=("x",),
                                limits=(("overshoot_pct", "-", "-", "%"),))  # fmt: skip


def test_passing_revision(bench):
    with bench.session() as session:
        result = evaluate_revision(session, axis="bench-x", revision="C", spec="bench-x-position")
    evaluation = result.evaluation
    assert evaluation.verdict is Verdict.PASS
    assert len(evaluation.runs) == 5
    overshoot = next(m for m in evaluation.metrics if m.metric == "overshoot_pct")
    # median run has zeta = 0.60; noise and sampling move the peak slightly
    assert overshoot.value == pytest.approx(ogata_overshoot_pct(0.60), abs=0.5)
    assert result.case.gain_set is not None and result.case.gain_set.name == "stage-tuned-3"


def test_failing_revision(bench):
    with bench.session() as session:
        result = evaluate_revision(session, axis="bench-x", revision="B", spec="bench-x-position")
    overshoot = next(m for m in result.evaluation.metrics if m.metric == "overshoot_pct")
    assert overshoot.value == pytest.approx(ogata_overshoot_pct(0.40), abs=0.5)  # ~25 % > 15 %
    assert overshoot.verdict is Verdict.FAIL
    assert result.evaluation.verdict is Verdict.FAIL


def test_too_few_runs(bench):
    with bench.session() as session:
        result = evaluate_revision(session, axis="bench-x", revision="A", spec="bench-x-position")
    assert result.evaluation.verdict is Verdict.INSUFFICIENT_RUNS
    assert result.evaluation.metrics[0].reason == "3 of 5 required runs"


def test_runs_of_another_test_kind_only(bench):
    with bench.session(write=True) as session:
        axis = catalog.get_axis(session, "bench-x")
        revision = catalog.add_revision(session, "bench-x", "D", parent="C")
        gains = catalog.get_gain_set(session, "stage-tuned-3")
        for seed in (90, 91):
            add_simulated_run(session, axis=axis, revision=revision, gain_set=gains, zeta=0.6,
                              seed=seed, test_kind="speed_step")  # fmt: skip
    with bench.session() as session:
        result = evaluate_revision(session, axis="bench-x", revision="D", spec="bench-x-position")
    assert result.evaluation.verdict is Verdict.WRONG_TEST_KIND
    assert len(result.evaluation.excluded) == 2


def test_several_gain_sets_need_a_choice(bench):
    with bench.session(write=True) as session:
        axis = catalog.get_axis(session, "bench-x")
        revision = catalog.get_revision(session, "bench-x", "C")
        other, _ = catalog.add_gain_set(
            session, catalog.GainParams(kp=3.0, ki=20.0, kd=0.01, loop_rate_hz=2000.0), name="soft"
        )
        add_simulated_run(session, axis=axis, revision=revision, gain_set=other, zeta=0.7, seed=77)
    with bench.session() as session:
        with pytest.raises(InputError, match=r"several gain sets \(stage-tuned-3, soft\); choose"):
            evaluate_revision(session, axis="bench-x", revision="C", spec="bench-x-position")
        chosen = evaluate_revision(session, axis="bench-x", revision="C", spec="bench-x-position",
                                   gains="stage-tuned-3")  # fmt: skip
    assert len(chosen.evaluation.runs) == 5


def test_a_spec_for_other_axes_is_refused(bench):
    with bench.session(write=True) as session:
        catalog.add_axis(session, "pan-servo", position_unit="deg", feedback_kind="potentiometer")
        spec = parse_spec_text(
            BENCH_SPEC_TOML.replace('"bench-x"]', '"pan-servo"]').replace(
                "bench-x-position", "pan"
            ),
            fmt="toml",
            source="x",
        )
        specs.add_spec(session, spec)
    with bench.session() as session, pytest.raises(ConflictError, match="does not apply to axis"):
        evaluate_revision(session, axis="bench-x", revision="C", spec="pan")


def test_worst_step_of_a_multi_step_run():
    spec = parse_spec_text(BENCH_SPEC_TOML, fmt="toml", source="x")
    steps = (
        {"overshoot_pct": 4.0, "rise_time_s": 0.006, "settling_time_s": 0.1},
        {"overshoot_pct": 9.0, "rise_time_s": 0.03, "settling_time_s": None},
    )
    values = worst_step_values(steps, spec)
    assert values["overshoot_pct"] == 9.0  # upper limit: the larger
    assert values["rise_time_s"] == 0.006  # nearer the lower limit 0.005 than 0.03 is to 0.08
    assert values["settling_time_s"] is None  # one step never settled: no value for the run
    assert worst_step_values((), spec) == dict.fromkeys(spec.limits)


def test_spec_commands(bench, tmp_path):
    db = bench.url.render_as_string(hide_password=False)
    runner = CliRunner()
    added = runner.invoke(main, ["spec", "add", "quick", "--version", "1", "--test-kind",
                                 "position_step", "--axis", "bench-x", "--limit", "overshoot_pct",
                                 "-", "12", "%", "--db", db])  # fmt: skip
    assert added.exit_code == 0, added.output
    assert "added spec 'quick' version 1 (1 limits)" in added.output
    listed = runner.invoke(main, ["spec", "list", "--json", "--db", db])
    assert listed.exit_code == 0, listed.output
    assert '"name": "quick"' in listed.output and '"name": "bench-x-position"' in listed.output
    shown = runner.invoke(main, ["spec", "show", "bench-x-position", "--db", db])
    assert shown.exit_code == 0, shown.output
    assert "rise_time_s" in shown.output and "0.005" in shown.output
    bad = tmp_path / "bad.toml"
    bad.write_text(BENCH_SPEC_TOML.replace("overshoot_pct", "overshot_pct"))
    refused = runner.invoke(main, ["spec", "add", "--file", str(bad), "--db", db])
    assert refused.exit_code == 1
    assert "limits.overshot_pct: unknown metric" in refused.output
    assert "Traceback" not in refused.output
