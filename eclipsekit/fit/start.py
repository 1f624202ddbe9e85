"""Start values of the eclipse fit: first-order estimates from a period search, and alternatives.

:func:`estimate_start` turns what a period search measured (depths, durations, phase of
the secondary eclipse) into parameter values with the classical first-order relations;
:func:`ranked_starts` adds starts at other impact parameters consistent with the same
depth and duration, and orders them all by the chi-square of the model.
"""

from __future__ import annotations

import math
from typing import Any, Callable, Mapping

import numpy as np
from scipy.optimize import brentq

from ..errors import FitError, InputError
from .parameters import PARAMETERS, as_days, is_finite

__all__ = ["estimate_start", "start_candidates", "ranked_starts", "lens_fraction"]

_DAY_KEYS = ("period", "t0", "duration_primary", "duration_secondary", "period_err", "t0_err")


def _get(obj: Any, key: str, default: Any = None) -> Any:
    """``obj[key]`` or ``obj.key`` (None -> default), times and durations in days."""
    if isinstance(obj, Mapping):
        v = obj.get(key, default)
    else:
        v = getattr(obj, key, default)
    if v is None:
        return default
    if hasattr(v, "unit") and key in _DAY_KEYS:
        v = as_days(v, key)
    return v


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
        return _from_earlier_fit(search.values, period, t0)
    return _from_search(search, period, t0)


def _from_earlier_fit(values: Mapping[str, Any], period: float | None, t0: float | None) -> dict[str, Any]:
    v = dict(values)
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


def _from_search(search: Any, period: float | None, t0: float | None) -> dict[str, Any]:
    P = period if period is not None else _get(search, "period")
    T0 = t0 if t0 is not None else _get(search, "t0")
    if not is_finite(P) or float(P) <= 0:
        raise InputError("no usable `period` in the start (give `period=` or a PeriodSearch)")
    if not is_finite(T0):
        raise InputError("no usable `t0` in the start (give `t0=` or a PeriodSearch)")
    P, T0 = float(P), float(T0)
    d1 = float(_get(search, "depth_primary", np.nan))
    d2 = float(_get(search, "depth_secondary", np.nan))
    w1 = float(_get(search, "duration_primary", np.nan))
    w2 = float(_get(search, "duration_secondary", np.nan))
    ph2 = float(_get(search, "phase_secondary", np.nan))
    explicit = {k: float(_get(search, k)) for k in PARAMETERS if is_finite(_get(search, k, None))}

    if not (is_finite(d1) and d1 > 0):
        d1 = 0.1
    has_sec = is_finite(d2) and d2 > 0 and is_finite(ph2) and bool(_get(search, "secondary_detected", True))
    if not is_finite(w1) or w1 <= 0:
        w1 = 0.05 * P
    if not (is_finite(w2) and w2 > 0):
        w2 = w1
    ph2 = ph2 % 1.0 if has_sec else 0.5

    eccentric, ecosw, esinw, e2 = _orbit_start(ph2, w1, w2, P, has_sec)
    out = _geometry_start(P, d1, d2, w1, w2, esinw, e2, has_sec)
    out = dict(period=P, t0=T0, **out, ecosw=ecosw, esinw=esinw, third_light=0.0)
    out.update({k_: v_ for k_, v_ in explicit.items() if k_ not in ("period", "t0")})
    out.update(eccentric=eccentric, duration_primary=w1, duration_secondary=w2, depth_primary=d1,
               depth_secondary=d2 if has_sec else 0.0,
               period_err=float(_get(search, "period_err", np.nan)), t0_err=float(_get(search, "t0_err", np.nan)))
    return out


def _orbit_start(ph2: float, w1: float, w2: float, P: float, has_sec: bool) -> tuple[bool, float, float, float]:
    """(eccentric?, e cos w, e sin w, e^2 capped at 0.8) from the secondary's phase and the widths."""
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
    return eccentric, ecosw, esinw, e2


def _geometry_start(P: float, d1: float, d2: float, w1: float, w2: float, esinw: float, e2: float,
                    has_sec: bool) -> dict[str, float]:
    """radius_sum, radius_ratio, inclination and surface_brightness_ratio from depths and durations."""
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
    return dict(radius_sum=rsum, radius_ratio=k, inclination=inc, surface_brightness_ratio=J)


def lens_fraction(z: float, p: float) -> float:
    """Fraction of a unit uniform disc hidden by a disc of radius p at distance z (circle-circle overlap)."""
    if z >= 1 + p:
        return 0.0
    if z <= abs(1 - p):
        return min(1.0, p * p)
    k0 = math.acos(np.clip((p * p + z * z - 1) / (2 * p * z), -1, 1))
    k1 = math.acos(np.clip((1 - p * p + z * z) / (2 * z), -1, 1))
    return (p * p * k0 + k1 - 0.5 * math.sqrt(max(0.0, 4 * z * z - (1 + z * z - p * p) ** 2))) / math.pi


def start_candidates(start: Mapping[str, Any], vary: set[str]) -> list[dict[str, float]]:
    """Alternative (radius_sum, radius_ratio, inclination) consistent with the observed depth and width.

    Impact parameters 0, 0.5, 0.7 and 0.85 (in units of r1 + r2); for each, the radius
    sum from the duration and the radius ratio(s) that give the observed primary depth
    with uniform discs.  The start itself comes first.
    """
    base = {k: start[k] for k in start if k in PARAMETERS or k.startswith("ld")}
    cands = [dict(base)]
    if not ({"inclination", "radius_ratio", "radius_sum"} & vary):
        return cands
    P = start["period"]
    d1 = start.get("depth_primary", np.nan)
    J = start["surface_brightness_ratio"]
    e2 = start["ecosw"] ** 2 + start["esinw"] ** 2
    wc = start.get("duration_primary", np.nan)
    if not is_finite(wc) or not is_finite(d1):
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
            cands += _ratios_for_depth(c, beta, rs, J, d1)
            continue
        cands.append(c)
    return cands


def _ratios_for_depth(c: dict[str, float], beta: float, rs: float, J: float, d1: float) -> list[dict[str, float]]:
    """Copies of ``c`` with the (at most two) radius ratios that give depth ``d1`` at impact parameter ``beta``."""

    # uniform-disc depth d1 = f(k) / (1 + J k^2), f the hidden fraction of star 1 at z = beta rs / r1
    def g(k: float) -> float:
        return lens_fraction(beta * (1 + k), k) / (1 + J * k * k) - d1

    ks = np.geomspace(0.05, 20, 60)
    vals = np.array([g(k) for k in ks])
    roots = np.nonzero(np.sign(vals[:-1]) != np.sign(vals[1:]))[0]
    out = []
    for r in roots[:2]:
        cc = dict(c)
        cc["radius_ratio"] = float(brentq(g, ks[r], ks[r + 1], xtol=1e-6))
        out.append(cc)
    return out


def ranked_starts(start: Mapping[str, Any], values: Mapping[str, float], vary: set[str],
                  chi2: Callable[[Mapping[str, float]], float]) -> list[dict[str, float]]:
    """Start values from :func:`start_candidates`, best chi-square first.

    ``values`` are the start values of every parameter; each candidate replaces its
    radius_sum, radius_ratio and inclination.  Candidates where ``chi2`` fails or is not
    finite are dropped; FitError when none is left.
    """
    scored = []
    for c in start_candidates({**start, **values}, vary):
        v = dict(values)
        v.update({k: c[k] for k in ("radius_sum", "radius_ratio", "inclination") if k in c})
        try:
            chi = chi2(v)
        except (ValueError, ArithmeticError):
            continue
        if math.isfinite(chi):
            scored.append((chi, v))
    if not scored:
        raise FitError("the eclipse model could not be evaluated at any start value "
                       f"(start: radius_sum={values['radius_sum']:.4g}, radius_ratio={values['radius_ratio']:.4g}, "
                       f"inclination={values['inclination']:.4g})")
    scored.sort(key=lambda x: x[0])
    return [v for _, v in scored]
