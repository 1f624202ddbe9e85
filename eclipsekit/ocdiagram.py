"""The O−C diagram: a linear ephemeris fitted to times of minimum, and the terms tested beyond it.

Arrays in, a result object out; no I/O.  Every model is a weighted least-squares fit of the
times of minimum T (days) against the cycle number E, with the displacement of the secondary
eclipse from the primary (``secondary_offset``) free, so eccentric orbits need no special case.
The linear ephemeris and any of three terms make the models:

* linear:      T = t0 + P E + D s                        (s = 1 for a secondary eclipse)
* period change (Q):  + Q E^2                            (dP/dE = 2 Q)
* apsidal trend (A):  + dD/dE E s                        (the secondary's period differs)
* light time (L):     + A sin(2 pi (T - t0) / P3 + phi)  (circular third-body orbit)

Model selection
---------------
The terms are not orthogonal: a light-time orbit observed over a few of its cycles has a
quadratic part, and the half-period lag of the secondaries behind the primaries turns its slope
into a difference of the two trends.  Testing each term alone against the linear ephemeris
therefore reports terms that are not there.  Instead all 2^3 combinations of the terms are
fitted (fewer when a term cannot be fitted) and the one with the lowest BIC = χ² + k ln N
(Schwarz 1978, Ann. Stat. 6, 461; from memory) is the *selected model*.  Each term X is then
tested conditionally on the others, as nested models: the selected model with X against the
selected model without X, so Δχ² = χ²(selected \\ X) − χ²(selected ∪ X) with k_X added
parameters and ΔBIC = Δχ² − k_X ln N.  A term is ``detected`` when ΔBIC > 10, "very strong" on
the scale of Kass & Raftery 1995, JASA 90, 773 (from memory); a detected term is always in the
selected model, and the fitted values of each term come from the selected model with it.  The
light-time term's period is searched on a grid, so its p-value is a false-alarm probability over
the independent frequencies searched (Horne & Baliunas 1986, ApJ 302, 757; from memory).

The χ² of every model uses the times' uncertainties scaled by the full model's (all terms)
sqrt(χ²_ν) when that exceeds one (the richest model's scatter; scaling by the linear model's
would let a real signal hide itself), and the parameter covariances are scaled alike.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = ["OCAnalysis", "analyse_o_minus_c", "DETECTION_DELTA_BIC", "LTT_MIN_PERIOD_RATIO", "TERMS"]

#: ΔBIC above which a term is reported as detected ("very strong", Kass & Raftery 1995; from memory).
DETECTION_DELTA_BIC = 10.0
#: Shortest third-body period searched, in binary periods: hierarchical triples are stable only
#: well beyond a few binary periods (common practice, from memory: outer/inner period ratio ≳ 5).
LTT_MIN_PERIOD_RATIO = 5.0
#: The terms tested beyond the linear ephemeris, in the order of their columns in a model.
TERMS = ("period_change", "apsidal_motion", "light_travel_time")
#: Frequency-grid oversampling of the light-time search (common practice for periodograms).
_OVERSAMPLE = 5.0
_N_ADDED = {"period_change": 1, "apsidal_motion": 1, "light_travel_time": 3}


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
        The fitted term, its significance conditional on the other selected terms
        (``delta_chi_square``, ``delta_bic``, ``p_value``, ``detected``, ``tested_against``: the
        other terms in both models compared) and derived quantities (see :func:`analyse_o_minus_c`).
    o_minus_c : ndarray
        Observed minus computed times against the linear ephemeris (days).
    error_scale : float
        Factor applied to the times' uncertainties (>= 1).
    selected_terms : tuple of str
        The terms of the lowest-BIC model (empty: the linear ephemeris).
    curves : dict
        The selected model minus the linear ephemeris on a fine cycle grid, for plotting:
        ``cycle``, ``primary`` and ``secondary`` (days of O−C; ``secondary`` only with secondaries).
    """

    ephemeris: dict[str, Any]
    period_change: dict[str, Any]
    apsidal_motion: dict[str, Any]
    light_travel_time: dict[str, Any]
    o_minus_c: np.ndarray
    error_scale: float
    selected_terms: tuple[str, ...] = ()
    curves: dict[str, np.ndarray] = field(default_factory=dict)


@dataclass(frozen=True)
class _Data:
    """The times relative to t0 and what every model is built from."""

    cycle: np.ndarray
    y: np.ndarray          # time − t0 (days): small numbers, no precision lost at BJD 2.46e6
    sigma: np.ndarray
    sec: np.ndarray
    has_sec: bool
    freqs: np.ndarray      # light-time frequencies searched (1/d)

    def columns(self, terms: frozenset[str], cycle: np.ndarray | None = None,
                sec: np.ndarray | None = None) -> np.ndarray:
        """The linear part of a model's design matrix: 1, E, (s), then E^2 and E s if chosen."""
        cycle = self.cycle if cycle is None else cycle
        s = (self.sec if sec is None else sec).astype(float)
        cols = [np.ones(cycle.size), cycle] + ([s] if self.has_sec else [])
        if "period_change" in terms:
            cols.append(cycle ** 2)
        if "apsidal_motion" in terms:
            cols.append(cycle * s)
        return np.column_stack(cols)


@dataclass(frozen=True)
class _Fit:
    terms: frozenset[str]
    coef: np.ndarray       # linear coefficients, then (a, b, frequency) with the light-time term
    cov: np.ndarray        # unscaled (times' own uncertainties)
    chi2: float            # unscaled
    n_linear: int

    @property
    def k(self) -> int:
        return self.coef.size


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


def _available(data: _Data) -> tuple[str, ...]:
    """The terms these times can constrain (one degree of freedom left with all of them)."""
    n, base = data.y.size, 2 + data.has_sec
    terms = ["period_change"] + (["apsidal_motion"] if data.has_sec else [])
    if data.freqs.size and n >= base + len(terms) + 3 + 1:
        terms.append("light_travel_time")
    while terms and n < base + sum(_N_ADDED[t] for t in terms) + 1:
        terms.pop()
    return tuple(terms)


def _fit(data: _Data, terms: frozenset[str]) -> _Fit:
    design = data.columns(terms)
    if "light_travel_time" in terms:
        coef, cov, chi2 = _light_time(design, data.y, data.sigma, data.freqs)
    else:
        coef, cov, chi2 = _wls(design, data.y, data.sigma)
    return _Fit(terms, coef, cov, chi2, design.shape[1])


def _model(fit: _Fit, data: _Data, cycle: np.ndarray, sec: np.ndarray, y: np.ndarray) -> np.ndarray:
    """A fitted model's times − t0 at cycles ``cycle`` (secondary where ``sec``), light time at ``y``."""
    value = data.columns(fit.terms, cycle, sec) @ fit.coef[:fit.n_linear]
    if "light_travel_time" in fit.terms:
        value = value + _sinusoid(y, *fit.coef[fit.n_linear:])
    return value


def analyse_o_minus_c(cycle: np.ndarray, time: np.ndarray, sigma: np.ndarray, secondary: np.ndarray, *,
                      period: float, t0: float, ecosw: float | None = None, esinw: float | None = None,
                      esinw_err: float | None = None, inclination: float | None = None) -> OCAnalysis:
    """Fit the linear ephemeris and test a period change, apsidal motion and a third body.

    Each term is tested conditionally on the others (module notes): all combinations of the terms
    are fitted, the lowest-BIC one is selected, and each term's Δχ², ΔBIC and p-value compare the
    selected model with and without that term; ``detected`` means ΔBIC > :data:`DETECTION_DELTA_BIC`.

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

    References
    ----------
    .. [1] Schwarz, G. 1978, Ann. Stat., 6, 461 (BIC)
    .. [2] Kass, R. E. & Raftery, A. E. 1995, JASA, 90, 773 (evidence scale)
    .. [3] Irwin, J. B. 1952, ApJ, 116, 211 (light-travel-time effect)
    """
    sec = np.asarray(secondary, bool)
    y = np.asarray(time, float) - t0
    data = _Data(np.asarray(cycle, float), y, np.asarray(sigma, float), sec,
                 bool(sec.any()) and bool((~sec).any()), _frequency_grid(y, period))
    n = y.size
    available = _available(data)
    fits = {frozenset(c): _fit(data, frozenset(c))
            for r in range(len(available) + 1) for c in itertools.combinations(available, r)}
    full = fits[frozenset(available)]
    scale = math.sqrt(max(1.0, full.chi2 / max(n - full.k, 1)))
    bic = {terms: f.chi2 / scale ** 2 + f.k * math.log(max(n, 1)) for terms, f in fits.items()}
    selected = min(bic, key=lambda t: (bic[t], len(t)))     # ties: the simpler model

    linear = fits[frozenset()]
    coef = linear.coef
    cov = linear.cov * scale ** 2
    o_minus_c = y - _model(linear, data, data.cycle, sec, y)
    has_sec = data.has_sec
    ephemeris = {"t0": (t0 + coef[0], math.sqrt(cov[0, 0])), "period": (coef[1], math.sqrt(cov[1, 1])),
                 "secondary_offset": (coef[2], math.sqrt(cov[2, 2])) if has_sec else (math.nan, math.nan),
                 # with the times' own uncertainties (not scaled)
                 "reduced_chi_square": float(linear.chi2 / max(n - linear.k, 1)), "n_times": n}

    def test(term: str) -> tuple[_Fit, dict[str, Any]]:
        """The selected model with ``term``, and the term's significance against it without."""
        with_, without = fits[selected | {term}], fits[selected - {term}]
        d_chi2 = max(without.chi2 - with_.chi2, 0.0) / scale ** 2
        k = _N_ADDED[term]
        p = _fap(d_chi2, data) if term == "light_travel_time" else _chi2_sf(d_chi2, k)
        return with_, {**_significance(d_chi2, k, n, p), "tested_against": sorted(selected - {term})}

    blocks: dict[str, dict[str, Any]] = {}
    if "period_change" in available:
        f, sig = test("period_change")
        q, q_err = f.coef[data.columns(frozenset()).shape[1]], math.sqrt(f.cov[2 + has_sec, 2 + has_sec]) * scale
        blocks["period_change"] = {"quadratic_term": (q, q_err), "dp_de": (2 * q, 2 * q_err),
                                   "dp_dt": (2 * q / coef[1], 2 * q_err / coef[1]), **sig}
    else:
        blocks["period_change"] = _untested("period_change", "too few times for a quadratic term")
    if "apsidal_motion" in available:
        f, sig = test("apsidal_motion")
        blocks["apsidal_motion"] = {**_apsidal(f, scale, coef[1], ecosw, esinw, esinw_err, inclination), **sig}
    else:
        blocks["apsidal_motion"] = _untested("apsidal_motion", "needs timed primary and secondary eclipses")
    if "light_travel_time" in available:
        f, sig = test("light_travel_time")
        blocks["light_travel_time"] = {**_ltt_result(f, scale), **sig, "n_frequencies": int(data.freqs.size)}
    else:
        blocks["light_travel_time"] = {**_untested("light_travel_time",
                                                   "too few times or too short a span for a third-body search"),
                                       "n_frequencies": int(data.freqs.size)}
    curves = _curves(fits[selected], linear, data)
    return OCAnalysis(ephemeris, blocks["period_change"], blocks["apsidal_motion"], blocks["light_travel_time"],
                      o_minus_c, scale, tuple(t for t in TERMS if t in selected), curves)


def _untested(term: str, note: str) -> dict[str, Any]:
    """A term that these times cannot constrain: its quantities NaN, not significant."""
    keys = {"period_change": ("quadratic_term", "dp_de", "dp_dt"), "apsidal_motion": ("trend_difference",),
            "light_travel_time": ("semi_amplitude", "period", "phase", "mass_function")}[term]
    return {**{k: (math.nan, math.nan) for k in keys}, "delta_chi_square": 0.0, "delta_bic": 0.0, "p_value": 1.0,
            "n_added_parameters": _N_ADDED[term], "detected": False, "tested_against": [], "note": note}


def _curves(selected: _Fit, linear: _Fit, data: _Data) -> dict[str, np.ndarray]:
    """The selected model minus the linear ephemeris on a fine cycle grid (primary, secondary)."""
    if not data.y.size:
        return {}
    grid = np.linspace(data.cycle.min(), data.cycle.max(), 400)
    out = {"cycle": grid}
    for kind, flag in (("primary", False), ("secondary", True)):
        if flag and not data.has_sec:
            continue
        sec = np.full(grid.size, flag)
        y_lin = _model(linear, data, grid, sec, np.zeros(grid.size))
        out[kind] = _model(selected, data, grid, sec, y_lin) - y_lin
    return out


def _apsidal(fit: _Fit, scale: float, period: float, ecosw, esinw, esinw_err, inclination) -> dict[str, Any]:
    """The difference of the secondary's and primary's periods, and what it says about apsidal motion.

    First order in e (Giménez & Garcia-Pelayo 1983, Ap&SS 92, 203, the leading term of their
    series; recalled from memory): the secondary's displacement from phase 0.5 is
    D = T_sec − T_pri − P/2 = (P / pi) e cos ω (1 + csc² i), so a slowly turning ω gives
    dD/dE = −(P / pi) e sin ω (1 + csc² i) dω/dE.
    """
    j = fit.n_linear - 1                                  # E s is the last linear column
    slope, slope_err = fit.coef[j], math.sqrt(fit.cov[j, j]) * scale
    offset, offset_err = fit.coef[2], math.sqrt(fit.cov[2, 2]) * scale
    factor = 1.0 + 1.0 / math.sin(math.radians(inclination if inclination is not None else 90.0)) ** 2
    displacement = offset - 0.5 * period
    out: dict[str, Any] = {"trend_difference": (slope, slope_err),
                           "secondary_displacement": (displacement, offset_err),
                           "ecosw_from_timing": (math.pi * displacement / (period * factor),
                                                 math.pi * offset_err / (period * factor))}
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


def _fap(delta_chi2: float, data: _Data) -> float:
    """False-alarm probability of a light-time Δχ² found by searching ``data.freqs``.

    One frequency: the Δχ² of a sinusoid with free phase is χ²(2 dof), survival exp(−Δχ²/2); the
    best of M independent frequencies, M = (frequency range) × span (Horne & Baliunas 1986; from memory).
    """
    span = float(data.y.max() - data.y.min())
    n_independent = max(1.0, (data.freqs[-1] - data.freqs[0]) * span)
    return -math.expm1(n_independent * math.log1p(-min(math.exp(-0.5 * max(delta_chi2, 0.0)), 1 - 1e-16)))


def _light_time(linear: np.ndarray, y: np.ndarray, sigma: np.ndarray,
                freqs: np.ndarray) -> tuple[np.ndarray, np.ndarray, float]:
    """A sinusoid in time beyond the linear columns: frequency grid, then the best frequency refined.

    On the grid the linear columns are projected out once and the sine and cosine amplitudes
    solved in closed form at every frequency at once.  The best grid frequency is refined by a
    one-dimensional minimisation of χ² with all amplitudes solved linearly at each trial (variable
    projection), and the covariance of all parameters is that of the Gauss-Newton normal matrix
    with the analytic Jacobian.  Returns the coefficients (linear, a, b, frequency), their
    covariance and χ².
    """
    from scipy.optimize import minimize_scalar

    aw = linear / sigma[:, None]
    bw = y / sigma
    basis, _ = np.linalg.qr(aw)
    r0 = bw - basis @ (basis.T @ bw)
    arg = 2 * np.pi * freqs[:, None] * y[None, :]
    s, c = np.sin(arg) / sigma, np.cos(arg) / sigma
    s -= (s @ basis) @ basis.T
    c -= (c @ basis) @ basis.T
    ss, sc, cc = (s * s).sum(1), (s * c).sum(1), (c * c).sum(1)
    sr, cr = s @ r0, c @ r0
    det = ss * cc - sc * sc
    ok = det > 1e-12 * np.maximum(ss * cc, 1e-300)
    gain = np.where(ok, (cc * sr * sr - 2 * sc * sr * cr + ss * cr * cr) / np.where(ok, det, 1.0), 0.0)
    f0 = float(freqs[int(np.argmax(gain))])

    def solve(f: float) -> tuple[np.ndarray, float]:
        a = np.column_stack([aw, np.sin(2 * np.pi * f * y) / sigma, np.cos(2 * np.pi * f * y) / sigma])
        coef, *_ = np.linalg.lstsq(a, bw, rcond=None)
        return coef, float(np.sum((bw - a @ coef) ** 2))

    df = 1.0 / (_OVERSAMPLE * float(y.max() - y.min()))
    best = minimize_scalar(lambda f: solve(f)[1], bounds=(max(f0 - df, 0.5 * freqs[0]), f0 + df),
                           method="bounded", options={"xatol": 1e-6 * df})
    f = float(best.x) if best.fun < solve(f0)[1] else f0
    coef, chi2 = solve(f)
    a, b = coef[-2:]
    arg = 2 * np.pi * f * y
    d_f = 2 * np.pi * y * (a * np.cos(arg) - b * np.sin(arg))      # d model / d frequency
    jac = np.column_stack([aw, np.sin(arg) / sigma, np.cos(arg) / sigma, d_f / sigma])
    return np.append(coef, f), np.linalg.pinv(jac.T @ jac), chi2


def _ltt_result(fit: _Fit, scale: float) -> dict[str, Any]:
    """Semi-amplitude, period, phase and mass function of the light-time term."""
    from astropy import constants as const

    k = fit.n_linear
    a, b, f = fit.coef[k:k + 3]
    amp = math.hypot(a, b)
    # gradients of A = hypot(a, b), phi = atan2(b, a), P3 = 1/f
    sub = fit.cov[k:k + 3, k:k + 3] * scale ** 2
    g_amp = np.array([a / amp, b / amp, 0.0]) if amp > 0 else np.zeros(3)
    g_phi = np.array([-b, a, 0.0]) / max(amp * amp, 1e-300)
    amp_err = math.sqrt(max(g_amp @ sub @ g_amp, 0.0))
    phi_err = math.degrees(math.sqrt(max(g_phi @ sub @ g_phi, 0.0)))
    p3, p3_err = 1.0 / f, math.sqrt(sub[2, 2]) / f ** 2
    # mass function of the third body, f(m3) = (m3 sin i3)^3 / (m1+m2+m3)^2 = 4 pi^2 (a12 sin i3)^3 / (G P3^2),
    # with a12 sin i3 = c A for a circular orbit (Irwin 1952, ApJ 116, 211; the formula from memory)
    a12 = const.c.value * amp * 86400.0
    p3_s = p3 * 86400.0
    mass_fn = 4 * math.pi ** 2 * a12 ** 3 / (const.G.value * p3_s ** 2) / const.M_sun.value
    g = np.array([3 * a / amp ** 2, 3 * b / amp ** 2, 2 / f]) * mass_fn if amp > 0 else np.zeros(3)
    mass_fn_err = math.sqrt(max(g @ sub @ g, 0.0))
    return {"semi_amplitude": (amp, amp_err), "period": (p3, p3_err),
            "phase": (math.degrees(math.atan2(b, a)) % 360.0, phi_err),
            "mass_function": (mass_fn, mass_fn_err),
            "a12_sin_i": (a12 / const.au.value, a12 / const.au.value * (amp_err / amp if amp > 0 else math.nan))}
