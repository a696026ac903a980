"""Decision rules on hand-built cases, every edge included.

Rule structure: ILAC-G8:09/2019 (simple acceptance; guarded acceptance with a guard
band equal to the expanded uncertainty) and ISO 14253-1:2017 (conformity is proven
only when the uncertainty interval lies inside the limits; conditional statements
when it straddles them), both from memory. Inclusive limits: common practice.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from logbook.acceptance.rules import (
    SEVERITY,
    DecisionRule,
    RunValues,
    Verdict,
    describe_rule,
    evaluate,
    uncertainty_factor,
    worst_verdict,
)
from logbook.acceptance.spec_file import Limit, SpecDefinition

GUARDED = DecisionRule.GUARDED


def make_spec(limits: dict[str, Limit], *, statistic="every_run", required_runs=1):
    return SpecDefinition(
        name="bench-spec",
        version="1",
        test_kind="position_step",
        axes=("x-stage",),
        statistic=statistic,
        required_runs=required_runs,
        description="",
        limits=limits,
    )


def runs_of(metric: str, values, kind="position_step") -> list[RunValues]:
    return [RunValues(f"r{i}", kind, {metric: v}) for i, v in enumerate(values, start=1)]


def judge(limit: Limit, values, *, metric="overshoot_pct", rule=DecisionRule.SIMPLE, **spec_kw):
    spec = make_spec({metric: limit}, **spec_kw)
    return evaluate(spec, runs_of(metric, values), rule=rule).metrics[0]


UPPER_10 = Limit(lower=None, upper=10.0, unit="%")


# --- simple acceptance -------------------------------------------------------------


def test_simple_at_the_limit_passes_and_just_beyond_fails():
    # common practice: a limit is inclusive ("<= 10 %" is met by 10 %)
    at = judge(UPPER_10, [10.0])
    assert at.verdict is Verdict.PASS
    assert at.margin == 0.0
    beyond = judge(UPPER_10, [10.0 + 1e-9])
    assert beyond.verdict is Verdict.FAIL
    assert beyond.margin < 0


def test_simple_at_a_lower_limit_passes():
    zeta = Limit(lower=0.5, upper=None, unit="1")
    result = judge(zeta, [0.7, 0.5, 0.9], metric="zeta")
    assert result.verdict is Verdict.PASS
    assert result.value == 0.5  # every run: the worst run against a lower limit is the lowest
    assert result.bound == "lower"
    assert result.margin == 0.0


def test_margin_absolute_and_percent_of_the_limit():
    result = judge(UPPER_10, [6.0, 8.0, 7.0])
    assert result.value == 8.0  # every run: the worst (highest) run
    assert result.margin == pytest.approx(2.0)
    assert result.margin_pct == pytest.approx(20.0)  # 2 / 10
    assert result.uncertainty is None  # simple rule


def test_percent_margin_uses_the_magnitude_of_a_negative_limit():
    limit = Limit(lower=-2.0, upper=None, unit="mm")
    result = judge(limit, [-1.0], metric="steady_state_error")
    assert result.margin == pytest.approx(1.0)
    assert result.margin_pct == pytest.approx(50.0)


def test_zero_limit_has_no_percent_margin():
    flag = Limit(lower=None, upper=0.0, unit="bool")
    ok = judge(flag, [0.0, 0.0], metric="hunting_flag")
    assert ok.verdict is Verdict.PASS
    assert ok.margin == 0.0
    assert ok.margin_pct is None
    bad = judge(flag, [0.0, 1.0], metric="hunting_flag")
    assert bad.verdict is Verdict.FAIL
    assert bad.margin == -1.0
    assert bad.margin_pct is None


def test_two_sided_limit_binds_on_the_nearer_side():
    rise = Limit(lower=0.005, upper=0.080, unit="s")
    near_upper = judge(rise, [0.030, 0.075], metric="rise_time_s")
    assert near_upper.bound == "upper"
    assert near_upper.value == 0.075
    assert near_upper.margin == pytest.approx(0.005)
    near_lower = judge(rise, [0.006, 0.030], metric="rise_time_s")
    assert near_lower.bound == "lower"
    assert near_lower.value == 0.006
    assert near_lower.margin == pytest.approx(0.001)
    too_fast = judge(rise, [0.004, 0.030], metric="rise_time_s")
    assert too_fast.verdict is Verdict.FAIL
    assert too_fast.bound == "lower"


def test_median_statistic_of_an_even_count():
    result = judge(UPPER_10, [4.0, 12.0, 8.0, 6.0], statistic="median")
    assert result.value == 7.0  # mean of the two middle values, 6 and 8
    assert result.verdict is Verdict.PASS  # one run above the limit does not fail the median


def test_p95_follows_hyndman_fan_type_7():
    # Hyndman & Fan (1996), definition 7: h = (n - 1)·p, x[floor h] + frac(h)·(next - x[floor h])
    values = [float(v) for v in range(1, 21)]  # 1..20
    upper = judge(Limit(None, 30.0, "%"), values, statistic="p95")
    assert upper.value == pytest.approx(19.05)  # h = 19·0.95 = 18.05 -> 19 + 0.05·1
    lower = judge(Limit(0.0, None, "1"), values, metric="zeta", statistic="p95")
    assert lower.value == pytest.approx(1.95)  # h = 19·0.05 = 0.95 -> 1 + 0.95·1


# --- guarded acceptance --------------------------------------------------------------
# Runs 9.0, 9.5, 10.0: sample standard deviation (ddof 1) is exactly 0.5, so with
# every_run (c = 1) and k = 2 the expanded uncertainty is exactly U = 1.0 around the
# worst run 10.0: the interval is [9.0, 11.0].
SPREAD_RUNS = [9.0, 9.5, 10.0]


@pytest.mark.parametrize(
    ("upper", "verdict"),
    [
        (11.5, Verdict.PASS),  # interval wholly inside
        (11.0, Verdict.PASS),  # interval touches the limit from inside: inclusive
        (10.5, Verdict.CONDITIONAL_PASS),  # value inside, interval straddles
        (10.0, Verdict.CONDITIONAL_PASS),  # value exactly at the limit, interval straddles
        (9.5, Verdict.CONDITIONAL_FAIL),  # value outside, interval straddles
        (9.0, Verdict.CONDITIONAL_FAIL),  # interval touches the limit from outside
        (8.5, Verdict.FAIL),  # interval wholly outside
    ],
)
def test_guarded_verdicts_around_an_upper_limit(upper, verdict):
    result = judge(Limit(None, upper, "%"), SPREAD_RUNS, rule=GUARDED)
    assert result.spread == pytest.approx(0.5)
    assert result.uncertainty == pytest.approx(1.0)
    assert result.value == 10.0
    assert result.verdict is verdict


@pytest.mark.parametrize(
    ("lower", "verdict"),
    [
        (7.5, Verdict.PASS),
        (9.0, Verdict.CONDITIONAL_PASS),  # worst run 9.0 at the limit
        (9.5, Verdict.CONDITIONAL_FAIL),
        (10.5, Verdict.FAIL),
    ],
)
def test_guarded_verdicts_around_a_lower_limit(lower, verdict):
    result = judge(Limit(lower, None, "1"), SPREAD_RUNS, metric="zeta", rule=GUARDED)
    assert result.value == 9.0
    assert result.bound == "lower"
    assert result.verdict is verdict


def test_guarded_interval_wider_than_the_tolerance_zone_is_conditional():
    # median 10.0, s = sqrt(0.5), U = 2·sqrt(pi/2)·s/sqrt(5) = 0.79: the interval
    # [9.21, 10.79] covers both limits of the zone [9.6, 10.4]; the value is inside
    result = judge(Limit(9.6, 10.4, "%"), [10.0, 10.0, 10.0, 9.0, 11.0], rule=GUARDED,
                   statistic="median")  # fmt: skip
    assert result.value == 10.0
    assert result.verdict is Verdict.CONDITIONAL_PASS


def test_guarded_with_identical_runs_reduces_to_simple():
    at = judge(UPPER_10, [10.0, 10.0], rule=GUARDED)
    assert at.uncertainty == 0.0
    assert at.verdict is Verdict.PASS


def test_guarded_needs_two_runs():
    result = judge(UPPER_10, [5.0], rule=GUARDED)
    assert result.verdict is Verdict.INSUFFICIENT_RUNS
    assert "at least 2 runs" in result.reason


def test_coverage_factor_scales_the_interval():
    spec = make_spec({"overshoot_pct": Limit(None, 10.5, "%")})
    k2 = evaluate(spec, runs_of("overshoot_pct", SPREAD_RUNS), rule=GUARDED)
    k1 = evaluate(spec, runs_of("overshoot_pct", SPREAD_RUNS), rule=GUARDED, coverage_factor=1.0)
    assert k2.metrics[0].verdict is Verdict.CONDITIONAL_PASS  # U = 1.0 > margin 0.5
    assert k1.metrics[0].verdict is Verdict.PASS  # U = 0.5 = margin
    with pytest.raises(ValueError, match="coverage factor"):
        evaluate(spec, [], coverage_factor=0.0)


def test_median_uncertainty_matches_the_sampling_spread_of_the_median():
    # Normal theory: the sample median's standard error tends to sqrt(pi/2)·sigma/sqrt(n)
    # (e.g. Kendall & Stuart, The Advanced Theory of Statistics, from memory).
    rng = np.random.default_rng(7)
    n = 101
    medians = np.median(rng.normal(0.0, 1.0, size=(20_000, n)), axis=1)
    assert uncertainty_factor("median", n) == pytest.approx(np.std(medians), rel=0.04)


def test_p95_uncertainty_matches_the_sampling_spread_of_the_quantile():
    # Asymptotic standard error of a sample p-quantile: sqrt(p(1-p)/n) / f(x_p)
    # (e.g. Kendall & Stuart, from memory); for the unit normal f(x_0.95) = 0.1031.
    assert uncertainty_factor("p95", 1) == pytest.approx(math.sqrt(0.95 * 0.05) / 0.10314, rel=1e-3)
    rng = np.random.default_rng(11)
    n = 400
    quantiles = np.quantile(rng.normal(0.0, 1.0, size=(5_000, n)), 0.95, axis=1)
    assert uncertainty_factor("p95", n) == pytest.approx(np.std(quantiles), rel=0.06)


# --- verdicts that say the evidence is not there ---------------------------------------


def test_too_few_runs_never_pass_but_still_show_the_value():
    result = judge(UPPER_10, [1.0, 2.0, 3.0], required_runs=5)
    assert result.verdict is Verdict.INSUFFICIENT_RUNS
    assert result.reason == "3 of 5 required runs"
    assert result.value == 3.0


def test_no_runs_at_all_is_insufficient():
    spec = make_spec({"overshoot_pct": UPPER_10})
    evaluation = evaluate(spec, [])
    assert evaluation.verdict is Verdict.INSUFFICIENT_RUNS
    assert evaluation.metrics[0].reason == "0 of 1 required runs"


@pytest.mark.parametrize("missing", [None, float("nan"), float("inf")])
def test_a_run_without_a_value_gives_no_data(missing):
    result = judge(UPPER_10, [1.0, missing, 2.0])
    assert result.verdict is Verdict.NO_DATA
    assert result.reason == "no value in run(s) r2"
    assert result.value is None


def test_a_run_lacking_the_metric_key_gives_no_data():
    spec = make_spec({"overshoot_pct": UPPER_10, "rise_time_s": Limit(None, 0.1, "s")})
    runs = [RunValues("a", "position_step", {"overshoot_pct": 1.0})]
    evaluation = evaluate(spec, runs)
    by_metric = {m.metric: m for m in evaluation.metrics}
    assert by_metric["overshoot_pct"].verdict is Verdict.PASS
    assert by_metric["rise_time_s"].verdict is Verdict.NO_DATA
    assert evaluation.verdict is Verdict.NO_DATA


def test_runs_of_another_test_kind_are_left_out():
    spec = make_spec({"overshoot_pct": UPPER_10})
    only_ramps = evaluate(spec, runs_of("overshoot_pct", [1.0, 2.0], kind="ramp"))
    assert only_ramps.verdict is Verdict.WRONG_TEST_KIND
    assert only_ramps.excluded == ("r1", "r2")
    mixed = evaluate(
        spec,
        [*runs_of("overshoot_pct", [1.0]), RunValues("ramp-1", "ramp", {"overshoot_pct": 50.0})],
    )
    assert mixed.verdict is Verdict.PASS
    assert mixed.runs == ("r1",)
    assert mixed.excluded == ("ramp-1",)


# --- the overall verdict ---------------------------------------------------------------


def test_overall_verdict_is_the_worst_metric_verdict():
    spec = make_spec(
        {"overshoot_pct": UPPER_10, "rise_time_s": Limit(None, 0.1, "s")}, required_runs=1
    )
    passing = [RunValues("a", "position_step", {"overshoot_pct": 5.0, "rise_time_s": 0.05})]
    assert evaluate(spec, passing).verdict is Verdict.PASS
    failing = [RunValues("a", "position_step", {"overshoot_pct": 15.0, "rise_time_s": None})]
    # a demonstrated failure outranks a metric without data
    assert evaluate(spec, failing).verdict is Verdict.FAIL


def test_severity_order_is_documented_order():
    assert SEVERITY == (
        Verdict.PASS,
        Verdict.CONDITIONAL_PASS,
        Verdict.CONDITIONAL_FAIL,
        Verdict.NO_DATA,
        Verdict.INSUFFICIENT_RUNS,
        Verdict.WRONG_TEST_KIND,
        Verdict.FAIL,
    )
    assert worst_verdict([Verdict.PASS, Verdict.CONDITIONAL_FAIL]) is Verdict.CONDITIONAL_FAIL
    assert worst_verdict([Verdict.CONDITIONAL_PASS, Verdict.NO_DATA]) is Verdict.NO_DATA
    assert worst_verdict([]) is Verdict.NO_DATA  # nothing judged never passes


def test_rule_text_names_the_rule_and_its_parameters():
    simple = describe_rule(DecisionRule.SIMPLE, "median", 2.0)
    assert simple.startswith("Simple acceptance (ILAC-G8:09/2019)")
    guarded = describe_rule(DecisionRule.GUARDED, "median", 2.0)
    assert "ISO 14253-1:2017" in guarded
    assert "k = 2" in guarded
    assert "c = sqrt(pi/2)/sqrt(n)" in guarded
    assert "inclusive" in guarded
