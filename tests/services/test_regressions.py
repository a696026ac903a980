"""Regression finding on a small logbook with a planted story: C loses damping, E restores
it; the statistics are checked against scipy on the very values the trend query returns."""

from __future__ import annotations

import json

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.stats import false_discovery_control, mannwhitneyu

from logbook.cli.base import main
from logbook.errors import InputError
from logbook.services import catalog
from logbook.services.regressions import change_point_scan, find_regressions
from logbook.services.trends import metric_trend
from logbook.store.engine import Database
from logbook.store.models import Spec, SpecAxis, SpecLimit
from tests.services.test_trends import AXIS, REVISIONS, ZETA, build_story

DAMPING_METRICS = ("overshoot_pct", "settling_time_s", "zeta")


@pytest.fixture
def story(database: Database) -> Database:
    build_story(database)
    return database


def test_the_degraded_revision_is_first_bad_and_the_fix_is_better(story: Database) -> None:
    with story.session() as session:
        scan = find_regressions(session, AXIS)
    assert scan.gains == "base"  # run on all five revisions; hot-integral only on two
    assert set(scan.metrics) == {"overshoot_pct", "settling_time_s", "zeta", "wn_rad_s"}
    found = {(f.metric, f.revision, f.direction) for f in scan.findings}
    assert found == {(m, "C", "worse") for m in DAMPING_METRICS} | {
        (m, "E", "better") for m in DAMPING_METRICS
    }
    for metric in DAMPING_METRICS:
        bad = scan.first_bad[metric]
        assert bad is not None
        assert (bad.finding.revision, bad.finding.parent) == ("C", "B")
        assert (bad.stretch, bad.fixed_by) == (("C", "D"), ("E",))
        assert (bad.change_category, bad.change_summary) == ("mechanical", "softer motor coupling")
        assert [p.revision for p in bad.persistence] == ["D"]
        assert (bad.gains_before, bad.gains_after, bad.gain_differences) == ("base", "base", ())
    assert scan.first_bad["wn_rad_s"] is None


def test_damping_not_bandwidth_is_named(story: Database) -> None:
    with story.session() as session:
        scan = find_regressions(session, AXIS)
    explained = {e.revision: (e.damping, e.bandwidth, e.kind) for e in scan.explanations}
    assert explained == {
        "C": ("lost", "unchanged", "damping"),
        "E": ("gained", "unchanged", "neither"),
    }


def test_statistics_agree_with_scipy_on_the_trend_values(story: Database) -> None:
    with story.session() as session:
        scan = find_regressions(session, AXIS)
        trends = {m: metric_trend(session, AXIS, m, gains="base") for m in scan.metrics}
    raw = {}
    for metric, trend in trends.items():
        for label, parent in [(r[0], r[1]) for r in REVISIONS if r[1] is not None]:
            after = trend.loc[trend["revision"] == label, "value"].to_numpy()
            before = trend.loc[trend["revision"] == parent, "value"].to_numpy()
            raw[(metric, label)] = (mannwhitneyu(after, before), after.size * before.size)
    # The default correction is Benjamini-Hochberg over the whole scan: scipy's own.
    bh = false_discovery_control([r.pvalue for r, _ in raw.values()], method="bh")
    adjusted = dict(zip(raw, bh, strict=True))
    assert scan.family_size == len(raw) == 16
    for f in scan.findings:
        reference, pairs = raw[(f.metric, f.revision)]
        assert f.p_value == pytest.approx(reference.pvalue, rel=1e-12)
        assert f.effect_size == pytest.approx(2.0 * reference.statistic / pairs - 1.0)
        assert f.p_adjusted == pytest.approx(adjusted[(f.metric, f.revision)], rel=1e-12)


def test_json_holds_one_object_per_finding_and_a_first_bad_revision_per_metric(
    story: Database,
) -> None:
    with story.session() as session:
        payload = find_regressions(session, AXIS, "overshoot_pct").to_json()
    json.dumps(payload)  # plain JSON types only
    assert [(f["revision"], f["direction"]) for f in payload["findings"]] == [
        ("C", "worse"),
        ("E", "better"),
    ]
    for finding in payload["findings"]:
        for key in ("metric", "revision", "parent", "median_before", "median_after"):
            assert finding[key] is not None
        assert 0.0 < finding["p_value"] <= finding["p_adjusted"] < 0.05
        assert -1.0 <= finding["effect_size"] <= 1.0
        assert finding["first_bad_revision"] == "C"
    first = payload["first_bad_revisions"]["overshoot_pct"]
    assert first["revision"] == "C" and first["fixed_by"] == ["E"]
    assert first["change_summary"] == "softer motor coupling"
    assert payload["family_size"] == 4  # one metric, four parent comparisons


def test_a_history_without_changes_has_no_finding(database: Database) -> None:
    build_story(database, zeta=dict.fromkeys(ZETA, 0.69), seed=3)
    with database.session() as session:
        scan = find_regressions(session, AXIS)
    assert scan.findings == ()
    assert all(bad is None for bad in scan.first_bad.values())


def test_few_runs_cannot_make_a_finding_under_holm(story: Database) -> None:
    # Four hot-integral runs on B and C only: the smallest exact two-sided Mann-Whitney p
    # for 4 against 4 is 2/C(8,4) = 0.029, times 4 metrics under Holm = 0.11 > 0.05.
    # Benjamini-Hochberg can call them when all four metrics moved together.
    with story.session() as session:
        holm = find_regressions(session, AXIS, gains="hot-integral", correction="holm")
        bh = find_regressions(session, AXIS, gains="hot-integral")
    assert (holm.gains, holm.family_size, holm.findings) == ("hot-integral", 4, ())
    assert {(f.metric, f.revision) for f in bh.findings} == {
        ("overshoot_pct", "C"),
        ("settling_time_s", "C"),
        ("zeta", "C"),
    }


def test_practical_thresholds_from_the_caller_and_from_the_spec(story: Database) -> None:
    with story.session() as session:
        loud = find_regressions(session, AXIS, "overshoot_pct", thresholds={"overshoot_pct": 50.0})
    assert loud.findings == ()
    with story.session(write=True) as session:
        spec = Spec(name="stage-acceptance", version="1.0", test_kind="position_step")
        spec.limits = [SpecLimit(metric="overshoot_pct", upper=10.0, unit="%")]
        session.add(spec)
        session.flush()
        session.add(SpecAxis(spec_id=spec.id, axis_id=catalog.get_axis(session, AXIS).id))
    with story.session() as session:
        scan = find_regressions(session, AXIS, "overshoot_pct")
    assert {f.threshold for f in scan.findings} == {1.0}  # 10 % of the 0..10 % tolerance


def test_drift_inside_a_revision_is_a_change_point_off_the_revision_boundaries(
    database: Database,
) -> None:
    # 12 runs a revision: C starts at run 24, E at run 48; the coupling works loose at
    # run 54, half-way through E (planted 15 sigma shifts, so the index is exact).
    build_story(database, runs=12, drift=(54, -0.15))
    with database.session() as session:
        scan = find_regressions(session, AXIS, "zeta")
        within_e = change_point_scan(session, AXIS, "overshoot_pct", revision="E")
    points = [(c.index, c.revision, c.at_revision_change, c.direction) for c in scan.change_points]
    assert points == [
        (24, "C", True, "worse"),
        (48, "E", True, "better"),
        (54, "E", False, "worse"),
    ]
    assert [(c.index, c.direction) for c in within_e] == [(6, "worse")]
    assert scan.first_bad["zeta"] is not None and scan.first_bad["zeta"].finding.revision == "C"


def test_bad_requests_are_clear(story: Database) -> None:
    with story.session() as session:
        with pytest.raises(InputError, match="peak_time_s has no better direction"):
            find_regressions(session, AXIS, "peak_time_s")
        with pytest.raises(InputError, match="unknown correction 'bonferroni'"):
            find_regressions(session, AXIS, correction="bonferroni")


def _db_arg(database: Database) -> str:
    return database.url.render_as_string(hide_password=False)


def test_cli_regressions_json_and_table(story: Database) -> None:
    runner = CliRunner()
    result = runner.invoke(main, ["regressions", "--axis", AXIS, "--json", "--db", _db_arg(story)])
    assert result.exit_code == 0, result.output
    payload = json.loads(result.output)
    assert payload["first_bad_revisions"]["overshoot_pct"]["revision"] == "C"
    table = runner.invoke(main, ["regressions", "--axis", AXIS, "--db", _db_arg(story)])
    assert table.exit_code == 0, table.output
    assert "mechanical: softer motor coupling" in table.output
    assert "C vs B: loss of damping" in table.output


def test_cli_trend_csv_json_and_table(story: Database) -> None:
    runner = CliRunner()
    base = ["trend", "--axis", AXIS, "--metric", "zeta", "--gains", "base", "--db", _db_arg(story)]
    csv_out = runner.invoke(main, [*base, "--csv"])
    assert csv_out.exit_code == 0, csv_out.output
    lines = csv_out.output.splitlines()
    assert lines[0].startswith("run_id,taken_at,revision,parent,lineage_index,gains")
    assert len(lines) == 1 + 40
    payload = json.loads(runner.invoke(main, [*base, "--json"]).output)
    assert [row["count"] for row in payload["summary"]] == [8] * 5
    assert payload["summary"][0]["upper_limit"] is None
    medians = np.array([row["median"] for row in payload["summary"]])
    assert medians[2] == pytest.approx(ZETA["C"], abs=0.01)
    table = runner.invoke(main, base)
    assert table.exit_code == 0 and "revision" in table.output


def test_cli_errors_and_help(story: Database) -> None:
    runner = CliRunner()
    missing = runner.invoke(main, ["regressions", "--axis", "y-stage", "--db", _db_arg(story)])
    assert missing.exit_code == 1
    assert "Error: unknown axis 'y-stage'" in missing.output
    both = runner.invoke(
        main,
        ["trend", "--axis", AXIS, "--metric", "zeta", "--csv", "--json", "--db", _db_arg(story)],
    )
    assert both.exit_code == 2
    for command in ("trend", "regressions"):
        help_text = runner.invoke(main, [command, "--help"]).output
        assert f"Example: logbook {command} --axis x-stage" in help_text


def test_without_a_spec_the_threshold_is_a_fraction_of_the_metrics_scale(story: Database) -> None:
    with story.session() as session:
        scan = find_regressions(session, AXIS, "overshoot_pct")
        values = metric_trend(session, AXIS, "overshoot_pct", gains=scan.gains)["value"]
    expected = 0.1 * float(np.median(np.abs(values)))  # default threshold_fraction of the median
    assert scan.findings, "the planted loss of damping is still found"
    assert [f.threshold for f in scan.findings] == pytest.approx([expected] * len(scan.findings))
    assert all(abs(f.change) >= f.threshold for f in scan.findings)
