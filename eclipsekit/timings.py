"""Times of minimum of every eclipse, and the O−C diagram built from them.

:func:`eclipse_times` measures one time of minimum per primary and secondary eclipse that the
data cover well enough, then fits the O−C diagram (:mod:`eclipsekit.ocdiagram`).  No I/O here:
:mod:`eclipsekit.results` writes the files.

Coverage rule
-------------
An eclipse is timed when, with D its duration (first to last contact) and tc its predicted
mid-time: at least 80% of [tc − D/2, tc + D/2] is covered (a gap between consecutive points
longer than two cadences counts as uncovered, and so does the part of the eclipse outside the
data), there are at least two points on each side of tc inside the eclipse, and at least two
points out of eclipse within the window tc ± D (the baseline).  Skipped eclipses are counted
by reason.

Methods
-------
``"model"`` (default when an eclipse model is known): the eclipse model of the fit, evaluated once
per eclipse kind on a fine grid (exposure smearing included) and interpolated by a cubic spline,
is moved in time with a linear baseline a + b (t − tc) free: the baseline is solved by linear
least squares at each trial shift and the shift by a one-dimensional minimisation of χ² (a grid
over ±D/4, then Brent's method).  Its uncertainty is the larger of

* the local χ² curvature (Gauss–Newton, baseline profiled out) scaled by the residual scatter
  sqrt(χ²/(n − 3)), and
* the spread of the shifts fitted to the best model plus the residuals shifted cyclically
  (residual permutation, "prayer bead"; Jenkins, Caldwell & Borucki 2002, ApJ 564, 495; from
  memory), each refit by one Gauss–Newton step (exact to first order in the shift), which sees
  part of the correlated noise.

Neither sees all of it (the fit absorbs the noise that mimics a shift), so with at least three
times the reported ``time_uncertainty`` of either method is then multiplied by sqrt(χ²_ν) of the
times about the all-terms O−C model when that exceeds one (:func:`_apply_error_scale`; the value
before is kept in ``time_uncertainty_light_curve``).

``"kvw"``: Kwee & van Woerden (1956, BAN 12, 327), the classic model-free method for a symmetric
minimum: the light curve (divided by a linear fit to the out-of-eclipse points) is interpolated at
pairs of times symmetric about a trial time T, S(T) is the sum of the squared differences of the
pairs, a parabola through S at three trial times spaced by one cadence gives the minimum, and KvW's
σ² = (4AC − B²) / (4A² (Z − 1)), Z = N/4 for N interpolated points (their formula, from memory), is
kept in the column ``time_uncertainty_kvw_formula``. Measured against the scatter of KvW times over
noise realisations (``scripts/calibrate_kvw.py``, 300 eclipses per case) that formula is off by
factors 0.2 to 0.9 (it overestimates: its S_min also holds the interpolation error of the
branches), so the ``time_uncertainty`` reported is the flux errors propagated linearly through
KvW's own estimator (dS/dT = 0; :func:`_kvw_propagated`), times sqrt(χ²_ν) of the out-of-eclipse
baseline when above one: measured scatter / uncertainty 0.87-1.15 at 2- and 10-minute cadence.
With fewer than :data:`KVW_MIN_POINTS` points in an eclipse the interpolation error dominates at
high S/N (measured 1.4-3.7 at 30-minute cadence, 9 points per eclipse) and a warning recommends the
model.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from . import _notes
from .errors import InputError

__all__ = ["eclipse_times", "EclipseTimes", "MIN_COVERAGE", "METHODS"]

#: Least fraction of an eclipse's duration the data must cover for it to be timed.
MIN_COVERAGE = 0.8
#: Fewest points per eclipse (median) for KvW times whose uncertainty holds (see the module notes).
KVW_MIN_POINTS = 15
#: Timing methods.
METHODS = ("model", "kvw")
_BARYCENTRIC = ("BJD_TDB", "BJD")
_GRID = 4001          # template points per eclipse window
_N_SHIFTS = 81        # coarse shift grid over ±D/4


@dataclass(frozen=True)
class _Eclipse:
    """One kind of eclipse: where it falls and (with a model) its shape."""

    kind: str                 # "primary" or "secondary"
    offset: float             # mid-eclipse minus t0 (days)
    duration: float           # first to last contact (days)
    template: Any = None      # CubicSpline of the model flux against time from mid-eclipse, or None


@dataclass(frozen=True)
class _Source:
    period: float
    t0: float
    eclipses: tuple[_Eclipse, ...]
    orbit: dict[str, float] = field(default_factory=dict)   # ecosw, esinw (+ errors), inclination


@dataclass(frozen=True, eq=False)
class EclipseTimes:
    """Times of minimum and the O−C analysis (:func:`eclipse_times`).

    Attributes
    ----------
    table : astropy.table.Table
        One row per timed eclipse: ``eclipse`` ("primary"/"secondary"), ``cycle`` (int), ``time``
        (the input's time system, in ``table.meta["time_system"]``), ``time_uncertainty`` (d),
        ``o_minus_c`` (d, against the linear ephemeris fitted to these times), ``method``,
        ``n_points``, ``coverage``, ``reduced_chi_square`` and, for the model method,
        ``time_uncertainty_curvature`` and ``time_uncertainty_permutation`` (d).
    oc : OCAnalysis or None
        Linear ephemeris, period change, apsidal motion and light-travel-time term; None with
        fewer than three times.
    method : str
    reference : dict
        The ephemeris the cycles were counted from (``period``, ``t0``, days).
    skipped : dict of str -> int
        Eclipses in the data span not timed, by reason.
    time_system : str
    warnings : list of str
    status : {"ok", "too_few_eclipses"}
    message : str
    """

    table: Any
    oc: Any
    method: str
    reference: dict[str, float]
    skipped: dict[str, int]
    time_system: str
    warnings: list[str]
    status: str
    message: str
    source: str | None = None

    def to_dict(self, command: str | None = None) -> dict[str, Any]:
        """The ``timings.json`` content (quantities as ``{"value", "uncertainty", "unit"}``)."""
        from .results import timings_dict

        return timings_dict(self, command=command)

    def summary(self) -> str:
        """The printed summary (``timings.txt``)."""
        from .summary import format_timings

        return format_timings(self.to_dict())

    def __repr__(self) -> str:
        n_p = int(np.sum(self.table["eclipse"] == "primary")) if len(self.table) else 0
        return (f"<EclipseTimes {self.method}: {n_p} primary, {len(self.table) - n_p} secondary, "
                f"status {self.status}>")


# -- the source of the ephemeris and of the eclipse shapes -------------------------------------
def _model_parameters(source: Any) -> dict[str, Any] | None:
    """The eclipse model's parameters from an EclipseFit, a read-back result.json or a dict; else None."""
    values = source if isinstance(source, Mapping) else getattr(source, "values", None)
    if not isinstance(values, Mapping) or "radius_sum" not in values:
        return None
    content = getattr(source, "content", None) or {}
    law = (getattr(source, "ld_law", None) or (content.get("photometry") or {}).get("ld_law")
           or values.get("ld_law") or "quadratic")
    exposure = getattr(source, "exposure_time", None)
    supersample = getattr(source, "supersample", None)
    if content:
        fit = content.get("fit") or {}
        exposure = ((fit.get("exposure_time") or {}).get("value") or 0.0) / 86400.0
        supersample = fit.get("supersample")
    if exposure is None:
        exposure = values.get("exposure_time", 0.0)
    ld = {s: tuple(float(values[k]) for k in sorted(values) if k.startswith(f"ld{s}_") and k[4:].isdigit())
          for s in (1, 2)}
    params = {k: float(values.get(k, 0.0)) for k in ("period", "t0", "radius_sum", "radius_ratio", "inclination",
                                                     "surface_brightness_ratio", "ecosw", "esinw", "third_light")}
    params.update(ld_law=law, ld_primary=values.get("ld_primary", ld[1]) or None,
                  ld_secondary=values.get("ld_secondary", ld[2]) or None, exposure_time=float(exposure or 0.0),
                  supersample=int(supersample or (7 if exposure else 1)))
    return params


def _from_model(p: dict[str, Any], uncertainties: Mapping[str, Any]) -> _Source:
    from scipy.interpolate import CubicSpline

    from .eclipse import eclipse_properties, model_flux
    from .orbit import conjunction_times

    shape = {k: v for k, v in p.items() if k not in ("t0", "exposure_time", "supersample")}
    props = eclipse_properties(**shape)
    _, t_sec = conjunction_times(period=p["period"], t0=0.0, ecosw=p["ecosw"], esinw=p["esinw"],
                                 inclination=p["inclination"])
    eclipses = []
    for kind, offset in (("primary", 0.0), ("secondary", t_sec)):
        duration = props[f"duration_{kind}"]
        if not duration > 0 or props[f"depth_{kind}"] <= 0:
            continue
        half = 1.25 * duration + p["exposure_time"]   # the window ±D plus the largest shift D/4
        dt = np.linspace(-half, half, _GRID)
        flux = model_flux(offset + dt, **{**p, "t0": 0.0})
        eclipses.append(_Eclipse(kind, offset, duration, CubicSpline(dt, flux)))
    orbit = {"ecosw": p["ecosw"], "esinw": p["esinw"], "inclination": p["inclination"],
             "esinw_err": (uncertainties or {}).get("esinw")}
    return _Source(p["period"], p["t0"], tuple(eclipses), orbit)


def _from_ephemeris(lc: Any, source: Any) -> _Source:
    """Period and t0 only (a PeriodSearch or a dict): durations from the search or the folded data."""
    get = source.get if isinstance(source, Mapping) else (lambda k, d=None: getattr(source, k, d))
    period, t0 = get("period"), get("t0")
    if period is None or t0 is None:
        raise InputError("`fit_or_ephemeris` must be an EclipseFit, a read-back result.json, a PeriodSearch, "
                         "or a dict with at least `period` and `t0` (days)")
    period, t0 = float(period), float(t0)
    if not period > 0:
        raise InputError(f"`period` must be positive, got {period}")
    phase = get("secondary_phase", get("phase_secondary", 0.5))
    eclipses = []
    for kind, ph in (("primary", 0.0), ("secondary", phase)):
        if ph is None or not np.isfinite(ph):
            continue
        duration = get(f"duration_{kind}", get("duration"))
        if duration is None or not np.isfinite(duration) or duration <= 0:
            duration = _folded_duration(lc, period, t0 + ph * period)
        if duration:
            eclipses.append(_Eclipse(kind, ph * period, float(duration)))
    if not eclipses:
        raise InputError("no eclipse is visible at phase 0 in the data folded on `period` and `t0`; "
                         "check them, or give `duration` (days)")
    return _Source(period, t0, tuple(eclipses))


def _folded_duration(lc: Any, period: float, tc: float) -> float | None:
    """Width of the dip at ``tc`` in the folded light curve: bins more than 4 sigma below the median level.

    The run of low bins (width w = 2 cadences, at least 0.001 in phase) around ``tc``, plus one bin.
    Bins that only touch the eclipse can be low, so the result is at most D + 3w for a true duration
    D; it is at least D − w when every bin wholly inside the eclipse is detected, and shorter at low
    S/N, where the shallow wings of a partial eclipse stay below the threshold.  None without a dip.
    """
    phase = ((lc.time - tc) / period + 0.5) % 1.0 - 0.5
    width = max(2 * lc.cadence / period, 1e-3)
    edges = np.arange(-0.25, 0.25 + width, width)
    idx = np.digitize(phase, edges) - 1
    level = np.median(lc.flux)
    noise = 1.4826 * np.median(np.abs(lc.flux - level))
    low = np.zeros(edges.size - 1, bool)
    for i in range(edges.size - 1):
        sel = idx == i
        if sel.sum() >= 2:
            low[i] = np.mean(lc.flux[sel]) < level - 4 * noise / math.sqrt(sel.sum())
    centre = np.searchsorted(edges, 0.0) - 1
    if not low[centre - 1:centre + 1].any():
        return None
    lo = hi = centre if low[centre] else centre - 1
    while lo > 0 and low[lo - 1]:
        lo -= 1
    while hi < low.size - 1 and low[hi + 1]:
        hi += 1
    return (hi - lo + 2) * width * period   # one bin wider: the contacts lie in the edge bins


def _source(lc: Any, fit_or_ephemeris: Any) -> _Source:
    params = _model_parameters(fit_or_ephemeris)
    if params is not None:
        uncertainties = None if isinstance(fit_or_ephemeris, Mapping) else getattr(fit_or_ephemeris, "uncertainties", None)
        return _from_model(params, uncertainties or {})
    return _from_ephemeris(lc, fit_or_ephemeris)


# -- one eclipse ---------------------------------------------------------------------------------
def _coverage(t: np.ndarray, tc: float, duration: float, cadence: float) -> tuple[float, int, int]:
    """Covered fraction of [tc − D/2, tc + D/2]; points in eclipse before and after tc."""
    lo, hi = tc - 0.5 * duration, tc + 0.5 * duration
    inside = t[(t > lo) & (t < hi)]
    edges = np.concatenate([[lo], inside, [hi]])
    gaps = np.diff(edges)
    uncovered = gaps[gaps > 2 * cadence].sum()
    return 1.0 - uncovered / duration, int(np.sum(inside < tc)), int(np.sum(inside > tc))


def _profile_chi2(shifts: np.ndarray, dt: np.ndarray, flux: np.ndarray, w: np.ndarray, template: Any,
                  scale: float) -> np.ndarray:
    """χ² at each shift with the linear baseline a + b dt/scale solved in closed form."""
    m = template(dt[None, :] - np.asarray(shifts)[:, None])
    x = dt / scale
    wm = w * m
    s11, s12, s22 = (wm * m).sum(1), (wm * m * x).sum(1), (wm * m * x * x).sum(1)
    r1, r2 = (wm * flux).sum(1), (wm * flux * x).sum(1)
    det = s11 * s22 - s12 * s12
    a = (s22 * r1 - s12 * r2) / det
    b = (s11 * r2 - s12 * r1) / det
    return float(np.sum(w * flux * flux)) - a * r1 - b * r2


def _time_model(t, flux, err, tc, eclipse: _Eclipse) -> dict[str, float] | None:
    """Shift of the model template with a linear baseline: time, curvature and permutation errors."""
    from scipy.optimize import minimize_scalar

    dt, w, d = t - tc, err ** -2.0, eclipse.duration
    shifts = np.linspace(-0.25 * d, 0.25 * d, _N_SHIFTS)
    chi2 = _profile_chi2(shifts, dt, flux, w, eclipse.template, d)
    j = int(np.argmin(chi2))
    if j in (0, shifts.size - 1):
        return None   # minimum at the edge of the search: not this eclipse's minimum
    res = minimize_scalar(lambda s: _profile_chi2(np.array([s]), dt, flux, w, eclipse.template, d)[0],
                          bounds=(shifts[j - 1], shifts[j + 1]), method="bounded",
                          options={"xatol": 1e-9 * max(d, 1e-3)})
    s = float(res.x)
    m = eclipse.template(dt - s)
    dm = eclipse.template(dt - s, 1)
    x = dt / d
    base = np.column_stack([m, m * x])
    coef = np.linalg.lstsq(base * np.sqrt(w)[:, None], flux * np.sqrt(w), rcond=None)[0]
    model = base @ coef
    design = np.column_stack([base, -(coef[0] + coef[1] * x) * dm])   # d model / d shift
    cov = np.linalg.inv(design.T @ (design * w[:, None]))
    resid = flux - model
    n = t.size
    redchi = float(np.sum(w * resid ** 2) / (n - 3))
    sigma_curv = math.sqrt(cov[2, 2] * redchi)
    # residual permutation: the shift each cyclic permutation of the residuals would give (one Gauss-Newton step)
    perms = np.stack([np.roll(resid, k) for k in range(1, n)], axis=1)
    steps = (cov @ (design.T * w)) @ perms
    sigma_perm = float(np.std(steps[2]))
    return {"time": tc + s, "sigma": max(sigma_curv, sigma_perm), "sigma_curvature": sigma_curv,
            "sigma_permutation": sigma_perm, "redchi": redchi}


def _time_kvw(t, flux, err, tc, eclipse: _Eclipse, cadence: float) -> dict[str, float] | None:
    """Kwee & van Woerden (1956, BAN 12, 327): reflection of the branches about trial times."""
    d = eclipse.duration
    out = np.abs(t - tc) > 0.5 * d
    if out.sum() >= 2 and np.ptp(t[out]) > 0:
        coef = np.polyfit(t[out] - tc, flux[out], 1, w=1 / err[out])
        resid = (flux[out] - np.polyval(coef, t[out] - tc)) / err[out]
        redchi_out = float(np.sum(resid ** 2) / max(out.sum() - 2, 1))
        trend = np.polyval(coef, t - tc)
        flux, err = flux / trend, err / trend
    else:
        redchi_out = 1.0
    step = cadence
    t_lo, t_hi = t[0], t[-1]
    trial = np.arange(tc - 0.25 * d, tc + 0.25 * d + 0.25 * step, 0.25 * step)
    reach = min(0.45 * d, t_hi - trial[-1] - step, trial[0] - step - t_lo)
    k_pairs = int(reach / step)
    if k_pairs < 2:
        return None
    ks = np.arange(1, k_pairs + 1) * step

    def s_of(times: np.ndarray) -> np.ndarray:
        up = np.interp(times[:, None] + ks[None, :], t, flux)
        down = np.interp(times[:, None] - ks[None, :], t, flux)
        return ((up - down) ** 2).sum(1)

    s_grid = s_of(trial)
    j = int(np.argmin(s_grid))
    if j in (0, trial.size - 1):
        return None
    guess = trial[j]
    s1, s2, s3 = s_of(np.array([guess - step, guess, guess + step]))
    # S(x) = A x^2 + B x + C with x = T - guess at x = -step, 0, +step
    a = (s1 + s3 - 2 * s2) / (2 * step * step)
    b = (s3 - s1) / (2 * step)
    c = s2
    if not a > 0:
        return None
    n_used = int(np.sum(np.abs(t - guess) <= k_pairs * step))
    z = n_used / 4.0
    var = (4 * a * c - b * b) / (4 * a * a * (z - 1)) if z > 1 else math.nan
    if not var > 0:
        return None
    x0 = -b / (2 * a)
    if abs(x0) > step:
        return None
    t_min = guess + x0
    sigma = _kvw_propagated(t, err, t_min, ks, flux) * math.sqrt(max(1.0, redchi_out))
    return {"time": t_min, "sigma": sigma, "sigma_formula": math.sqrt(var), "redchi": redchi_out}


def _kvw_propagated(t: np.ndarray, err: np.ndarray, t_min: float, ks: np.ndarray, flux: np.ndarray) -> float:
    """Uncertainty of the KvW time by linear propagation of the flux errors through dS/dT = 0.

    S'(T) = 2 sum_k (u_k − d_k) g_k with u_k, d_k the interpolated fluxes at T ± k dt and
    g_k = u'_k − d'_k (their slopes); a flux error eps_i moves S' by 2 sum_k g_k (L_ki(up) − L_ki(down)) eps_i
    (L the linear-interpolation weights) and T by −dS'/S'', S'' = 2 sum_k g_k^2.
    """
    def weights(times):
        j = np.clip(np.searchsorted(t, times) - 1, 0, t.size - 2)
        frac = (times - t[j]) / (t[j + 1] - t[j])
        w = np.zeros((times.size, t.size))
        rows = np.arange(times.size)
        w[rows, j] = 1 - frac
        w[rows, j + 1] = frac
        slope = (flux[j + 1] - flux[j]) / (t[j + 1] - t[j])
        return w, slope

    w_up, g_up = weights(t_min + ks)
    w_down, g_down = weights(t_min - ks)
    g = g_up - g_down
    c = g @ (w_up - w_down)
    return float(math.sqrt(np.sum((c * err) ** 2)) / max(np.sum(g * g), 1e-300))


# -- all eclipses ---------------------------------------------------------------------------------
def _measure_all(lc: Any, src: _Source, method: str, progress: bool) -> tuple[list[dict[str, Any]], dict[str, int]]:
    from ._progress import progress_bar

    t, f, e = lc.time, lc.flux, lc.flux_err
    cadence = lc.cadence
    tasks = []
    for ecl in src.eclipses:
        first = math.ceil((t[0] - src.t0 - ecl.offset - ecl.duration) / src.period)
        last = math.floor((t[-1] - src.t0 - ecl.offset + ecl.duration) / src.period)
        tasks += [(ecl, cyc) for cyc in range(first, last + 1)]
    rows: list[dict[str, Any]] = []
    skipped: dict[str, int] = {}
    for ecl, cyc in progress_bar(tasks, progress=progress, desc="eclipse times", unit="eclipse", leave=False):
        tc = src.t0 + ecl.offset + cyc * src.period
        lo, hi = np.searchsorted(t, [tc - ecl.duration, tc + ecl.duration])
        if hi - lo == 0:
            continue  # in a gap: not counted
        tw, fw, ew = t[lo:hi], f[lo:hi], e[lo:hi]
        cover, n_before, n_after = _coverage(tw, tc, ecl.duration, cadence)
        n_out = int(np.sum(np.abs(tw - tc) > 0.5 * ecl.duration))
        reason = None
        if cover < MIN_COVERAGE:
            reason = f"less than {MIN_COVERAGE:.0%} of the eclipse covered"
        elif min(n_before, n_after) < 2:
            reason = "fewer than two points on one side of minimum"
        elif n_out < 2:
            reason = "fewer than two points out of eclipse in the window"
        if reason is None:
            found = (_time_model(tw, fw, ew, tc, ecl) if method == "model"
                     else _time_kvw(tw, fw, ew, tc, ecl, cadence))
            if found is None:
                reason = "no minimum found within a quarter of the duration of the prediction"
        if reason is not None:
            skipped[reason] = skipped.get(reason, 0) + 1
            continue
        rows.append({"eclipse": ecl.kind, "cycle": cyc, "n_points": int(hi - lo), "coverage": cover,
                     "n_in_eclipse": n_before + n_after, **found})
    return rows, skipped


def eclipse_times(lc: Any, fit_or_ephemeris: Any, *, method: str | None = None,
                  progress: bool = True) -> EclipseTimes:
    """Time every well-covered primary and secondary eclipse and analyse the O−C diagram.

    Parameters
    ----------
    lc : LightCurve
        The photometry (times in any system; the system is kept and reported).
    fit_or_ephemeris : EclipseFit, result.json read back, PeriodSearch or dict
        An :class:`~eclipsekit.EclipseFit` (or :func:`~eclipsekit.results.load_result` of a
        ``result.json``, or a dict of the model parameters of :func:`~eclipsekit.model_flux` with
        ``period`` and ``t0``) gives the eclipse model; a
        :class:`~eclipsekit.PeriodSearch` or a dict with ``period`` and ``t0`` (days; optionally
        ``duration``, ``secondary_phase``) only the ephemeris, for the Kwee-van Woerden method.
    method : {"model", "kvw"}, optional
        Default: "model" when an eclipse model is given, else "kvw".
    progress : bool
        Show a progress bar (on a terminal only).

    Returns
    -------
    EclipseTimes

    Raises
    ------
    InputError
        An unknown ``method``; "model" without an eclipse model; an ephemeris without period or t0.

    Warns
    -----
    EclipsekitWarning
        The times are not barycentric (light-travel-time terms need BJD); no eclipse could be timed.

    References
    ----------
    .. [1] Kwee, K. K. & van Woerden, H. 1956, BAN, 12, 327
    .. [2] Jenkins, J. M., Caldwell, D. A. & Borucki, W. J. 2002, ApJ, 564, 495 (residual permutation;
           reference from memory)
    .. [3] Irwin, J. B. 1952, ApJ, 116, 211 (light-travel-time effect)
    .. [4] Giménez, A. & Garcia-Pelayo, J. M. 1983, Ap&SS, 92, 203 (apsidal motion)
    """
    from .ocdiagram import analyse_o_minus_c

    if method is not None and method not in METHODS:
        raise InputError(f"`method` must be one of {list(METHODS)}, got {method!r}")
    src = _source(lc, fit_or_ephemeris)
    has_model = all(ecl.template is not None for ecl in src.eclipses)
    method = method or ("model" if has_model else "kvw")
    if method == "model" and not has_model:
        raise InputError("`method='model'` needs an eclipse model: pass an EclipseFit or result.json, "
                         "or use method='kvw'")
    notes = _notes.Notes()
    system = str(lc.meta.get("time_system") or "unknown")
    if system.upper() not in _BARYCENTRIC:
        notes.warn(f"the times are not barycentric (time system {system}): the Earth's light travel time "
                   "(up to ±8.3 min over a year; a few seconds for HJD) stays in the O−C diagram; "
                   "light-travel-time terms need BJD_TDB")
    rows, skipped = _measure_all(lc, src, method, progress)
    rows.sort(key=lambda r: r["time"])
    if method == "kvw" and rows:
        in_eclipse = np.median([r["n_in_eclipse"] for r in rows])
        if in_eclipse < KVW_MIN_POINTS:
            notes.warn(f"Kwee-van Woerden times from {in_eclipse:.0f} points per eclipse: the interpolation "
                       "error of the branches is not in the uncertainties (measured up to 4x at 30-minute "
                       "cadence); prefer the model method")
    table = _table(rows, method, system, src)
    oc = None
    status, message = "ok", ""
    if len(rows) >= 3:
        oc = analyse_o_minus_c(table["cycle"], table["time"], table["time_uncertainty"],
                               np.asarray(table["eclipse"]) == "secondary", period=src.period, t0=src.t0,
                               **_orbit_arguments(src.orbit))
        table["o_minus_c"] = oc.o_minus_c
        _apply_error_scale(table, oc.error_scale)
    else:
        status = "too_few_eclipses"
        message = (f"{len(rows)} eclipse(s) timed: at least three are needed for an ephemeris"
                   + (f" (skipped: {', '.join(f'{n} {r}' for r, n in skipped.items())})" if skipped else ""))
        notes.warn(message)
    return EclipseTimes(table, oc, method, {"period": src.period, "t0": src.t0}, skipped, system,
                        notes.messages, status, message, lc.meta.get("source"))


def _apply_error_scale(table: Any, scale: float) -> None:
    """Scale ``time_uncertainty`` by the O−C scatter (``scale`` >= 1), keeping the light-curve value.

    Within one eclipse window correlated noise that mimics a shift is absorbed by the fit, so no
    estimate from that window's residuals (curvature, permutation) sees all of it: measured with
    AR(1) noise as strong as the white noise, 50% of |z| < 1 instead of 68%.  The scatter of the
    times about the all-terms O−C model does see it, so the reported uncertainty is the light-curve
    one times sqrt(χ²_ν) of that model when above one (the common rescaling of timing errors to
    the O−C scatter), one factor for all eclipses; ``time_uncertainty_light_curve`` keeps the value
    before, and ``table.meta["error_scale"]`` the factor.
    """
    table["time_uncertainty_light_curve"] = table["time_uncertainty"].copy()
    table["time_uncertainty"] = table["time_uncertainty"] * max(float(scale), 1.0)
    table.meta["error_scale"] = max(float(scale), 1.0)


def _orbit_arguments(orbit: dict[str, Any]) -> dict[str, Any]:
    return {k: orbit.get(k) for k in ("ecosw", "esinw", "esinw_err", "inclination")} if orbit else {}


def _table(rows: list[dict[str, Any]], method: str, system: str, src: _Source) -> Any:
    from astropy.table import Table

    table = Table()
    table["eclipse"] = np.array([r["eclipse"] for r in rows], dtype="U9")
    table["cycle"] = np.array([r["cycle"] for r in rows], dtype=int)
    table["time"] = np.array([r["time"] for r in rows], dtype=float)
    table["time_uncertainty"] = np.array([r["sigma"] for r in rows], dtype=float)
    table["o_minus_c"] = np.full(len(rows), np.nan)
    table["method"] = np.array([method] * len(rows), dtype="U5")
    table["n_points"] = np.array([r["n_points"] for r in rows], dtype=int)
    table["coverage"] = np.array([r["coverage"] for r in rows], dtype=float)
    table["reduced_chi_square"] = np.array([r["redchi"] for r in rows], dtype=float)
    if method == "kvw":
        table["time_uncertainty_kvw_formula"] = np.array([r["sigma_formula"] for r in rows], dtype=float)
    if method == "model":
        table["time_uncertainty_curvature"] = np.array([r["sigma_curvature"] for r in rows], dtype=float)
        table["time_uncertainty_permutation"] = np.array([r["sigma_permutation"] for r in rows], dtype=float)
    for col in table.colnames:
        if col.startswith("time") or col == "o_minus_c":
            table[col].unit = "d"
    table.meta["time_system"] = system
    table.meta["reference_period"] = src.period
    table.meta["reference_t0"] = src.t0
    table.meta["comments"] = [
        f"times of minimum in the input's time system ({system}); uncertainties and o_minus_c in days",
        "cycle counted from reference_t0 with reference_period; a secondary shares the cycle of the primary before it",
        "o_minus_c: against the linear ephemeris fitted to these times (secondary offset free)",
    ]
    return table
