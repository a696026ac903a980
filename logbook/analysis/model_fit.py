"""Second-order-plus-dead-time fit of one step, so a change of damping or bandwidth
shows as a number.

Model: y(t) = initial + A * g(t - t_step - theta), with g the unit step response of
wn^2 / (s^2 + 2*zeta*wn*s + wn^2) and g = 0 before the dead time theta. The gain is
fixed by the measured levels; zeta in [0.01, 10], wn and theta >= 0 are fitted by
bounded nonlinear least squares on the response normalised by A, started from the
textbook relations between overshoot, peak time and zeta, wn (Ogata, Modern
Control Engineering, ch. 5).

The least squares are solved in the parameters ln zeta, ln wn and theta by
Levenberg-Marquardt (Marquardt's scaling: the damping term is lambda * diag(J^T J))
with analytic derivatives and simple bounds: a parameter at a bound that the
gradient pushes outwards is held there for the iteration, the others take the
damped Gauss-Newton step, clipped to the bounds; a step is kept only when it lowers
the sum of squares. The iteration has converged when a kept step changes every
parameter by less than ``STEP_TOLERANCE`` of its size (of the window length for
theta) or lowers the sum of squares by less than ``COST_TOLERANCE`` of it (the
default tolerances of ``scipy.optimize.least_squares``), when no damping finds a
lower sum of squares (the minimum to floating-point precision), or when every
parameter is held at a bound; otherwise after ``MAX_ITERATIONS`` kept steps the fit
reports that it did not converge.

Fit window: from t_step to t_step + 2 * settling time (the transient and as long
again of settled response, so a long flat tail neither dominates the fit nor dilutes
its residual); the whole segment when the step does not settle. At most
``max_samples`` samples of the window are used, at an even stride.
fit_rmse_pct is the RMS residual over the fitted samples, as % of |A|.
"""

from __future__ import annotations

import math

import numpy as np

from logbook.analysis.levels import median
from logbook.analysis.results import Figure

NAMES = ("zeta", "wn_rad_s", "fit_delay_s", "fit_rmse_pct")
ZETA_RANGE = (0.01, 10.0)
#: Fewest samples in the fit window for three parameters and a residual.
MIN_SAMPLES = 8
#: 10-90 % rise time of a critically damped second-order system, times wn
#: (1 - (1 + x) e^-x crosses 0.1 at x = 0.532 and 0.9 at x = 3.890).
_CRITICAL_RISE_WN = 3.358
#: Convergence: a kept step smaller than this fraction of every parameter ...
STEP_TOLERANCE = 1e-8
#: ... or lowering the sum of squares by less than this fraction of it.
COST_TOLERANCE = 1e-8
#: Iterations (kept steps) before the fit gives up.
MAX_ITERATIONS = 100
#: Damping factors of Levenberg-Marquardt: the first, the smallest a run of kept
#: steps lowers it to, and the one beyond which no step lowers the sum of squares.
_FIRST_DAMPING = 1e-3
_LEAST_DAMPING = 1e-12
_LAST_DAMPING = 1e12
#: When |1 - zeta^2| is below this, dg/dzeta is taken at zeta = 1 (its limit): the
#: general expression divides by 1 - zeta^2.
_NEAR_CRITICAL = 1e-6


def second_order_step(tau: np.ndarray, zeta: float, wn: float) -> np.ndarray:
    """Unit step response of the standard second-order system at times ``tau``
    after the step (0 for tau < 0)."""
    return _unit_response(np.maximum(tau, 0.0) * wn, zeta)


def _unit_response(x: np.ndarray, zeta: float) -> np.ndarray:
    """The unit step response g at x = wn * tau >= 0."""
    # Each branch is accurate up to zeta = 1: sin(bx + phi)/b stays exact as b -> 0, and
    # the overdamped difference of exponentials loses only about eps/b (1e-8 at worst).
    if zeta < 1.0:
        # cos(bx) + (zeta/b) sin(bx) = sin(bx + phi)/b with cos(phi) = zeta, sin(phi) = b.
        b = math.sqrt(1.0 - zeta * zeta)
        return 1.0 - np.exp(-zeta * x) * np.sin(b * x + math.atan2(b, zeta)) * (1.0 / b)
    if zeta == 1.0:
        return 1.0 - np.exp(-x) * (1.0 + x)
    b = math.sqrt(zeta * zeta - 1.0)
    slow, fast = zeta - b, zeta + b  # poles at -slow*wn and -fast*wn
    return 1.0 - (fast * np.exp(-slow * x) - slow * np.exp(-fast * x)) / (fast - slow)


def _derivatives(x: np.ndarray, zeta: float) -> tuple[np.ndarray, np.ndarray]:
    """(dg/dx, dg/dzeta) of the unit step response g at x = wn*tau >= 0.

    With C = cos(bx), S = sin(bx)/b, b^2 = 1 - zeta^2 (cosh and sinh/b when
    overdamped): g = 1 - e^(-zeta x) (C + zeta S), dg/dx = e^(-zeta x) S and
    dg/dzeta = e^(-zeta x) (x C - S) / (1 - zeta^2), whose limit at zeta = 1 is
    -x^3 e^-x / 3.
    """
    if abs(1.0 - zeta * zeta) < _NEAR_CRITICAL:
        decay = np.exp(-x)
        return x * decay, (-1.0 / 3.0) * x * x * x * decay
    if zeta < 1.0:
        b = math.sqrt(1.0 - zeta * zeta)
        decay = np.exp(-zeta * x)
        decayed_c = decay * np.cos(b * x)
        decayed_s = decay * np.sin(b * x) * (1.0 / b)
    else:
        b = math.sqrt(zeta * zeta - 1.0)
        slow, fast = np.exp(-(zeta - b) * x), np.exp(-(zeta + b) * x)
        decayed_c = 0.5 * (slow + fast)
        decayed_s = (slow - fast) * (0.5 / b)
    return decayed_s, (x * decayed_c - decayed_s) * (1.0 / (1.0 - zeta * zeta))


def fit_second_order(
    time: np.ndarray,
    feedback: np.ndarray,
    start: int,
    end: int,
    *,
    initial: float,
    amplitude: float,
    settling_time: float | None,
    overshoot_pct: float | None,
    peak_time: float | None,
    rise_time: float | None,
    delay_time: float | None,
    max_samples: int,
) -> dict[str, Figure]:
    """zeta, wn_rad_s, fit_delay_s and fit_rmse_pct of samples ``start:end``."""
    if amplitude == 0.0:
        return _none("no response: the final level equals the initial level")
    t_step = time.item(start)
    stop = end
    if settling_time is not None:
        stop = start + int(time[start:end].searchsorted(t_step + 2.0 * settling_time, side="right"))
    stride = max(1, -(-(stop - start) // max_samples))
    t = time[start:stop:stride] - t_step
    if len(t) < MIN_SAMPLES:
        return _none(f"too few samples in the fit window ({len(t)}, {MIN_SAMPLES} needed)")
    d = (feedback[start:stop:stride] - initial) * (1.0 / amplitude)
    span = t.item(-1)
    dt = median(t[1:] - t[:-1])
    zeta0, wn0 = _initial_guess(overshoot_pct, peak_time, rise_time, span)
    theta0 = 0.0 if delay_time is None else max(0.0, delay_time - (1.0 + 0.7 * zeta0) / wn0)
    # ln zeta rather than zeta: for large zeta only the slow time constant 2 zeta/wn is
    # well determined, a straight valley in (ln zeta, ln wn) that the steps follow.
    lower = (math.log(ZETA_RANGE[0]), math.log(0.1 / span), 0.0)
    upper = (math.log(ZETA_RANGE[1]), math.log(2.0 * math.pi / dt), 0.5 * span)
    start_point = [
        min(max(v, lo), hi)
        for v, lo, hi in zip(
            (math.log(max(zeta0, ZETA_RANGE[0])), math.log(wn0), theta0), lower, upper, strict=True
        )
    ]
    solution = _least_squares(t, d, start_point, lower, upper, scales=(1.0, 1.0, span))
    if solution is None:
        return _none(f"the fit did not converge in {MAX_ITERATIONS} iterations")
    (log_zeta, log_wn, theta), cost = solution
    zeta = math.exp(log_zeta)
    rmse = math.sqrt(cost / len(t)) * 100.0
    note = None
    if zeta >= ZETA_RANGE[1] * 0.999:
        note = f"at the top of the fitted range ({ZETA_RANGE[1]:g}): effectively first order"
    return {
        "zeta": Figure(zeta, note),
        "wn_rad_s": Figure(math.exp(log_wn)),
        "fit_delay_s": Figure(theta),
        "fit_rmse_pct": Figure(rmse),
    }


def _least_squares(
    t: np.ndarray,
    d: np.ndarray,
    p: list[float],
    lower: tuple[float, ...],
    upper: tuple[float, ...],
    *,
    scales: tuple[float, ...],
) -> tuple[list[float], float] | None:
    """Bounded Levenberg-Marquardt (module docstring) for p = [ln zeta, ln wn, theta]:
    (parameters, sum of squared residuals), or None without convergence."""
    rows = np.empty((4, len(t)))  # d/dln(zeta), d/dln(wn), d/dtheta, residual
    x, rows[3] = _residual(t, d, p)
    cost = float((rows[3] * rows[3]).sum())
    damping = _FIRST_DAMPING
    for _ in range(MAX_ITERATIONS):
        if cost == 0.0:
            return p, cost
        zeta, wn = math.exp(p[0]), math.exp(p[1])
        slope, by_zeta = _derivatives(x, zeta)
        np.multiply(by_zeta, zeta, out=rows[0])  # d/dln(zeta) = zeta dg/dzeta
        np.multiply(x, slope, out=rows[1])  # d/dln(wn) = x g'(x)
        np.multiply(slope, -wn, out=rows[2])  # d/dtheta = -wn g'(x)
        # Sums of products (no BLAS: see metrics._trapezoid): J^T J and J^T r.
        products = np.einsum("ik,jk->ij", rows, rows).tolist()
        gradient = products[3][:3]
        held = [
            (p[i] <= lower[i] and gradient[i] > 0.0) or (p[i] >= upper[i] and gradient[i] < 0.0)
            for i in range(3)
        ]
        if all(held):
            return p, cost  # at bounds that the gradient pushes against
        while True:
            step = _damped_step(products, gradient, held, damping)
            if step is not None:
                trial = [
                    min(max(v + delta, lo), hi)
                    for v, delta, lo, hi in zip(p, step, lower, upper, strict=True)
                ]
                trial_x, residual = _residual(t, d, trial)
                trial_cost = float((residual * residual).sum())
                if trial_cost < cost:
                    break
            damping *= 10.0
            if damping > _LAST_DAMPING:
                return p, cost  # no step lowers the sum of squares: at the minimum
        damping = max(0.1 * damping, _LEAST_DAMPING)
        small = all(
            abs(a - b) <= STEP_TOLERANCE * (abs(b) + s)
            for a, b, s in zip(trial, p, scales, strict=True)
        )
        settled = cost - trial_cost <= COST_TOLERANCE * cost
        p, cost, x, rows[3] = trial, trial_cost, trial_x, residual
        if small or settled:
            return p, cost
    return None


def _residual(t: np.ndarray, d: np.ndarray, p: list[float]) -> tuple[np.ndarray, np.ndarray]:
    """(x = wn * (t - theta) clipped at 0, model - data) at p = [ln zeta, ln wn, theta]."""
    x = t - p[2]
    np.maximum(x, 0.0, out=x)
    x *= math.exp(p[1])
    return x, _unit_response(x, math.exp(p[0])) - d


def _damped_step(
    products: list[list[float]], gradient: list[float], held: list[bool], damping: float
) -> list[float] | None:
    """The step solving (A + damping*diag(A)) step = -gradient, with A = J^T J, for
    the parameters not held at a bound (held ones get 0), by Cholesky factorisation;
    None when the damped matrix is not numerically positive definite."""
    top = max(products[0][0], products[1][1], products[2][2])
    m = [[0.0 if held[i] or held[j] else products[i][j] for j in range(3)] for i in range(3)]
    b = [0.0 if held[i] else -gradient[i] for i in range(3)]
    for i in range(3):
        m[i][i] = 1.0 if held[i] else m[i][i] + damping * max(m[i][i], 1e-12 * top)
    pivot0 = m[0][0]
    if not pivot0 > 0.0:
        return None
    l00 = math.sqrt(pivot0)
    l10, l20 = m[0][1] / l00, m[0][2] / l00
    pivot1 = m[1][1] - l10 * l10
    if not pivot1 > 0.0:
        return None
    l11 = math.sqrt(pivot1)
    l21 = (m[1][2] - l20 * l10) / l11
    pivot2 = m[2][2] - l20 * l20 - l21 * l21
    if not pivot2 > 0.0:
        return None
    l22 = math.sqrt(pivot2)
    y0 = b[0] / l00
    y1 = (b[1] - l10 * y0) / l11
    y2 = (b[2] - l20 * y0 - l21 * y1) / l22
    x2 = y2 / l22
    x1 = (y1 - l21 * x2) / l11
    return [(y0 - l10 * x1 - l20 * x2) / l00, x1, x2]


def _initial_guess(
    overshoot_pct: float | None,
    peak_time: float | None,
    rise_time: float | None,
    span: float,
) -> tuple[float, float]:
    """(zeta, wn) from overshoot and peak time (Ogata ch. 5 / Nise ch. 4 relations),
    else critically damped with wn from the rise time, else from the window length."""
    if overshoot_pct is not None and overshoot_pct > 0.5 and peak_time:
        log_os = math.log(overshoot_pct / 100.0)
        zeta = -log_os / math.sqrt(math.pi**2 + log_os**2)
        return zeta, math.pi / (peak_time * math.sqrt(1.0 - zeta * zeta))
    if rise_time:
        return 1.0, _CRITICAL_RISE_WN / rise_time
    return 1.0, 10.0 / span


def _none(reason: str) -> dict[str, Figure]:
    return {name: Figure(None, reason) for name in NAMES}
