"""Two-sample comparison: agreement with scipy and with the definitions of the effect sizes."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy.stats import PermutationMethod, mannwhitneyu

from logbook.errors import InputError
from logbook.stats.compare import compare_samples


@pytest.mark.parametrize("seed", range(20))
def test_p_value_and_u_agree_with_scipy(seed: int) -> None:
    rng = np.random.default_rng(seed)
    before = rng.normal(10.0, 1.0, size=rng.integers(9, 40))
    after = rng.normal(10.5, 1.3, size=rng.integers(9, 40))
    result = compare_samples(before, after)
    reference = mannwhitneyu(after, before, alternative="two-sided")
    assert result.u_statistic == reference.statistic
    assert result.p_value == pytest.approx(reference.pvalue, rel=1e-12)
    assert (result.n_before, result.n_after) == (before.size, after.size)
    assert result.median_before == np.median(before)
    assert result.change == pytest.approx(np.median(after) - np.median(before), rel=1e-12)


@pytest.mark.parametrize("seed", range(10))
def test_effect_sizes_follow_their_definitions(seed: int) -> None:
    # Cliff (1993): delta = P(after > before) - P(after < before) over all pairs;
    # Hodges & Lehmann (1963): the median of all pairwise differences.
    rng = np.random.default_rng(100 + seed)
    before = np.round(rng.normal(0.0, 1.0, size=12), 1)  # rounding makes ties
    after = np.round(rng.normal(0.4, 1.0, size=9), 1)
    pairs = list(itertools.product(after, before))
    greater = sum(a > b for a, b in pairs)
    less = sum(a < b for a, b in pairs)
    result = compare_samples(before, after)
    assert result.cliffs_delta == pytest.approx((greater - less) / len(pairs), abs=1e-12)
    assert result.hodges_lehmann == pytest.approx(np.median([a - b for a, b in pairs]))


def test_worked_example_three_against_three() -> None:
    # By hand: all 9 pairwise differences of (4, 5, 6) - (1, 2, 3) are 1,2,2,3,3,3,4,4,5,
    # median 3; every later run is above every earlier one, delta = 1; U = 9 is the
    # most extreme of C(6, 3) = 20 equally likely splits, so two-sided p = 2/20.
    result = compare_samples([1.0, 2.0, 3.0], [4.0, 5.0, 6.0])
    assert result.hodges_lehmann == 3.0
    assert result.cliffs_delta == 1.0
    assert result.u_statistic == 9.0
    assert result.p_value == pytest.approx(0.1, rel=1e-12)
    assert (result.median_before, result.median_after, result.change) == (2.0, 5.0, 3.0)


def test_small_tied_samples_use_the_exact_permutation_distribution() -> None:
    # Three runs reading 1 count against three reading 2: only the two extreme splits
    # out of C(6, 3) = 20 are as far apart, so p = 0.1 exactly (by hand). scipy's
    # default normal approximation would give about 0.047.
    result = compare_samples([1.0, 1.0, 1.0], [2.0, 2.0, 2.0])
    assert result.p_value == pytest.approx(0.1, rel=1e-12)
    before, after = [3.0, 3.0, 4.0, 5.0, 5.0], [4.0, 5.0, 5.0, 6.0, 6.0]
    exact = mannwhitneyu(after, before, method=PermutationMethod(n_resamples=math.inf))
    assert compare_samples(before, after).p_value == pytest.approx(exact.pvalue, rel=1e-12)


def test_larger_tied_samples_use_scipys_tie_corrected_approximation() -> None:
    rng = np.random.default_rng(7)
    before = rng.integers(0, 4, size=30).astype(float)
    after = rng.integers(1, 5, size=30).astype(float)
    reference = mannwhitneyu(after, before, alternative="two-sided")
    assert compare_samples(before, after).p_value == pytest.approx(reference.pvalue, rel=1e-12)


def test_identical_constant_samples_show_no_difference() -> None:
    result = compare_samples([2.5] * 6, [2.5] * 5)
    assert result.p_value == 1.0
    assert result.cliffs_delta == 0.0
    assert result.change == 0.0
    assert result.hodges_lehmann == 0.0


def test_too_few_runs_gives_medians_but_no_test() -> None:
    result = compare_samples([1.0, 2.0], [5.0, 6.0, 7.0])
    assert result.p_value is None
    assert result.cliffs_delta is None
    assert result.hodges_lehmann is None
    assert not result.tested
    assert result.change == 4.5
    assert result.reason is not None and "2 before, 3 after" in result.reason


def test_empty_side_has_no_median() -> None:
    result = compare_samples([], [1.0, 2.0, 3.0])
    assert result.median_before is None
    assert result.change is None
    assert result.median_after == 2.0


def test_min_samples_is_a_keyword_threshold() -> None:
    assert compare_samples([1.0, 2.0], [3.0, 4.0], min_samples=2).p_value is not None
    assert compare_samples([1.0, 2.0, 3.0], [3.0, 4.0, 5.0], min_samples=4).p_value is None


def test_nan_is_rejected_with_its_position() -> None:
    with pytest.raises(InputError, match=r"after sample: value nan at position 1"):
        compare_samples([1.0, 2.0, 3.0], [1.0, float("nan"), 2.0])
