"""Second-order-plus-dead-time fit of one step, so a change of damping or bandwidth
shows as a number.

Model: y(t) = initial + A * g(t - t_step - theta), with g the unit step response of
wn^2 / (s^2 + 2*zeta*wn*s + wn^2) and g = 0 before the dead time theta. The gain is
fixed by the measured levels; zeta, wn and theta are fitted by bounded nonlinear
least squares (``scipy.optimize.least_squares``, trust-region reflective) on the
response normalised by A, started from the textbook relations between overshoot,
peak time and zeta, wn (Ogata, Modern Control Engineering, ch. 5).

Fit window: from t_step to t_step + 2 * settling time (the transient and as long
again of settled response, so a long flat tail neither dominates the fit nor dilutes
its residual); the whole segment when the step does not settle. At most
``max_samples`` samples of the window are used, at an even stride.
fit_rmse_pct is the RMS residual over the fitted samples, as % of |A|.
"""

from __future__ import annotations

import math

import numpy as np

from logbook.analysis.results import Figure

NAMES = ("zeta", "wn_rad_s", "fit_delay_s", "fit_rmse_pct")
ZETA_RANGE = (0.01, 10.0)
#: Fewest samples in the fit window for three parameters and a residual.
MIN_SAMPLES = 8
#: 10-90 % rise time of a critically damped second-order system, times wn
#: (1 - (1 + x) e^-x crosses 0.1 at x = 0.532 and 0.9 at x = 3.890).
_CRITICAL_RISE_WN = 3.358


def second_order_step(tau: np.ndarray, zeta: float, wn: float) -> np.ndarray:
    """Unit step response of the standard second-order system at times ``tau``
    after the step (0 for tau < 0)."""
    x = np.maximum(tau, 0.0) * wn
    # Each branch is accurate up to zeta = 1: sin(bx)/b stays exact as b -> 0, and the
    # overdamped difference of exponentials loses only about eps/b (1e-8 at worst).
    if zeta < 1.0:
        b = math.sqrt(1.0 - zeta * zeta)
        return 1.0 - np.exp(-zeta * x) * (np.cos(b * x) + (zeta / b) * np.sin(b * x))
    if zeta == 1.0:
        return 1.0 - np.exp(-x) * (1.0 + x)
    b = math.sqrt(zeta * zeta - 1.0)
    slow, fast = zeta - b, zeta + b  # poles at -slow*wn and -fast*wn
    return 1.0 - (fast * np.exp(-slow * x) - slow * np.exp(-fast * x)) / (fast - slow)


def _step_slope(x: np.ndarray, zeta: float) -> np.ndarray:
    """d/dx of the unit step response at x = wn*tau >= 0 (the impulse response / wn)."""
    if zeta < 1.0:
        b = math.sqrt(1.0 - zeta * zeta)
        return np.exp(-zeta * x) * np.sin(b * x) / b
    if zeta == 1.0:
        return x * np.exp(-x)
    b = math.sqrt(zeta * zeta - 1.0)
    return (np.exp(-(zeta - b) * x) - np.exp(-(zeta + b) * x)) / (2.0 * b)


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
    from scipy.optimize import least_squares  # deferred: scipy.optimize is slow to import

    if amplitude == 0.0:
        return _none("no response: the final level equals the initial level")
    t_step = float(time[start])
    stop = end
    if settling_time is not None:
        stop = start + int(np.searchsorted(time[start:end], t_step + 2.0 * settling_time,
                                           side="right"))
    stride = max(1, -(-(stop - start) // max_samples))
    t = time[start:stop:stride] - t_step
    if len(t) < MIN_SAMPLES:
        return _none(f"too few samples in the fit window ({len(t)}, {MIN_SAMPLES} needed)")
    d = (feedback[start:stop:stride] - initial) * (1.0 / amplitude)
    span = float(t[-1])
    dt = float(np.median(np.diff(t)))
    zeta0, wn0 = _initial_guess(overshoot_pct, peak_time, rise_time, span)
    theta0 = 0.0 if delay_time is None else max(0.0, delay_time - (1.0 + 0.7 * zeta0) / wn0)
    lower = np.array([ZETA_RANGE[0], math.log(0.1 / span), 0.0])
    upper = np.array([ZETA_RANGE[1], math.log(2.0 * math.pi / dt), 0.5 * span])
    x0 = np.clip([zeta0, math.log(wn0), theta0], lower, upper)

    def residual(p: np.ndarray) -> np.ndarray:
        return second_order_step(t - p[2], p[0], math.exp(p[1])) - d

    def jacobian(p: np.ndarray) -> np.ndarray:
        # d/d(log wn) = x g'(x), d/d(theta) = -wn g'(x); d/d(zeta) by a forward difference.
        wn = math.exp(p[1])
        x = np.maximum(t - p[2], 0.0) * wn
        slope = _step_slope(x, p[0])
        h = 1e-6 * max(1.0, p[0])
        dzeta = (second_order_step(t - p[2], p[0] + h, wn)
                 - second_order_step(t - p[2], p[0], wn)) / h
        return np.column_stack((dzeta, x * slope, -wn * slope))

    result = least_squares(residual, x0, jac=jacobian, bounds=(lower, upper), method="trf")
    if not result.success:
        return _none(f"the fit did not converge ({result.message})")
    zeta, log_wn, theta = (float(v) for v in result.x)
    rmse = float(np.sqrt(np.mean(result.fun**2))) * 100.0
    note = None
    if zeta >= ZETA_RANGE[1] * 0.999:
        note = f"at the top of the fitted range ({ZETA_RANGE[1]:g}): effectively first order"
    return {
        "zeta": Figure(zeta, note),
        "wn_rad_s": Figure(math.exp(log_wn)),
        "fit_delay_s": Figure(theta),
        "fit_rmse_pct": Figure(rmse),
    }


def _initial_guess(
    overshoot_pct: float | None, peak_time: float | None, rise_time: float | None,
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
