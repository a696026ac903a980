"""Judging per-run metric values against a spec under a stated decision rule.

Per metric of the spec, the runs' values are reduced to the **judged statistic**:

* ``every_run``: the worst run, i.e. the run with the smallest margin to the
  limits (the largest value against an upper limit, the smallest against a lower);
* ``median``: the median of the runs;
* ``p95``: the level that 95 % of the runs are no worse than: the 95th percentile
  against an upper limit, the 5th against a lower one (numpy's default linear
  interpolation between order statistics, Hyndman & Fan type 7).

With both limits, each side is judged with its own statistic and the side with the
smaller margin binds. **Limits are inclusive**: a value equal to a limit meets it.

The **margin** is the signed distance from the statistic to the binding limit,
positive inside: ``upper - value`` or ``value - lower``. The percentage margin is
``100 · margin / |limit|``; it is None for a limit of zero, where a percentage has
no meaning.

Decision rules (ILAC-G8:09/2019; ISO 14253-1:2017):

* **simple** acceptance: the statistic is compared with the limit directly; pass
  when it is inside (margin >= 0), fail otherwise.
* **guarded** acceptance: the run-to-run spread widens the statistic into the
  interval ``value ± U`` with the expanded uncertainty ``U = k · c · s``, where
  ``s`` is the sample standard deviation of the run values (ddof = 1, a Type A
  evaluation, JCGM 100:2008 sec. 4.2) and ``k`` the coverage factor (default 2,
  about 95 % coverage for a normal distribution). ``c`` turns the spread of single
  runs into the standard uncertainty of the judged statistic:

  ======================  =================================  ==========================
  statistic               c                                  why
  ======================  =================================  ==========================
  every_run               1                                  one run is the measurement
  median                  sqrt(pi/2) / sqrt(n)  (~1.25/√n)    large-sample standard error
                                                             of a normal sample's median
  p95                     sqrt(p(1-p)) / φ(z_p) / sqrt(n),   large-sample standard error
                          p = 0.95  (~2.11/√n)               of a normal sample quantile
  ======================  =================================  ==========================

  Verdicts: **pass** when the whole interval is inside (margin >= U); **fail** when
  the whole interval is outside (margin < -U); otherwise the interval straddles the
  limit: **conditional pass** when the statistic itself is inside (0 <= margin < U),
  **conditional fail** when it is outside (-U <= margin < 0). An interval that
  touches a limit counts as inside at that point, as limits are inclusive. The
  guarded rule needs at least two runs to estimate the spread.

No metric passes by default. Runs of another test kind than the spec's are left
out and listed; with none of the right kind every metric is **wrong test kind**.
Fewer runs than ``required_runs`` give **insufficient runs**; a run without a
(finite) value for a metric gives **no data** for that metric, since the missing
run may be the one that fails (a response that never settles has no settling time).

The overall verdict is the worst metric verdict in the order of :data:`SEVERITY`:
pass < conditional pass < conditional fail < no data < insufficient runs < wrong
test kind < fail. A demonstrated failure is the most serious finding; an
undetermined metric outranks the conditional ones because nothing was shown.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from enum import StrEnum
from typing import Any

import numpy as np
from scipy.stats import norm

from logbook.acceptance.spec_file import Limit, SpecDefinition

P95_LEVEL = 0.95


class DecisionRule(StrEnum):
    SIMPLE = "simple"
    GUARDED = "guarded"


class Verdict(StrEnum):
    PASS = "pass"
    CONDITIONAL_PASS = "conditional pass"
    CONDITIONAL_FAIL = "conditional fail"
    NO_DATA = "no data"
    INSUFFICIENT_RUNS = "insufficient runs"
    WRONG_TEST_KIND = "wrong test kind"
    FAIL = "fail"


SEVERITY: tuple[Verdict, ...] = tuple(Verdict)  # least to most serious, as declared above


def worst_verdict(verdicts: Iterable[Verdict]) -> Verdict:
    """The most serious of ``verdicts`` (see :data:`SEVERITY`); no verdicts is no data."""
    return max(verdicts, key=SEVERITY.index, default=Verdict.NO_DATA)


@dataclass(frozen=True)
class RunValues:
    """One run's value per metric (None or NaN where the analysis found none)."""

    label: str
    test_kind: str
    values: Mapping[str, float | None]


@dataclass(frozen=True)
class MetricVerdict:
    """The judgement of one metric. ``value`` is the judged statistic.

    ``bound`` names the binding limit ("lower"/"upper"); ``spread`` is the sample
    standard deviation of the run values and ``uncertainty`` the expanded U of the
    guarded rule (None under the simple rule). ``reason`` explains any verdict
    other than a plain pass or fail.
    """

    metric: str
    unit: str
    limit: Limit
    statistic: str
    run_values: tuple[float | None, ...]
    value: float | None
    bound: str | None
    margin: float | None
    margin_pct: float | None
    spread: float | None
    uncertainty: float | None
    verdict: Verdict
    reason: str | None

    def to_dict(self) -> dict[str, Any]:
        return {
            "metric": self.metric,
            "unit": self.unit,
            "lower": self.limit.lower,
            "upper": self.limit.upper,
            "statistic": self.statistic,
            "run_values": list(self.run_values),
            "value": self.value,
            "bound": self.bound,
            "margin": self.margin,
            "margin_pct": self.margin_pct,
            "spread": self.spread,
            "uncertainty": self.uncertainty,
            "verdict": str(self.verdict),
            "reason": self.reason,
        }


@dataclass(frozen=True)
class Evaluation:
    """A spec judged on a set of runs: per-metric verdicts and the overall one."""

    spec: SpecDefinition
    rule: DecisionRule
    coverage_factor: float
    runs: tuple[str, ...]
    excluded: tuple[str, ...]
    metrics: tuple[MetricVerdict, ...]
    verdict: Verdict

    def to_dict(self) -> dict[str, Any]:
        return {
            "spec": self.spec.to_dict(),
            "rule": str(self.rule),
            "coverage_factor": self.coverage_factor,
            "runs": list(self.runs),
            "excluded": list(self.excluded),
            "metrics": [m.to_dict() for m in self.metrics],
            "verdict": str(self.verdict),
        }


def evaluate(
    spec: SpecDefinition,
    runs: Sequence[RunValues],
    *,
    rule: DecisionRule = DecisionRule.SIMPLE,
    coverage_factor: float = 2.0,
) -> Evaluation:
    """Judge ``runs`` against ``spec`` under ``rule`` (see the module docstring).

    ``coverage_factor`` is k of the guarded rule's U = k·c·s (default 2).
    """
    if not coverage_factor > 0:
        raise ValueError(f"coverage factor must be positive, got {coverage_factor}")
    judged = [r for r in runs if r.test_kind == spec.test_kind]
    excluded = tuple(r.label for r in runs if r.test_kind != spec.test_kind)
    metrics = tuple(
        _judge_metric(metric, limit, spec, judged, excluded, rule, coverage_factor)
        for metric, limit in spec.limits.items()
    )
    return Evaluation(
        spec=spec,
        rule=rule,
        coverage_factor=coverage_factor,
        runs=tuple(r.label for r in judged),
        excluded=excluded,
        metrics=metrics,
        verdict=worst_verdict(m.verdict for m in metrics),
    )


def describe_rule(rule: DecisionRule, statistic: str, coverage_factor: float) -> str:
    """The decision rule in words, as printed in reports."""
    judged = {
        "every_run": "the worst run",
        "median": "the median of the runs",
        "p95": "the level 95 % of the runs are no worse than (95th/5th percentile)",
    }[statistic]
    base = f"Judged statistic: {judged}. Limits are inclusive."
    if rule is DecisionRule.SIMPLE:
        return (
            f"Simple acceptance (ILAC-G8:09/2019): the measured statistic is compared with"
            f" the limit directly; pass when inside, fail otherwise. {base}"
        )
    factor = {
        "every_run": "c = 1",
        "median": "c = sqrt(pi/2)/sqrt(n)",
        "p95": "c = sqrt(0.95·0.05)/phi(z_0.95)/sqrt(n)",
    }[statistic]
    return (
        f"Guarded acceptance (ILAC-G8:09/2019, ISO 14253-1:2017): the statistic is widened"
        f" to value ± U with U = k·c·s, k = {coverage_factor:g}, s the run-to-run sample"
        f" standard deviation, {factor}. Pass when the interval lies inside the limit, fail"
        f" when it lies outside; conditional pass / conditional fail when it straddles the"
        f" limit with the value inside / outside. {base}"
    )


def uncertainty_factor(statistic: str, n: int) -> float:
    """c of U = k·c·s: standard uncertainty of the statistic per unit of spread."""
    if statistic == "every_run":
        return 1.0
    if statistic == "median":
        return math.sqrt(math.pi / 2.0) / math.sqrt(n)
    if statistic == "p95":
        p = P95_LEVEL
        return math.sqrt(p * (1.0 - p)) / float(norm.pdf(norm.ppf(p))) / math.sqrt(n)
    raise ValueError(f"unknown statistic {statistic!r}")


def judged_value(values: Sequence[float], limit: Limit, statistic: str) -> tuple[float, str, float]:
    """(statistic, binding bound, margin) of ``values`` against ``limit``.

    Each present bound is judged with its own side's statistic; the one with the
    smaller margin binds (the upper one on a tie).
    """
    data = np.asarray(values, dtype=float)
    sides = []
    if limit.upper is not None:
        value = _side_statistic(data, statistic, upper=True)
        sides.append((limit.upper - value, value, "upper"))
    if limit.lower is not None:
        value = _side_statistic(data, statistic, upper=False)
        sides.append((value - limit.lower, value, "lower"))
    margin, value, bound = min(sides, key=lambda side: side[0])
    return value, bound, margin


def _side_statistic(data: np.ndarray, statistic: str, *, upper: bool) -> float:
    if statistic == "every_run":
        return float(data.max() if upper else data.min())
    if statistic == "median":
        return float(np.median(data))
    if statistic == "p95":
        return float(np.quantile(data, P95_LEVEL if upper else 1.0 - P95_LEVEL))
    raise ValueError(f"unknown statistic {statistic!r}")


def _judge_metric(
    metric: str,
    limit: Limit,
    spec: SpecDefinition,
    runs: Sequence[RunValues],
    excluded: tuple[str, ...],
    rule: DecisionRule,
    k: float,
) -> MetricVerdict:
    raw = tuple(_finite_or_none(r.values.get(metric)) for r in runs)

    def undecided(verdict: Verdict, reason: str) -> MetricVerdict:
        return MetricVerdict(
            metric, limit.unit, limit, spec.statistic, raw,
            None, None, None, None, None, None, verdict, reason,
        )  # fmt: skip

    if not runs and excluded:
        return undecided(
            Verdict.WRONG_TEST_KIND,
            f"no {spec.test_kind} runs; {len(excluded)} run(s) of another test kind left out",
        )
    missing = [r.label for r, v in zip(runs, raw, strict=True) if v is None]
    if missing:
        return undecided(Verdict.NO_DATA, f"no value in run(s) {', '.join(missing)}")
    if not runs:
        return undecided(Verdict.INSUFFICIENT_RUNS, f"0 of {spec.required_runs} required runs")

    values = [v for v in raw if v is not None]
    value, bound, margin = judged_value(values, limit, spec.statistic)
    limit_value = limit.upper if bound == "upper" else limit.lower
    assert limit_value is not None  # judged_value only binds present bounds
    margin_pct = None if limit_value == 0 else 100.0 * margin / abs(limit_value)
    n = len(values)
    spread = float(np.std(values, ddof=1)) if n >= 2 else None
    uncertainty = None
    reason = None
    if n < spec.required_runs:
        verdict = Verdict.INSUFFICIENT_RUNS
        reason = f"{n} of {spec.required_runs} required runs"
    elif rule is DecisionRule.SIMPLE:
        verdict = Verdict.PASS if margin >= 0 else Verdict.FAIL
    elif spread is None:
        verdict = Verdict.INSUFFICIENT_RUNS
        reason = "guarded acceptance needs at least 2 runs to estimate the run-to-run spread"
    else:
        uncertainty = k * uncertainty_factor(spec.statistic, n) * spread
        verdict = _guarded_verdict(margin, uncertainty)
        if verdict in (Verdict.CONDITIONAL_PASS, Verdict.CONDITIONAL_FAIL):
            reason = f"the interval value ± {uncertainty:.4g} straddles the {bound} limit"
    return MetricVerdict(
        metric, limit.unit, limit, spec.statistic, raw,
        value, bound, margin, margin_pct, spread, uncertainty, verdict, reason,
    )  # fmt: skip


def _guarded_verdict(margin: float, uncertainty: float) -> Verdict:
    if margin >= uncertainty:
        return Verdict.PASS
    if margin < -uncertainty:
        return Verdict.FAIL
    return Verdict.CONDITIONAL_PASS if margin >= 0 else Verdict.CONDITIONAL_FAIL


def _finite_or_none(value: float | None) -> float | None:
    if value is None or not math.isfinite(value):
        return None
    return float(value)
