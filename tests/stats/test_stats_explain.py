"""Loss of damping versus loss of bandwidth from the verdicts on zeta and wn_rad_s."""

from __future__ import annotations

import numpy as np
import pytest

from logbook.errors import InputError
from logbook.stats.explain import (
    GAINED,
    LOST,
    UNCHANGED,
    UNKNOWN,
    explain_dynamics,
    second_order_figures,
)
from logbook.stats.lineage import RevisionVerdict, analyse_lineage

LINEAGE = [("A", None), ("B", "A"), ("C", "B")]
SPREAD = np.linspace(-1.0, 1.0, 9)  # nine runs, evenly spread


def _verdicts(levels: dict[str, float], scale: float) -> dict[str, RevisionVerdict]:
    samples = {label: level + scale * SPREAD for label, level in levels.items()}
    result = analyse_lineage(LINEAGE, samples, better="higher")
    return {v.revision: v for v in result.verdicts}


def test_second_order_figures_reproduce_the_textbook_example() -> None:
    # Ogata, Modern Control Engineering, 5th ed., Example 5-1 (from memory): zeta = 0.6,
    # wn = 5 rad/s gives tr = 0.55 s, tp = 0.785 s, Mp = 9.5 %, ts (2 %) = 1.33 s.
    f = second_order_figures(0.6, 5.0)
    assert f.rise_time_0_100_s == pytest.approx(0.55, abs=0.005)
    assert f.peak_time_s == pytest.approx(0.785, abs=0.0005)
    assert f.overshoot_pct == pytest.approx(9.48, abs=0.01)
    assert f.settling_time_s == pytest.approx(4.0 / 3.0)
    assert set(f.metrics()) == {
        "zeta",
        "wn_rad_s",
        "overshoot_pct",
        "peak_time_s",
        "settling_time_s",
    }
    with pytest.raises(InputError, match="need 0 < zeta < 1"):
        second_order_figures(1.0, 5.0)


def test_falling_zeta_with_steady_wn_is_a_loss_of_damping() -> None:
    zeta = _verdicts({"A": 0.7, "B": 0.7, "C": 0.4}, 0.02)
    wn = _verdicts({"A": 50.0, "B": 50.0, "C": 50.1}, 1.0)
    explanation = explain_dynamics(zeta["C"], wn["C"])
    assert (explanation.damping, explanation.bandwidth, explanation.kind) == (
        LOST,
        UNCHANGED,
        "damping",
    )
    assert explanation.text.startswith("loss of damping (zeta 0.7 -> 0.4")
    # Mp = exp(-zeta pi / sqrt(1 - zeta^2)): 4.6 % at zeta 0.7, 25.4 % at 0.4 (by hand).
    assert "a second-order loop overshoots 4.6 % -> 25.4 %" in explanation.text
    assert "bandwidth unchanged (wn_rad_s 50 -> 50.1)" in explanation.text
    assert explain_dynamics(zeta["B"], wn["B"]).kind == "neither"


def test_falling_wn_alone_is_a_loss_of_bandwidth_and_both_is_both() -> None:
    steady_zeta = _verdicts({"A": 0.7, "B": 0.7, "C": 0.7}, 0.02)
    falling_zeta = _verdicts({"A": 0.7, "B": 0.7, "C": 0.5}, 0.02)
    wn = _verdicts({"A": 50.0, "B": 50.0, "C": 30.0}, 1.0)
    assert explain_dynamics(steady_zeta["C"], wn["C"]).kind == "bandwidth"
    assert explain_dynamics(falling_zeta["C"], wn["C"]).kind == "both"


def test_rising_zeta_is_a_gain_not_a_loss() -> None:
    zeta = _verdicts({"A": 0.4, "B": 0.4, "C": 0.7}, 0.02)
    wn = _verdicts({"A": 50.0, "B": 50.0, "C": 50.0}, 1.0)
    explanation = explain_dynamics(zeta["C"], wn["C"])
    assert (explanation.damping, explanation.kind) == (GAINED, "neither")
    assert explanation.text.startswith("gain of damping")


def test_an_untested_fit_is_unknown() -> None:
    zeta = _verdicts({"A": 0.7, "B": 0.7, "C": 0.4}, 0.02)
    wn = _verdicts({"A": 50.0, "B": 50.0, "C": 50.0}, 1.0)
    explanation = explain_dynamics(zeta["A"], wn["A"])  # a root: nothing to compare with
    assert (explanation.damping, explanation.bandwidth) == (UNKNOWN, UNKNOWN)
    assert explanation.kind == "neither"


def test_verdicts_for_different_revisions_are_rejected() -> None:
    zeta = _verdicts({"A": 0.7, "B": 0.7, "C": 0.4}, 0.02)
    wn = _verdicts({"A": 50.0, "B": 50.0, "C": 50.0}, 1.0)
    with pytest.raises(InputError, match="zeta compares C with B but wn_rad_s compares B"):
        explain_dynamics(zeta["C"], wn["B"])
