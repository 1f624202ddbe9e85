"""Fit both eclipses of a detached binary: geometry, light ratio and honest uncertainties.

:func:`fit_eclipses` turns a :class:`~eclipsekit.data.LightCurve` and a start (a
:class:`~eclipsekit.period.PeriodSearch`, an earlier :class:`EclipseFit` or explicit
values) into an :class:`EclipseFit`.  The eclipse model is
:func:`eclipsekit.eclipse.model_flux` (two limb-darkened spheres on a Keplerian orbit);
this module adds the start values, the parameter set with its bounds, a per-segment
polynomial baseline, outlier rejection, restarts, and three ways to get uncertainties.

Numerical notes (why the code looks the way it does)
-----------------------------------------------------
* The epoch is fitted as an offset from a reference epoch ``t_ref`` (the start's t0
  moved by whole periods to the middle of the data) and the period as the timing shift
  it produces at the edge of the data, ``(P - P_ref) * n_cycles``.  Both are then O(1e-3)
  days, so finite-difference steps are meaningful (a step relative to t0 ~ 2.46e6 d
  would be ~0.04 d) and the epoch at mid-data is nearly uncorrelated with the period.
  Reported ``t0`` is the true time of mid-primary eclipse at that epoch.
* The baseline is normalisation times a polynomial of ``baseline_degree`` in time for
  each data segment (segments split at gaps).  Its coefficients enter linearly, so they
  are solved exactly inside every residual evaluation ("variable projection", Golub &
  Pereyra 1973, SIAM J. Numer. Anal. 10, 413).  The optimiser only sees the eclipse
  parameters; the Jacobian of the projected residuals gives their covariance already
  marginalised over the baseline coefficients.  For MCMC the log-posterior includes
  the Gaussian integral over the coefficients (flat priors), ``-0.5 chi2_min - 0.5
  log det(A^T W A)``, i.e. the baseline is marginalised, not just profiled.
* Only data near the eclipses (flanks of half an eclipse duration on each side) are
  fitted point by point when they are under 60% of the light curve; the points
  elsewhere, where the model is exactly 1, are averaged in bins of 10 consecutive
  points (weighted means), which keeps their information on the baseline at a tenth
  of the cost.  The statistics, residuals and outlier rejection always use the whole
  light curve.
"""

from __future__ import annotations

import contextlib
import io
import logging
import math
import time as _time
import warnings
from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping

import lmfit
import numpy as np
from astropy import units as u

from ._validate import as_float, as_times
from .data import LightCurve
from .errors import EclipsekitWarning, FitError, InputError

__all__ = ["fit_eclipses", "EclipseFit", "estimate_start", "eclipse_parameters", "PARAMETERS", "DERIVED"]

# --------------------------------------------------------------------------------------
# Parameter set: names, units and physical bounds live together (STYLE section 5)
# --------------------------------------------------------------------------------------
#: name -> (unit, lower bound, upper bound, description)
PARAMETERS: dict[str, tuple[str, float | None, float | None, str]] = {
    "period": ("d", None, None, "orbital period"),
    "t0": ("d", None, None, "time of mid-primary eclipse (epoch nearest the middle of the data)"),
    "radius_sum": ("", 1e-3, 0.8, "sum of the fractional radii r1 + r2 = (R1 + R2) / a"),
    "radius_ratio": ("", 0.02, 50.0, "ratio of the radii k = r2 / r1"),
    "inclination": ("deg", 30.0, 90.0, "orbital inclination"),
    "surface_brightness_ratio": ("", 1e-4, 50.0, "disc-averaged surface brightness ratio J = S2 / S1"),
    "ecosw": ("", -0.9, 0.9, "e cos(omega)"),
    "esinw": ("", -0.9, 0.9, "e sin(omega)"),
    # slightly negative allowed: over-subtracted background in crowded photometry
    "third_light": ("", -0.2, 0.95, "fraction of the out-of-eclipse flux from neither star"),
}

#: limb-darkening law -> (default coefficients, bounds of each coefficient)
_LD_LAWS: dict[str, tuple[tuple[float, ...], tuple[tuple[float, float], ...]]] = {
    "uniform": ((), ()),
    "linear": ((0.6,), ((0.0, 1.0),)),
    "quadratic": ((0.4, 0.25), ((0.0, 1.0), (-0.5, 1.0))),
    "power-2": ((0.6, 0.6), ((0.0, 1.0), (0.01, 3.0))),
}

#: derived quantities (computed from every sample) -> unit
DERIVED: dict[str, str] = {
    "frac_radius_primary": "",
    "frac_radius_secondary": "",
    "eccentricity": "",
    "omega": "deg",
    "light_ratio": "",
    "depth_primary": "",
    "depth_secondary": "",
}

_ALIASES = {
    "eccentricity": ("ecosw", "esinw"),
    "e": ("ecosw", "esinw"),
    "limb_darkening": ("ld1_1", "ld1_2", "ld2_1", "ld2_2"),
    "ld": ("ld1_1", "ld1_2", "ld2_1", "ld2_2"),
    "ld1": ("ld1_1", "ld1_2"),
    "ld2": ("ld2_1", "ld2_2"),
    "J": ("surface_brightness_ratio",),
    "k": ("radius_ratio",),
    "l3": ("third_light",),
}

_ERROR_METHODS = ("covariance", "mcmc", "permutation")
_BIN = 10  # out-of-window points averaged per bin when fitting near the eclipses only
_DEFAULT_FREE = ("period", "t0", "radius_sum", "radius_ratio", "inclination", "surface_brightness_ratio")


def _ld_names(ld_law: str) -> list[str]:
    n = len(_LD_LAWS[ld_law][0])
    return [f"ld{s}_{j + 1}" for s in (1, 2) for j in range(n)]


def _all_names(ld_law: str) -> list[str]:
    return list(PARAMETERS) + _ld_names(ld_law)


def _bounds(name: str, ld_law: str) -> tuple[float | None, float | None]:
    if name in PARAMETERS:
        return PARAMETERS[name][1], PARAMETERS[name][2]
    j = int(name[-1]) - 1
    return _LD_LAWS[ld_law][1][j]


def _unit(name: str) -> str:
    if name in PARAMETERS:
        return PARAMETERS[name][0]
    return DERIVED.get(name, "")


def _days(x: Any, name: str) -> float | None:
    """Float days from a float, an astropy Quantity or an astropy Time (as JD); None stays None."""
    if x is None:
        return None
    if hasattr(x, "jd") and not hasattr(x, "unit"):
        return float(as_times(x, name))
    return as_float(x, name, u.day)


# --------------------------------------------------------------------------------------
# Start values
# --------------------------------------------------------------------------------------
def _get(obj: Any, key: str, default: Any = None) -> Any:
    if isinstance(obj, Mapping):
        v = obj.get(key, default)
    else:
        v = getattr(obj, key, default)
    if v is None:
        return default
    if hasattr(v, "unit") and key in ("period", "t0", "duration_primary", "duration_secondary", "period_err",
                                       "t0_err"):
        v = _days(v, key)
    return v


def _finite(x: Any) -> bool:
    try:
        return x is not None and math.isfinite(float(x))
    except (TypeError, ValueError):
        return False


def estimate_start(search: Any, *, period: float | None = None, t0: float | None = None) -> dict[str, Any]:
    """Start values of the eclipse parameters from a period search.

    Parameters
    ----------
    search : PeriodSearch, EclipseFit, dict or object
        Anything with the attributes (or keys) ``period``, ``t0``, ``depth_primary``,
        ``depth_secondary``, ``duration_primary``, ``duration_secondary`` and
        ``phase_secondary`` (fractional depths, durations in days).  An object with a
        ``values`` dict (an :class:`EclipseFit`) is used as is.
    period, t0 : float, optional
        Override the search's ephemeris.

    Returns
    -------
    dict
        ``period``, ``t0``, ``radius_sum``, ``radius_ratio``, ``inclination``,
        ``surface_brightness_ratio``, ``ecosw``, ``esinw``, ``third_light`` and the
        bookkeeping keys ``eccentric`` (bool: the secondary's phase or width says the
        orbit is eccentric), ``duration_primary``, ``duration_secondary``,
        ``depth_primary``, ``depth_secondary``, ``period_err``, ``t0_err``.

    Notes
    -----
    With phase of secondary eclipse :math:`\\phi_2`, durations :math:`W_1, W_2` and
    depths :math:`D_1, D_2` (all classical first-order relations, e.g. Kopal 1959,
    "Close Binary Systems", ch. VI; Kallrath & Milone 2009, "Eclipsing Binary Stars",
    sect. 3.1.7):

    * :math:`e\\cos\\omega \\approx \\frac{\\pi}{2}(\\phi_2 - \\tfrac12)` (i = 90 deg);
    * :math:`e\\sin\\omega \\approx (W_2 - W_1)/(W_2 + W_1)`: the eclipse nearer
      periastron is shorter (with DESIGN.md's convention the primary eclipse is at true
      anomaly 90 deg - omega, orbital separation :math:`(1-e^2)/(1+e\\sin\\omega)`);
    * :math:`J \\approx D_2/D_1`: in both eclipses the same area is hidden
      (circular orbit, uniform discs), so the depths scale with the eclipsed star's
      surface brightness;
    * :math:`r_1 + r_2 \\approx \\sin(\\pi W/P)` for a central eclipse, with the
      circular-equivalent duration :math:`W = W_1 (1 + e\\sin\\omega)/\\sqrt{1-e^2}`
      (Winn 2010, in "Exoplanets", eq. 16 with this sign convention);
    * :math:`k^2 \\approx D_1/(1 - J D_1)` for a central eclipse by the smaller star
      (:math:`D_1 = k^2/(1 + J k^2)`), or :math:`k^2 = (1/D_1 - 1)/J` when the primary
      is totally eclipsed by a larger secondary.  The inclination is started at an
      impact parameter of 0.3 (r1 + r2); :func:`fit_eclipses` then scores a few impact
      parameters (and the radius ratio each implies for the observed depth) with the
      model before fitting.
    """
    if isinstance(getattr(search, "values", None), Mapping) and "radius_sum" in search.values:  # an earlier fit
        v = dict(search.values)
        out = {k: float(v[k]) for k in PARAMETERS if k in v}
        out.setdefault("third_light", 0.0)
        out.update(eccentric=bool(abs(out.get("ecosw", 0)) > 1e-4 or abs(out.get("esinw", 0)) > 1e-4),
                   duration_primary=float(v.get("duration_primary", np.nan)),
                   duration_secondary=float(v.get("duration_secondary", np.nan)),
                   depth_primary=float(v.get("depth_primary", np.nan)),
                   depth_secondary=float(v.get("depth_secondary", np.nan)),
                   period_err=np.nan, t0_err=np.nan)
        for key in ("ld1_1", "ld1_2", "ld2_1", "ld2_2"):
            if key in v:
                out[key] = float(v[key])
        if period is not None:
            out["period"] = period
        if t0 is not None:
            out["t0"] = t0
        return out

    P = period if period is not None else _get(search, "period")
    T0 = t0 if t0 is not None else _get(search, "t0")
    if not _finite(P) or float(P) <= 0:
        raise InputError("no usable `period` in the start (give `period=` or a PeriodSearch)")
    if not _finite(T0):
        raise InputError("no usable `t0` in the start (give `t0=` or a PeriodSearch)")
    P, T0 = float(P), float(T0)
    d1 = float(_get(search, "depth_primary", np.nan))
    d2 = float(_get(search, "depth_secondary", np.nan))
    w1 = float(_get(search, "duration_primary", np.nan))
    w2 = float(_get(search, "duration_secondary", np.nan))
    ph2 = float(_get(search, "phase_secondary", np.nan))
    explicit = {k: float(_get(search, k)) for k in PARAMETERS if _finite(_get(search, k, None))}

    if not (_finite(d1) and d1 > 0):
        d1 = 0.1
    has_sec = _finite(d2) and d2 > 0 and _finite(ph2) and bool(_get(search, "secondary_detected", True))
    if not _finite(w1) or w1 <= 0:
        w1 = 0.05 * P
    if not (_finite(w2) and w2 > 0):
        w2 = w1
    ph2 = ph2 % 1.0 if has_sec else 0.5

    ecosw = 0.5 * np.pi * (ph2 - 0.5)  # first-order conjunction-time relation
    esinw = (w2 - w1) / (w2 + w1) if has_sec else 0.0
    # the secondary's phase is precise (timing); widths are rough (duration grids of the search)
    ecc_by_phase = abs(ph2 - 0.5) > 0.002 + 0.05 * w1 / P
    ecc_by_width = has_sec and abs(esinw) > 0.15
    eccentric = bool(ecc_by_phase or ecc_by_width)
    if not eccentric:
        ecosw = esinw = 0.0
    elif abs(esinw) < 0.05:
        esinw = 0.0
    e2 = min(ecosw * ecosw + esinw * esinw, 0.8)
    ecosw, esinw = float(np.clip(ecosw, -0.85, 0.85)), float(np.clip(esinw, -0.85, 0.85))

    J = d2 / d1 if has_sec else 0.02
    J = float(np.clip(J, 1e-3, 20.0))
    # circular-equivalent durations, averaged over both eclipses when the secondary is seen
    wc1 = w1 * (1 + esinw) / math.sqrt(1 - e2)
    wc2 = w2 * (1 - esinw) / math.sqrt(1 - e2)
    wc = 0.5 * (wc1 + wc2) if has_sec else wc1
    s = math.sin(min(math.pi * wc / P, 0.9))
    beta = 0.3  # impact parameter in units of r1 + r2
    rsum = s / math.sqrt(1 - beta * beta * (1 - s * s))
    rsum = float(np.clip(rsum, 0.005, 0.7))
    inc = math.degrees(math.acos(min(beta * rsum, 0.99)))
    if d1 * (1 + J) < 1:
        k = math.sqrt(d1 / max(1 - J * d1, 1e-3))
    else:
        k = math.sqrt((1 / d1 - 1) / J) if d1 < 1 else 1.0
    k = float(np.clip(k, 0.05, 20.0))
    out = dict(period=P, t0=T0, radius_sum=rsum, radius_ratio=k, inclination=inc, surface_brightness_ratio=J,
               ecosw=ecosw, esinw=esinw, third_light=0.0)
    out.update({k_: v_ for k_, v_ in explicit.items() if k_ not in ("period", "t0")})
    out.update(eccentric=eccentric, duration_primary=w1, duration_secondary=w2, depth_primary=d1,
               depth_secondary=d2 if has_sec else 0.0,
               period_err=float(_get(search, "period_err", np.nan)), t0_err=float(_get(search, "t0_err", np.nan)))
    return out


def _lens_fraction(z: float, p: float) -> float:
    """Fraction of a unit uniform disc hidden by a disc of radius p at distance z (circle-circle overlap)."""
    if z >= 1 + p:
        return 0.0
    if z <= abs(1 - p):
        return min(1.0, p * p)
    k0 = math.acos(np.clip((p * p + z * z - 1) / (2 * p * z), -1, 1))
    k1 = math.acos(np.clip((1 - p * p + z * z) / (2 * z), -1, 1))
    return (p * p * k0 + k1 - 0.5 * math.sqrt(max(0.0, 4 * z * z - (1 + z * z - p * p) ** 2))) / math.pi


def _start_candidates(start: dict[str, Any], vary: set[str]) -> list[dict[str, float]]:
    """Alternative (radius_sum, radius_ratio, inclination) consistent with the observed depth and width."""
    base = {k: start[k] for k in start if k in PARAMETERS or k.startswith("ld")}
    cands = [dict(base)]
    if not ({"inclination", "radius_ratio", "radius_sum"} & vary):
        return cands
    P = start["period"]
    d1 = start.get("depth_primary", np.nan)
    J = start["surface_brightness_ratio"]
    e2 = start["ecosw"] ** 2 + start["esinw"] ** 2
    wc = start.get("duration_primary", np.nan)
    if not _finite(wc) or not _finite(d1):
        return cands
    wc = wc * (1 + start["esinw"]) / math.sqrt(1 - e2)
    s = math.sin(min(math.pi * wc / P, 0.9))
    for beta in (0.0, 0.5, 0.7, 0.85):
        c = dict(base)
        if "radius_sum" in vary:
            c["radius_sum"] = float(np.clip(s / math.sqrt(1 - beta * beta * (1 - s * s)), 0.005, 0.7))
        rs = c["radius_sum"]
        if "inclination" in vary:
            c["inclination"] = math.degrees(math.acos(min(beta * rs, 0.99)))
        if "radius_ratio" in vary:
            # uniform-disc depth d1 = f(k) / (1 + J k^2), f the hidden fraction of star 1 at z = beta rs / r1
            def g(k: float) -> float:
                return _lens_fraction(beta * (1 + k), k) / (1 + J * k * k) - d1

            ks = np.geomspace(0.05, 20, 60)
            vals = np.array([g(k) for k in ks])
            roots = np.nonzero(np.sign(vals[:-1]) != np.sign(vals[1:]))[0]
            if roots.size == 0:
                continue
            from scipy.optimize import brentq

            for r in roots[:2]:
                cc = dict(c)
                cc["radius_ratio"] = float(brentq(g, ks[r], ks[r + 1], xtol=1e-6))
                cands.append(cc)
            continue
        cands.append(c)
    return cands


# --------------------------------------------------------------------------------------
# Baseline segments
# --------------------------------------------------------------------------------------
def _segments(time: np.ndarray, gap: float, min_points: int) -> np.ndarray:
    """Start index of each data segment (time sorted); segments split at gaps > ``gap``."""
    starts = np.concatenate([[0], np.nonzero(np.diff(time) > gap)[0] + 1])
    # merge segments too short to pin their own polynomial into the previous one
    keep = [0]
    for i in range(1, starts.size):
        end = starts[i + 1] if i + 1 < starts.size else time.size
        if end - starts[i] >= min_points and starts[i] - keep[-1] >= min_points:
            keep.append(int(starts[i]))
    return np.asarray(keep, dtype=int)


# --------------------------------------------------------------------------------------
# The objective: eclipse model times a per-segment polynomial solved linearly
# --------------------------------------------------------------------------------------
class _Problem:
    """Data, fixed settings and the (projected) objective of one fit."""

    def __init__(self, time, flux, flux_err, seg_id, seg_mid, seg_half, degree, *, t_ref, p_ref, n_cyc,
                 fixed, ld_law, exposure_time, supersample, err_scale=1.0):
        from . import eclipse

        self._model_flux = eclipse.model_flux
        self.time = time
        self.flux = flux
        self.flux_err = flux_err
        self.seg_id = seg_id
        self.seg_starts = np.concatenate([[0], np.nonzero(np.diff(seg_id))[0] + 1])
        self.n_seg = self.seg_starts.size
        self.seg_index = seg_id  # segment id per point (0 .. n_seg-1), contiguous
        self.degree = degree
        x = (time - seg_mid[seg_id]) / seg_half[seg_id]
        self.xp = np.vander(x, 2 * degree + 1, increasing=True)  # x^0 .. x^(2d)
        self.hankel = np.add.outer(np.arange(degree + 1), np.arange(degree + 1))
        self.t_ref, self.p_ref, self.n_cyc = t_ref, p_ref, n_cyc
        self.fixed = dict(fixed)
        self.ld_law = ld_law
        self.exposure_time = exposure_time
        self.supersample = supersample
        self.set_err_scale(err_scale)
        self.nfev = 0

    def set_err_scale(self, s: float) -> None:
        self.err_scale = s
        self.sig = self.flux_err * s
        self.w = 1.0 / (self.sig * self.sig)
        self.wf = self.w * self.flux
        self._sums = self._flux_sums(self.flux)

    def _flux_sums(self, flux: np.ndarray):
        """Per-segment sums that do not depend on the model (it is exactly 1 out of eclipse)."""
        d = self.degree
        wf = self.w * flux
        sum_w = np.add.reduceat(self.w[:, None] * self.xp, self.seg_starts, axis=0)  # (S, 2d+1)
        sum_wf = np.add.reduceat(wf[:, None] * self.xp[:, : d + 1], self.seg_starts, axis=0)  # (S, d+1)
        return wf, sum_w, sum_wf, float(wf @ flux)

    @property
    def n_linear(self) -> int:
        return self.n_seg * (self.degree + 1)

    # -- parameter mapping ----------------------------------------------------------
    def physical(self, internal: Mapping[str, float]) -> dict[str, float]:
        v = dict(self.fixed)
        v.update(internal)
        if "t0_offset" in v:
            v["t0"] = self.t_ref + v.pop("t0_offset")
        if "period_offset" in v:
            v["period"] = self.p_ref + v.pop("period_offset") / self.n_cyc
        return v

    def internal_value(self, name: str, value: float) -> float:
        if name == "t0":
            return value - self.t_ref
        if name == "period":
            return (value - self.p_ref) * self.n_cyc
        return value

    def model(self, v: Mapping[str, float], time: np.ndarray | None = None) -> np.ndarray:
        self.nfev += 1
        law = self.ld_law
        n = len(_LD_LAWS[law][0])
        ld1 = tuple(v[f"ld1_{j + 1}"] for j in range(n))
        ld2 = tuple(v[f"ld2_{j + 1}"] for j in range(n))
        return self._model_flux(self.time if time is None else time, period=v["period"], t0=v["t0"],
                                radius_sum=v["radius_sum"], radius_ratio=v["radius_ratio"],
                                inclination=v["inclination"], surface_brightness_ratio=v["surface_brightness_ratio"],
                                ecosw=v["ecosw"], esinw=v["esinw"], third_light=v["third_light"], ld_law=law,
                                ld_primary=ld1, ld_secondary=ld2, exposure_time=self.exposure_time,
                                supersample=self.supersample)

    def normal_solution(self, m: np.ndarray, flux: np.ndarray | None = None):
        """Baseline coefficients for model ``m``: (coefficients, sum of log det of the normal matrices, chi2_min).

        The normal equations of each segment, sum w m^2 x^(j+k) c_k = sum w f m x^j, are the
        model-independent sums (m = 1) plus corrections from the in-eclipse points only, where
        m != 1; so the cost scales with the points in eclipse, not with the light curve.
        """
        wf, sum_w, sum_wf, sum_wff = self._sums if flux is None else self._flux_sums(flux)
        d = self.degree
        S = self.n_seg
        mom = sum_w.copy()
        rhs = sum_wf.copy()
        idx = np.flatnonzero(m != 1.0)
        if idx.size:
            dm = m[idx] - 1.0
            seg = self.seg_index[idx]
            xp = self.xp[idx]
            a = self.w[idx] * dm * (2.0 + dm)  # w (m^2 - 1)
            b = wf[idx] * dm  # w f (m - 1)
            for j in range(2 * d + 1):
                mom[:, j] += np.bincount(seg, a * xp[:, j], minlength=S)
            for j in range(d + 1):
                rhs[:, j] += np.bincount(seg, b * xp[:, j], minlength=S)
        G = mom[:, self.hankel]
        if d == 0:
            coef = rhs / G[:, :, 0]
            logdet = np.log(G[:, 0, 0])
        else:
            G = G + np.eye(d + 1) * (1e-15 * G[:, :1, :1])  # guard against an exactly singular segment
            coef = np.linalg.solve(G, rhs[..., None])[..., 0]
            logdet = np.linalg.slogdet(G)[1]
        # at the linear optimum the residual is orthogonal to the baseline columns: chi2 = f'Wf - rhs.c
        chi2 = sum_wff - float(np.sum(rhs * coef))
        return coef, float(np.sum(logdet)), chi2

    def project(self, m: np.ndarray, flux: np.ndarray | None = None):
        """Best baseline for model ``m``: (baseline at every point, coefficients, sum of log det)."""
        coef, logdet, _ = self.normal_solution(m, flux)
        d = self.degree
        base = np.einsum("ij,ij->i", self.xp[:, : d + 1], coef[self.seg_index])
        return base, coef, logdet

    def evaluate(self, v: Mapping[str, float], flux: np.ndarray | None = None):
        m = self.model(v)
        base, coef, logdet = self.project(m, flux)
        f = self.flux if flux is None else flux
        return m, base, (f - m * base) / self.sig, logdet

    # -- objectives for lmfit ---------------------------------------------------------
    def residual(self, params: lmfit.Parameters, flux: np.ndarray | None = None) -> np.ndarray:
        try:
            r = self.evaluate(self.physical(params.valuesdict()), flux)[2]
        except (ValueError, ArithmeticError):  # invalid geometry (e.g. stars touching): push back
            return np.full(self.time.size, 1e3)
        if not np.all(np.isfinite(r)):
            return np.full(self.time.size, 1e3)
        return r

    def residual_from(self, internal: Mapping[str, float]) -> np.ndarray:
        return self.evaluate(self.physical(internal))[2]

    def log_posterior(self, params: lmfit.Parameters) -> float:
        try:
            coef, logdet, chi2 = self.normal_solution(self.model(self.physical(params.valuesdict())))
        except (ValueError, ArithmeticError):
            return -np.inf
        lp = -0.5 * chi2 - 0.5 * logdet
        return lp if math.isfinite(lp) else -np.inf


# --------------------------------------------------------------------------------------
# Result
# --------------------------------------------------------------------------------------
@dataclass(eq=False)
class EclipseFit:
    """Outcome of :func:`fit_eclipses`.

    Attributes
    ----------
    values, uncertainties, units : dict
        Best-fit (``errors="mcmc"``: posterior median) value, one-sigma uncertainty
        (None for fixed parameters) and unit of every parameter and derived quantity:
        period, t0 (days), radius_sum, radius_ratio, inclination (deg),
        surface_brightness_ratio, ecosw, esinw, third_light, ld1_1 ... (limb darkening
        coefficient j of star i), frac_radius_primary, frac_radius_secondary,
        eccentricity, omega (deg), light_ratio (L2/L1), depth_primary, depth_secondary.
    samples : dict of str -> ndarray
        Draws of every parameter and derived quantity, all the same length (from the
        covariance matrix, the MCMC chain or the permutation fits), so later steps can
        propagate uncertainties with their correlations.
    lc : LightCurve
        The light curve fitted, with outliers moved to ``lc.rejected["outlier"]``.
    baseline, detrended_flux, residuals : ndarray
        At ``lc.time``: the fitted baseline (normalisation x polynomial per segment),
        ``lc.flux / baseline`` and ``lc.flux - baseline * model``.
    redchi, rms, bic : float
        Reduced chi-square (degrees of freedom: points - eclipse parameters - baseline
        coefficients), rms of the residuals (relative flux) and BIC, over ``lc``.
    n_free, free : int, list of str
        Number and names of the free eclipse parameters (baseline coefficients excluded;
        see ``n_baseline``).
    errors_method : str
    ld_law, ld_primary, ld_secondary : str, tuple, tuple
    exposure_time : float
        Days; ``supersample`` the number of sub-exposures in the model.
    lmfit_result : lmfit.minimizer.MinimizerResult
        Least-squares result (``errors="mcmc"``: the emcee result, with ``chain``).
    warnings : list of str
    success : bool
    message : str
    diagnostics : dict
        Model evaluations, timings, attempts, points fitted; MCMC autocorrelation times,
        acceptance, burn-in and thinning; permutation shifts.
    covariance : ndarray
        Covariance of the free parameters (in the order of ``free``), scaled by the
        reduced chi-square, in the fitted parameterisation: ``t0`` as the offset from
        ``diagnostics["t_ref"]``, ``period`` as ``(P - P_ref) * diagnostics["n_cycles"]``.
    orbit : OrbitFit or None
        Joint fit only (``velocities=`` given): the spectroscopic orbit at the joint
        values, an :class:`~eclipsekit.spectroscopy.OrbitFit` whose samples are rows of
        this fit's samples (``absolute_dimensions(fit, fit.orbit)`` pairs them row by
        row).  The velocity parameters ``k_primary``, ``k_secondary``, ``gamma`` (and
        ``gamma_offset``) are then also in ``values``, ``uncertainties`` and ``samples``.
    """

    values: dict[str, float]
    uncertainties: dict[str, float | None]
    units: dict[str, str]
    samples: dict[str, np.ndarray]
    lc: LightCurve
    baseline: np.ndarray
    residuals: np.ndarray
    redchi: float
    rms: float
    bic: float
    n_free: int
    free: list[str]
    errors_method: str
    ld_law: str
    ld_primary: tuple[float, ...]
    ld_secondary: tuple[float, ...]
    exposure_time: float
    supersample: int
    lmfit_result: Any
    warnings: list[str]
    success: bool
    message: str
    diagnostics: dict[str, Any] = field(default_factory=dict)
    covariance: np.ndarray | None = None
    n_baseline: int = 0
    segments: list[tuple[float, float]] = field(default_factory=list)
    orbit: Any = None
    _problem: Any = field(default=None, repr=False)
    _fit_problem: Any = field(default=None, repr=False)

    @property
    def detrended_flux(self) -> np.ndarray:
        return self.lc.flux / self.baseline

    @property
    def params(self) -> lmfit.Parameters:
        """The fitted values as lmfit Parameters (public names, with ``stderr``)."""
        p = lmfit.Parameters()
        for name, val in self.values.items():
            if name in DERIVED:
                continue
            lo, hi = _bounds(name, self.ld_law) if (name in PARAMETERS or name.startswith("ld")) else (None, None)
            p.add(name, value=val, vary=name in self.free,
                  min=-np.inf if lo is None else lo, max=np.inf if hi is None else hi)
            p[name].stderr = self.uncertainties.get(name)
        return p

    def model(self, time: Any) -> np.ndarray:
        """Normalised eclipse model (no baseline) at ``time`` (days) for the fitted values."""
        if hasattr(time, "unit"):
            from astropy import units as u

            time = time.to_value(u.day)
        return self._problem.model(self.values, np.atleast_1d(np.asarray(time, float)))

    def summary(self) -> str:
        lines = [f"Eclipse fit ({self.errors_method} uncertainties): {len(self.lc)} points, "
                 f"{self.n_free} free eclipse parameters + {self.n_baseline} baseline coefficients "
                 f"in {len(self.segments)} segment(s)",
                 f"reduced chi-square {self.redchi:.3f}, rms {self.rms * 1e6:.0f} ppm, BIC {self.bic:.1f}, "
                 f"{'converged' if self.success else 'NOT CONVERGED'}: {self.message}",
                 f"limb darkening: {self.ld_law}; exposure {self.exposure_time * 86400:.0f} s x {self.supersample}",
                 "",
                 f"{'parameter':<26}{'value':>18}{'uncertainty':>14}  {'unit':<4} status"]
        for name, val in self.values.items():
            err = self.uncertainties.get(name)
            status = "free" if name in self.free else ("derived" if name in DERIVED else "fixed")
            if name == "t0" or name == "period":
                vs, es = f"{val:.7f}", ("" if err is None else f"{err:.7f}")
            else:
                vs, es = f"{val:.6g}", ("" if err is None else f"{err:.2g}")
            lines.append(f"{name:<26}{vs:>18}{es:>14}  {self.units.get(name, ''):<4} {status}")
        if self.warnings:
            lines.append("")
            lines += [f"warning: {w}" for w in self.warnings]
        return "\n".join(lines)

    def __repr__(self) -> str:
        v = self.values
        return (f"<EclipseFit {self.errors_method}: P={v['period']:.6f} d, r1+r2={v['radius_sum']:.4f}, "
                f"k={v['radius_ratio']:.4f}, i={v['inclination']:.3f} deg, J={v['surface_brightness_ratio']:.4f}, "
                f"redchi={self.redchi:.3f}>")


# --------------------------------------------------------------------------------------
# Public helpers
# --------------------------------------------------------------------------------------
def eclipse_parameters(start: Mapping[str, float], *, ld_law: str = "quadratic",
                       free: Iterable[str] = _DEFAULT_FREE) -> lmfit.Parameters:
    """lmfit Parameters (public names, physical bounds) for a start dict; ``free`` ones vary."""
    free = set(free)
    p = lmfit.Parameters()
    for name in _all_names(ld_law):
        lo, hi = _bounds(name, ld_law)
        p.add(name, value=float(start[name]), vary=name in free,
              min=-np.inf if lo is None else lo, max=np.inf if hi is None else hi)
    return p


def _expand(names: Iterable[str] | str, ld_law: str, arg: str) -> set[str]:
    if isinstance(names, str):
        names = [names]
    valid = set(_all_names(ld_law))
    out: set[str] = set()
    for n in names:
        n = str(n)
        if n in _ALIASES:
            out.update(x for x in _ALIASES[n] if x in valid)
        elif n in valid:
            out.add(n)
        else:
            raise InputError(f"`{arg}`: unknown parameter {n!r}; valid: {', '.join(sorted(valid | set(_ALIASES)))}")
    return out


def _derived_from(s: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
    rs, k = np.asarray(s["radius_sum"], float), np.asarray(s["radius_ratio"], float)
    ec, es = np.asarray(s["ecosw"], float), np.asarray(s["esinw"], float)
    e = np.hypot(ec, es)
    # omega is undefined for a circular orbit: 90 deg there by convention (primary eclipse at periastron)
    om = np.where(e > 0, np.degrees(np.arctan2(es, ec)) % 360.0, 90.0)
    return dict(frac_radius_primary=rs / (1 + k), frac_radius_secondary=rs * k / (1 + k), eccentricity=e,
                omega=om, light_ratio=np.asarray(s["surface_brightness_ratio"], float) * k * k)


def _depths(v: Mapping[str, float], ld_law: str) -> tuple[float, float]:
    from . import eclipse

    n = len(_LD_LAWS[ld_law][0])
    props = eclipse.eclipse_properties(
        period=v["period"], radius_sum=v["radius_sum"], radius_ratio=v["radius_ratio"],
        inclination=v["inclination"], surface_brightness_ratio=v["surface_brightness_ratio"], ecosw=v["ecosw"],
        esinw=v["esinw"], third_light=v["third_light"], ld_law=ld_law,
        ld_primary=tuple(v[f"ld1_{j + 1}"] for j in range(n)), ld_secondary=tuple(v[f"ld2_{j + 1}"] for j in range(n)))
    return float(props["depth_primary"]), float(props["depth_secondary"])


def _depth_samples(samples: Mapping[str, np.ndarray], names: Iterable[str], free_names: Iterable[str],
                   ld_law: str, rng: np.random.Generator) -> tuple[np.ndarray, np.ndarray]:
    """Primary and secondary depth of every sample row.

    Exact on a subset of 150 rows; the rest from a linear regression on the free
    parameters over that subset plus a resampled regression residual (the depths are
    smooth functions of the parameters over the width of the samples).
    """
    names, free_names = list(names), list(free_names)
    nrow = next(iter(samples.values())).size
    dp = np.empty(nrow)
    ds = np.empty(nrow)
    n_depth = min(nrow, 150)  # depths: exact on a subset, the rest from a linear regression on the parameters
    idx = rng.choice(nrow, n_depth, replace=False) if n_depth < nrow else np.arange(nrow)
    for j in idx:
        try:
            dp[j], ds[j] = _depths({n: samples[n][j] for n in names}, ld_law)
        except (ValueError, ArithmeticError):
            dp[j], ds[j] = np.nan, np.nan
    if n_depth < nrow:
        rest = np.setdiff1d(np.arange(nrow), idx)
        # linear regression of the depths on the free parameters over the exact subset
        X = np.column_stack([np.ones(nrow)] + [samples[n] - np.mean(samples[n]) for n in free_names
                                               if np.ptp(samples[n]) > 0])
        for arr in (dp, ds):
            okk = np.isfinite(arr[idx])
            coef, *_ = np.linalg.lstsq(X[idx][okk], arr[idx][okk], rcond=None)
            resid_d = arr[idx][okk] - X[idx][okk] @ coef
            arr[rest] = X[rest] @ coef + rng.choice(resid_d, rest.size)
    return dp, ds


def _eclipse_props(v: Mapping[str, float], ld_law: str) -> dict[str, float]:
    from . import eclipse

    n = len(_LD_LAWS[ld_law][0])
    return eclipse.eclipse_properties(
        period=v["period"], radius_sum=v["radius_sum"], radius_ratio=v["radius_ratio"],
        inclination=v["inclination"], surface_brightness_ratio=v["surface_brightness_ratio"], ecosw=v["ecosw"],
        esinw=v["esinw"], third_light=v["third_light"], ld_law=ld_law,
        ld_primary=tuple(v[f"ld1_{j + 1}"] for j in range(n)), ld_secondary=tuple(v[f"ld2_{j + 1}"] for j in range(n)))


def _window_mask(time: np.ndarray, v: Mapping[str, float], w1: float, w2: float, flank: float) -> np.ndarray:
    """Points within (1/2 + flank) eclipse durations of either mid-eclipse."""
    from . import orbit

    P, t0 = v["period"], v["t0"]
    _, t2 = orbit.conjunction_times(period=P, t0=t0, ecosw=v["ecosw"], esinw=v["esinw"],
                                    inclination=v["inclination"])
    out = np.zeros(time.size, bool)
    for tc, w in ((t0, w1), (float(t2), w2)):
        if not (w > 0):
            continue
        ph = (time - tc) / P
        ph -= np.round(ph)
        out |= np.abs(ph) * P < (0.5 + flank) * w
    return out


def _truncated_normal_draws(rng: np.random.Generator, mean: np.ndarray, cov: np.ndarray, n: int,
                            lo: np.ndarray, hi: np.ndarray, fold: Any) -> np.ndarray:
    """``n`` draws from N(mean, cov) truncated to the bounds [lo, hi] by redrawing (then clipped).

    ``fold`` maps each draw to its equivalent geometry (e.g. i > 90 deg seen from the other side).
    """
    x = fold(rng.multivariate_normal(mean, cov, size=int(n), method="eigh"))
    for _ in range(20):
        out = np.any((x < lo) | (x > hi), axis=1)
        if not out.any():
            break
        x[out] = fold(rng.multivariate_normal(mean, cov, size=int(out.sum()), method="eigh"))
    return np.clip(x, lo, hi)


def _central_jacobian(pr: _Problem, free_names, internal_names, x, steps, bounds) -> np.ndarray | None:
    """Jacobian of the projected residuals by central differences (one-sided at a bound)."""
    base = {n: v for n, v in zip(internal_names, x)}
    cols = []
    try:
        r0 = pr.residual_from(base)
        for i, (ni, h) in enumerate(zip(internal_names, steps)):
            if not (h > 0 and math.isfinite(h)):
                return None
            lo, hi = bounds[i]
            lo = -np.inf if lo is None else lo
            hi = np.inf if hi is None else hi
            up, dn = dict(base), dict(base)
            if x[i] + h <= hi and x[i] - h >= lo:
                up[ni], dn[ni] = x[i] + h, x[i] - h
                cols.append((pr.residual_from(up) - pr.residual_from(dn)) / (2 * h))
            elif x[i] + h <= hi:
                up[ni] = x[i] + h
                cols.append((pr.residual_from(up) - r0) / h)
            else:
                dn[ni] = x[i] - h
                cols.append((r0 - pr.residual_from(dn)) / h)
    except (ValueError, ArithmeticError):
        return None
    # least_squares minimises 0.5 sum r^2 of the residuals r = (f - model)/sigma; J = dr/dx
    return np.column_stack(cols)


# --------------------------------------------------------------------------------------
# The fit
# --------------------------------------------------------------------------------------
def _limb_darkening_shift(lc: LightCurve, values: Mapping[str, float], unc: Mapping[str, float | None],
                          free_names: list[str], redchi: float, *, ld_law: str, nld: int,
                          **options: Any) -> dict[str, float]:
    """What freeing the linear limb-darkening terms changes: one extra least-squares fit.

    Returns the shift of each fitted geometric parameter in units of the fixed-LD fit's
    sigma, and ``delta_chi2``: the chi-square improvement (noise-scaled by the freer fit's
    reduced chi-square) for the two extra terms; {} when the refit fails.
    """
    from types import SimpleNamespace

    free_check = list(free_names) + ["ld1_1", "ld2_1"]
    fix_check = [n for n in _all_names(ld_law) if n not in free_check]
    coeffs = {star: tuple(values[f"ld{star}_{j + 1}"] for j in range(nld)) for star in (1, 2)}
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", EclipsekitWarning)
            refit = fit_eclipses(lc, SimpleNamespace(values=dict(values)), free=free_check, fix=fix_check,
                                 ld_law=ld_law, ld_primary=coeffs[1], ld_secondary=coeffs[2], clip_sigma=None,
                                 errors="covariance", n_samples=2, progress=False, check_limb_darkening=False,
                                 **options)
    except (FitError, InputError):
        return {}
    n = len(lc)
    chi2_fixed = redchi * (n - len(free_names))
    chi2_free = refit.redchi * (n - refit.n_free)
    out = {"delta_chi2": float((chi2_fixed - chi2_free) / max(refit.redchi, 1e-300))}
    for name in ("radius_sum", "radius_ratio", "inclination", "surface_brightness_ratio"):
        sigma = unc.get(name)
        if name in free_names and sigma:
            out[name] = float((refit.values[name] - values[name]) / sigma)
    return out


def fit_eclipses(
    lc: LightCurve,
    start: Any = None,
    *,
    period: Any = None,
    t0: Any = None,
    fix: Iterable[str] = (),
    free: Iterable[str] = (),
    errors: str = "covariance",
    exposure_time: Any = None,
    supersample: int | None = None,
    ld_law: str = "quadratic",
    ld_primary: Iterable[float] | None = None,
    ld_secondary: Iterable[float] | None = None,
    baseline_degree: int = 1,
    gap: float | None = None,
    clip_sigma: float | None = 5.0,
    window: bool | None = None,
    mcmc_walkers: int = 32,
    mcmc_steps: int = 2000,
    mcmc_burn: int | None = None,
    mcmc_thin: int | None = None,
    n_samples: int = 4000,
    n_shifts: int | None = None,
    progress: bool = True,
    seed: int | None = None,
    velocities: Any = None,
    separate_gamma: bool = False,
    check_limb_darkening: bool = True,
    **values: Any,
) -> EclipseFit:
    """Fit both eclipses of a detached eclipsing binary (optionally jointly with velocities).

    Parameters
    ----------
    lc : LightCurve
        Normalised light curve.
    start : PeriodSearch, EclipseFit, dict, optional
        Where to start: a period search (start values are estimated from its depths,
        durations and secondary phase, see :func:`estimate_start`), an earlier fit, or a
        dict of parameter values (with at least ``period`` and ``t0``, optionally the
        search's depth/duration keys).  None runs :func:`eclipsekit.period.find_period`
        unless ``period`` and ``t0`` are given.
    period, t0 : float or Quantity, optional
        Ephemeris (days), overriding the start's.
    fix, free : list of str
        Parameters to hold fixed / to fit.  Names as in :data:`PARAMETERS` plus
        ``ld1_1``, ``ld1_2``, ``ld2_1``, ``ld2_2``, and the shortcuts ``eccentricity``
        (ecosw and esinw), ``limb_darkening``, ``ld1``, ``ld2``.  Defaults: period, t0,
        radius_sum, radius_ratio, inclination and surface_brightness_ratio free; ecosw
        and esinw free when the secondary's phase or width says the orbit is eccentric,
        else fixed at 0; third_light fixed at 0; limb darkening fixed.
    errors : {"covariance", "mcmc", "permutation"}
        Uncertainties from the least-squares covariance matrix scaled by the reduced
        chi-square; from an emcee run through lmfit (needs the ``mcmc`` extra); or from
        residual permutation ("prayer bead": cyclic shifts of the residuals, each
        refitted; Bouma et al. 2009, AJ 137, 4691, sect. 4.2; Southworth 2008, MNRAS 386,
        1644), which includes correlated noise.
    exposure_time : float or Quantity, optional
        Integration time (days); default ``lc.meta["exposure_time"]`` or 0.
    supersample : int, optional
        Sub-exposures for the model; default one per 2 minutes of exposure.
    ld_law : {"quadratic", "linear", "power-2", "uniform"}
    ld_primary, ld_secondary : sequence of float, optional
        Limb-darkening coefficients (fixed unless freed); default typical values
        (quadratic 0.4, 0.25; linear 0.6; power-2 0.6, 0.6).
    baseline_degree : int
        Degree of the polynomial multiplying the model in each segment (0 = only a
        normalisation per segment).
    gap : float, optional
        Gap (days) that splits segments; default max(0.5 d, 10 x cadence).
    clip_sigma : float or None
        Reject points whose residual exceeds this many robust standard deviations
        (iterated; recorded in ``lc.rejected["outlier"]``).  None disables.
    window : bool, optional
        Fit the data near the eclipses point by point and the rest binned by 10
        (equivalent, faster); default: when the windows hold under 60% of the data.
    mcmc_walkers, mcmc_steps, mcmc_burn, mcmc_thin :
        emcee settings.  The walkers start as draws from the covariance (scaled by the
        reduced chi-square); burn-in defaults to a tenth of the steps or 3 autocorrelation
        times, whichever is longer (at most half the chain); thinning to half the longest
        autocorrelation time.  ``diagnostics["mcmc"]`` reports the autocorrelation times,
        the effective number of independent samples and the Monte-Carlo error of the
        uncertainties (a warning when it exceeds 5%).
    n_samples : int
        Number of samples kept (draws from the covariance; at most this many from the chain).
    n_shifts : int, optional
        Permutation fits (default 100, at most the number of points).
    check_limb_darkening : bool
        When the first limb-darkening coefficient of both stars is held fixed, refit once
        with them free and warn if r1 + r2, k, i or J then move by more than 3 sigma:
        fixed limb darkening that does not match the data biases the geometry by more
        than its formal errors (deep, well-sampled eclipses constrain it).
    progress : bool
        Show progress bars (MCMC, permutation).
    seed : int, optional
        Random seed for the samples and the MCMC.
    velocities : VelocityCurve, optional
        Radial velocities of the same binary: fit them jointly with the light curve
        (shared period, t0, e cos w, e sin w; see :func:`eclipsekit.joint.fit_joint`).
        The result then also holds ``k_primary``, ``k_secondary``, ``gamma`` and an
        ``orbit`` (:class:`~eclipsekit.spectroscopy.OrbitFit`).  Covariance errors only.
    separate_gamma : bool
        Joint fit only: a separate systemic-velocity offset for star 2.
    **values : float
        Parameter values by name (e.g. ``third_light=0.1``); a value given this way is
        held fixed unless also listed in ``free``.

    Returns
    -------
    EclipseFit

    Raises
    ------
    InputError
        Bad arguments (unknown parameter names, values outside their bounds, emcee
        missing for ``errors="mcmc"``).
    FitError
        No fit could be completed (no usable start, too few points, the model failed
        everywhere).

    Notes
    -----
    Uncertainty of the baseline: its coefficients are solved linearly at every model
    evaluation, so the eclipse-parameter covariance (from the Jacobian of the projected
    residuals) and the MCMC posterior (which includes the determinant term of the
    Gaussian marginal) are both marginalised over them (Golub & Pereyra 1973).  For
    ``errors="mcmc"`` the flux errors are first scaled by sqrt(reduced chi-square) of
    the least-squares fit, as the covariance method does.
    """
    if velocities is not None:
        # the joint fit starts from this function's light-curve-only fit; it lives in joint.py
        from .joint import fit_joint

        return fit_joint(lc, velocities, start, period=period, t0=t0, fix=fix, free=free, errors=errors,
                         exposure_time=exposure_time, supersample=supersample, ld_law=ld_law,
                         ld_primary=ld_primary, ld_secondary=ld_secondary, baseline_degree=baseline_degree,
                         gap=gap, clip_sigma=clip_sigma, window=window, n_samples=n_samples, progress=progress,
                         seed=seed, separate_gamma=separate_gamma, **values)
    if separate_gamma:
        raise InputError("`separate_gamma` needs `velocities` (a joint fit)")
    t_start = _time.perf_counter()
    if not isinstance(lc, LightCurve):
        raise InputError(f"`lc` must be an eclipsekit LightCurve, got {type(lc).__name__}")
    if errors not in _ERROR_METHODS:
        raise InputError(f"`errors` must be one of {list(_ERROR_METHODS)}, got {errors!r}")
    if errors == "mcmc":
        try:
            import emcee  # noqa: F401
        except ImportError as exc:
            raise InputError('errors="mcmc" needs emcee: pip install "eclipsekit[mcmc]"') from exc
    if ld_law not in _LD_LAWS:
        raise InputError(f"`ld_law` must be one of {list(_LD_LAWS)}, got {ld_law!r}")
    if int(baseline_degree) != baseline_degree or not 0 <= baseline_degree <= 5:
        raise InputError(f"`baseline_degree` must be an integer 0..5, got {baseline_degree!r}")
    baseline_degree = int(baseline_degree)
    if len(lc) < 20:
        raise FitError(f"only {len(lc)} points in the light curve: too few to fit the eclipses")
    for name, x in (("mcmc_walkers", mcmc_walkers), ("mcmc_steps", mcmc_steps), ("n_samples", n_samples)):
        if int(x) != x or x < 1:
            raise InputError(f"`{name}` must be a positive integer, got {x!r}")
    rng = np.random.default_rng(seed)

    # -- exposure time -------------------------------------------------------------
    exp_d = _days(exposure_time, "exposure_time") if exposure_time is not None else lc.meta.get("exposure_time")
    exp_d = float(exp_d or 0.0)
    if exp_d < 0:
        raise InputError(f"`exposure_time` must be >= 0, got {exp_d}")
    if supersample is None:
        supersample = max(1, int(math.ceil(exp_d / (2.0 / 1440) - 1e-9))) if exp_d > 0 else 1
    if int(supersample) != supersample or supersample < 1:
        raise InputError(f"`supersample` must be a positive integer, got {supersample!r}")
    supersample = int(supersample)

    # -- start ---------------------------------------------------------------------
    P_in, T_in = _days(period, "period"), _days(t0, "t0")
    if P_in is not None and P_in <= 0:
        raise InputError(f"`period` must be positive, got {P_in}")
    if start is None and (P_in is None or T_in is None):
        from .period import find_period

        start = find_period(lc, progress=progress)
    st = estimate_start(start if start is not None else {}, period=P_in, t0=T_in)

    # -- parameter values and which vary -------------------------------------------
    names = _all_names(ld_law)
    defaults = _LD_LAWS[ld_law][0]
    nld = len(defaults)
    val: dict[str, float] = {n: float(st[n]) for n in PARAMETERS}
    for star, given in ((1, ld_primary), (2, ld_secondary)):
        coeffs = tuple(defaults) if given is None else tuple(float(c) for c in np.atleast_1d(given))
        if given is None and f"ld{star}_1" in st:
            coeffs = tuple(st.get(f"ld{star}_{j + 1}", defaults[j]) for j in range(nld))
        if len(coeffs) != nld:
            raise InputError(f"`ld_{'primary' if star == 1 else 'secondary'}` needs {nld} coefficient(s) for "
                             f"the {ld_law} law, got {len(coeffs)}")
        for j, c in enumerate(coeffs):
            val[f"ld{star}_{j + 1}"] = c
    vary = set(_DEFAULT_FREE)
    if st.get("eccentric"):
        vary |= {"ecosw", "esinw"}
    user_fixed: set[str] = set()
    for n, x in values.items():
        if n not in names:
            raise InputError(f"unknown parameter {n!r}; valid: {', '.join(names)}")
        val[n] = _days(x, n) if n in ("period", "t0") else float(x)
        user_fixed.add(n)
    free_set = _expand(free, ld_law, "free")
    fix_set = _expand(fix, ld_law, "fix")
    if free_set & fix_set:
        raise InputError(f"parameters both fixed and free: {sorted(free_set & fix_set)}")
    vary = (vary - user_fixed - fix_set) | free_set
    for n in names:
        lo, hi = _bounds(n, ld_law)
        if (lo is not None and val[n] < lo) or (hi is not None and val[n] > hi):
            if n in user_fixed or n in (f"ld{s}_{j + 1}" for s in (1, 2) for j in range(nld)):
                raise InputError(f"`{n}` = {val[n]} is outside its bounds [{lo}, {hi}]")
            val[n] = float(np.clip(val[n], lo, hi))

    # -- data geometry -------------------------------------------------------------
    P0, T00 = val["period"], val["t0"]
    t_mid = 0.5 * (lc.time[0] + lc.time[-1])
    t_ref = T00 + round((t_mid - T00) / P0) * P0
    val["t0"] = t_ref  # the same eclipse moved by whole periods to the middle of the data
    n_cyc = max(1.0, float(np.max(np.abs(lc.time - t_ref))) / P0)
    cad = lc.cadence
    gap = max(0.5, 10 * cad) if gap is None else float(gap)
    w1 = st.get("duration_primary", np.nan)
    w2 = st.get("duration_secondary", np.nan)
    w1 = w1 if _finite(w1) and w1 > 0 else 0.1 * P0
    w2 = w2 if _finite(w2) and w2 > 0 else w1
    perr, terr = st.get("period_err", np.nan), st.get("t0_err", np.nan)
    t0_half = min(0.1 * P0, max(w1, 10 * terr if _finite(terr) else 0.0, 0.02 * P0 if w1 > 0.2 * P0 else 0))
    p_half = min(0.1 * P0, max(0.5 * w1, 10 * perr * n_cyc if _finite(perr) else 0.0))
    internal_bounds = {"t0_offset": (-t0_half, t0_half), "period_offset": (-p_half, p_half)}

    diag: dict[str, Any] = {"attempts": [], "n_points": len(lc)}
    warn_list: list[str] = []
    problems: list[_Problem] = []

    def make_problem(lc_: LightCurve, mask: np.ndarray | None) -> _Problem:
        seg_starts = _segments(lc_.time, gap, min_points=max(5, 2 * (baseline_degree + 1)))
        seg_id_full = np.zeros(len(lc_), int)
        seg_id_full[seg_starts[1:]] = 1
        seg_id_full = np.cumsum(seg_id_full)
        ends = np.concatenate([seg_starts[1:], [len(lc_)]]) - 1
        mid = 0.5 * (lc_.time[seg_starts] + lc_.time[ends])
        half = np.maximum(0.5 * (lc_.time[ends] - lc_.time[seg_starts]), 1e-3)
        if mask is None:
            reduce = None
            t_, f_, e_, sid = lc_.time, lc_.flux, lc_.flux_err, seg_id_full
        else:
            # points outside the windows (model exactly 1 there) are averaged in runs of up to BIN points
            # within a segment: the weighted mean keeps all their information on a baseline that is linear
            # over a bin, at a tenth of the cost
            inside = np.flatnonzero(mask)
            out = np.flatnonzero(~mask)
            brk = np.ones(out.size, bool)
            if out.size:
                brk[1:] = (np.diff(out) != 1) | (np.diff(seg_id_full[out]) != 0)
            run_id = np.cumsum(brk) - 1
            run_start = np.flatnonzero(brk)
            pos_in_run = np.arange(out.size) - run_start[run_id]
            bin_key = np.zeros(out.size, int)
            if out.size:
                newbin = brk | (pos_in_run % _BIN == 0)
                bin_key = np.cumsum(newbin) - 1
            nb = int(bin_key[-1] + 1) if out.size else 0
            w_out = 1.0 / lc_.flux_err[out] ** 2
            wsum = np.bincount(bin_key, w_out, minlength=nb)

            def reduce(full_flux: np.ndarray) -> np.ndarray:
                fb = np.bincount(bin_key, w_out * full_flux[out], minlength=nb) / wsum
                return np.concatenate([full_flux[inside], fb])[order]

            tb = np.bincount(bin_key, w_out * lc_.time[out], minlength=nb) / wsum
            eb = 1.0 / np.sqrt(wsum)
            sb = seg_id_full[out][run_start[run_id]][np.searchsorted(bin_key, np.arange(nb))] if nb else np.zeros(0, int)
            t_all = np.concatenate([lc_.time[inside], tb])
            order = np.argsort(t_all, kind="stable")
            t_ = t_all[order]
            e_ = np.concatenate([lc_.flux_err[inside], eb])[order]
            sid = np.concatenate([seg_id_full[inside], sb])[order]
            f_ = reduce(lc_.flux)
        # renumber the segments present in the selection
        present, sid = np.unique(sid, return_inverse=True)
        fixed = {n: val[n] for n in names if n not in vary}
        pr = _Problem(t_, f_, e_, sid, mid[present], half[present],
                      baseline_degree, t_ref=t_ref, p_ref=P0, n_cyc=n_cyc, fixed=fixed, ld_law=ld_law,
                      exposure_time=exp_d, supersample=supersample)
        pr.segments = [(float(lc_.time[a]), float(lc_.time[b])) for a, b in zip(seg_starts, ends)]
        pr.reduce = reduce
        problems.append(pr)
        return pr

    free_names = [n for n in names if n in vary]
    internal_names = [{"t0": "t0_offset", "period": "period_offset"}.get(n, n) for n in free_names]

    def lm_params(pr: _Problem, v: Mapping[str, float]) -> lmfit.Parameters:
        p = lmfit.Parameters()
        for n, ni in zip(free_names, internal_names):
            lo, hi = internal_bounds.get(ni) or _bounds(n, ld_law)
            x = float(np.clip(pr.internal_value(n, v[n]), lo, hi))
            p.add(ni, value=x, min=lo, max=hi)
        return p

    def run_lsq(pr: _Problem, v: Mapping[str, float], flux: np.ndarray | None = None, max_nfev: int | None = None):
        p = lm_params(pr, v)
        mini = lmfit.Minimizer(pr.residual, p, fcn_kws={"flux": flux} if flux is not None else None,
                               nan_policy="propagate")
        # lsmr subproblems: no SVD of the tall Jacobian (multithreaded LAPACK on busy machines is slow), same optimum
        res = mini.least_squares(x_scale="jac", tr_solver="lsmr", max_nfev=max_nfev or 200 * (len(p) + 1))
        newv = dict(v)
        newv.update(pr.physical(res.params.valuesdict()))
        return res, newv

    def at_bounds(res: Any) -> list[str]:
        out = []
        for ni, n in zip(internal_names, free_names):
            par = res.params[ni]
            lo, hi = par.min, par.max
            tol = 1e-6 * (hi - lo)
            if n == "inclination" and par.value >= hi - tol:
                continue  # i = 90 deg is a physical limit, not a failure
            if n in ("third_light", "ecosw", "esinw") or n.startswith("ld"):
                if abs(par.value - lo) <= tol or abs(par.value - hi) <= tol:
                    out.append(n)
                continue
            if par.value - lo <= tol or hi - par.value <= tol:
                out.append(n)
        return out

    def chi2_of(res: Any) -> float:
        return float(np.sum(res.residual ** 2))

    # -- windows ------------------------------------------------------------------------
    def windows_for(v: Mapping[str, float], w1_: float, w2_: float) -> np.ndarray | None:
        if window is False:
            return None
        mask = _window_mask(lc_work.time, v, w1_, w2_, flank=0.5)
        if window is None and mask.mean() > 0.6:
            return None
        return mask

    lc_work = lc
    # first windows from the start's durations, widened by 30% (durations from a period search are rough);
    # refreshed from the fitted durations below
    win = (1.3 * max(w1, 1e-4), 1.3 * max(w2, 1e-4))
    durations = win
    sel = windows_for(val, *win)
    pr = make_problem(lc_work, sel)
    if pr.time.size < len(free_names) + pr.n_linear + 5:
        raise FitError(f"only {pr.time.size} points near the eclipses for {len(free_names)} parameters and "
                       f"{pr.n_linear} baseline coefficients: too few to fit")

    # -- choose the start among candidates by chi-square --------------------------------
    cands = _start_candidates({**st, **val, **{n: val[n] for n in names}}, vary)
    scored = []
    for c in cands:
        v = dict(val)
        v.update({k: c[k] for k in ("radius_sum", "radius_ratio", "inclination") if k in c})
        try:
            r = pr.evaluate(v)[2]
            chi = float(r @ r)
        except (ValueError, ArithmeticError):
            continue
        if math.isfinite(chi):
            scored.append((chi, v))
    if not scored:
        raise FitError("the eclipse model could not be evaluated at any start value "
                       f"(start: radius_sum={val['radius_sum']:.4g}, radius_ratio={val['radius_ratio']:.4g}, "
                       f"inclination={val['inclination']:.4g})")
    scored.sort(key=lambda x: x[0])

    def good_enough(res: Any, pr_: _Problem) -> tuple[bool, str]:
        bad = at_bounds(res)
        n_dof = max(1, pr_.time.size - len(free_names) - pr_.n_linear)
        rc = chi2_of(res) / n_dof
        # noise-only reference: the scatter of the flanks and out-of-eclipse points
        ref = diag.get("redchi_reference", 1.0)
        if bad:
            return False, f"ended at the bound of {', '.join(bad)}"
        # the global minimum of a good model sits within the chi-square scatter of the noise level
        # (sqrt(2/dof), chi-square distribution); beyond that a restart is cheap and we keep the best
        if rc > 1.05 * ref + 5 * math.sqrt(2.0 / n_dof):
            return False, f"poor fit (reduced chi-square {rc:.3f} vs {ref:.3f} from the out-of-eclipse scatter)"
        return True, "ok"

    # reference reduced chi-square from points far from the eclipses (flat model there)
    try:
        far = ~_window_mask(lc_work.time, val, win[0], win[1], flank=0.5)
        if far.sum() > 20:
            ff, ee = lc_work.flux[far], lc_work.flux_err[far]
            diffs = np.diff(ff) / np.hypot(ee[1:], ee[:-1])
            diag["redchi_reference"] = float((1.4826 * np.median(np.abs(diffs - np.median(diffs)))) ** 2)
    except (ValueError, ArithmeticError):
        pass

    best = None
    tried = 0
    last_error = None
    queue = [v for _, v in scored[:3]]
    while queue and tried < 7:
        v0 = queue.pop(0)
        tried += 1
        try:
            res, v1 = run_lsq(pr, v0)
        except (ValueError, ArithmeticError, np.linalg.LinAlgError) as exc:
            last_error = exc
            diag["attempts"].append({"start": {k: v0[k] for k in ("radius_sum", "radius_ratio", "inclination")},
                                     "chi2": float("nan"), "ok": False, "note": f"failed: {exc}"})
            continue
        ok, why = good_enough(res, pr)
        diag["attempts"].append({"start": {k: v0[k] for k in ("radius_sum", "radius_ratio", "inclination")},
                                 "chi2": chi2_of(res), "ok": ok, "note": why})
        if best is None or chi2_of(res) < chi2_of(best[0]):
            best = (res, v1, ok, why)
        if best[2]:
            break
        if tried == 1:  # perturbed restarts around the first result: the k-i degeneracy of partial eclipses
            for name, how in (("radius_ratio", 0.8), ("radius_ratio", 1.25), ("inclination", 0.5),
                              ("radius_sum", 0.9)):
                if name not in vary:
                    continue
                vp = dict(v1)
                lo, hi = _bounds(name, ld_law)
                if name == "inclination":
                    vp[name] = float(np.clip(v1[name] + how * (90.0 - v1[name]) - 0.3, lo + 1, hi))
                else:
                    vp[name] = float(np.clip(v1[name] * how, lo * 1.01, hi * 0.99))
                queue.append(vp)
    if best is None:
        raise FitError(f"least-squares fit of the eclipses failed from all {tried} start(s); last error: {last_error}")
    res, vbest, ok, why = best

    # -- outlier rejection and window refresh (always on the whole light curve) --------
    n_clip_total = 0
    for it in range(6):
        full = make_problem(lc_work, None)
        m_full, base_full, z_full, _ = full.evaluate(vbest)
        changed = False
        if clip_sigma is not None and clip_sigma > 0:
            med = np.median(z_full)
            s = 1.4826 * np.median(np.abs(z_full - med))
            flag = np.abs(z_full - med) > clip_sigma * s
            if flag.mean() > 0.05:
                msg = (f"outlier rejection stopped: {flag.sum()} points ({100 * flag.mean():.1f}%) beyond "
                       f"{clip_sigma} sigma suggests a poor model rather than outliers")
                if msg not in warn_list:
                    warn_list.append(msg)
            elif flag.any():
                lc_work = lc_work.without(flag, "outlier")
                n_clip_total += int(flag.sum())
                changed = True
        # are the fitted eclipses (first to last contact) inside the windows, with flanks of half an eclipse?
        try:
            props = _eclipse_props(vbest, ld_law)
            nw1, nw2 = float(props["duration_primary"]), float(props["duration_secondary"])
        except (ValueError, ArithmeticError, KeyError):
            nw1, nw2 = durations
        nw1 = nw1 if nw1 > 0 else durations[0]
        nw2 = nw2 if nw2 > 0 else durations[1]
        durations = (nw1, nw2)
        if sel is not None and (nw1 > win[0] or nw2 > win[1]):
            changed = True
            win = (max(nw1, win[0]), max(nw2, win[1]))
        if sel is not None and not changed:
            # an eclipse that moved (e.g. a wrong start for the secondary's phase) must still be fitted point by point
            if np.any(_window_mask(lc_work.time, vbest, nw1, nw2, flank=0.25) & ~sel):
                changed = True
        if not changed or it == 5:
            break
        sel = windows_for(vbest, *win)
        pr = make_problem(lc_work, sel)
        res, vbest = run_lsq(pr, vbest)
        ok, why = good_enough(res, pr)
    diag["n_outliers"] = n_clip_total

    # -- final statistics over the whole light curve -----------------------------------
    full = make_problem(lc_work, None)
    m_full, base_full, z_full, _ = full.evaluate(vbest)
    n_full = len(lc_work)
    n_dof_full = max(1, n_full - len(free_names) - full.n_linear)
    chi2_full = float(z_full @ z_full)
    redchi = chi2_full / n_dof_full
    resid = lc_work.flux - m_full * base_full
    rms = float(np.sqrt(np.mean(resid ** 2)))
    bic = chi2_full + (len(free_names) + full.n_linear) * math.log(n_full)

    # covariance of the free parameters from the window fit's Jacobian, scaled by its reduced chi-square
    n_dof = max(1, pr.time.size - len(free_names) - pr.n_linear)
    redchi_fit = chi2_of(res) / n_dof
    jac = getattr(res, "jac", None)
    cov = None
    if jac is not None and len(free_names):
        jtj = jac.T @ jac
        try:
            cov = np.linalg.inv(jtj) * redchi_fit
            if not np.all(np.isfinite(cov)) or np.any(np.diag(cov) <= 0):
                raise np.linalg.LinAlgError
        except np.linalg.LinAlgError:
            cov = np.linalg.pinv(jtj) * redchi_fit
            warn_list.append("covariance matrix is singular: some parameters are not constrained by the data; "
                             "fix some of them")
    xbest = np.array([pr.internal_value(n, vbest[n]) for n in free_names])
    if cov is not None and len(free_names):
        # refine with central differences at steps of 0.1 sigma: the optimiser's forward differences (steps
        # ~1e-8) pick up the model's numerical noise (root-finding tolerances of contact and mid-eclipse times)
        jc = _central_jacobian(pr, free_names, internal_names, xbest, 0.1 * np.sqrt(np.diag(cov)),
                               [internal_bounds.get(ni) or _bounds(n, ld_law) for n, ni in zip(free_names, internal_names)])
        if jc is not None:
            try:
                c2 = np.linalg.inv(jc.T @ jc) * redchi_fit
                if np.all(np.isfinite(c2)) and np.all(np.diag(c2) > 0):
                    cov = c2
            except np.linalg.LinAlgError:
                pass

    bad = at_bounds(res)
    if bad:
        warn_list.append(f"parameters at their bounds: {', '.join(bad)} (uncertainties unreliable)")
    # success: converged, not at a bound, and not grossly worse than the noise (a mildly high chi-square, e.g.
    # from imperfect limb darkening, is reported by the reduced chi-square and warnings, not as a failure)
    n_dof_w = max(1, pr.time.size - len(free_names) - pr.n_linear)
    rc_w = chi2_of(res) / n_dof_w
    gross = rc_w > 1.5 * diag.get("redchi_reference", 1.0) + 0.5
    success = bool(res.success) and not at_bounds(res) and not gross
    if success:
        message = res.message if isinstance(res.message, str) else str(res.message)
    elif gross:
        message = f"poor fit (reduced chi-square {rc_w:.2f} vs {diag.get('redchi_reference', 1.0):.2f} out of eclipse)"
    else:
        message = why

    # -- uncertainties ------------------------------------------------------------------
    lmfit_result = res
    lo_int = np.array([(internal_bounds.get(ni) or _bounds(n, ld_law))[0] for n, ni in zip(free_names, internal_names)],
                      float)
    hi_int = np.array([(internal_bounds.get(ni) or _bounds(n, ld_law))[1] for n, ni in zip(free_names, internal_names)],
                      float)
    i_inc = free_names.index("inclination") if "inclination" in free_names else None

    def fold(x: np.ndarray) -> np.ndarray:
        # inclination above 90 deg is the same geometry seen from the other side: fold
        if i_inc is not None:
            x[:, i_inc] = 90.0 - np.abs(x[:, i_inc] - 90.0)
        return x

    def to_samples(x: np.ndarray) -> dict[str, np.ndarray]:
        out: dict[str, np.ndarray] = {}
        nrow = x.shape[0]
        for n in names:
            if n in free_names:
                col = x[:, free_names.index(n)]
                if n == "t0":
                    col = t_ref + col
                elif n == "period":
                    col = P0 + col / n_cyc
                out[n] = np.asarray(col, float)
            else:
                out[n] = np.full(nrow, vbest[n])
        return out

    vals_report = dict(vbest)
    if errors == "covariance" or cov is None:
        if cov is None:
            x = np.repeat(xbest[None, :], n_samples, axis=0)
        else:
            x = _truncated_normal_draws(rng, xbest, cov, n_samples, lo_int, hi_int, fold)
        samples = to_samples(x)
    elif errors == "mcmc":
        import emcee

        scale = math.sqrt(redchi_fit)
        pr.set_err_scale(scale)
        p = lm_params(pr, vbest)
        nvar = len(free_names)
        nwalk = max(int(mcmc_walkers), 2 * nvar + 2)
        pos = np.empty((nwalk, nvar))
        # walkers start as draws from the Laplace approximation itself (the covariance, already scaled by the
        # reduced chi-square like the errors used here): its widths match the posterior's within ~5% on the
        # calibration systems (scripts/calibrate_errors.py), so the ensemble starts near stationarity and
        # the burn-in only has to absorb the non-Gaussian part.  (A ball of half the widths also spread out
        # within ~25 steps, so it was not what limited the coverage; it only wasted burn-in.)
        ball = cov if cov is not None else np.eye(nvar) * 1e-8
        k = 0
        for _ in range(100):
            draw = fold(rng.multivariate_normal(xbest, ball, size=nwalk, method="eigh"))
            good = np.all((draw > lo_int) & (draw < hi_int), axis=1)
            take = draw[good][: nwalk - k]
            pos[k:k + take.shape[0]] = take
            k += take.shape[0]
            if k >= nwalk:
                break
        if k < nwalk:
            pos[k:] = np.clip(xbest, lo_int + 1e-9 * (hi_int - lo_int), hi_int - 1e-9 * (hi_int - lo_int))
        mini = lmfit.Minimizer(pr.log_posterior, p, nan_policy="propagate")
        steps = int(mcmc_steps)
        # default burn-in: a tenth of the chain (the walkers start from the Laplace approximation), extended
        # below to 3 autocorrelation times when tau turns out longer ("a few tau" of burn-in: emcee
        # documentation, autocorrelation tutorial, from memory)
        burn = int(mcmc_burn) if mcmc_burn is not None else steps // 10
        if not 0 <= burn < steps:
            raise InputError(f"`mcmc_burn` must be in [0, mcmc_steps), got {burn}")
        t_mc = _time.perf_counter()
        with contextlib.redirect_stdout(io.StringIO()):  # lmfit prints emcee's short-chain notice
            mres = mini.emcee(params=p, steps=steps, nwalkers=nwalk, burn=burn, thin=1, pos=pos,
                              float_behavior="posterior", seed=None if seed is None else int(seed),
                              progress=progress)
        diag["mcmc_seconds"] = _time.perf_counter() - t_mc

        def autocorr(discard: int) -> np.ndarray:
            ch = mini.sampler.get_chain(discard=discard)  # (steps - discard, walkers, nvar)
            if ch.shape[0] < 2:
                return np.full(nvar, np.nan)
            emcee_log = logging.getLogger("emcee")
            level = emcee_log.level
            emcee_log.setLevel(logging.ERROR)  # the short-chain notice is reported below, as a warning
            try:
                return emcee.autocorr.integrated_time(ch, quiet=True)
            finally:
                emcee_log.setLevel(level)

        tau = autocorr(burn)
        if mcmc_burn is None and np.isfinite(np.nanmax(tau)):
            need = min(int(math.ceil(3 * np.nanmax(tau))), steps // 2)
            if need > burn:
                burn = need
                tau = autocorr(burn)
                mres.chain = mini.sampler.get_chain(discard=burn)  # keep the lmfit result consistent
                mres.lnprob = mini.sampler.get_log_prob(discard=burn)
        tau_max = float(np.nanmax(tau))
        thin = int(mcmc_thin) if mcmc_thin is not None else max(1, int(tau_max / 2)) if math.isfinite(tau_max) else 1
        flat = mini.sampler.get_chain(discard=burn, thin=thin, flat=True)
        n_kept = steps - burn
        n_tau = n_kept / tau_max if tau_max > 0 else np.inf
        # what the chain length must buy is a precise 1-sigma interval: with n_eff independent draws the half
        # width of the 15.9-84.1% interval of a Gaussian scatters by 0.96 sigma / sqrt(n_eff) (asymptotic
        # (co)variance of sample quantiles, p_a (1 - p_b) / (n f_a f_b); Cramer 1946, Mathematical Methods of
        # Statistics, ch. 28, from memory; 0.96 evaluated here for p = 0.159, 0.841 of a Gaussian)
        n_eff = nwalk * n_kept / tau_max if tau_max > 0 else np.inf
        mc_err = 0.96 / math.sqrt(n_eff) if n_eff > 0 else np.inf
        acc = float(np.mean(mini.sampler.acceptance_fraction))
        diag["mcmc"] = {"walkers": nwalk, "steps": steps, "burn": burn, "thin": thin,
                        "autocorr_time": dict(zip(free_names, map(float, tau))), "chain_over_tau": float(n_tau),
                        "n_effective": float(n_eff), "uncertainty_mc_error": float(mc_err),
                        # emcee's own criterion for trusting the tau estimate (integrated_time's tol=50)
                        "autocorr_reliable": bool(n_tau >= 50),
                        "acceptance_fraction": acc, "error_scale": scale}
        # warn when the quoted uncertainties carry > 5% Monte-Carlo error, or when the chain is so short (< 20
        # tau, a judgement call) that tau itself, and with it n_eff, is likely underestimated.  (Before, any
        # chain under 50 tau warned: the default 32 x 2000 chain, ~25 tau at tau ~ 65, warned on every run
        # although its 1-sigma intervals have ~3% Monte-Carlo error and match the covariance errors.)
        if mc_err > 0.05 or n_tau < 20:
            warn_list.append(f"MCMC chain after burn-in is {n_tau:.0f} autocorrelation times long, ~{n_eff:.0f} "
                             f"independent samples ({100 * mc_err:.0f}% Monte-Carlo error on the uncertainties): "
                             f"run more steps (longest tau {tau_max:.0f} steps, {free_names[int(np.nanargmax(tau))]})")
        if not 0.1 < acc < 0.8:
            warn_list.append(f"MCMC acceptance fraction {acc:.2f} is outside 0.1-0.8")
        if flat.shape[0] > n_samples:
            flat = flat[rng.choice(flat.shape[0], n_samples, replace=False)]
        samples = to_samples(fold(flat.copy()))
        for n in free_names:
            vals_report[n] = float(np.median(samples[n]))
        lmfit_result = mres
        pr.set_err_scale(1.0)
    else:  # permutation
        n_pts = n_full
        nsh = min(n_pts - 1, 100 if n_shifts is None else int(n_shifts))
        if nsh < 2:
            raise InputError(f"`n_shifts` must be >= 2, got {n_shifts}")
        shifts = np.unique(np.round(np.linspace(0, n_pts, nsh + 1)[1:-1]).astype(int))
        shifts = np.concatenate([[0], shifts])
        model_full = m_full * base_full
        rows = []
        it = shifts
        if progress:
            from tqdm.auto import tqdm

            it = tqdm(shifts, desc="residual permutation", unit="fit")
        t_pb = _time.perf_counter()
        for sft in it:
            fake = model_full + np.roll(resid, int(sft))
            fake_sel = fake if pr.reduce is None else pr.reduce(fake)
            try:
                r_, v_ = run_lsq(pr, vbest, flux=fake_sel, max_nfev=50 * (len(free_names) + 1))
            except (ValueError, ArithmeticError, np.linalg.LinAlgError):
                continue
            rows.append([pr.internal_value(n, v_[n]) for n in free_names])
        diag["permutation_seconds"] = _time.perf_counter() - t_pb
        x = np.asarray(rows, float)
        if x.shape[0] < 2:
            raise FitError("residual permutation failed: fewer than two shifted fits converged")
        diag["permutation"] = {"n_shifts": int(x.shape[0])}
        samples = to_samples(fold(x))

    # -- derived quantities ----------------------------------------------------------------
    samples.update(_derived_from(samples))
    samples["depth_primary"], samples["depth_secondary"] = _depth_samples(samples, names, free_names, ld_law, rng)
    derived_best = _derived_from({k: np.atleast_1d(vals_report[k]) for k in names})
    for k_, a in derived_best.items():
        vals_report[k_] = float(a[0])
    try:
        vals_report["depth_primary"], vals_report["depth_secondary"] = _depths(vals_report, ld_law)
    except (ValueError, ArithmeticError):
        vals_report["depth_primary"] = vals_report["depth_secondary"] = float("nan")

    unc: dict[str, float | None] = {}
    for n in list(names) + list(DERIVED):
        if n not in samples:
            continue
        s = samples[n]
        s = s[np.isfinite(s)]
        if n in names and n not in free_names:
            unc[n] = None
        elif s.size < 2 or np.ptp(s) == 0:
            unc[n] = None
        elif errors == "mcmc":
            q = np.percentile(s, [15.865, 84.135])
            unc[n] = float(0.5 * (q[1] - q[0]))
        else:
            unc[n] = float(np.std(s, ddof=1))
    if errors == "covariance" and cov is not None:
        sd = np.sqrt(np.diag(cov))
        for n, sdi in zip(free_names, sd):
            # exact from the matrix (samples are truncated at bounds); the period is fitted as the timing
            # shift (P - P_ref) * n_cycles, so its standard deviation is that shift's divided by n_cycles
            unc[n] = float(sdi / n_cyc if n == "period" else sdi)
    if errors == "mcmc":
        for n in DERIVED:
            if n in samples and np.all(np.isfinite(samples[n])):
                vals_report[n] = float(np.median(samples[n]))
    if "omega" in unc and vals_report.get("eccentricity", 0) == 0 and "ecosw" not in free_names:
        unc["omega"] = None
    ordered = {n: float(vals_report[n]) for n in names}
    ordered.update({n: float(vals_report[n]) for n in DERIVED})
    units = {n: _unit(n) for n in ordered}

    # -- validity warnings ---------------------------------------------------------------
    r1, r2 = ordered["frac_radius_primary"], ordered["frac_radius_secondary"]
    if max(r1, r2) > 0.25:
        warn_list.append(f"fractional radius {'r1' if r1 >= r2 else 'r2'} = {max(r1, r2):.3f} > 0.25: the star is "
                         "probably tidally distorted and the spherical-star model (meant for well-detached systems) "
                         "may be biased (common practice)")
    oot = ~_window_mask(lc_work.time, ordered, durations[0], durations[1], flank=0.1)
    if oot.sum() > 50:
        ph = ((lc_work.time[oot] - ordered["t0"]) / ordered["period"]) % 1.0
        A = np.column_stack([np.cos(2 * np.pi * ph), np.sin(2 * np.pi * ph), np.cos(4 * np.pi * ph),
                             np.sin(4 * np.pi * ph)])
        wts = 1 / lc_work.flux_err[oot]
        rr = resid[oot] / base_full[oot]
        coef, *_ = np.linalg.lstsq(A * wts[:, None], rr * wts, rcond=None)
        try:
            ccov = np.linalg.inv((A * wts[:, None]).T @ (A * wts[:, None])) * max(redchi, 1.0)
            amp1, amp2 = math.hypot(coef[0], coef[1]), math.hypot(coef[2], coef[3])
            se = math.sqrt(np.mean(np.diag(ccov)))
            ref = ordered["depth_primary"] if math.isfinite(ordered["depth_primary"]) else 0.0
            big = max(amp1, amp2)
            # significant, and at least 1% of the primary depth (where it starts to matter for the radii)
            if big > 5 * se and big > 0.01 * ref:
                warn_list.append(f"out-of-eclipse variation at the orbital period (reflection/ellipsoidal-like, "
                                 f"semi-amplitude {big * 1e6:.0f} ppm, {big / se:.0f} sigma) is not in the spherical-"
                                 "star model; the radii may be biased")
        except np.linalg.LinAlgError:
            pass
    e_fit = ordered["eccentricity"]
    if e_fit > 0.7:
        warn_list.append(f"eccentricity {e_fit:.2f} is large; check the secondary eclipse identification")
    uk = unc.get("radius_ratio")
    if uk is not None and ordered["radius_ratio"] > 0 and uk / ordered["radius_ratio"] > 0.1:
        warn_list.append(f"radius ratio poorly constrained ({100 * uk / ordered['radius_ratio']:.0f}%): partial "
                         "eclipses; a spectroscopic light ratio would help")
    if redchi > 3 * diag.get("redchi_reference", 1.0) + 1:
        warn_list.append(f"reduced chi-square {redchi:.2f} is high compared with the out-of-eclipse scatter "
                         f"({diag.get('redchi_reference', 1.0):.2f}): the model does not describe the eclipses well")
    if not success:
        warn_list.append(f"fit did not converge cleanly: {message}")
    if check_limb_darkening and ld_law != "uniform" and not {"ld1_1", "ld2_1"} & set(free_names):
        shift = _limb_darkening_shift(
            lc_work, ordered, unc, free_names, float(redchi), ld_law=ld_law, nld=nld, exposure_time=exp_d,
            supersample=supersample, baseline_degree=baseline_degree, gap=gap, window=window)
        diag["limb_darkening_check"] = shift
        dchi2 = shift.get("delta_chi2", 0.0)
        moved = {k: v for k, v in shift.items() if k != "delta_chi2" and abs(v) > 3.0}
        # warn only when the data significantly prefer other coefficients (chi-square drop for 2 extra terms
        # above 13.8, the 0.1% point of chi2 with 2 degrees of freedom; standard tables) AND that moves the
        # geometry by more than 3 of its quoted sigmas; right coefficients give a drop ~ chi2(2)
        if moved and dchi2 > 13.8:
            worst = ", ".join(f"{k} by {v:+.1f} sigma" for k, v in sorted(moved.items(), key=lambda kv: -abs(kv[1])))
            warn_list.append(f"limb darkening is held fixed at {ordered['ld1_1']:g}/{ordered['ld2_1']:g} (linear "
                             f"terms) but the data prefer other values (chi-square drop {dchi2:.0f} for 2 terms), "
                             f"which moves {worst}: free ld1_1 ld2_1, or give coefficients that suit these stars")
    for wmsg in warn_list:
        warnings.warn(wmsg, EclipsekitWarning, stacklevel=2)

    diag.update(n_points=n_full, n_fitted=int(pr.time.size), windowed=sel is not None,
                n_model_evaluations=int(sum(p_.nfev for p_ in problems)), seconds=_time.perf_counter() - t_start,
                redchi_window=redchi_fit, t_ref=t_ref, n_cycles=n_cyc, internal_bounds=internal_bounds,
                baseline_coefficients=full.project(m_full)[1].tolist())
    return EclipseFit(values=ordered, uncertainties=unc, units=units, samples=samples, lc=lc_work,
                      baseline=base_full, residuals=resid, redchi=float(redchi), rms=rms, bic=float(bic),
                      n_free=len(free_names), free=list(free_names), errors_method=errors, ld_law=ld_law,
                      ld_primary=tuple(ordered[f"ld1_{j + 1}"] for j in range(nld)),
                      ld_secondary=tuple(ordered[f"ld2_{j + 1}"] for j in range(nld)), exposure_time=exp_d,
                      supersample=supersample, lmfit_result=lmfit_result, warnings=warn_list, success=success,
                      message=str(message), diagnostics=diag, covariance=cov, n_baseline=full.n_linear,
                      segments=full.segments, _problem=full, _fit_problem=pr)
