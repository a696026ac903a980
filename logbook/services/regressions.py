"""Regression finding for one axis: which revision made which metric worse, and drift.

What is compared (other things held equal):

* one test kind (see :func:`logbook.services.trends.select_runs`);
* one gain set: the one given, or by default the *reference gain set*, the gain
  set used on the most revisions of the axis (then the most runs, then the oldest),
  so that a change of gains is never mistaken for a change of hardware;
* optionally one step amplitude range.

Per metric and revision, the revision's runs are compared with its parent's (or
the nearest tested ancestor's) by :mod:`logbook.stats.lineage`: change in median,
Cliff's delta as the effect size, two-sided Mann-Whitney U. The p-values of every
comparison of the scan (all revisions x all metrics scanned) form one family,
corrected across metrics and revisions together:

* ``"bh"`` (default), Benjamini-Hochberg: the expected share of false findings
  among the findings is at most ``alpha``; when nothing changed at all that is
  the chance of any finding (measured in ``tests/stats``: 7 of 200 null histories);
* ``"holm"``: the chance of even one false finding is at most ``alpha``, at a
  price bench data can rarely pay: with 5 runs a side the smallest possible p is
  2/C(10, 5) = 0.0079, so Holm over more than 6 comparisons can never call one.
  BH gains its power from the many metrics that move together when a revision
  really changed the loop (a loss of damping moves overshoot, settling time,
  zeta and the error integrals at once).

A finding needs both that and a change in median at least the metric's
*practical threshold*: the amount given in ``thresholds``, else
``threshold_fraction`` of the spec's tolerance (upper - lower, or the single
limit's magnitude when only one is set; spec limits must be in the metric's
unit), else ``threshold_fraction`` of the metric's typical magnitude on the
axis (the median of |value| over the runs scanned).

The first bad revision per metric follows the definition in
:mod:`logbook.stats.lineage` ("stayed worse" until a revision that is better
ends the stretch). Beside it: the revision's change notes and category, and how
the gains usually run on it differ from those on its baseline.

Change points (:mod:`logbook.stats.changepoint`) are searched in the
chronological run history of the whole axis (or of one revision); each is
flagged when it falls on the first run of a new revision, so drift that no
revision explains (wear, a loosened coupling) stands out.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from datetime import date, datetime
from typing import Any

import numpy as np
import pandas as pd
from sqlalchemy import distinct, func, select
from sqlalchemy.orm import Session

from logbook.analysis.catalog import METRICS
from logbook.analysis.settings import AnalysisSettings
from logbook.errors import InputError
from logbook.services import catalog
from logbook.services.trends import (
    RunSelection,
    require_metric,
    revision_labels,
    run_values,
    select_runs,
    spec_limit,
)
from logbook.stats.changepoint import find_change_points
from logbook.stats.explain import DynamicsExplanation, explain_dynamics
from logbook.stats.lineage import (
    BETTER,
    WORSE,
    BadRevision,
    ParentComparison,
    RevisionVerdict,
    bad_revisions,
    classify,
    compare_with_parents,
)
from logbook.stats.multiple import adjust
from logbook.store.models import GainSet, HardwareRevision, TestRun

#: Metrics scanned by default: every catalogue metric with a "better" direction.
DIRECTED_METRICS = tuple(name for name, info in METRICS.items() if info.better is not None)
#: Compared gain-set parameters, in the order they are reported.
GAIN_PARAMETERS = (
    "kp",
    "ki",
    "kd",
    "loop_rate_hz",
    "integrator_limit",
    "anti_windup",
    "derivative_filter_hz",
    "feedforward",
)


@dataclass(frozen=True)
class Finding:
    """A significant and practically relevant change of one metric at one revision.

    ``parent`` is the revision actually compared with (the nearest ancestor with
    enough runs); ``p_value`` is the raw Mann-Whitney p, ``p_adjusted`` the value
    after the scan's correction; ``effect_size`` is Cliff's delta (after vs before).
    """

    metric: str
    unit: str | None
    revision: str
    parent: str
    lineage_parent: str | None
    n_before: int
    n_after: int
    median_before: float
    median_after: float
    change: float
    hodges_lehmann: float
    effect_size: float
    p_value: float
    p_adjusted: float
    threshold: float
    direction: str  # "worse" or "better"

    def to_json(self) -> dict[str, Any]:
        return {
            "metric": self.metric,
            "unit": self.unit,
            "revision": self.revision,
            "parent": self.parent,
            "lineage_parent": self.lineage_parent,
            "n_before": self.n_before,
            "n_after": self.n_after,
            "median_before": self.median_before,
            "median_after": self.median_after,
            "change": self.change,
            "hodges_lehmann": self.hodges_lehmann,
            "effect_size": self.effect_size,
            "effect_size_kind": "cliffs_delta",
            "p_value": self.p_value,
            "p_adjusted": self.p_adjusted,
            "threshold": self.threshold,
            "direction": self.direction,
        }


@dataclass(frozen=True)
class GainDifference:
    """One gain-set parameter that differs between two revisions' usual gains."""

    parameter: str
    before: float | str | None
    after: float | str | None


@dataclass(frozen=True)
class PersistenceCheck:
    """A later revision of a bad stretch compared with the bad revision's baseline."""

    revision: str
    n: int
    median: float | None
    p_value: float | None

    def to_json(self) -> dict[str, Any]:
        return {
            "revision": self.revision,
            "n": self.n,
            "median": self.median,
            "p_value": self.p_value,
        }


@dataclass(frozen=True)
class FirstBadRevision:
    """The first revision where a metric got worse and stayed worse, with the evidence."""

    metric: str
    finding: Finding
    stretch: tuple[str, ...]
    fixed_by: tuple[str, ...]
    persistence: tuple[PersistenceCheck, ...]
    change_category: str
    change_summary: str
    revision_date: date | None
    gains_before: str | None
    gains_after: str | None
    gain_differences: tuple[GainDifference, ...]

    def to_json(self) -> dict[str, Any]:
        return {
            "metric": self.metric,
            "revision": self.finding.revision,
            "parent": self.finding.parent,
            "evidence": self.finding.to_json(),
            "stayed_worse_through": list(self.stretch),
            "fixed_by": list(self.fixed_by),
            "persistence": [p.to_json() for p in self.persistence],
            "change_category": self.change_category,
            "change_summary": self.change_summary,
            "revision_date": self.revision_date.isoformat() if self.revision_date else None,
            "usual_gains_before": self.gains_before,
            "usual_gains_after": self.gains_after,
            "gain_differences": [
                {"parameter": d.parameter, "before": d.before, "after": d.after}
                for d in self.gain_differences
            ],
        }


@dataclass(frozen=True)
class ChangePointFinding:
    """A level shift in the chronological run history of one metric."""

    metric: str
    index: int  # 0-based position in the date-ordered history scanned
    run_id: int
    taken_at: datetime
    revision: str
    at_revision_change: bool  # the run is the first of a different revision
    mean_before: float
    mean_after: float
    median_before: float
    median_after: float
    direction: str  # of the change in mean: "worse" or "better"

    def to_json(self) -> dict[str, Any]:
        return {
            "metric": self.metric,
            "index": self.index,
            "run_id": self.run_id,
            "taken_at": self.taken_at.isoformat(),
            "revision": self.revision,
            "at_revision_change": self.at_revision_change,
            "mean_before": self.mean_before,
            "mean_after": self.mean_after,
            "median_before": self.median_before,
            "median_after": self.median_after,
            "direction": self.direction,
        }


@dataclass(frozen=True)
class RegressionScan:
    """Everything one scan of an axis found, and how it was asked."""

    axis: str
    test_kind: str
    gains: str | None
    metrics: tuple[str, ...]
    alpha: float
    correction: str
    family_size: int
    findings: tuple[Finding, ...]
    first_bad: Mapping[str, FirstBadRevision | None]
    change_points: tuple[ChangePointFinding, ...]
    explanations: tuple[DynamicsExplanation, ...]

    def to_json(self) -> dict[str, Any]:
        first = {m: (f.finding.revision if f else None) for m, f in self.first_bad.items()}
        return {
            "axis": self.axis,
            "test_kind": self.test_kind,
            "gains": self.gains,
            "metrics": list(self.metrics),
            "alpha": self.alpha,
            "correction": self.correction,
            "family_size": self.family_size,
            "findings": [
                {**f.to_json(), "first_bad_revision": first.get(f.metric)} for f in self.findings
            ],
            "first_bad_revisions": {
                m: (f.to_json() if f else None) for m, f in self.first_bad.items()
            },
            "change_points": [c.to_json() for c in self.change_points],
            "explanations": [
                {
                    "revision": e.revision,
                    "parent": e.baseline,
                    "damping": e.damping,
                    "bandwidth": e.bandwidth,
                    "lost": e.kind,
                    "text": e.text,
                }
                for e in self.explanations
            ],
        }


def find_regressions(
    session: Session,
    axis: str,
    metric: str | None = None,
    *,
    test_kind: str | None = None,
    gains: str | None = None,
    amplitude_range: tuple[float, float] | None = None,
    settings: AnalysisSettings | None = None,
    alpha: float = 0.05,
    correction: str = "bh",
    thresholds: Mapping[str, float] | None = None,
    threshold_fraction: float = 0.1,
    min_samples: int = 3,
    penalty_factor: float = 3.0,
    min_segment: int = 5,
) -> RegressionScan:
    """Scan ``axis`` for findings, first bad revisions and change points.

    metric: one metric to scan, or None for every metric with a "better" direction
        that has figures for the selected runs.
    gains: a gain-set name; None means the reference gain set (module notes).
    alpha, correction: level and method ("holm" or "bh") for the scan's family.
    thresholds: practical threshold per metric, in the metric's unit; overrides
        the spec-derived ``threshold_fraction`` of the tolerance (default 0.1).
    min_samples: runs needed on each side of a comparison (default 3).
    penalty_factor, min_segment: change-point settings (see
        :func:`logbook.stats.changepoint.find_change_points`).
    """
    selection = _comparable_runs(session, axis, test_kind, gains, amplitude_range, settings)
    wanted = (require_metric(metric),) if metric is not None else DIRECTED_METRICS
    for name in wanted:
        if METRICS[name].better is None:
            raise InputError(
                f"{name} has no better direction (it is a level or an event time); "
                "there is nothing to call worse"
            )
    values = run_values(session, selection, sorted(set(wanted) | {"zeta", "wn_rad_s"}))
    revisions = revision_labels(selection.axis)
    values["revision"] = [revisions[r][0] for r in values["revision_id"]]
    lineage = [(label, parent) for label, parent, _ in sorted(revisions.values(), key=_third)]
    scanned = tuple(m for m in wanted if (values["metric"] == m).any())
    samples = {m: _samples(values, m) for m in set(scanned) | {"zeta", "wn_rad_s"}}
    units = {m: _unit(values, m) for m in scanned}

    comparisons = {
        m: compare_with_parents(lineage, samples[m], min_samples=min_samples) for m in scanned
    }
    limits = {
        m: _threshold(session, selection, m, units[m], thresholds, threshold_fraction, samples[m])
        for m in scanned
    }
    verdicts = _classified(comparisons, thresholds=limits, alpha=alpha, correction=correction)
    findings = tuple(
        _finding(m, units[m], v, limits[m])
        for m in scanned
        for v in verdicts[m]
        if v.verdict in (WORSE, BETTER)
    )
    by_label = {r.label: r for r in selection.axis.revisions}
    usual = _usual_gains(session, selection)
    first_bad: dict[str, FirstBadRevision | None] = {}
    for m in scanned:
        bad = bad_revisions(
            lineage,
            samples[m],
            verdicts[m],
            better=_better(m),
            practical_threshold=limits[m],
            alpha=alpha,
            min_samples=min_samples,
        )
        first_bad[m] = _first_bad(m, units[m], bad[0], limits[m], by_label, usual) if bad else None
    return RegressionScan(
        axis=selection.axis.name,
        test_kind=selection.test_kind,
        gains=_gain_name(selection.gain_set),
        metrics=scanned,
        alpha=alpha,
        correction=correction,
        family_size=sum(len(_tested(cs)) for cs in comparisons.values()),
        findings=findings,
        first_bad=first_bad,
        change_points=tuple(
            point
            for m in scanned
            for point in _change_points(values, m, penalty_factor, min_segment)
        ),
        explanations=_explanations(lineage, samples, alpha, correction, min_samples, findings),
    )


def change_point_scan(
    session: Session,
    axis: str,
    metric: str,
    *,
    revision: str | None = None,
    test_kind: str | None = None,
    gains: str | None = None,
    amplitude_range: tuple[float, float] | None = None,
    settings: AnalysisSettings | None = None,
    penalty_factor: float = 3.0,
    min_segment: int = 5,
) -> tuple[ChangePointFinding, ...]:
    """Level shifts of ``metric`` along the date-ordered runs of the axis or one revision.

    gains None means the reference gain set, as in :func:`find_regressions`.
    """
    selection = _comparable_runs(session, axis, test_kind, gains, amplitude_range, settings)
    require_metric(metric)
    values = run_values(session, selection, [metric])
    revisions = revision_labels(selection.axis)
    values["revision"] = [revisions[r][0] for r in values["revision_id"]]
    if revision is not None:
        catalog.get_revision(session, selection.axis.name, revision)
        values = values[values["revision"] == revision]
    return _change_points(values, metric, penalty_factor, min_segment)


def reference_gain_set(session: Session, selection: RunSelection) -> GainSet | None:
    """The gain set run on the most revisions (then most runs, then oldest), or None."""
    row = session.execute(
        select(TestRun.gain_set_id)
        .where(TestRun.axis_id == selection.axis.id, TestRun.test_kind == selection.test_kind)
        .group_by(TestRun.gain_set_id)
        .order_by(
            func.count(distinct(TestRun.revision_id)).desc(),
            func.count().desc(),
            TestRun.gain_set_id,
        )
        .limit(1)
    ).first()
    return session.get(GainSet, row[0]) if row else None


def _classified(
    comparisons: Mapping[str, Sequence[ParentComparison]],
    *,
    thresholds: Mapping[str, float],
    alpha: float,
    correction: str,
) -> dict[str, tuple[RevisionVerdict, ...]]:
    """Adjust every tested p-value of the family together, then classify per metric."""
    keys = [(m, i) for m, cs in comparisons.items() for i in _tested(cs)]
    raw = [_p(comparisons[m][i]) for m, i in keys]
    adjusted = dict(zip(keys, (float(p) for p in adjust(raw, correction)), strict=True))
    return {
        m: tuple(
            classify(
                c,
                adjusted.get((m, i)),
                better=_better(m),
                practical_threshold=thresholds[m],
                alpha=alpha,
            )
            for i, c in enumerate(cs)
        )
        for m, cs in comparisons.items()
    }


def _tested(comparisons: Sequence[ParentComparison]) -> list[int]:
    return [
        i
        for i, c in enumerate(comparisons)
        if c.comparison is not None and c.comparison.p_value is not None
    ]


def _p(comparison: ParentComparison) -> float:
    assert comparison.comparison is not None and comparison.comparison.p_value is not None
    return comparison.comparison.p_value


def _better(metric: str) -> str:
    better = METRICS[metric].better
    assert better is not None  # only directed metrics are scanned
    return better


def _comparable_runs(
    session: Session,
    axis: str,
    test_kind: str | None,
    gains: str | None,
    amplitude_range: tuple[float, float] | None,
    settings: AnalysisSettings | None,
) -> RunSelection:
    """The runs to compare: one test kind and one gain set (the reference by default)."""
    selection = select_runs(
        session,
        axis,
        test_kind=test_kind,
        gains=gains,
        amplitude_range=amplitude_range,
        settings=settings,
    )
    if selection.gain_set is None:
        selection = replace(selection, gain_set=reference_gain_set(session, selection))
    return selection


def _threshold(
    session: Session,
    selection: RunSelection,
    metric: str,
    unit: str | None,
    thresholds: Mapping[str, float] | None,
    fraction: float,
    samples: Mapping[str, Sequence[float]],
) -> float:
    if thresholds and metric in thresholds:
        return float(thresholds[metric])
    limit = spec_limit(session, selection, metric)
    if limit is None or limit.unit != unit:
        # No tolerance to take a fraction of: use the metric's own scale on this
        # axis, so a change of a few percent of a typical value is not a finding.
        magnitudes = [abs(v) for runs in samples.values() for v in runs]
        return fraction * float(np.median(magnitudes)) if magnitudes else 0.0
    if limit.lower is not None and limit.upper is not None:
        return fraction * (limit.upper - limit.lower)
    bound = limit.upper if limit.upper is not None else limit.lower
    return fraction * abs(bound or 0.0)


def _finding(metric: str, unit: str | None, v: RevisionVerdict, threshold: float) -> Finding:
    c = v.comparison
    assert c is not None and c.p_value is not None and v.p_adjusted is not None
    assert v.baseline is not None
    return Finding(
        metric=metric,
        unit=unit,
        revision=v.revision,
        parent=v.baseline,
        lineage_parent=v.parent,
        n_before=c.n_before,
        n_after=c.n_after,
        median_before=_f(c.median_before),
        median_after=_f(c.median_after),
        change=_f(c.change),
        hodges_lehmann=_f(c.hodges_lehmann),
        effect_size=_f(c.cliffs_delta),
        p_value=c.p_value,
        p_adjusted=v.p_adjusted,
        threshold=threshold,
        direction=v.verdict,
    )


def _first_bad(
    metric: str,
    unit: str | None,
    bad: BadRevision,
    threshold: float,
    revisions: Mapping[str, HardwareRevision],
    usual: Mapping[str, GainSet],
) -> FirstBadRevision:
    row = revisions[bad.revision]
    before, after = usual.get(bad.baseline), usual.get(bad.revision)
    return FirstBadRevision(
        metric=metric,
        finding=_finding(metric, unit, bad.evidence, threshold),
        stretch=bad.stretch,
        fixed_by=bad.fixed_by,
        persistence=tuple(
            PersistenceCheck(label, c.n_after, c.median_after, c.p_value)
            for label, c in bad.persistence
        ),
        change_category=row.change_category,
        change_summary=row.change_summary,
        revision_date=row.revision_date,
        gains_before=_gain_name(before),
        gains_after=_gain_name(after),
        gain_differences=_gain_differences(before, after),
    )


def _usual_gains(session: Session, selection: RunSelection) -> dict[str, GainSet]:
    """Per revision label, the gain set of most of its runs of this test kind."""
    rows = session.execute(
        select(TestRun.revision_id, TestRun.gain_set_id, func.count())
        .where(TestRun.axis_id == selection.axis.id, TestRun.test_kind == selection.test_kind)
        .group_by(TestRun.revision_id, TestRun.gain_set_id)
        .order_by(TestRun.revision_id, func.count().desc(), TestRun.gain_set_id)
    ).all()
    labels = revision_labels(selection.axis)
    usual: dict[str, GainSet] = {}
    for revision_id, gain_set_id, _ in rows:
        label = labels[revision_id][0]
        if label not in usual:
            gain_set = session.get(GainSet, gain_set_id)
            assert gain_set is not None  # a foreign key guarantees it
            usual[label] = gain_set
    return usual


def _gain_differences(before: GainSet | None, after: GainSet | None) -> tuple[GainDifference, ...]:
    if before is None or after is None or before.id == after.id:
        return ()
    return tuple(
        GainDifference(name, getattr(before, name), getattr(after, name))
        for name in GAIN_PARAMETERS
        if getattr(before, name) != getattr(after, name)
    )


def _change_points(
    values: pd.DataFrame, metric: str, penalty_factor: float, min_segment: int
) -> tuple[ChangePointFinding, ...]:
    history = values[values["metric"] == metric].sort_values(["taken_at", "run_id"])
    series = history["value"].to_numpy(float)
    scan = find_change_points(series, penalty_factor=penalty_factor, min_size=min_segment)
    better = METRICS[metric].better
    revisions = history["revision"].tolist()
    run_ids = history["run_id"].tolist()
    times = history["taken_at"].tolist()
    return tuple(
        ChangePointFinding(
            metric=metric,
            index=p.index,
            run_id=int(run_ids[p.index]),
            taken_at=times[p.index],
            revision=revisions[p.index],
            at_revision_change=revisions[p.index] != revisions[p.index - 1],
            mean_before=p.mean_before,
            mean_after=p.mean_after,
            median_before=p.median_before,
            median_after=p.median_after,
            direction=WORSE if (p.change > 0) == (better == "lower") else BETTER,
        )
        for p in scan.points
    )


def _explanations(
    lineage: Sequence[tuple[str, str | None]],
    samples: Mapping[str, Mapping[str, np.ndarray]],
    alpha: float,
    correction: str,
    min_samples: int,
    findings: Sequence[Finding],
) -> tuple[DynamicsExplanation, ...]:
    """Damping versus bandwidth for each revision with a finding (own Holm/BH family)."""
    if not samples["zeta"] or not samples["wn_rad_s"]:
        return ()
    fit = {
        m: compare_with_parents(lineage, samples[m], min_samples=min_samples)
        for m in ("zeta", "wn_rad_s")
    }
    verdicts = _classified(
        fit, thresholds={"zeta": 0.0, "wn_rad_s": 0.0}, alpha=alpha, correction=correction
    )
    zeta = {v.revision: v for v in verdicts["zeta"]}
    wn = {v.revision: v for v in verdicts["wn_rad_s"]}
    changed = list(dict.fromkeys(f.revision for f in findings))
    return tuple(
        explain_dynamics(zeta[label], wn[label])
        for label in changed
        if label in zeta and label in wn and zeta[label].baseline == wn[label].baseline
    )


def _samples(values: pd.DataFrame, metric: str) -> dict[str, np.ndarray]:
    rows = values[values["metric"] == metric]
    return {label: group["value"].to_numpy(float) for label, group in rows.groupby("revision")}


def _unit(values: pd.DataFrame, metric: str) -> str | None:
    units = values.loc[values["metric"] == metric, "unit"]
    return str(units.iloc[0]) if len(units) else None


def _gain_name(gain_set: GainSet | None) -> str | None:
    return None if gain_set is None else catalog.gain_label(gain_set.name, gain_set.id)


def _third(item: tuple[str, str | None, int]) -> int:
    return item[2]


def _f(value: float | None) -> float:
    assert value is not None
    return float(value)
