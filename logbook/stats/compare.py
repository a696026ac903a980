"""Two-sample comparison of one metric: a baseline revision's runs against a later one's.

What is reported, and why these figures:

- the median of each side and the change in median (after - before): the figure an
  engineer reads in a table, and the one held against the practical threshold;
- **Cliff's delta**, the effect size: P(after > before) - P(after < before) over all
  pairs of runs (N. Cliff, 1993, "Dominance statistics: ordinal analyses to answer
  ordinal questions", Psychological Bulletin 114(3)). It is the Mann-Whitney U
  rescaled to [-1, 1] (delta = 2U/(n_before n_after) - 1), so it can never disagree
  with the test, needs no normality and is free of units, which lets one table
  rank metrics in seconds next to metrics in percent. +1 means every later run is
  above every earlier one;
- the **Hodges-Lehmann shift**: the median of all pairwise differences after - before
  (J. L. Hodges and E. L. Lehmann, 1963, "Estimates of location based on rank
  tests", Annals of Mathematical Statistics 34(2)), the shift estimate that belongs
  to the rank test, in the metric's own unit; a steadier estimate of "how much" than
  the difference of two medians when samples are small;
- the two-sided Mann-Whitney U p-value from :func:`scipy.stats.mannwhitneyu`, which
  assumes no normality. scipy's default switches to the normal approximation as
  soon as there are ties, which is too optimistic for a handful of quantised
  readings (three runs of 1 count against three of 2 counts gives p = 0.047 where
  the exact permutation value is 0.1); for small tied samples the exact permutation
  distribution is used instead (scipy's ``PermutationMethod``, enumerating every
  split).

With n runs on each side the smallest two-sided p-value the test can give is
2 / C(2n, n): 0.1 for 3 against 3, 0.029 for 4 against 4, 0.0079 for 5 against 5.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.stats import PermutationMethod, mannwhitneyu

from logbook.stats._values import finite_array


@dataclass(frozen=True)
class Comparison:
    """How one metric moved from ``before`` runs to ``after`` runs.

    Medians and ``change`` are given whenever both sides have a run; the effect
    sizes and ``p_value`` only when both sides have at least ``min_samples`` runs,
    otherwise they are None and ``reason`` says why.
    """

    n_before: int
    n_after: int
    median_before: float | None
    median_after: float | None
    change: float | None  # median_after - median_before
    cliffs_delta: float | None  # P(after > before) - P(after < before)
    hodges_lehmann: float | None  # median of pairwise differences after - before
    u_statistic: float | None  # Mann-Whitney U of the `after` sample
    p_value: float | None  # two-sided
    reason: str | None = None

    @property
    def tested(self) -> bool:
        """True when the two-sample test could be run."""
        return self.p_value is not None


def compare_samples(
    before: Sequence[float] | np.ndarray,
    after: Sequence[float] | np.ndarray,
    *,
    min_samples: int = 3,
    exact_ties_limit: int = 1000,
) -> Comparison:
    """Compare ``after`` with ``before`` (e.g. a child revision's runs with its parent's).

    min_samples: runs needed on each side before a test is run (default 3, the
        fewest for which a two-sided p-value below 1 is at all informative).
    exact_ties_limit: when the pooled sample has ties and the number of ways to
        split it, C(n_before + n_after, n_before), is at most this (default 1000,
        i.e. up to 5 against 6 runs), the p-value comes from the exact permutation
        distribution rather than the normal approximation.

    Raises :class:`logbook.errors.InputError` for NaN or infinite values.
    """
    if min_samples < 1:
        raise ValueError(f"min_samples must be at least 1, got {min_samples}")
    x0 = finite_array(before, what="before sample")
    x1 = finite_array(after, what="after sample")
    n0, n1 = x0.size, x1.size
    med0 = float(np.median(x0)) if n0 else None
    med1 = float(np.median(x1)) if n1 else None
    change = med1 - med0 if med0 is not None and med1 is not None else None
    if n0 < min_samples or n1 < min_samples:
        return Comparison(
            n_before=n0,
            n_after=n1,
            median_before=med0,
            median_after=med1,
            change=change,
            cliffs_delta=None,
            hodges_lehmann=None,
            u_statistic=None,
            p_value=None,
            reason=f"too few runs: {n0} before, {n1} after (need {min_samples} on each side)",
        )
    test = mannwhitneyu(x1, x0, alternative="two-sided", method=_method(x0, x1, exact_ties_limit))
    u = float(test.statistic)
    delta = 2.0 * u / (n0 * n1) - 1.0
    shift = float(np.median(np.subtract.outer(x1, x0)))
    return Comparison(n0, n1, med0, med1, change, delta, shift, u, float(test.pvalue))


def _method(x0: np.ndarray, x1: np.ndarray, exact_ties_limit: int) -> str | PermutationMethod:
    """scipy's automatic choice, except exact permutations for small tied samples."""
    pooled = np.concatenate([x0, x1])
    has_ties = np.unique(pooled).size < pooled.size
    if has_ties and math.comb(pooled.size, x0.size) <= exact_ties_limit:
        return PermutationMethod(n_resamples=math.inf)
    return "auto"
