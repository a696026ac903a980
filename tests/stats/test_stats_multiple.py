"""Holm and Benjamini-Hochberg adjusted p-values against scipy, hand-worked examples and
the papers' own rejection rules."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy.stats import false_discovery_control

from logbook.errors import InputError
from logbook.stats.multiple import adjust, benjamini_hochberg, holm

p_lists = st.lists(st.floats(min_value=0.0, max_value=1.0), min_size=1, max_size=40)


@given(p_lists)
def test_bh_agrees_with_scipy(p: list[float]) -> None:
    expected = false_discovery_control(p, method="bh")
    np.testing.assert_allclose(benjamini_hochberg(p), expected, rtol=1e-12, atol=1e-300)


def test_holm_hand_worked_example() -> None:
    # Worked by hand from Holm (1979): sorted p = 0.005, 0.01, 0.03, 0.04 (m = 4) are
    # multiplied by 4, 3, 2, 1 -> 0.02, 0.03, 0.06, 0.04; the running maximum gives
    # 0.02, 0.03, 0.06, 0.06, put back in the original order.
    np.testing.assert_allclose(holm([0.01, 0.04, 0.03, 0.005]), [0.03, 0.06, 0.06, 0.02])


def test_holm_caps_at_one_and_keeps_a_single_p() -> None:
    # Worked by hand: sorted 0.02, 0.5, 0.9 times 3, 2, 1 -> 0.06, 1.0, 0.9; the running
    # maximum lifts the last to 1.0. With one test nothing is adjusted.
    np.testing.assert_allclose(holm([0.02, 0.9, 0.5]), [0.06, 1.0, 1.0])
    np.testing.assert_allclose(holm([0.037]), [0.037])


def test_bh_hand_worked_example() -> None:
    # Worked by hand from Benjamini & Hochberg (1995): sorted p = 0.005, 0.01, 0.03, 0.04
    # times m/rank = 4, 2, 4/3, 1 -> 0.02, 0.02, 0.04, 0.04; running minimum from the top
    # changes nothing here.
    np.testing.assert_allclose(
        benjamini_hochberg([0.01, 0.04, 0.03, 0.005]), [0.02, 0.04, 0.04, 0.02]
    )


def _holm_rejects(p: list[float], alpha: float) -> set[int]:
    """Holm (1979): step down through sorted p, reject while p(j) <= alpha/(m - j + 1)."""
    order = sorted(range(len(p)), key=lambda i: p[i])
    rejected = set()
    for j, i in enumerate(order):
        if p[i] > alpha / (len(p) - j):
            break
        rejected.add(i)
    return rejected


def _bh_rejects(p: list[float], alpha: float) -> set[int]:
    """Benjamini & Hochberg (1995): reject the k smallest for the largest k with
    p(k) <= k alpha / m."""
    order = sorted(range(len(p)), key=lambda i: p[i])
    k = max((j + 1 for j, i in enumerate(order) if p[i] <= (j + 1) * alpha / len(p)), default=0)
    return set(order[:k])


@pytest.mark.parametrize("alpha", [0.01, 0.05, 0.2])
@given(p=p_lists)
def test_adjusted_values_reproduce_the_papers_rejection_rules(alpha: float, p: list[float]) -> None:
    # Values a hair from a boundary could go either way in floating point; skip them.
    holm_adjusted = holm(p)
    bh_adjusted = benjamini_hochberg(p)
    clear = np.abs(holm_adjusted - alpha) > 1e-12
    assert {i for i in np.flatnonzero(clear) if holm_adjusted[i] <= alpha} == {
        i for i in _holm_rejects(p, alpha) if clear[i]
    }
    clear = np.abs(bh_adjusted - alpha) > 1e-12
    assert {i for i in np.flatnonzero(clear) if bh_adjusted[i] <= alpha} == {
        i for i in _bh_rejects(p, alpha) if clear[i]
    }


@given(p_lists)
def test_adjusted_values_never_fall_below_the_raw_ones(p: list[float]) -> None:
    raw = np.asarray(p)
    assert np.all(holm(p) >= raw) and np.all(holm(p) <= 1.0)
    assert np.all(benjamini_hochberg(p) >= raw * (1.0 - 1e-12))  # m p / m may round down
    assert np.all(holm(p) >= benjamini_hochberg(p) - 1e-15)  # Holm is the stricter


def test_adjust_dispatches_by_name_and_rejects_unknown() -> None:
    p = [0.01, 0.02, 0.2]
    np.testing.assert_allclose(adjust(p), holm(p))
    np.testing.assert_allclose(adjust(p, "bh"), benjamini_hochberg(p))
    with pytest.raises(InputError, match="unknown correction 'bonf'"):
        adjust(p, "bonf")


def test_empty_family_and_bad_p_values() -> None:
    assert holm([]).size == 0 and benjamini_hochberg([]).size == 0
    with pytest.raises(InputError, match=r"p-value 1.5 at position 1"):
        holm([0.1, 1.5])
    with pytest.raises(InputError, match=r"p-value nan"):
        benjamini_hochberg([float("nan")])
