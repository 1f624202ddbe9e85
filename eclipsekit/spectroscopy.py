"""Spectroscopic orbit: Keplerian fit of single- or double-lined radial velocities.

:func:`fit_velocities` fits the semi-amplitudes K1, K2, the systemic velocity gamma
(optionally a separate offset for star 2), e and omega (as e cos w, e sin w) and,
optionally, a jitter term per star, with the period and the time of primary eclipse
taken from the light-curve ephemeris (fixed, or free with the ephemeris as a prior).
The result, :class:`OrbitFit`, carries samples drawn from the covariance for the
propagation of uncertainties into :func:`~eclipsekit.dimensions.absolute_dimensions`.

Conventions (see DESIGN.md): omega is the argument of periastron of the primary's
orbit in degrees, the primary eclipse (t0) is at true anomaly 90 deg - omega, and a
positive velocity is receding::

    v1 = gamma + K1 [cos(nu + omega) + e cos omega]
    v2 = gamma + gamma_offset - K2 [cos(nu + omega) + e cos omega]
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Any

import astropy.units as u
import lmfit
import numpy as np

from . import _notes
from . import orbit as _orbit
from ._validate import as_float
from .data import VelocityCurve
from .dimensions import mass_function as _mass_function
from .dimensions import minimum_masses as _minimum_masses
from .dimensions import projected_semi_major_axis as _asini
from .errors import EclipsekitWarning, FitError, InputError
from .summary import format_value

__all__ = ["OrbitFit", "fit_velocities", "orbit_doubts"]

_LABEL_CHOICES = ("auto", "given", "swapped")
_LABEL_DELTA_CHI2 = 9.0  # 3 sigma for one binary choice between models with equal parameters (common practice)
_TRIAL_NFEV = 400       # function evaluations of each trial fit of the labels
_JITTER_FACTOR = 2.0     # scatter over quoted errors above which a jitter term is fitted (by default)
_FIXED_DIGITS = 11     # significant figures of a value shown without uncertainty (e.g. a fixed period)
_E_MAX = 0.95          # e cos w, e sin w are boxed to +-0.95 and e is capped there in the model
_UNITS = {"k_primary": "km / s", "k_secondary": "km / s", "gamma": "km / s", "gamma_offset": "km / s",
          "ecosw": "", "esinw": "", "eccentricity": "", "omega": "deg", "mass_ratio": "",
          "mass_function": "M_sun", "mass_primary_sin3i": "M_sun", "mass_secondary_sin3i": "M_sun",
          "a_sin_i": "R_sun", "a1_sin_i": "R_sun", "jitter_primary": "km / s", "jitter_secondary": "km / s",
          "period": "d", "t0": "d"}


@dataclass(frozen=True, eq=False)
class OrbitFit:
    """Outcome of :func:`fit_velocities`.

    Attributes
    ----------
    values, uncertainties, units : dict
        ``k_primary``, ``k_secondary`` (km/s; NaN when single-lined), ``gamma``,
        ``gamma_offset`` (star 2 minus star 1, km/s; 0 unless ``separate_gamma``),
        ``ecosw``, ``esinw``, ``eccentricity``, ``omega`` (deg), ``mass_ratio`` (K1/K2 =
        M2/M1), ``mass_function`` (M_sun), for double-lined orbits ``mass_primary_sin3i``,
        ``mass_secondary_sin3i`` (M_sun) and ``a_sin_i`` (R_sun), ``a1_sin_i`` (R_sun),
        ``jitter_primary``, ``jitter_secondary`` (km/s; 0 unless fitted), ``period``, ``t0``
        (days).  Uncertainties are None for quantities that were held fixed.
    samples : dict of str -> ndarray
        Draws from the fit's multivariate normal (same keys, same length).
    free : list of str
        The fitted parameters.
    rv : VelocityCurve
        The velocities fitted.
    residuals_primary, residuals_secondary : ndarray
        Observed minus model (km/s) at ``rv.time``; NaN where the star was not measured.
    rms_primary, rms_secondary : float
        Root-mean-square residual per star (km/s; NaN without data).
    error_scale_primary, error_scale_secondary : float
        Factors applied to the quoted velocity errors (>= 1) before the covariance was
        computed; 1 when jitter was fitted instead.
    chisqr, redchi : float
        Chi-square with the quoted errors (and fitted jitter) and its reduced value.
    n_free, n_data : int
    double_lined, jitter, separate_gamma : bool
        ``double_lined``: both stars measured.  ``jitter``: a jitter term per star was
        fitted (asked for, or chosen because the scatter exceeded twice the errors).
    success : bool
    message : str
    warnings : list of str
    lmfit_result : lmfit.minimizer.MinimizerResult
    inclination : float or None
        The light curve's inclination used for exact mid-eclipse times.
    labels : {'as given', 'swapped', 'ambiguous', 'not checked'}
        Which velocity column was taken as star 1 (the star eclipsed at primary
        eclipse): the file's ``rv1`` ("as given", checked), the file's ``rv2``
        ("swapped"; ``rv`` then holds the exchanged columns), or the file's ``rv1``
        because the data could not tell ("ambiguous") or no t0 was known ("not checked").
    noise_model : {'quoted errors', 'scaled errors', 'jitter'}
        How the velocity errors were treated.
    notes : list of str
        What was decided and why (labels, noise model): information, not warnings.
    """

    values: dict[str, float]
    uncertainties: dict[str, float | None]
    units: dict[str, str]
    samples: dict[str, np.ndarray] = field(repr=False)
    free: list[str]
    rv: VelocityCurve = field(repr=False)
    residuals_primary: np.ndarray = field(repr=False)
    residuals_secondary: np.ndarray = field(repr=False)
    rms_primary: float
    rms_secondary: float
    error_scale_primary: float
    error_scale_secondary: float
    chisqr: float
    redchi: float
    n_free: int
    n_data: int
    double_lined: bool
    jitter: bool
    separate_gamma: bool
    success: bool
    message: str
    warnings: list[str] = field(default_factory=list)
    lmfit_result: Any = field(default=None, repr=False)
    inclination: float | None = None
    labels: str = "as given"
    noise_model: str = "quoted errors"
    notes: list[str] = field(default_factory=list)

    @property
    def no_orbit_reasons(self) -> list[str]:
        """Why the velocities show no orbit (a semi-amplitude consistent with zero); empty when they do."""
        return orbit_doubts(self)

    def model(self, time: Any) -> tuple[np.ndarray, np.ndarray | None]:
        """Model velocities (km/s) at ``time`` (days or Quantity): ``(rv1, rv2)``; rv2 None if single-lined."""
        t = np.asarray(time.to_value(u.day) if isinstance(time, u.Quantity) else time, float)
        v = self.values
        k1 = v["k_primary"] if np.isfinite(v["k_primary"]) else 0.0
        k2 = v["k_secondary"] if np.isfinite(v["k_secondary"]) else None
        rv1, rv2 = _orbit.radial_velocities(t, period=v["period"], t0=v["t0"], k_primary=k1,
                                            k_secondary=k2, gamma=v["gamma"], ecosw=v["ecosw"],
                                            esinw=v["esinw"], **_incl_kw(self.inclination))
        if not np.isfinite(v["k_primary"]):  # the secondary's velocities only
            rv1 = np.full(np.shape(rv1), np.nan)
        if rv2 is not None:
            rv2 = rv2 + v["gamma_offset"]
        return rv1, rv2

    def summary(self) -> str:
        kind = ("double-lined" if self.double_lined else
                "single-lined" if np.isfinite(self.values["k_primary"]) else "secondary's velocities only")
        lines = [f"Spectroscopic orbit ({kind}; {self.n_data} velocities, {self.n_free} free parameters, "
                 f"reduced chi-square {self.redchi:.3f})"]
        for k, val in self.values.items():
            if not np.isfinite(val):
                continue
            err = self.uncertainties.get(k)
            status = "" if err is not None else ("(n/a)" if k in self.free else "(fixed)")
            # values without uncertainty (a fixed ephemeris) keep the digits they were given with
            text = format_value(val, err, digits=_FIXED_DIGITS)
            lines.append(f"  {k:<22s} {text:>28s} {self.units.get(k, ''):<7s} {status}".rstrip())
        rms = [f"{star} {format_value(x)} km/s" for star, x in (("primary", self.rms_primary),
                                                                 ("secondary", self.rms_secondary)) if np.isfinite(x)]
        lines.append("  rms " + ", ".join(rms))
        lines += [f"  note: {n}" for n in self.notes]
        if not self.success:
            lines.append(f"  FIT FAILED: {self.message}")
        lines += [f"  warning: {w}" for w in self.warnings]
        return "\n".join(lines)

    def __repr__(self) -> str:
        v = self.values
        k2 = f", K2 = {v['k_secondary']:.3f}" if self.double_lined else ""
        return (f"<OrbitFit K1 = {v['k_primary']:.3f}{k2} km/s, gamma = {v['gamma']:.3f} km/s, "
                f"e = {v['eccentricity']:.4f}, rms = {self.rms_primary:.3f} km/s>")


# --- helpers ----------------------------------------------------------------------------
def _incl_kw(inclination: float | None) -> dict[str, float]:
    """Pass the light-curve inclination to the orbit (exact mid-eclipse time) when known."""
    if inclination is None or not np.isfinite(inclination):
        return {}
    inc = float(inclination) if inclination <= 90.0 else 180.0 - float(inclination)  # same projection
    return {"inclination": inc} if 0.0 < inc < 90.0 else {}


def _value_error(x: Any, name: str) -> tuple[float | None, float | None]:
    """float | (value, error) -> (value, error)."""
    if x is None:
        return None, None
    if isinstance(x, (tuple, list)):
        if len(x) != 2:
            raise InputError(f"`{name}` must be a value or a (value, error) pair")
        return as_float(x[0], name, finite=False), (None if x[1] is None else as_float(x[1], name, finite=False))
    return as_float(x, name, finite=False), None


def _ephemeris_info(eph: Any) -> dict[str, tuple[float | None, float | None]]:
    """period, t0, ecosw, esinw -> (value, error) from an EclipseFit, PeriodSearch or alike."""
    out: dict[str, tuple[float | None, float | None]] = {}
    if eph is None:
        return out
    vals = getattr(eph, "values", None)
    errs = getattr(eph, "uncertainties", None)
    samp = getattr(eph, "samples", None)
    vals = vals if isinstance(vals, dict) else {}
    errs = errs if isinstance(errs, dict) else {}
    samp = samp if isinstance(samp, dict) else {}
    for key in ("period", "t0", "ecosw", "esinw", "inclination"):
        val = vals.get(key, getattr(eph, key, None) if not vals else None)
        err = errs.get(key, getattr(eph, f"{key}_err", None) if not errs else None)
        if err is None and key in samp and np.size(samp[key]) > 1:
            err = float(np.std(samp[key]))
        if val is not None and np.isfinite(val):
            ok_err = err is not None and np.isfinite(err) and err > 0
            out[key] = (float(val), float(err) if ok_err else None)
    if not out and isinstance(eph, dict):
        return {k: _value_error(v, k) for k, v in eph.items()
                if k in ("period", "t0", "ecosw", "esinw", "inclination")}
    return out


def _design_start(time, rv1, w1, rv2, w2, period, t0, ecosw, esinw, separate_gamma, rv_kw):
    """Linear least squares for (gamma, K1, K2, gamma_offset) at fixed P, t0, e, omega; returns (chi2, coeffs)."""
    g, _ = _orbit.radial_velocities(time, period=period, t0=t0, k_primary=1.0, ecosw=ecosw, esinw=esinw,
                                    **rv_kw)
    g = np.asarray(g, float)
    rows, rhs = [], []
    m1, m2 = np.isfinite(rv1), np.isfinite(rv2)
    n1, n2 = int(m1.sum()), int(m2.sum())
    a1 = np.zeros((n1, 4))
    a1[:, 0], a1[:, 1] = 1.0, g[m1]
    rows.append(a1 * w1[m1, None])
    rhs.append(rv1[m1] * w1[m1])
    if n2:
        a2 = np.zeros((n2, 4))
        a2[:, 0], a2[:, 2] = 1.0, -g[m2]
        a2[:, 3] = 1.0 if separate_gamma else 0.0
        rows.append(a2 * w2[m2, None])
        rhs.append(rv2[m2] * w2[m2])
    a = np.vstack(rows)
    b = np.concatenate(rhs)
    cols = [0] + ([1] if n1 else []) + ([2] if n2 else []) + ([3] if (n1 and n2 and separate_gamma) else [])
    coef = np.zeros(4)
    sol, *_ = np.linalg.lstsq(a[:, cols], b, rcond=None)
    coef[cols] = sol
    chi2 = float(np.sum((a[:, cols] @ sol - b) ** 2))
    return chi2, coef


def _circular_t0(time, rv, w, period):
    """t0 from a sinusoid fit v = gamma - K sin(2 pi (t - t0) / P) (circular orbit)."""
    m = np.isfinite(rv)
    th = 2 * np.pi * time[m] / period
    a = np.column_stack([np.ones(m.sum()), np.cos(th), np.sin(th)]) * w[m, None]
    (gam, ca, sb), *_ = np.linalg.lstsq(a, rv[m] * w[m], rcond=None)
    th0 = np.arctan2(ca, -sb)          # -K sin(th - th0) = K sin th0 cos th - K cos th0 sin th
    t0 = th0 * period / (2 * np.pi)
    # move t0 to the cycle nearest the middle of the data
    mid = np.median(time[m])
    return float(t0 + np.round((mid - t0) / period) * period)


def fit_velocities(
    rv: VelocityCurve,
    ephemeris: Any = None,
    *,
    period: Any = None,
    t0: Any = None,
    fit_ephemeris: bool = False,
    ecosw: Any = None,
    esinw: Any = None,
    fit_eccentricity: bool | None = None,
    jitter: bool | None = None,
    separate_gamma: bool = False,
    labels: str = "auto",
    n_samples: int = 4000,
    seed: int | np.random.Generator | None = None,
) -> OrbitFit:
    """Fit a Keplerian orbit to radial velocities.

    Parameters
    ----------
    rv : VelocityCurve
        Velocities (km/s) of the primary and, for a double-lined binary, the secondary
        (NaN where a star was not measured).
    ephemeris : object, optional
        The light-curve ephemeris: an :class:`~eclipsekit.fit.EclipseFit`, a
        :class:`~eclipsekit.period.PeriodSearch` or anything with ``values["period"]``,
        ``values["t0"]`` (and optionally ``ecosw``, ``esinw``, ``uncertainties``,
        ``samples``), or attributes ``period``, ``t0``, ``period_err``, ``t0_err``.
    period, t0 : float or Quantity, optional
        Override the ephemeris (days).  Without any t0 it is fitted freely (started
        from a sinusoid fit).
    fit_ephemeris : bool
        If True the period and t0 are free, with the ephemeris values and uncertainties
        as Gaussian priors (extra residuals ``(P - P_eph) / sigma_P``); otherwise fixed.
    ecosw, esinw : float or (value, error), optional
        Override the ephemeris' e cos w, e sin w.
    fit_eccentricity : bool, optional
        None (default): fixed at the known e cos w, e sin w when the ephemeris or the
        arguments give them without uncertainties (e.g. a circular light-curve fit);
        fitted with them as Gaussian priors when they come with uncertainties (the
        light curve constrains e cos w well, the velocities e sin w); fitted freely
        when unknown.  Fixed (at 0 if unknown) with fewer than 8 primary velocities.
        True: fitted (with priors when uncertainties are known).  False: fixed.
    jitter : bool, optional
        Fit an extra velocity scatter per star, added in quadrature to the errors.
        None (default): fitted when a star's scatter exceeds twice its quoted errors,
        else the errors are scaled up when the scatter exceeds them (never down).
        True: always fitted.  False: never (errors scaled instead).
    separate_gamma : bool
        Fit a separate systemic-velocity offset for star 2 (e.g. different templates).
    labels : {'auto', 'given', 'swapped'}
        Which column belongs to star 1, the star eclipsed at primary eclipse.  "auto"
        (default): the orbit is fitted with the columns as labelled and exchanged, and
        the assignment that fits better by a chi-square margin of 9 is adopted, with a
        note (``OrbitFit.labels``, ``OrbitFit.notes``); needs t0.  "given": as
        labelled.  "swapped": ``rv2`` is star 1.
    n_samples : int
        Number of samples drawn from the covariance.
    seed : int or Generator, optional

    Returns
    -------
    OrbitFit

    Raises
    ------
    InputError
        No period, too few velocities, a bad ephemeris.
    FitError
        The covariance could not be estimated and ``n_samples`` > 0 (singular problem).

    Notes
    -----
    The model is v1 = gamma + K1 [cos(nu + w) + e cos w] and v2 = gamma + d_gamma - K2
    [cos(nu + w) + e cos w] (e.g. Hilditch 2001, eq. 2.45), with nu from Kepler's
    equation and t0 at nu = 90 deg - w.  Start values come from a linear least-squares
    solution for (gamma, K1, K2, d_gamma), on a grid of (e, w) when e is free.

    Without jitter, each star's velocity errors are multiplied by sqrt(chi2_i / dof_i)
    when that exceeds 1 (its reduced chi-square over the star's share of the degrees of
    freedom) and the fit is repeated, so each K's uncertainty reflects that star's own
    scatter; errors are never shrunk.  The covariance is then (J^T J)^-1 of the
    weighted residuals, unscaled.

    With jitter, the likelihood with variances sigma_i^2 + s^2 is maximised by
    least squares on an augmented residual vector: the normalised residuals
    r_i / sqrt(sigma_i^2 + s^2) plus sqrt(ln(1 + s^2 / sigma_i^2)) per point, whose
    sum of squares is -2 ln L up to a constant.  The orbit parameters' covariance is
    (J^T J)^-1 at the best-fit variances; the jitter's variance is the inverse of its
    Fisher information 2 s^2 sum 1 / (sigma_i^2 + s^2)^2 (zero cross terms).

    Velocity labels: exchanging the stars is the same orbit with omega + 180 deg, whose
    conjunction at t0 is the secondary eclipse.  With t0 (and e cos w, e sin w) from the
    light curve, the wrong assignment therefore fits worse (with circular orbits it
    needs K < 0 and ends at K = 0).  A velocity file with one star only is compared in
    the same way (as star 1 or as star 2).

    Samples are drawn from the multivariate normal of the free parameters; derived
    quantities (e, omega, mass ratio, mass function, M sin^3 i) are computed per sample.

    References
    ----------
    .. [1] Hilditch, R. W. 2001, An Introduction to Close Binary Stars (CUP), ch. 2.
    .. [2] Lucy, L. B. & Sweeney, M. A. 1971, AJ 76, 544 (small eccentricities are biased).
    """
    if labels not in _LABEL_CHOICES:
        raise InputError(f"`labels` must be one of {', '.join(map(repr, _LABEL_CHOICES))}, got {labels!r}")
    _Velocities.from_curve(rv)  # checks `rv`
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
    n_samples = int(n_samples)
    notes = _notes.Notes()
    info: list[str] = []
    options = {"period": period, "t0": t0, "fit_ephemeris": fit_ephemeris, "ecosw": ecosw, "esinw": esinw,
               "fit_eccentricity": fit_eccentricity, "separate_gamma": separate_gamma}
    rv, label_state = _choose_labels(rv, ephemeris, options, labels, info, notes)
    data = _Velocities.from_curve(rv)
    problem, result, jitter_result, noise_model = _fit_noise_model(data, ephemeris, options, jitter, info, notes)
    setup = problem.setup
    pv = result.params.valuesdict()
    if not result.success:
        notes.warn(f"the velocity fit did not converge: {result.message}")

    stderr, samp = _covariance_samples(result, n_samples, rng, notes)
    jit_val, jit_err = _jitter_estimates(jitter_result, data, notes)
    for star in ("primary", "secondary"):
        sd = jit_err[star] or 0.0
        samp[f"jitter_{star}"] = np.abs(jit_val[star] + sd * rng.standard_normal(n_samples))
    _add_derived_samples(samp, pv, problem.t_ref, data.double)
    values = _best_values(pv, problem.t_ref, jit_val, data.double)
    uncert = _uncertainties(values, list(result.var_names), stderr, samp, jit_err)
    if uncert.get("omega") is not None and values["eccentricity"] < (uncert.get("eccentricity") or 0):
        notes.warn("e is smaller than its uncertainty: omega is undefined")
    samples = {k: np.asarray(samp[k], float) for k in values if k in samp}
    samples["t0"] = samp["t0"]

    statistics = problem.statistics(pv, jit_val)
    _quality_notes(problem, pv, notes)
    free = [("t0" if n == "t0_offset" else n) for n in result.var_names]
    if setup.jitter:
        free += [n for n in ("jitter_primary", "jitter_secondary") if jitter_result is not None
                 and n in jitter_result.params]
    fit = OrbitFit(values=values, uncertainties=uncert, units={k: _UNITS[k] for k in values},
                   samples=samples, free=free, rv=rv, **statistics, error_scale_primary=problem.scale["primary"],
                   error_scale_secondary=problem.scale["secondary"], n_free=setup.n_free,
                   n_data=data.n1 + data.n2, double_lined=data.double, jitter=setup.jitter,
                   separate_gamma=setup.separate_gamma, success=bool(result.success), message=str(result.message),
                   warnings=notes.messages, lmfit_result=result, inclination=setup.inclination,
                   labels=label_state, noise_model=noise_model, notes=info)
    for reason in fit.no_orbit_reasons:
        notes.warn(reason)
    return fit


def orbit_doubts(orbit: Any) -> list[str]:
    """Reasons a fitted orbit shows no orbital motion: a semi-amplitude consistent with zero.

    Works on any result with ``values`` and ``uncertainties`` holding ``k_primary``,
    ``k_secondary`` (an :class:`OrbitFit`, or the orbit of a joint fit).  A K within
    3 sigma of zero (common practice for a detection), or exactly zero, is no measurement:
    masses from it would be meaningless.
    """
    vals = getattr(orbit, "values", None) or {}
    errs = getattr(orbit, "uncertainties", None) or {}
    out = []
    for key, label, star in (("k_primary", "K1", "primary"), ("k_secondary", "K2", "secondary")):
        k = vals.get(key)
        if k is None or not np.isfinite(k):
            continue
        err = errs.get(key)
        if k <= 1e-9 * max(1.0, abs(vals.get("gamma", 0.0))) or (err is not None and k < 3 * err):
            out.append(f"{label} = {format_value(k, err)} km/s is consistent with zero: the {star}'s velocities show no orbit "
                       f"at the light curve's ephemeris (check the period, t0 and the velocities' time system)")
    return out


# --- the steps of fit_velocities() -------------------------------------------------------
@dataclass(frozen=True)
class _Velocities:
    """The velocities of one fit as float arrays; ``m1``, ``m2`` mark the epochs where each star was measured."""

    time: np.ndarray
    rv1: np.ndarray
    e1: np.ndarray
    rv2: np.ndarray
    e2: np.ndarray
    m1: np.ndarray
    m2: np.ndarray
    n1: int
    n2: int
    double: bool          # both stars measured

    @property
    def has1(self) -> bool:
        return self.n1 > 0

    @property
    def has2(self) -> bool:
        return self.n2 > 0

    @property
    def n_main(self) -> int:
        """Velocities of the star that sets the orbit's shape: the primary's, or the secondary's when alone."""
        return self.n1 or self.n2

    @property
    def main_mask(self) -> np.ndarray:
        return self.m1 if self.has1 else self.m2

    @classmethod
    def from_curve(cls, rv: Any) -> _Velocities:
        if not all(hasattr(rv, a) for a in ("time", "rv1", "rv1_err", "rv2", "rv2_err")):
            raise InputError("`rv` must be a VelocityCurve (see eclipsekit.read_velocities)")
        rv1, rv2 = np.asarray(rv.rv1, float), np.asarray(rv.rv2, float)
        m1, m2 = np.isfinite(rv1), np.isfinite(rv2)
        n1, n2 = int(m1.sum()), int(m2.sum())
        if n1 == 0 and n2 == 0:
            raise InputError("`rv` has no velocities (rv1 or rv2)")
        return cls(time=np.asarray(rv.time, float), rv1=rv1, e1=np.asarray(rv.rv1_err, float), rv2=rv2,
                   e2=np.asarray(rv.rv2_err, float), m1=m1, m2=m2, n1=n1, n2=n2, double=n1 > 0 and n2 > 0)


@dataclass(frozen=True)
class _OrbitSetup:
    """What is fitted and from where it starts: the checked options of :func:`fit_velocities`.

    ``period``, ``t0``, ``ecosw``, ``esinw`` are the fixed or start values, each with the
    uncertainty (or None) that makes it a Gaussian prior when the parameter is fitted.
    """

    period: float
    period_err: float | None
    t0: float
    t0_err: float | None
    ecosw: float
    ecosw_err: float | None
    esinw: float
    esinw_err: float | None
    known_e: bool                # e cos w or e sin w came from the ephemeris or the arguments
    fit_eccentricity: bool
    fit_ephemeris: bool
    fit_t0: bool
    jitter: bool
    separate_gamma: bool
    inclination: float | None
    n_free: int
    n_prior: int

    @property
    def model_kw(self) -> dict[str, float]:
        return _incl_kw(self.inclination)

    @classmethod
    def check(cls, data: _Velocities, ephemeris: Any, *, period: Any, t0: Any, fit_ephemeris: bool, ecosw: Any,
              esinw: Any, fit_eccentricity: bool | None, jitter: bool, separate_gamma: bool,
              notes: _notes.Notes) -> _OrbitSetup:
        if separate_gamma and not data.double:
            notes.warn("`separate_gamma` ignored: single-lined velocities")
            separate_gamma = False
        eph = _ephemeris_info(ephemeris)
        if ephemeris is not None and "period" not in eph:
            raise InputError("`ephemeris` has no period (expected .values['period'] or .period)")
        p_val, p_err = eph.get("period", (None, None))
        t_val, t_err = eph.get("t0", (None, None))
        if period is not None:
            p_val, p_err = as_float(period, "period", u.day), None
        if t0 is not None:
            t_val, t_err = as_float(t0, "t0", u.day), None
        if p_val is None:
            raise InputError("`period` is needed: pass an ephemeris (light-curve fit or period search) or period=")
        if not p_val > 0:
            raise InputError(f"`period` must be positive, got {p_val}")
        (ec_val, ec_err), (es_val, es_err), known_e = _eccentricity_start(eph, ecosw, esinw)
        if fit_eccentricity is None:
            # fixed where the light curve fixed it; fitted (with its priors) where it measured it
            measured_e = ec_err is not None or es_err is not None
            fit_eccentricity = (not known_e or measured_e) and data.n_main >= 8
            if not known_e and data.n_main < 8:
                notes.warn(f"only {data.n_main} velocities of the {'primary' if data.has1 else 'secondary'}: "
                           f"the orbit is assumed circular (pass fit_eccentricity=True to fit e)")
        fit_eccentricity, fit_ephemeris, jitter = bool(fit_eccentricity), bool(fit_ephemeris), bool(jitter)
        fit_t0 = fit_ephemeris or t_val is None
        if t_val is None:
            # star 2 moves opposite to star 1: its negated velocities have star 1's phase
            t_val = (_circular_t0(data.time, data.rv1, 1 / data.e1, p_val) if data.has1
                     else _circular_t0(data.time, -data.rv2, 1 / data.e2, p_val))
            notes.warn("no t0 given: the time of primary eclipse is fitted from the velocities alone")

        n_free = (2 if not data.double else 3) + int(separate_gamma) + 2 * fit_eccentricity \
            + int(fit_t0) + int(fit_ephemeris) + (1 + int(data.double)) * jitter
        n_prior = int(fit_ephemeris and p_err is not None) + int(fit_ephemeris and t_err is not None) \
            + int(fit_eccentricity and ec_err is not None) + int(fit_eccentricity and es_err is not None)
        n_data = data.n1 + data.n2
        if n_data + n_prior <= n_free:
            raise InputError(f"{n_data} velocities cannot constrain {n_free} free parameters; give more epochs "
                             f"or fix the eccentricity / ephemeris")
        return cls(period=p_val, period_err=p_err, t0=t_val, t0_err=t_err, ecosw=ec_val, ecosw_err=ec_err,
                   esinw=es_val, esinw_err=es_err, known_e=known_e, fit_eccentricity=fit_eccentricity,
                   fit_ephemeris=fit_ephemeris, fit_t0=fit_t0, jitter=jitter, separate_gamma=bool(separate_gamma),
                   inclination=eph.get("inclination", (None, None))[0], n_free=n_free, n_prior=n_prior)


def _eccentricity_start(eph: dict[str, tuple[float | None, float | None]], ecosw: Any, esinw: Any
                        ) -> tuple[tuple[float, float | None], tuple[float, float | None], bool]:
    """``(ecosw, error), (esinw, error), known``: the arguments over the ephemeris, 0 when neither gives them."""
    ec_val, ec_err = eph.get("ecosw", (None, None))
    es_val, es_err = eph.get("esinw", (None, None))
    if ecosw is not None:
        ec_val, ec_err = _value_error(ecosw, "ecosw")
    if esinw is not None:
        es_val, es_err = _value_error(esinw, "esinw")
    known_e = ec_val is not None or es_val is not None
    ec_val = 0.0 if ec_val is None else ec_val
    es_val = 0.0 if es_val is None else es_val
    if np.hypot(ec_val, es_val) >= 1:
        raise InputError(f"ecosw = {ec_val}, esinw = {es_val} give e >= 1")
    return (ec_val, ec_err), (es_val, es_err), known_e


def _start_values(data: _Velocities, setup: _OrbitSetup) -> tuple[np.ndarray, float, float]:
    """Start values: the best linear solution (gamma, K1, K2, gamma_offset) on an (e, omega) grid, with its e, omega.

    Returns the coefficients and the grid point's e cos w, e sin w.
    """
    w1 = np.where(data.m1, 1 / np.where(data.m1, data.e1, 1.0), 0.0)
    w2 = np.where(data.m2, 1 / np.where(data.m2, data.e2, 1.0), 0.0)
    if setup.fit_eccentricity and not setup.known_e:
        grid = [(0.0, 0.0)] + [(e * np.cos(w), e * np.sin(w)) for e in (0.05, 0.15, 0.3, 0.45, 0.6)
                               for w in np.radians(np.arange(0, 360, 30))]
    else:
        grid = [(setup.ecosw, setup.esinw)]

    def solve(ec: float, es: float) -> tuple[float, np.ndarray]:
        return _design_start(data.time, data.rv1, w1, data.rv2, w2, setup.period, setup.t0, ec, es,
                             setup.separate_gamma, setup.model_kw)

    best = None
    for ec, es in grid:
        chi2, coef = solve(ec, es)
        if (not data.has1 or coef[1] > 0) and (not data.has2 or coef[2] > 0) and (best is None or chi2 < best[0]):
            best = (chi2, coef, ec, es)
    if best is None:  # every grid point gave a negative K: keep the circular solution's magnitudes
        chi2, coef = solve(setup.ecosw, setup.esinw)
        best = (chi2, np.abs(coef), setup.ecosw, setup.esinw)
    _, coef, ec0, es0 = best
    return coef, ec0, es0


def _parameters(data: _Velocities, setup: _OrbitSetup, coef: np.ndarray, ecosw: float, esinw: float
                ) -> lmfit.Parameters:
    """The lmfit parameters, with their bounds; t0 is fitted as an offset from the start value."""
    p_val = setup.period
    params = lmfit.Parameters()
    if data.has1:
        params.add("k_primary", value=max(coef[1], 1e-3), min=0.0)
    if data.has2:
        params.add("k_secondary", value=max(coef[2], 1e-3), min=0.0)
    params.add("gamma", value=coef[0])
    if setup.separate_gamma:
        params.add("gamma_offset", value=coef[3])
    params.add("ecosw", value=ecosw, min=-_E_MAX, max=_E_MAX, vary=setup.fit_eccentricity)
    params.add("esinw", value=esinw, min=-_E_MAX, max=_E_MAX, vary=setup.fit_eccentricity)
    params.add("period", value=p_val, min=0.5 * p_val, max=1.5 * p_val, vary=setup.fit_ephemeris)
    params.add("t0_offset", value=0.0, min=-0.5 * p_val, max=0.5 * p_val, vary=setup.fit_t0)  # t0 - t_ref
    if setup.jitter:
        if data.has1:
            params.add("jitter_primary", value=0.5 * float(np.median(data.e1[data.m1])), min=0.0)
        if data.has2:
            params.add("jitter_secondary", value=0.5 * float(np.median(data.e2[data.m2])), min=0.0)
    return params


def _priors(setup: _OrbitSetup, notes: _notes.Notes) -> list[tuple[str, float, float]]:
    """Gaussian priors ``(name, mean, sigma)`` on the fitted ephemeris and eccentricity terms."""
    priors = []
    if setup.fit_ephemeris:
        if setup.period_err is not None:
            priors.append(("period", setup.period, setup.period_err))
        if setup.t0_err is not None:
            priors.append(("t0", setup.t0, setup.t0_err))
        if setup.period_err is None or setup.t0_err is None:
            notes.warn("`fit_ephemeris`: the ephemeris has no uncertainty for the period or t0; "
                       "that parameter is fitted without a prior")
    if setup.fit_eccentricity:
        if setup.ecosw_err is not None:
            priors.append(("ecosw", setup.ecosw, setup.ecosw_err))
        if setup.esinw_err is not None:
            priors.append(("esinw", setup.esinw, setup.esinw_err))
    return priors


class _VelocityProblem:
    """The model, the weighted residuals (scaled errors, jitter, priors) and the least-squares driver."""

    def __init__(self, data: _Velocities, setup: _OrbitSetup, priors: list[tuple[str, float, float]]):
        self.data, self.setup, self.priors = data, setup, priors
        self.t_ref = setup.t0
        self.scale = {"primary": 1.0, "secondary": 1.0}   # factors on the quoted errors (>= 1)

    def model(self, pv: dict[str, float]) -> tuple[np.ndarray, np.ndarray]:
        ec, es = pv["ecosw"], pv["esinw"]
        e = np.hypot(ec, es)
        if e > _E_MAX:  # keep Kepler's equation well posed at the box corners
            ec, es = ec * _E_MAX / e, es * _E_MAX / e
        m_1, m_2 = _orbit.radial_velocities(self.data.time, period=pv["period"], t0=self.t_ref + pv["t0_offset"],
                                            k_primary=pv.get("k_primary", 0.0),
                                            k_secondary=pv.get("k_secondary", 0.0),
                                            gamma=pv["gamma"], ecosw=ec, esinw=es, **self.setup.model_kw)
        return np.asarray(m_1, float), np.asarray(m_2, float) + pv.get("gamma_offset", 0.0)

    def residual(self, p: lmfit.Parameters, augmented: bool = True) -> np.ndarray:
        d = self.data
        pv = p.valuesdict()
        mod1, mod2 = self.model(pv)
        parts = []
        s1 = pv.get("jitter_primary", 0.0)
        s2 = pv.get("jitter_secondary", 0.0)
        if d.has1:
            var1 = (d.e1[d.m1] * self.scale["primary"]) ** 2 + s1**2
            parts.append((d.rv1[d.m1] - mod1[d.m1]) / np.sqrt(var1))
        if d.has2:
            var2 = (d.e2[d.m2] * self.scale["secondary"]) ** 2 + s2**2
            parts.append((d.rv2[d.m2] - mod2[d.m2]) / np.sqrt(var2))
        if self.setup.jitter and augmented:
            # sum of squares of these = sum ln(var / sigma^2): the normalisation of the likelihood
            if d.has1:
                parts.append(np.sqrt(np.log1p(s1**2 / d.e1[d.m1] ** 2)))
            if d.has2:
                parts.append(np.sqrt(np.log1p(s2**2 / d.e2[d.m2] ** 2)))
        for name, mu, sig in self.priors:
            x = self.t_ref + pv["t0_offset"] if name == "t0" else pv[name]
            parts.append(np.atleast_1d((x - mu) / sig))
        return np.concatenate(parts)

    def minimize(self, p: lmfit.Parameters, max_nfev: int | None = None) -> lmfit.minimizer.MinimizerResult:
        return lmfit.minimize(self.residual, p, method="least_squares", scale_covar=False, nan_policy="raise",
                              max_nfev=max_nfev)

    def fit(self, params: lmfit.Parameters) -> tuple[lmfit.minimizer.MinimizerResult, Any]:
        """The fit whose covariance gives the orbit's uncertainties, and the jitter fit (None without jitter)."""
        try:
            result = self.minimize(params)
            if not self.setup.jitter:
                self._scale_errors(result.params.valuesdict())
                if self.scale["primary"] > 1 or self.scale["secondary"] > 1:
                    result = self.minimize(result.params)
                return result, None
            # covariance of the orbit at the best-fit jitter (the jitter's own from its Fisher information)
            fixed = result.params.copy()
            for name in ("jitter_primary", "jitter_secondary"):
                if name in fixed:
                    fixed[name].set(vary=False)
            return self.minimize(fixed), result
        except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
            raise FitError(f"the velocity fit failed: {exc}") from exc

    def _scale_errors(self, pv: dict[str, float]) -> None:
        """Per-star error scaling (never below 1) from each star's chi-square and share of the dof."""
        d, s = self.data, self.setup
        mod1, mod2 = self.model(pv)
        n = d.n1 + d.n2 + s.n_prior
        dof_frac = max(n - s.n_free, 1) / n
        if d.has1:
            chi1 = np.sum(((d.rv1[d.m1] - mod1[d.m1]) / d.e1[d.m1]) ** 2)
            self.scale["primary"] = float(np.sqrt(max(1.0, chi1 / (d.n1 * dof_frac))))
        if d.has2:
            chi2_ = np.sum(((d.rv2[d.m2] - mod2[d.m2]) / d.e2[d.m2]) ** 2)
            self.scale["secondary"] = float(np.sqrt(max(1.0, chi2_ / (d.n2 * dof_frac))))

    def statistics(self, pv: dict[str, float], jit_val: dict[str, float]) -> dict[str, Any]:
        """Residuals, rms per star, chi-square (quoted errors, fitted jitter, priors) and its reduced value."""
        d, s = self.data, self.setup
        mod1, mod2 = self.model(pv)
        res1 = np.where(d.m1, d.rv1 - mod1, np.nan)
        res2 = np.where(d.m2, d.rv2 - mod2, np.nan)
        rms1 = float(np.sqrt(np.mean(res1[d.m1] ** 2))) if d.has1 else float("nan")
        rms2 = float(np.sqrt(np.mean(res2[d.m2] ** 2))) if d.has2 else float("nan")
        chisqr = float(np.sum(res1[d.m1] ** 2 / (d.e1[d.m1] ** 2 + jit_val["primary"] ** 2)))
        if d.has2:
            chisqr += float(np.sum(res2[d.m2] ** 2 / (d.e2[d.m2] ** 2 + jit_val["secondary"] ** 2)))
        for name, mu, sig in self.priors:
            x = self.t_ref + pv["t0_offset"] if name == "t0" else pv[name]
            chisqr += ((x - mu) / sig) ** 2
        dof = d.n1 + d.n2 + s.n_prior - s.n_free
        redchi = chisqr / dof if dof > 0 else float("nan")
        return {"residuals_primary": res1, "residuals_secondary": res2, "rms_primary": rms1,
                "rms_secondary": rms2, "chisqr": chisqr, "redchi": float(redchi)}


def _covariance_samples(result: Any, n_samples: int, rng: np.random.Generator, notes: _notes.Notes
                        ) -> tuple[dict[str, float] | None, dict[str, np.ndarray]]:
    """Standard errors of the free parameters and draws of every orbit parameter from their normal.

    Without a usable covariance the standard errors are None and every draw is the best fit.
    """
    pv = result.params.valuesdict()
    var_names = list(result.var_names)
    covar = result.covar
    if covar is None or not np.all(np.isfinite(covar)) or np.any(np.diag(covar) < 0):
        notes.warn("the covariance of the velocity fit could not be estimated (degenerate data?); "
                   "uncertainties are not available")
        covar = None
    stderr = None
    if covar is not None:
        stderr = {name: float(np.sqrt(covar[i, i])) for i, name in enumerate(var_names)}
        draws = rng.multivariate_normal([pv[n] for n in var_names], covar, size=n_samples,
                                        method="eigh", check_valid="ignore")
    else:
        draws = np.tile([pv[n] for n in var_names], (n_samples, 1))
    samp: dict[str, np.ndarray] = {}
    for name in ("k_primary", "k_secondary", "gamma", "gamma_offset", "ecosw", "esinw", "period", "t0_offset"):
        if name in var_names:
            samp[name] = draws[:, var_names.index(name)]
        else:
            samp[name] = np.full(n_samples, pv.get(name, np.nan if name.startswith("k_") else 0.0))
    return stderr, samp


def _jitter_estimates(jitter_result: Any, data: _Velocities, notes: _notes.Notes
                      ) -> tuple[dict[str, float], dict[str, float | None]]:
    """Fitted jitter per star and its error from the Fisher information (None when consistent with zero)."""
    jit_val = {"primary": 0.0, "secondary": 0.0}
    jit_err: dict[str, float | None] = {"primary": None, "secondary": None}
    if jitter_result is None:
        return jit_val, jit_err
    for star, mask, err in (("primary", data.m1, data.e1), ("secondary", data.m2, data.e2)):
        name = f"jitter_{star}"
        if name not in jitter_result.params:
            continue
        s = float(jitter_result.params[name].value)
        jit_val[star] = s
        fisher = 2 * s**2 * np.sum(1 / (err[mask] ** 2 + s**2) ** 2)
        if s > 1e-3 * float(np.median(err[mask])) and fisher > 0:
            jit_err[star] = float(1 / np.sqrt(fisher))
        else:
            notes.note(f"the {star}'s jitter is consistent with zero")  # information: no bias
    return jit_val, jit_err


def _best_omega(pv: dict[str, float]) -> float:
    return float(np.degrees(np.arctan2(pv["esinw"], pv["ecosw"])) % 360)


def _add_derived_samples(samp: dict[str, np.ndarray], pv: dict[str, float], t_ref: float, double: bool) -> None:
    """t0, e, omega (unwrapped around the best value), mass function, a sin i, q and M sin^3 i per sample."""
    samp["t0"] = t_ref + samp.pop("t0_offset")
    k2s = samp["k_secondary"]
    ecc = np.hypot(samp["ecosw"], samp["esinw"])
    samp["eccentricity"] = ecc
    om_best = _best_omega(pv)
    om = np.degrees(np.arctan2(samp["esinw"], samp["ecosw"]))
    samp["omega"] = om_best + (om - om_best + 180) % 360 - 180
    ecc_c = np.clip(ecc, 0, 0.999)
    # with the secondary's velocities only, the mass function of its orbit (M1^3 sin^3 i / (M1 + M2)^2)
    k_main = samp["k_primary"] if np.all(np.isfinite(samp["k_primary"])) else samp["k_secondary"]
    samp["mass_function"] = _mass_function(samp["period"], k_main, ecc_c)
    samp["a1_sin_i"] = _asini(samp["period"], samp["k_primary"], 0.0, ecc_c)
    if double:
        samp["mass_ratio"] = samp["k_primary"] / k2s
        m1s, m2s = _minimum_masses(samp["period"], samp["k_primary"], k2s, ecc_c)
        samp["mass_primary_sin3i"], samp["mass_secondary_sin3i"] = m1s, m2s
        samp["a_sin_i"] = _asini(samp["period"], samp["k_primary"], k2s, ecc_c)


def _best_values(pv: dict[str, float], t_ref: float, jit_val: dict[str, float], double: bool) -> dict[str, float]:
    """Best-fit values; the derived ones computed from the best fit."""
    e_best = float(np.hypot(pv["ecosw"], pv["esinw"]))
    k1 = pv.get("k_primary", np.nan)
    values = {"k_primary": k1, "k_secondary": pv.get("k_secondary", np.nan),
              "gamma": pv["gamma"], "gamma_offset": pv.get("gamma_offset", 0.0),
              "ecosw": pv["ecosw"], "esinw": pv["esinw"], "eccentricity": e_best, "omega": _best_omega(pv),
              "mass_function": _mass_function(pv["period"], k1 if np.isfinite(k1) else pv["k_secondary"], e_best),
              "a1_sin_i": _asini(pv["period"], k1, 0.0, e_best) if np.isfinite(k1) else np.nan}
    if double:
        values["mass_ratio"] = pv["k_primary"] / pv["k_secondary"]
        m1s, m2s = _minimum_masses(pv["period"], pv["k_primary"], pv["k_secondary"], e_best)
        values.update(mass_primary_sin3i=float(m1s), mass_secondary_sin3i=float(m2s),
                      a_sin_i=_asini(pv["period"], pv["k_primary"], pv["k_secondary"], e_best))
    else:
        values["mass_ratio"] = np.nan
    values.update(jitter_primary=jit_val["primary"], jitter_secondary=jit_val["secondary"],
                  period=pv["period"], t0=t_ref + pv["t0_offset"])
    return {k: float(v) for k, v in values.items()}


_DERIVED = ("eccentricity", "omega", "mass_function", "a1_sin_i", "mass_ratio", "mass_primary_sin3i",
            "mass_secondary_sin3i", "a_sin_i")


def _uncertainties(values: dict[str, float], var_names: list[str], stderr: dict[str, float] | None,
                   samp: dict[str, np.ndarray], jit_err: dict[str, float | None]) -> dict[str, float | None]:
    """Errors of the free parameters from the covariance, of derived ones from the samples; None when fixed."""
    uncert: dict[str, float | None] = {}
    for k in values:
        src = "t0_offset" if k == "t0" else k
        if k.startswith("jitter_"):
            uncert[k] = jit_err[k.split("_")[1]]
        elif src in var_names:
            uncert[k] = None if stderr is None else stderr[src]
        elif k in _DERIVED and stderr is not None and np.isfinite(values[k]):
            sd = float(np.std(samp[k]))
            uncert[k] = sd if sd > 1e-12 * max(abs(values[k]), 1e-12) else None  # None: fixed
        else:
            uncert[k] = None
    return uncert


def _quietly(make: Any) -> Any:
    """Run a trial fit with its warnings suppressed (the adopted fit issues them)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", EclipsekitWarning)
        return make()


def _trial_chi2(rv: VelocityCurve, ephemeris: Any, options: dict[str, Any]) -> tuple[float, dict[str, float]]:
    """Chi-square (quoted errors, priors) of the best orbit for these labels, and its values; inf if it fails."""
    def run() -> tuple[float, dict[str, float]]:
        data = _Velocities.from_curve(rv)
        setup = _OrbitSetup.check(data, ephemeris, **options, jitter=False, notes=_notes.Notes())
        problem = _VelocityProblem(data, setup, _priors(setup, _notes.Notes()))
        # a budget: the wrong labels need not converge (they wander to e -> 1), only fit worse
        result = problem.minimize(_parameters(data, setup, *_start_values(data, setup)), max_nfev=_TRIAL_NFEV)
        return float(np.sum(problem.residual(result.params) ** 2)), result.params.valuesdict()

    try:
        return _quietly(run)
    except (InputError, FitError, ValueError, RuntimeError, np.linalg.LinAlgError):
        return float("inf"), {}


def _choose_labels(rv: VelocityCurve, ephemeris: Any, options: dict[str, Any], labels: str, info: list[str],
                   notes: _notes.Notes) -> tuple[VelocityCurve, str]:
    """The velocities with star 1 as the star eclipsed at primary eclipse, and how that was decided."""
    if labels == "given":
        return rv, "as given"
    if labels == "swapped":
        why = "velocity columns swapped as asked (labels='swapped'): rv2 is the star eclipsed at primary eclipse"
        info.append(why)
        return rv.swapped(why), "swapped"
    if options["t0"] is None and "t0" not in _ephemeris_info(ephemeris):
        info.append("velocity labels not checked (no t0): rv1 taken as the star eclipsed at primary eclipse")
        return rv, "not checked"
    cols = rv.meta.get("columns") or {}
    has1 = bool(np.isfinite(rv.rv1).any())
    name1, name2 = cols.get("rv1") or "rv1", cols.get("rv2") or "rv2"
    # what the file's columns are, as labelled (a one-star file names its one column)
    labelled = (f"{name1!r} is the star eclipsed at primary eclipse" if has1
                else f"{name2!r} is the star eclipsed at secondary eclipse")
    chi_given, best_given = _trial_chi2(rv, ephemeris, options)
    chi_swapped, best_swapped = _trial_chi2(rv.swapped(""), ephemeris, options)
    if not np.isfinite(chi_given) and not np.isfinite(chi_swapped):  # the fit itself will say why
        return rv, "not checked"
    if chi_given - chi_swapped > _LABEL_DELTA_CHI2:
        def k_text(best: dict[str, float]) -> str:
            return ", ".join(f"{lab} = {format_value(best[key])} km/s" for key, lab in
                             (("k_primary", "K1"), ("k_secondary", "K2")) if key in best)
        actual = (f"{name1!r} belongs to the star eclipsed at secondary eclipse" if has1
                  else f"{name2!r} belongs to the star eclipsed at primary eclipse")
        why = (f"velocity columns swapped: {actual} (as labelled, chi-square {chi_given:.4g} with "
               f"{k_text(best_given)}, the orbit would need omega + 180 deg; exchanged, chi-square "
               f"{chi_swapped:.4g})")
        info.append(why)
        return rv.swapped(why), "swapped"
    if chi_swapped - chi_given > _LABEL_DELTA_CHI2:
        info.append(f"velocity labels checked: {labelled} (chi-square {chi_given:.4g} as labelled, "
                    f"{chi_swapped:.4g} exchanged)")
        return rv, "as given"
    notes.warn(f"the velocities cannot tell which star is eclipsed at primary eclipse (chi-square {chi_given:.4g} "
               f"as labelled, {chi_swapped:.4g} exchanged); kept as labelled: {labelled}")
    return rv, "ambiguous"


def _fit_noise_model(data: _Velocities, ephemeris: Any, options: dict[str, Any], jitter: bool | None,
                     info: list[str], notes: _notes.Notes) -> tuple[_VelocityProblem, Any, Any, str]:
    """The fit with quoted, scaled errors or a jitter term: ``(problem, result, jitter_result, noise_model)``.

    By default (``jitter`` None) a jitter term per star replaces the error scaling when a
    star's scatter exceeds :data:`_JITTER_FACTOR` times its quoted errors.
    """
    def build(with_jitter: bool, step_notes: _notes.Notes) -> tuple[_VelocityProblem, lmfit.Parameters]:
        setup = _OrbitSetup.check(data, ephemeris, **options, jitter=with_jitter, notes=step_notes)
        return _VelocityProblem(data, setup, _priors(setup, step_notes)), _parameters(data, setup,
                                                                                      *_start_values(data, setup))

    problem, params = build(bool(jitter), notes)
    result, jitter_result = problem.fit(params)
    stars = [st for st, has in (("primary", data.has1), ("secondary", data.has2)) if has]
    excess = ", ".join(f"{problem.scale[st]:.2f}x ({st})" for st in stars)
    if jitter:
        info.append("a jitter term per star was fitted (jitter=True) by maximum likelihood, added in quadrature "
                    "to the quoted errors")
        return problem, result, jitter_result, "jitter"
    if jitter is None and max(problem.scale.values()) > _JITTER_FACTOR:
        try:
            trial = _quietly(lambda: build(True, _notes.Notes()))
        except InputError:
            notes.warn(f"velocity scatter {excess} the quoted errors, but too few velocities to fit a jitter "
                       "term: the errors were scaled instead")
        else:
            problem = trial[0]
            result, jitter_result = problem.fit(trial[1])
            info.append(f"velocity scatter {excess} the quoted errors (over {_JITTER_FACTOR:g}x): a jitter term per "
                        "star was fitted by maximum likelihood, added in quadrature to the quoted errors")
            return problem, result, jitter_result, "jitter"
    if max(problem.scale.values()) > 1:
        info.append(f"velocity errors scaled to the scatter: {excess} the quoted errors")
        return problem, result, jitter_result, "scaled errors"
    info.append("velocity scatter consistent with the quoted errors: errors used as given (not scaled)")
    return problem, result, jitter_result, "quoted errors"


def _quality_notes(problem: _VelocityProblem, pv: dict[str, float], notes: _notes.Notes) -> None:
    """Warnings about the data: scaled errors, phase coverage, few secondary velocities."""
    d = problem.data
    if not problem.setup.jitter:
        for star, s in problem.scale.items():
            if s > 1.5:
                notes.warn(f"the {star}'s velocity scatter is {s:.2f}x its quoted errors; errors were scaled "
                           f"(consider jitter=True)")
    t0_best = problem.t_ref + pv["t0_offset"]
    phase = np.sort(((d.time[d.main_mask] - t0_best) / pv["period"]) % 1.0)
    gaps = np.diff(np.concatenate([phase, phase[:1] + 1]))
    if gaps.size and gaps.max() > 0.5:
        notes.warn(f"the {'primary' if d.has1 else 'secondary'}'s velocities leave a phase gap of {gaps.max():.2f}; K and e are poorly "
                   f"constrained")
    if d.double and d.n2 < 3:
        notes.warn(f"only {d.n2} secondary velocities: K2 rests on very few points")
    if not d.has2:
        notes.note("single-lined: K1 and the mass function only; masses need the secondary's velocities")
    elif not d.has1:
        notes.note("the secondary's velocities only: K2 and the mass function of its orbit; masses need the "
                   "primary's velocities too")
