"""Adjusted p-values for a family of tests (many revisions x many metrics at once).

Scanning an axis compares every revision with its parent on every metric; at 5 %
each, some of dozens of comparisons would come out "significant" by chance alone.
An adjusted p-value is compared with the same alpha as a single test would be:

- :func:`holm`: S. Holm (1979), "A simple sequentially rejective multiple test
  procedure", Scandinavian Journal of Statistics 6(2). Controls the familywise
  error rate (the chance of even one false finding) under any dependence between
  the tests, which matters here: a revision's runs enter both its own comparison
  and its children's. The default of the regression finder.
- :func:`benjamini_hochberg`: Y. Benjamini and Y. Hochberg (1995), "Controlling the
  false discovery rate", J. Royal Statistical Society B 57(1). Controls the
  expected fraction of false findings among the findings; more findings when many
  metrics move together (a loss of damping moves overshoot, settling time and the
  error integrals at once), at the price of a weaker guarantee.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence

import numpy as np

from logbook.errors import InputError


def holm(p_values: Sequence[float] | np.ndarray) -> np.ndarray:
    """Holm's step-down adjusted p-values, in the order given.

    With p(1) <= ... <= p(m) sorted, adjusted p(i) = max over j <= i of
    min(1, (m - j + 1) p(j)); H(i) is rejected at level alpha exactly when Holm's
    sequential procedure (reject while p(j) <= alpha / (m - j + 1)) rejects it.
    """
    p = _checked(p_values)
    m = p.size
    order = np.argsort(p, kind="stable")
    scaled = (m - np.arange(m)) * p[order]
    adjusted = np.empty(m)
    adjusted[order] = np.minimum(1.0, np.maximum.accumulate(scaled))
    return adjusted


def benjamini_hochberg(p_values: Sequence[float] | np.ndarray) -> np.ndarray:
    """Benjamini-Hochberg step-up adjusted p-values (q-values), in the order given.

    With p(1) <= ... <= p(m) sorted, adjusted p(i) = min over j >= i of
    min(1, m p(j) / j); rejecting those <= alpha is the step-up rule "reject
    H(1..k) for the largest k with p(k) <= k alpha / m".
    """
    p = _checked(p_values)
    m = p.size
    order = np.argsort(p, kind="stable")
    scaled = m * p[order] / np.arange(1, m + 1)
    adjusted = np.empty(m)
    adjusted[order] = np.minimum(1.0, np.minimum.accumulate(scaled[::-1])[::-1])
    return adjusted


CORRECTIONS: dict[str, Callable[[Sequence[float] | np.ndarray], np.ndarray]] = {
    "holm": holm,
    "bh": benjamini_hochberg,
}


def adjust(p_values: Sequence[float] | np.ndarray, method: str = "holm") -> np.ndarray:
    """Adjusted p-values by ``method``: "holm" (default) or "bh" (Benjamini-Hochberg)."""
    try:
        correction = CORRECTIONS[method]
    except KeyError:
        known = ", ".join(sorted(CORRECTIONS))
        raise InputError(f"unknown correction {method!r}; use one of {known}") from None
    return correction(p_values)


def _checked(p_values: Sequence[float] | np.ndarray) -> np.ndarray:
    p = np.asarray(p_values, dtype=float)
    if p.ndim != 1:
        raise InputError(f"p-values must be a flat list, got shape {p.shape}")
    bad = np.flatnonzero(~((p >= 0.0) & (p <= 1.0)))
    if bad.size:
        raise InputError(f"p-value {float(p[bad[0]])} at position {int(bad[0])} is not in [0, 1]")
    return p
