"""Change points: the same optimum as ruptures' PELT, planted shifts found at their exact
run index, and pure noise left alone at the stated false-alarm rate."""

from __future__ import annotations

import math

import numpy as np
import pytest
import ruptures
from scipy.stats import binom

from logbook.errors import InputError
from logbook.stats.changepoint import find_change_points, noise_sigma, pelt_l2


def _ruptures_cuts(x: np.ndarray, penalty: float, min_size: int) -> list[int]:
    algo = ruptures.Pelt(model="l2", min_size=min_size, jump=1).fit(x)
    return algo.predict(pen=penalty)[:-1]  # ruptures ends the list with len(x)


@pytest.mark.parametrize("seed", range(12))
def test_pelt_finds_the_same_segmentation_as_ruptures(seed: int) -> None:
    rng = np.random.default_rng(seed)
    n = int(rng.integers(20, 90))
    x = rng.normal(size=n)
    for _ in range(rng.integers(0, 4)):
        x[rng.integers(0, n) :] += rng.normal(0.0, 2.0)
    min_size = int(rng.integers(1, 7))
    penalty = float(rng.uniform(0.5, 15.0))
    assert pelt_l2(x, penalty=penalty, min_size=min_size) == _ruptures_cuts(x, penalty, min_size)


def test_noise_sigma_recovers_gaussian_sigma() -> None:
    # The MAD of first differences of white noise is sigma sqrt(2) / 1.4826; with
    # 20 000 values the estimate's relative standard error is about 1 %.
    rng = np.random.default_rng(1)
    assert noise_sigma(rng.normal(0.0, 0.3, size=20_000)) == pytest.approx(0.3, rel=0.04)


def test_noise_sigma_ignores_level_shifts_and_outliers() -> None:
    rng = np.random.default_rng(2)
    x = rng.normal(0.0, 1.0, size=2000)
    x[700:] += 25.0
    x[[100, 900, 1500]] += 80.0
    assert noise_sigma(x) == pytest.approx(1.0, rel=0.08)


PLANTED = [
    # (series length, shift indexes, level after each shift) in units of sigma
    (60, (30,), (8.0,)),
    (120, (40, 85), (-8.0, 6.0)),
    (300, (17, 150, 260), (10.0, 0.0, -9.0)),
]


@pytest.mark.parametrize(("n", "at", "levels"), PLANTED)
@pytest.mark.parametrize("seed", range(5))
def test_planted_shifts_are_found_at_their_exact_run_index(
    n: int, at: tuple[int, ...], levels: tuple[float, ...], seed: int
) -> None:
    # Shifts of 6 sigma or more: a boundary run is misplaced only when its noise exceeds
    # half the shift (P < 1e-8 for 8 sigma), so the index must come out exact.
    rng = np.random.default_rng(seed)
    mean = np.zeros(n)
    for index, level in zip(at, levels, strict=True):
        mean[index:] = level
    x = 5.0 + mean + rng.normal(0.0, 1.0, size=n)
    scan = find_change_points(x)
    assert scan.indexes == at
    first = scan.points[0]
    assert first.median_before == pytest.approx(5.0, abs=1.0)
    assert first.median_after == pytest.approx(5.0 + levels[0], abs=1.0)
    assert first.n_before == at[0]


def test_single_step_in_a_quantised_series_is_found() -> None:
    # Encoder counts that rarely change: the MAD of differences is zero, so the spread
    # of the differences sets the noise level instead.
    x = np.array([100.0] * 20 + [103.0] * 20)
    x[[5, 27]] += 1.0
    scan = find_change_points(x)
    assert scan.indexes == (20,)
    point = scan.points[0]
    assert (point.median_before, point.median_after) == (100.0, 103.0)
    # One extra count in each segment of 20: means 100.05 and 103.05 (by hand).
    assert (point.mean_before, point.mean_after) == pytest.approx((100.05, 103.05))
    assert point.change == pytest.approx(3.0)


FALSE_ALARM_RATE = 0.05  # stated rate for white noise, series of 100 runs
SEEDS = 200


def test_no_shift_gives_no_change_point_at_the_stated_rate() -> None:
    # Under the stated rate, the number of noisy series with a false change point is at
    # most Binomial(200, 0.05); allow its 99.9 % quantile, so this fails by chance with
    # probability below 0.1 % even if the true rate were exactly 5 %.
    alarms = sum(
        bool(find_change_points(np.random.default_rng(seed).normal(size=100)).points)
        for seed in range(SEEDS)
    )
    limit = binom.ppf(0.999, SEEDS, FALSE_ALARM_RATE)
    assert alarms <= limit, f"{alarms} of {SEEDS} noise series had a change point"


def test_penalty_is_factor_sigma_squared_log_n() -> None:
    x = np.random.default_rng(4).normal(0.0, 2.0, size=80)
    scan = find_change_points(x, penalty_factor=2.5)
    assert scan.penalty == pytest.approx(2.5 * noise_sigma(x) ** 2 * math.log(80))
    assert find_change_points(x, sigma=1.5).noise_sigma == 1.5


def test_short_and_constant_series_are_not_searched() -> None:
    short = find_change_points([1.0, 2.0, 3.0, 9.0, 9.0, 9.0], min_size=5)
    assert short.points == () and short.reason == "6 runs: need 10"
    constant = find_change_points([4.0] * 30)
    assert constant.points == () and constant.reason == "constant series"


def test_an_outlier_alone_is_not_a_change_point() -> None:
    # A single wild run (20 sigma) cannot form a segment shorter than min_size runs.
    x = np.random.default_rng(5).normal(size=80)
    x[40] += 20.0
    assert find_change_points(x, min_size=5).points == ()


def test_non_finite_values_are_rejected() -> None:
    with pytest.raises(InputError, match="series: value inf at position 2"):
        find_change_points([1.0, 2.0, float("inf")] + [1.0] * 20)
