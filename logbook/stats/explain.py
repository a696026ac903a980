"""Loss of damping or of bandwidth: reading the fitted second-order model's changes.

For a second-order response the overshoot depends on the damping ratio alone,
Mp = exp(-zeta pi / sqrt(1 - zeta^2)), while times scale with 1 / omega_n (rise time
~ 1/omega_n at fixed zeta, settling ~ 4 / (zeta omega_n) for the 2 % band; Ogata,
Modern Control Engineering, 5th ed., ch. 5, from memory). So when overshoot and
settling time got worse, the verdicts on ``zeta`` and ``wn_rad_s`` between the same
two revisions say why: zeta fell (the loop lost damping: more overshoot and
ringing) or omega_n fell (it lost bandwidth: slower everywhere, same shape), or
both.

:func:`second_order_figures` gives those textbook figures for a (zeta, omega_n) pair,
so an explanation can say what overshoot the fitted damping implies.

"Lost" and "gained" here need a finding (a "worse" or "better" verdict, i.e.
significant after correction and beyond the practical threshold) and follow the
sign of the change in median, whichever direction the caller called better.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from logbook.errors import InputError
from logbook.stats.lineage import BETTER, UNTESTED, WORSE, RevisionVerdict

LOST = "lost"
GAINED = "gained"
UNCHANGED = "unchanged"
UNKNOWN = "unknown"  # not tested (no fit, no baseline, too few runs)


@dataclass(frozen=True)
class SecondOrderFigures:
    """Step-response figures of an underdamped second-order loop (Ogata ch. 5).

    overshoot_pct: Mp = 100 exp(-zeta pi / sqrt(1 - zeta^2));
    peak_time_s: pi / omega_d with omega_d = omega_n sqrt(1 - zeta^2);
    rise_time_0_100_s: 0-100 % rise time (pi - arccos zeta) / omega_d (not the
        catalogue's 10-90 % rise_time_s);
    settling_time_s: 2 % band, envelope approximation 4 / (zeta omega_n).
    """

    zeta: float
    wn_rad_s: float
    overshoot_pct: float
    peak_time_s: float
    rise_time_0_100_s: float
    settling_time_s: float

    def metrics(self) -> dict[str, float]:
        """The figures that have a catalogue name, keyed by it."""
        return {
            name: getattr(self, name)
            for name in ("zeta", "wn_rad_s", "overshoot_pct", "peak_time_s", "settling_time_s")
        }


def second_order_figures(zeta: float, wn: float) -> SecondOrderFigures:
    """The figures above for 0 < zeta < 1 and omega_n > 0 (else InputError)."""
    if not (0.0 < zeta < 1.0 and wn > 0.0):
        raise InputError(f"need 0 < zeta < 1 and wn > 0 for an underdamped loop; got {zeta}, {wn}")
    wd = wn * math.sqrt(1.0 - zeta * zeta)
    return SecondOrderFigures(
        zeta=zeta,
        wn_rad_s=wn,
        overshoot_pct=100.0 * math.exp(-zeta * math.pi / math.sqrt(1.0 - zeta * zeta)),
        peak_time_s=math.pi / wd,
        rise_time_0_100_s=(math.pi - math.acos(zeta)) / wd,
        settling_time_s=4.0 / (zeta * wn),
    )


@dataclass(frozen=True)
class DynamicsExplanation:
    """What happened to damping and bandwidth between ``baseline`` and ``revision``.

    ``kind`` names what was lost: "damping", "bandwidth", "both" or "neither".
    """

    revision: str
    baseline: str | None
    damping: str  # LOST, GAINED, UNCHANGED or UNKNOWN
    bandwidth: str
    kind: str
    text: str


def explain_dynamics(zeta: RevisionVerdict, wn: RevisionVerdict) -> DynamicsExplanation:
    """Explain a change from the verdicts on ``zeta`` and ``wn_rad_s`` for one revision.

    Both verdicts must compare the same revision with the same baseline;
    otherwise :class:`InputError` is raised.
    """
    if (zeta.revision, zeta.baseline) != (wn.revision, wn.baseline):
        raise InputError(
            f"zeta compares {zeta.revision} with {zeta.baseline} but wn_rad_s compares "
            f"{wn.revision} with {wn.baseline}; explain one pair of revisions at a time"
        )
    damping, bandwidth = _movement(zeta), _movement(wn)
    lost = (damping == LOST, bandwidth == LOST)
    kind = {(True, True): "both", (True, False): "damping", (False, True): "bandwidth"}.get(
        lost, "neither"
    )
    text = "; ".join(
        [
            _sentence("damping", "zeta", damping, zeta),
            _sentence("bandwidth", "wn_rad_s", bandwidth, wn),
        ]
    )
    return DynamicsExplanation(zeta.revision, zeta.baseline, damping, bandwidth, kind, text)


def _movement(verdict: RevisionVerdict) -> str:
    if verdict.verdict == UNTESTED:
        return UNKNOWN
    c = verdict.comparison
    if verdict.verdict in (WORSE, BETTER) and c is not None and c.change is not None:
        return LOST if c.change < 0.0 else GAINED
    return UNCHANGED


def _sentence(quality: str, metric: str, movement: str, verdict: RevisionVerdict) -> str:
    c = verdict.comparison
    if movement == UNKNOWN or c is None:
        return f"{quality} unknown ({metric} not compared)"
    figures = f"{metric} {c.median_before:.4g} -> {c.median_after:.4g}"
    if movement == UNCHANGED:
        return f"{quality} unchanged ({figures})"
    noun = "loss" if movement == LOST else "gain"
    sentence = f"{noun} of {quality} ({figures}, adjusted p = {verdict.p_adjusted:.2g}"
    if metric == "zeta" and all(0.0 < z < 1.0 for z in (c.median_before, c.median_after)):
        before, after = (
            second_order_figures(z, 1.0).overshoot_pct for z in (c.median_before, c.median_after)
        )
        sentence += f"; a second-order loop overshoots {before:.3g} % -> {after:.3g} %"
    return sentence + ")"
