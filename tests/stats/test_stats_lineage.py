"""Verdicts along a lineage and the first bad revision, on synthetic histories with shifts
planted at known revisions and run indexes."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import binom, mannwhitneyu

from logbook.errors import InputError
from logbook.stats.changepoint import find_change_points
from logbook.stats.lineage import (
    BETTER,
    NO_CHANGE,
    UNTESTED,
    WORSE,
    analyse_lineage,
    compare_with_parents,
    lineage_order,
)
from logbook.stats.multiple import adjust

CHAIN = [("A", None), ("B", "A"), ("C", "B"), ("D", "C"), ("E", "D"), ("F", "E")]


def _history(levels: dict[str, float], runs: int, seed: int) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(seed)
    return {label: level + rng.normal(0.0, 1.0, size=runs) for label, level in levels.items()}


# Overshoot in %, run-to-run sigma 1 %: C loses damping (+4 %), E restores it.
STORY = {"A": 8.0, "B": 8.0, "C": 12.0, "D": 12.0, "E": 8.0, "F": 8.0}


@pytest.mark.parametrize("seed", range(10))
def test_planted_degradation_and_fix_are_recovered(seed: int) -> None:
    # 20 runs a revision; practical threshold 1.5 sigma. A no-change comparison would
    # need its median difference (sd about 0.4 sigma) to exceed 1.5 sigma to be called.
    result = analyse_lineage(
        CHAIN, _history(STORY, 20, seed), better="lower", practical_threshold=1.5
    )
    verdicts = {v.revision: v.verdict for v in result.verdicts}
    assert verdicts == {
        "A": UNTESTED,
        "B": NO_CHANGE,
        "C": WORSE,
        "D": NO_CHANGE,
        "E": BETTER,
        "F": NO_CHANGE,
    }
    first = result.first_bad
    assert first is not None
    assert (first.revision, first.baseline, first.stretch, first.fixed_by) == (
        "C",
        "B",
        ("C", "D"),
        ("E",),
    )
    assert [member for member, _ in first.persistence] == ["D"]
    assert result.bad == (first,)
    assert first.evidence.comparison is not None
    assert first.evidence.comparison.change == pytest.approx(4.0, abs=1.5)


def test_higher_is_better_metrics_turn_the_direction_round() -> None:
    # Damping ratio: lower is worse.
    levels = {"A": 0.7, "B": 0.7, "C": 0.45, "D": 0.45, "E": 0.7, "F": 0.7}
    samples = {k: v + 0.01 * np.arange(-4, 5) for k, v in levels.items()}
    result = analyse_lineage(CHAIN, samples, better="higher")
    assert [v.verdict for v in result.verdicts] == [
        UNTESTED,
        NO_CHANGE,
        WORSE,
        NO_CHANGE,
        BETTER,
        NO_CHANGE,
    ]
    assert result.first_bad is not None and result.first_bad.revision == "C"


def test_a_loss_that_did_not_stay_is_a_finding_but_not_a_bad_revision() -> None:
    base = 10.0 + 0.1 * np.arange(8)
    samples = {
        "A": base,
        "B": base + 0.05,
        "C": base + 5.02,
        "D": np.r_[base[:4] + 0.03, base[4:] + 5.03],  # half of D's runs back at B's level
    }
    lineage = CHAIN[:4]
    # Preconditions, from scipy directly: D differs significantly neither from C nor from B.
    assert mannwhitneyu(samples["D"], samples["C"]).pvalue > 0.05
    assert mannwhitneyu(samples["D"], samples["B"]).pvalue > 0.05
    result = analyse_lineage(lineage, samples, better="lower")
    assert [v.verdict for v in result.verdicts] == [UNTESTED, NO_CHANGE, WORSE, NO_CHANGE]
    assert result.first_bad is None


def test_descendants_with_too_few_runs_neither_confirm_nor_refute() -> None:
    base = 10.0 + 0.1 * np.arange(8)
    samples = {"A": base, "B": base + 0.05, "C": base + 5.0, "D": np.array([10.1, 10.2])}
    result = analyse_lineage(CHAIN[:4], samples, better="lower")
    assert result.first_bad is not None
    assert result.first_bad.revision == "C"
    assert result.first_bad.stretch == ("C", "D")
    assert not result.first_bad.persistence[0][1].tested


def test_an_untested_parent_is_skipped_for_the_nearest_tested_ancestor() -> None:
    base = 3.0 + 0.1 * np.arange(6)
    samples = {"A": base, "C": base + 1.0}  # B was never put on the bench
    comparisons = compare_with_parents(CHAIN[:3], samples)
    c = comparisons[2]
    assert (c.revision, c.parent, c.baseline) == ("C", "B", "A")
    assert comparisons[1].baseline == "A" and comparisons[1].comparison is not None
    assert not comparisons[1].comparison.tested  # B has no runs of its own
    result = analyse_lineage(CHAIN[:3], samples, better="lower")
    assert result.first_bad is not None and result.first_bad.baseline == "A"


def test_a_sibling_branch_is_not_part_of_the_stretch() -> None:
    lineage = [("A", None), ("B1", "A"), ("B2", "A"), ("C1", "B1")]
    base = 5.0 + 0.1 * np.arange(8)
    samples = {"A": base, "B1": base + 3.0, "B2": base + 0.02, "C1": base + 3.01}
    result = analyse_lineage(lineage, samples, better="lower")
    assert result.first_bad is not None
    assert (result.first_bad.revision, result.first_bad.stretch) == ("B1", ("B1", "C1"))


def test_the_practical_threshold_keeps_small_significant_changes_out() -> None:
    base = 1.0 + 0.01 * np.arange(10)
    samples = {"A": base, "B": base + 0.2}  # significant, but only 0.2 units
    assert analyse_lineage(CHAIN[:2], samples, better="lower").verdicts[1].verdict == WORSE
    quiet = analyse_lineage(CHAIN[:2], samples, better="lower", practical_threshold=0.5)
    assert quiet.verdicts[1].verdict == NO_CHANGE


def test_drift_and_revision_shifts_in_one_chronological_history() -> None:
    # The runs of A..F in date order, 40 each; C's change shows from run 80, E's fix
    # from run 160, and a coupling works loose during F from run 215 (not a revision).
    rng = np.random.default_rng(11)
    level = np.repeat([STORY[label] for label, _ in CHAIN], 40)
    level[215:] += 9.0
    series = level + rng.normal(0.0, 1.0, size=level.size)
    assert find_change_points(series).indexes == (80, 160, 215)
    samples = {label: series[40 * i : 40 * (i + 1)] for i, (label, _) in enumerate(CHAIN)}
    result = analyse_lineage(CHAIN, samples, better="lower", practical_threshold=1.5)
    assert result.first_bad is not None and result.first_bad.revision == "C"


ALPHA = 0.05  # familywise, Holm, over the revisions of one metric
SEEDS = 200


def test_no_shift_gives_no_finding_at_the_familywise_rate() -> None:
    # Eight revisions with no real change, eight runs each. Holm keeps the chance of any
    # finding at or below alpha; over 200 seeds the count of seeds with a finding is at
    # most Binomial(200, 0.05), so allow its 99.9 % quantile. Without the correction,
    # seven tests at 5 % would give a finding in about 30 % of seeds.
    lineage = [("R0", None)] + [(f"R{i}", f"R{i - 1}") for i in range(1, 8)]
    levels = {label: 0.0 for label, _ in lineage}
    with_finding = raw_significant = 0
    for seed in range(SEEDS):
        result = analyse_lineage(lineage, _history(levels, 8, seed), better="lower")
        with_finding += any(v.verdict in (WORSE, BETTER) for v in result.verdicts)
        raw_significant += any(
            v.comparison is not None
            and v.comparison.p_value is not None
            and v.comparison.p_value <= ALPHA
            for v in result.verdicts
        )
    limit = binom.ppf(0.999, SEEDS, ALPHA)
    assert with_finding <= limit, f"{with_finding} of {SEEDS} null histories had a finding"
    assert raw_significant > limit  # the correction is what keeps the rate down


def test_no_shift_gives_no_finding_with_bh_over_several_metrics() -> None:
    # The regression scan's default: Benjamini-Hochberg over every revision x metric.
    # When nothing changed, every finding is false, so BH's false discovery rate is the
    # chance of any finding. Three metrics read from the same runs (correlated, as
    # overshoot and settling time are), six revisions of ten runs: count seeds with
    # any finding and allow the 99.9 % quantile of Binomial(200, 0.05).
    lineage = [("R0", None)] + [(f"R{i}", f"R{i - 1}") for i in range(1, 6)]
    with_finding = 0
    for seed in range(SEEDS):
        rng = np.random.default_rng(1000 + seed)
        common = {label: rng.normal(size=10) for label, _ in lineage}
        metrics = [
            {k: v + rng.normal(0.0, scale, size=10) for k, v in common.items()}
            for scale in (0.0, 0.5, 2.0)
        ]
        comparisons = [compare_with_parents(lineage, m) for m in metrics]
        p = [c.comparison.p_value for cs in comparisons for c in cs if c.comparison is not None]
        with_finding += bool((adjust(p, "bh") <= ALPHA).any())
    assert with_finding <= binom.ppf(0.999, SEEDS, ALPHA), f"{with_finding} of {SEEDS}"


def test_lineage_order_puts_parents_first_and_keeps_the_given_order_otherwise() -> None:
    lineage = [("C", "B"), ("B2", "A"), ("A", None), ("B", "A")]
    assert lineage_order(lineage) == ("A", "B2", "B", "C")


@pytest.mark.parametrize(
    ("lineage", "message"),
    [
        ([("A", None), ("A", None)], "'A' appears twice"),
        ([("A", None), ("B", "X")], "names parent 'X', which is not listed"),
        ([("A", None), ("B", "C"), ("C", "B")], "cycle through B, C"),
    ],
)
def test_bad_lineages_are_rejected(lineage: list[tuple[str, str | None]], message: str) -> None:
    with pytest.raises(InputError, match=message):
        lineage_order(lineage)


def test_bad_settings_are_rejected() -> None:
    samples = {"A": [1.0, 2.0, 3.0]}
    with pytest.raises(InputError, match="better must be 'lower' or 'higher'"):
        analyse_lineage(CHAIN[:1], samples, better="up")
    with pytest.raises(InputError, match="practical threshold must be 0 or more"):
        analyse_lineage(CHAIN[:1], samples, better="lower", practical_threshold=-1.0)
    with pytest.raises(InputError, match="unknown correction"):
        analyse_lineage(CHAIN[:1], samples, better="lower", correction="none")
