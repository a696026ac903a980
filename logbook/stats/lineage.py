"""Revision-by-revision comparison along a lineage, and the first bad revision.

Input is plain data: the lineage as ``(label, parent_label)`` pairs (None for a
root) and, per revision, the samples of one metric (one value per run).

**Comparison with the parent.** Each revision's runs are compared with those of its
*baseline*: its parent, or, when the parent has fewer than ``min_samples`` runs
(a revision that was never put on the bench), the nearest ancestor that has
enough. A root, or a revision without a tested ancestor, has no baseline.

**Verdict.** A comparison is a *finding* when its p-value, adjusted over the family
of comparisons (see :mod:`logbook.stats.multiple`), is at most ``alpha`` AND the
change in median is at least ``practical_threshold`` in size (and not zero). Its
direction is "worse" or "better" from the sign of the change and which way the
metric is better. Everything else is "no_change", or "untested" when there is no
baseline or too few runs to test.

**First bad revision.** A revision R is *bad* when its verdict is "worse" against
its baseline P, and the degradation *stayed*: every later revision in R's
*stretch* that has at least ``min_samples`` runs is still worse than P, meaning
its runs compared with P's runs have an unadjusted p <= ``alpha`` and a change in
median in the worse direction of at least ``practical_threshold``.

R's stretch is R and its descendants, reached through child links but never
through a revision whose own verdict is "better": a revision that measurably
improved on its parent is a fix, and it ends the stretch (it is reported as
"better" and listed in ``fixed_by``). So for a history A-B-C-D-E-F where C loses
damping and E restores it, C is bad for the stretch C..D and fixed by E; a later
fix does not acquit C. But if C is worse and D, with no recorded improvement, is
back to B's level, the loss did not stay: C is a "worse" finding but not a bad
revision (a bad day on the bench, or a change that D quietly undid). Descendants
with too few runs neither confirm nor refute; stretch members that are themselves
worse again remain worse than P and so confirm.

The persistence test is an extra condition on top of a finding that has already
passed the family's correction; it can only remove bad revisions, never add
them, so the familywise error rate of "R is bad" stays at most alpha without a
further correction.

The *first* bad revision is the bad revision that comes first in lineage order:
parents before children and, among revisions free to come next, the order in
which the lineage was given (callers give revisions by date).
"""

from __future__ import annotations

import heapq
from collections import deque
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from logbook.errors import InputError
from logbook.stats.compare import Comparison, compare_samples
from logbook.stats.multiple import adjust

WORSE = "worse"
BETTER = "better"
NO_CHANGE = "no_change"
UNTESTED = "untested"

Lineage = Sequence[tuple[str, str | None]]
Samples = Mapping[str, Sequence[float] | np.ndarray]


@dataclass(frozen=True)
class ParentComparison:
    """One revision's runs against its baseline's (before any correction)."""

    revision: str
    parent: str | None  # the direct parent in the lineage
    baseline: str | None  # the ancestor actually compared with
    comparison: Comparison | None  # None when there is no baseline


@dataclass(frozen=True)
class RevisionVerdict:
    """A parent comparison with its adjusted p-value and its verdict."""

    revision: str
    parent: str | None
    baseline: str | None
    comparison: Comparison | None
    p_adjusted: float | None
    verdict: str  # WORSE, BETTER, NO_CHANGE or UNTESTED


@dataclass(frozen=True)
class BadRevision:
    """A revision that made the metric worse, with the evidence that the loss stayed.

    ``persistence`` holds each later stretch member's runs compared with the
    baseline's; ``fixed_by`` the revisions whose "better" verdict ended the stretch.
    """

    revision: str
    baseline: str
    evidence: RevisionVerdict
    stretch: tuple[str, ...]
    persistence: tuple[tuple[str, Comparison], ...]
    fixed_by: tuple[str, ...]


@dataclass(frozen=True)
class MetricLineage:
    """Every revision's verdict for one metric, and the bad revisions in lineage order."""

    verdicts: tuple[RevisionVerdict, ...]
    bad: tuple[BadRevision, ...]

    @property
    def first_bad(self) -> BadRevision | None:
        return self.bad[0] if self.bad else None


def lineage_order(lineage: Lineage) -> tuple[str, ...]:
    """Labels with every parent before its children, otherwise in the order given.

    Raises :class:`InputError` for a repeated label, an unknown parent or a cycle.
    """
    parents = _parents(lineage)
    position = {label: i for i, (label, _) in enumerate(lineage)}
    children = _children(parents)
    ready = [(position[label], label) for label, parent in parents.items() if parent is None]
    heapq.heapify(ready)
    order: list[str] = []
    while ready:
        _, label = heapq.heappop(ready)
        order.append(label)
        for child in children[label]:
            heapq.heappush(ready, (position[child], child))
    if len(order) < len(parents):
        stuck = sorted(set(parents) - set(order), key=position.__getitem__)
        raise InputError(f"revision lineage has a cycle through {', '.join(stuck)}")
    return tuple(order)


def compare_with_parents(
    lineage: Lineage, samples: Samples, *, min_samples: int = 3
) -> tuple[ParentComparison, ...]:
    """Each revision's runs against its baseline's, in lineage order (see module notes)."""
    parents = _parents(lineage)
    result = []
    for label in lineage_order(lineage):
        baseline = _tested_ancestor(label, parents, samples, min_samples)
        comparison = (
            None
            if baseline is None
            else compare_samples(samples[baseline], samples.get(label, ()), min_samples=min_samples)
        )
        result.append(ParentComparison(label, parents[label], baseline, comparison))
    return tuple(result)


def classify(
    comparison: ParentComparison,
    p_adjusted: float | None,
    *,
    better: str,
    practical_threshold: float = 0.0,
    alpha: float = 0.05,
) -> RevisionVerdict:
    """The verdict for one comparison given its adjusted p-value (module notes)."""
    _check_settings(better, practical_threshold, alpha)
    c = comparison.comparison
    if c is None or c.p_value is None or p_adjusted is None:
        verdict = UNTESTED
    elif _is_finding(c, p_adjusted, practical_threshold, alpha):
        verdict = _direction(c.change, better)
    else:
        verdict = NO_CHANGE
    return RevisionVerdict(
        comparison.revision, comparison.parent, comparison.baseline, c, p_adjusted, verdict
    )


def bad_revisions(
    lineage: Lineage,
    samples: Samples,
    verdicts: Sequence[RevisionVerdict],
    *,
    better: str,
    practical_threshold: float = 0.0,
    alpha: float = 0.05,
    min_samples: int = 3,
) -> tuple[BadRevision, ...]:
    """The revisions whose degradation stayed (module notes), in lineage order."""
    _check_settings(better, practical_threshold, alpha)
    children = _children(_parents(lineage))
    by_label = {v.revision: v for v in verdicts}
    found = []
    for label in lineage_order(lineage):
        verdict = by_label.get(label)
        if verdict is None or verdict.verdict != WORSE or verdict.baseline is None:
            continue
        stretch, fixed_by = _stretch(label, children, by_label)
        baseline_runs = samples[verdict.baseline]
        persistence = tuple(
            (member, compare_samples(baseline_runs, runs, min_samples=min_samples))
            for member in stretch[1:]
            if len(runs := samples.get(member, ())) > 0
        )
        if all(
            _still_worse(c, better, practical_threshold, alpha) for _, c in persistence if c.tested
        ):
            found.append(
                BadRevision(label, verdict.baseline, verdict, stretch, persistence, fixed_by)
            )
    return tuple(found)


def analyse_lineage(
    lineage: Lineage,
    samples: Samples,
    *,
    better: str,
    practical_threshold: float = 0.0,
    alpha: float = 0.05,
    correction: str = "holm",
    min_samples: int = 3,
) -> MetricLineage:
    """One metric along a lineage: verdicts and bad revisions.

    The family for the correction is this metric's tested parent comparisons;
    to correct over several metrics at once, call :func:`compare_with_parents`
    per metric, adjust all p-values together and use :func:`classify` and
    :func:`bad_revisions`.

    better: "lower" or "higher", which way the metric improves.
    practical_threshold: smallest change in median that counts, in the metric's
        unit (default 0: any significant change).
    alpha: level for the adjusted p-values (default 0.05).
    correction: "holm" (default, familywise) or "bh" (false discovery rate).
    min_samples: runs needed on each side of a comparison (default 3).
    """
    _check_settings(better, practical_threshold, alpha)
    comparisons = compare_with_parents(lineage, samples, min_samples=min_samples)
    tested = {
        c.revision: c.comparison.p_value
        for c in comparisons
        if c.comparison is not None and c.comparison.p_value is not None
    }
    adjusted = dict(zip(tested, adjust(list(tested.values()), correction), strict=True))
    verdicts = tuple(
        classify(
            c,
            _optional_float(adjusted.get(c.revision)),
            better=better,
            practical_threshold=practical_threshold,
            alpha=alpha,
        )
        for c in comparisons
    )
    bad = bad_revisions(
        lineage,
        samples,
        verdicts,
        better=better,
        practical_threshold=practical_threshold,
        alpha=alpha,
        min_samples=min_samples,
    )
    return MetricLineage(verdicts, bad)


def _parents(lineage: Lineage) -> dict[str, str | None]:
    parents: dict[str, str | None] = {}
    for label, parent in lineage:
        if label in parents:
            raise InputError(f"revision {label!r} appears twice in the lineage")
        parents[label] = parent
    for label, parent in parents.items():
        if parent is not None and parent not in parents:
            raise InputError(f"revision {label!r} names parent {parent!r}, which is not listed")
    return parents


def _children(parents: Mapping[str, str | None]) -> dict[str, list[str]]:
    children: dict[str, list[str]] = {label: [] for label in parents}
    for label, parent in parents.items():
        if parent is not None:
            children[parent].append(label)
    return children


def _tested_ancestor(
    label: str, parents: Mapping[str, str | None], samples: Samples, min_samples: int
) -> str | None:
    """The nearest ancestor with enough runs (the lineage is known to be acyclic)."""
    ancestor = parents[label]
    while ancestor is not None:
        if len(samples.get(ancestor, ())) >= min_samples:
            return ancestor
        ancestor = parents[ancestor]
    return None


def _stretch(
    label: str, children: Mapping[str, list[str]], verdicts: Mapping[str, RevisionVerdict]
) -> tuple[tuple[str, ...], tuple[str, ...]]:
    stretch, fixed_by = [label], []
    queue = deque(children[label])
    while queue:
        child = queue.popleft()
        verdict = verdicts.get(child)
        if verdict is not None and verdict.verdict == BETTER:
            fixed_by.append(child)
            continue
        stretch.append(child)
        queue.extend(children[child])
    return tuple(stretch), tuple(fixed_by)


def _is_finding(c: Comparison, p: float, threshold: float, alpha: float) -> bool:
    return p <= alpha and c.change is not None and c.change != 0.0 and abs(c.change) >= threshold


def _still_worse(c: Comparison, better: str, threshold: float, alpha: float) -> bool:
    return (
        c.p_value is not None
        and _is_finding(c, c.p_value, threshold, alpha)
        and _direction(c.change, better) == WORSE
    )


def _direction(change: float | None, better: str) -> str:
    if change is None or change == 0.0:
        return NO_CHANGE
    went_up = change > 0.0
    return WORSE if went_up == (better == "lower") else BETTER


def _check_settings(better: str, practical_threshold: float, alpha: float) -> None:
    if better not in ("lower", "higher"):
        raise InputError(f"better must be 'lower' or 'higher', got {better!r}")
    if not practical_threshold >= 0.0:
        raise InputError(f"practical threshold must be 0 or more, got {practical_threshold!r}")
    if not 0.0 < alpha < 1.0:
        raise InputError(f"alpha must be between 0 and 1, got {alpha!r}")


def _optional_float(value: float | np.floating | None) -> float | None:
    return None if value is None else float(value)
