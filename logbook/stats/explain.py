"""Loss of damping or of bandwidth: reading the fitted second-order model's changes.

For a second-order response the overshoot depends on the damping ratio alone,
Mp = exp(-zeta pi / sqrt(1 - zeta^2)), while times scale with 1 / omega_n (rise time
~ 1/omega_n at fixed zeta, settling ~ 4 / (zeta omega_n) for the 2 % band; Ogata,
Modern Control Engineering, 5th ed., ch. 5, from memory). So when overshoot and
settling time got worse, the verdicts on ``zeta`` and ``wn_rad_s`` between the same
two revisions say why: zeta fell (the loop lost damping: more overshoot and
ringing) or omega_n fell (it lost bandwidth: slower everywhere, same shape), or
both.

"Lost" and "gained" here need a finding (a "worse" or "better" verdict, i.e.
significant after correction and beyond the practical threshold) and follow the
sign of the change in median, whichever direction the caller called better.
"""

from __future__ import annotations

from dataclasses import dataclass

from logbook.errors import InputError
from logbook.stats.lineage import BETTER, UNTESTED, WORSE, RevisionVerdict

LOST = "lost"
GAINED = "gained"
UNCHANGED = "unchanged"
UNKNOWN = "unknown"  # not tested (no fit, no baseline, too few runs)


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
    return f"{noun} of {quality} ({figures}, adjusted p = {verdict.p_adjusted:.2g})"
