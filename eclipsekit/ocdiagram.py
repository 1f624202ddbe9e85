"""The O−C diagram: a linear ephemeris fitted to times of minimum, and the terms tested beyond it.

Arrays in, a result object out; no I/O.  Every model is a weighted least-squares fit of the
times of minimum T (days) against the cycle number E, with the displacement of the secondary
eclipse from the primary (``secondary_offset``) free, so eccentric orbits need no special case:

* linear:      T = t0 + P E + D s                        (s = 1 for a secondary eclipse)
* quadratic:   T = t0 + P E + D s + Q E^2                 (dP/dE = 2 Q)
* apsidal:     T = t0 + P E + D s + dD/dE E s             (the secondary's period differs)
* light time:  T = t0 + P E + D s + A sin(2 pi (T - t_ref) / P3 + phi)   (circular third-body orbit)

Significance of each term against the linear ephemeris: Δχ², ΔBIC = Δχ² − k ln N (Schwarz 1978,
Ann. Stat. 6, 461; k the number of added parameters) and a p-value.  A term is reported as
``detected`` when ΔBIC > 10, "very strong" evidence on the scale of Kass & Raftery 1995, JASA 90,
773.  The light-time term's period is searched on a grid, so its p-value is a false-alarm
probability over the independent frequencies searched (Horne & Baliunas 1986, ApJ 302, 757).

The χ² of every model uses the times' uncertainties scaled by the light-time model's
sqrt(χ²_ν) when that exceeds one (the richest model's scatter; scaling by the linear model's
would let a real signal hide itself), and the parameter covariances are scaled alike.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["OCAnalysis", "analyse_o_minus_c", "DETECTION_DELTA_BIC", "LTT_MIN_PERIOD_RATIO"]

#: ΔBIC above which a term is reported as detected ("very strong", Kass & Raftery 1995).
DETECTION_DELTA_BIC = 10.0
#: Shortest third-body period searched, in binary periods: hierarchical triples are stable only
#: well beyond a few binary periods (common practice, from memory: outer/inner period ratio ≳ 5).
LTT_MIN_PERIOD_RATIO = 5.0
#: Frequency-grid oversampling of the light-time search (common practice for periodograms).
_OVERSAMPLE = 5.0


@dataclass(frozen=True)
class OCAnalysis:
    """The terms fitted to an O−C diagram.

    Attributes
    ----------
    ephemeris : dict
        ``period``, ``t0``, ``secondary_offset`` (days; ``secondary_offset`` is the time
        from primary to secondary minimum, NaN without secondaries), each as (value, error);
        ``reduced_chi_square`` and ``n_times``.
    period_change, apsidal_motion, light_travel_time : dict
        The fitted term, its significance (``delta_chi_square``, ``delta_bic``, ``p_value``,
        ``detected``) and derived quantities (see :func:`analyse_o_minus_c`).
    o_minus_c : ndarray
        Observed minus computed times against the linear ephemeris (days).
    error_scale : float
        Factor applied to the times' uncertainties (>= 1).
    curves : dict
        The fitted terms on a fine cycle grid, for plotting: ``cycle`` and one array per term
        (days of O−C, primary eclipses).
    """

    ephemeris: dict[str, Any]
    period_change: dict[str, Any]
    apsidal_motion: dict[str, Any]
    light_travel_time: dict[str, Any]
    o_minus_c: np.ndarray
    error_scale: float
    curves: dict[str, np.ndarray] = field(default_factory=dict)


def _wls(design: np.ndarray, y: np.ndarray, sigma: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """Weighted linear least squares: coefficients, covariance (unscaled), χ²."""
    a = design / sigma[:, None]
    b = y / sigma
    coef, *_ = np.linalg.lstsq(a, b, rcond=None)
    cov = np.linalg.pinv(a.T @ a)
    chi2 = float(np.sum((b - a @ coef) ** 2))
    return coef, cov, chi2


def _significance(delta_chi2: float, k: int, n: int, p_value: float) -> dict[str, Any]:
    delta_bic = delta_chi2 - k * math.log(n)
    return {"delta_chi_square": float(delta_chi2), "delta_bic": float(delta_bic), "p_value": float(p_value),
            "n_added_parameters": k, "detected": bool(delta_bic > DETECTION_DELTA_BIC)}


def _chi2_sf(x: float, k: int) -> float:
    from scipy import stats

    return float(stats.chi2.sf(max(x, 0.0), k))


def analyse_o_minus_c(cycle: np.ndarray, time: np.ndarray, sigma: np.ndarray, secondary: np.ndarray, *,
                      period: float, t0: float, ecosw: float | None = None, esinw: float | None = None,
                      esinw_err: float | None = None, inclination: float | None = None) -> OCAnalysis:
    """Fit the linear ephemeris and test a period change, apsidal motion and a third body.

    Parameters
    ----------
    cycle : ndarray of int
        Cycle number E of each time (a secondary eclipse shares the number of the primary before it).
    time, sigma : ndarray
        Times of minimum and their one-sigma uncertainties (days).
    secondary : ndarray of bool
        True for a secondary eclipse.
    period, t0 : float
        The ephemeris the cycles were counted with (days); t0 is the reference time.
    ecosw, esinw, esinw_err, inclination : float, optional
        The orbit from an eclipse fit, for the apsidal-motion rate (first-order formula of
        Giménez & Garcia-Pelayo 1983, Ap&SS 92, 203); without them only the trend difference is given.

    Returns
    -------
    OCAnalysis
    """
    cycle = np.asarray(cycle, float)
    y = np.asarray(time, float) - t0          # small numbers: no precision lost at BJD 2.46e6
    sigma = np.asarray(sigma, float)
    sec = np.asarray(secondary, bool)
    n = y.size
    has_sec = bool(sec.any()) and bool((~sec).any())
    base = [np.ones(n), cycle] + ([sec.astype(float)] if has_sec else [])
    linear = np.column_stack(base)
    ltt = _light_time(linear, y, sigma, period)
    scale = math.sqrt(max(1.0, ltt["chi2"] / max(n - linear.shape[1] - 3, 1)))
    s = sigma * scale
    coef, cov, chi2_lin = _wls(linear, y, s)
    o_minus_c = y - linear @ coef
    ephemeris = {"t0": (t0 + coef[0], math.sqrt(cov[0, 0])), "period": (coef[1], math.sqrt(cov[1, 1])),
                 "secondary_offset": (coef[2], math.sqrt(cov[2, 2])) if has_sec else (math.nan, math.nan),
                 # with the times' own uncertainties (not scaled)
                 "reduced_chi_square": float(np.sum((o_minus_c / sigma) ** 2) / max(n - linear.shape[1], 1)),
                 "n_times": n}

    quad = np.column_stack([linear, cycle ** 2])
    qc, qcov, chi2_q = _wls(quad, y, s)
    q, q_err = qc[-1], math.sqrt(qcov[-1, -1])
    d_chi2 = chi2_lin - chi2_q
    period_change = {"quadratic_term": (q, q_err), "dp_de": (2 * q, 2 * q_err),
                     "dp_dt": (2 * q / coef[1], 2 * q_err / coef[1]),
                     **_significance(d_chi2, 1, n, _chi2_sf(d_chi2, 1))}

    apsidal = _apsidal(linear, y, s, chi2_lin, has_sec, sec, cycle, coef, ecosw, esinw, esinw_err, inclination)
    ltt_out = _ltt_result(ltt, linear, y, s, chi2_lin, scale, period, n)
    grid = np.linspace(cycle.min(), cycle.max(), 400) if n else np.zeros(0)
    lin_at = coef[0] + coef[1] * grid
    curves = {"cycle": grid, "period_change": qc[0] + qc[1] * grid + q * grid ** 2 - lin_at}
    if ltt_out.get("_coef") is not None:
        c3 = ltt_out.pop("_coef")
        t_grid = coef[1] * grid + coef[0]
        curves["light_travel_time"] = (c3[0] + c3[1] * grid + _sinusoid(t_grid, *c3[-3:]) - lin_at)
    ltt_out.pop("_coef", None)
    return OCAnalysis(ephemeris, period_change, apsidal, ltt_out, o_minus_c, scale, curves)


def _apsidal(linear, y, s, chi2_lin, has_sec, sec, cycle, coef, ecosw, esinw, esinw_err, inclination):
    """The difference of the secondary's and primary's periods, and what it says about apsidal motion.

    First order in e (Giménez & Garcia-Pelayo 1983, Ap&SS 92, 203, the leading term of their
    series; recalled from memory): the secondary's displacement from phase 0.5 is
    D = T_sec − T_pri − P/2 = (P / pi) e cos ω (1 + csc² i), so a slowly turning ω gives
    dD/dE = −(P / pi) e sin ω (1 + csc² i) dω/dE.
    """
    if not has_sec:
        return {"trend_difference": (math.nan, math.nan), "delta_chi_square": 0.0, "delta_bic": 0.0,
                "p_value": 1.0, "n_added_parameters": 1, "detected": False,
                "note": "needs timed primary and secondary eclipses"}
    design = np.column_stack([linear, cycle * sec])
    c, cov, chi2 = _wls(design, y, s)
    slope, slope_err = c[-1], math.sqrt(cov[-1, -1])
    d_chi2 = chi2_lin - chi2
    period = coef[1]
    factor = 1.0 + 1.0 / math.sin(math.radians(inclination if inclination is not None else 90.0)) ** 2
    displacement = coef[2] - 0.5 * period
    out: dict[str, Any] = {"trend_difference": (slope, slope_err),
                           "secondary_displacement": (displacement, math.sqrt(cov[2, 2])),
                           "ecosw_from_timing": (math.pi * displacement / (period * factor),
                                                 math.pi * math.sqrt(cov[2, 2]) / (period * factor)),
                           **_significance(d_chi2, 1, y.size, _chi2_sf(d_chi2, 1))}
    usable = esinw is not None and esinw_err is not None and abs(esinw) > 3 * esinw_err
    if usable:
        rate = -math.pi * slope / (period * esinw * factor)     # rad / cycle
        rel = math.hypot(slope_err / slope if slope else math.inf, esinw_err / esinw)
        out["omega_dot"] = (math.degrees(rate), abs(math.degrees(rate)) * rel if slope else
                            math.degrees(math.pi * slope_err / abs(period * esinw * factor)))
    else:
        out["note"] = ("dω/dE needs a measured e sin ω (more than 3σ from zero) from an eclipse fit; "
                       "only the trend difference is given")
    return out


def _sinusoid(t: np.ndarray, a: float, b: float, frequency: float) -> np.ndarray:
    arg = 2 * np.pi * frequency * t
    return a * np.sin(arg) + b * np.cos(arg)


def _frequency_grid(y: np.ndarray, period: float) -> np.ndarray:
    span = float(y.max() - y.min()) if y.size else 0.0
    if span <= 0:
        return np.zeros(0)
    f_min, f_max = 1.0 / span, 1.0 / (LTT_MIN_PERIOD_RATIO * period)
    if f_max <= f_min:
        return np.zeros(0)
    return np.arange(f_min, f_max, 1.0 / (_OVERSAMPLE * span))


def _light_time(linear: np.ndarray, y: np.ndarray, sigma: np.ndarray, period: float) -> dict[str, Any]:
    """Grid search of the sinusoid's frequency, then a nonlinear refinement of all parameters."""
    from scipy.optimize import least_squares

    freqs = _frequency_grid(y, period)
    k = linear.shape[1]
    if freqs.size == 0 or y.size < k + 4:
        return {"chi2": _wls(linear, y, sigma)[2], "freqs": freqs}
    aw = linear / sigma[:, None]
    bw = y / sigma
    best = (math.inf, None)
    for f in freqs:   # a few hundred small solves: fast enough, and simple
        arg = 2 * np.pi * f * y
        a = np.column_stack([aw, np.sin(arg) / sigma, np.cos(arg) / sigma])
        coef, *_ = np.linalg.lstsq(a, bw, rcond=None)
        chi2 = float(np.sum((bw - a @ coef) ** 2))
        if chi2 < best[0]:
            best = (chi2, np.append(coef, f))

    def resid(p):
        return (y - linear @ p[:k] - _sinusoid(y, p[k], p[k + 1], p[k + 2])) / sigma

    start = best[1]
    df = 1.0 / (_OVERSAMPLE * float(y.max() - y.min()))
    lo = np.full(start.size, -np.inf)
    hi = np.full(start.size, np.inf)
    lo[-1], hi[-1] = max(start[-1] - 2 * df, freqs[0] * 0.5), start[-1] + 2 * df
    fit = least_squares(resid, start, bounds=(lo, hi), x_scale="jac", method="trf")
    jac = fit.jac
    cov = np.linalg.pinv(jac.T @ jac)
    return {"chi2": float(np.sum(fit.fun ** 2)), "coef": fit.x, "cov": cov, "freqs": freqs}


def _ltt_result(ltt: dict[str, Any], linear, y, s, chi2_lin, scale, period, n) -> dict[str, Any]:
    """Semi-amplitude, period, phase, mass function and significance of the light-time term."""
    from astropy import constants as const

    freqs = ltt["freqs"]
    if "coef" not in ltt:
        return {"semi_amplitude": (math.nan, math.nan), "period": (math.nan, math.nan),
                "phase": (math.nan, math.nan), "mass_function": (math.nan, math.nan),
                "delta_chi_square": 0.0, "delta_bic": 0.0, "p_value": 1.0, "n_added_parameters": 3,
                "detected": False, "n_frequencies": int(freqs.size),
                "note": "too few times or too short a span for a third-body search"}
    k = linear.shape[1]
    p = ltt["coef"]
    cov = ltt["cov"] * scale ** 2
    a, b, f = p[k], p[k + 1], p[k + 2]
    amp = math.hypot(a, b)
    # gradients of A = hypot(a, b), phi = atan2(b, a), P3 = 1/f
    sub = cov[k:k + 3, k:k + 3]
    g_amp = np.array([a / amp, b / amp, 0.0]) if amp > 0 else np.zeros(3)
    g_phi = np.array([-b, a, 0.0]) / max(amp * amp, 1e-300)
    amp_err = math.sqrt(max(g_amp @ sub @ g_amp, 0.0))
    phi_err = math.degrees(math.sqrt(max(g_phi @ sub @ g_phi, 0.0)))
    p3, p3_err = 1.0 / f, math.sqrt(sub[2, 2]) / f ** 2
    chi2 = ltt["chi2"] / scale ** 2
    d_chi2 = chi2_lin - chi2
    span = float(y.max() - y.min())
    n_independent = max(1.0, (freqs[-1] - freqs[0]) * span)
    # one frequency: Δχ² of a sinusoid with free phase is χ²(2 dof); the best of M independent ones
    fap = -math.expm1(n_independent * math.log1p(-min(math.exp(-0.5 * max(d_chi2, 0.0)), 1 - 1e-16)))
    # mass function of the third body, f(m3) = (m3 sin i3)^3 / (m1+m2+m3)^2 = 4 pi^2 (a12 sin i3)^3 / (G P3^2),
    # with a12 sin i3 = c A for a circular orbit (Irwin 1952, ApJ 116, 211)
    a12 = const.c.value * amp * 86400.0
    p3_s = p3 * 86400.0
    mass_fn = 4 * math.pi ** 2 * a12 ** 3 / (const.G.value * p3_s ** 2) / const.M_sun.value
    g = np.array([3 * a / amp ** 2, 3 * b / amp ** 2, 2 / f]) * mass_fn if amp > 0 else np.zeros(3)
    mass_fn_err = math.sqrt(max(g @ sub @ g, 0.0))
    return {"semi_amplitude": (amp, amp_err), "period": (p3, p3_err),
            "phase": (math.degrees(math.atan2(b, a)) % 360.0, phi_err),
            "mass_function": (mass_fn, mass_fn_err), "a12_sin_i": (a12 / const.au.value, a12 / const.au.value
                                                                   * (amp_err / amp if amp > 0 else math.nan)),
            **_significance(d_chi2, 3, n, fap), "n_frequencies": int(freqs.size),
            "_coef": np.concatenate([p[:2], [a, b, f]])}
