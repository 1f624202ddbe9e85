"""Absolute dimensions of a double-lined eclipsing binary.

The light curve gives the inclination and the fractional radii r = R/a; the
velocity semi-amplitudes K1, K2 give a sin i and M sin^3 i.  Together they give
model-independent masses and radii.  This module holds the small physical
relations (Kepler's third law, the spectroscopic mass function, L = 4 pi R^2
sigma T^4, the IAU 2015 bolometric magnitude scale, parallax distance) and
:func:`absolute_dimensions`, which combines a light-curve fit and an orbit fit and
propagates uncertainties by Monte Carlo samples.

All constants are IAU 2015 nominal values (Resolution B3: GM_sun, R_sun, L_sun;
Resolution B2: the zero point of the bolometric magnitude scale) taken from
:mod:`astropy.constants`; results are plain floats in solar units, km/s, days and pc.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

import astropy.constants as const
import astropy.units as u
import numpy as np

from . import _notes
from ._validate import to_unit
from .errors import InputError
from .summary import format_value, has_uncertainty, short_label

__all__ = [
    "AbsoluteDimensions",
    "main_sequence_radius",
    "absolute_dimensions",
    "total_mass",
    "mass_function",
    "minimum_masses",
    "projected_semi_major_axis",
    "semi_amplitude",
    "luminosity",
    "bolometric_magnitude",
    "surface_gravity",
    "distance_from_parallax",
    "parse_value_error",
]

# --- constants, all derived from astropy.constants (IAU 2015 nominal values) ---------
#: M sin^3 i [M_sun] = MSIN3I_FACTOR (1-e^2)^{3/2} (K1+K2)^2 K2 P, K in km/s, P in days
#: (= 1.036149e-7 with IAU 2015 B3 nominal GM_sun).
MSIN3I_FACTOR: float = float((u.day * (u.km / u.s) ** 3 / (2 * np.pi * const.GM_sun)).decompose())
#: a sin i [R_sun] = ASINI_FACTOR (1-e^2)^{1/2} (K1+K2) P  (= 1.976569e-2, nominal R_sun).
ASINI_FACTOR: float = float((u.day * u.km / u.s / (2 * np.pi * const.R_sun)).decompose())
_GM_SUN = const.GM_sun.si.value
_R_SUN = const.R_sun.si.value
_L_SUN = const.L_sun.si.value
_L_BOL0 = const.L_bol0.si.value           # IAU 2015 B2 zero point, 3.0128e28 W
_SIGMA_SB = const.sigma_sb.si.value
_M_SUN_G = const.M_sun.cgs.value            # nominal GM_sun / G, grams
_R_SUN_CM = const.R_sun.cgs.value
_DAY_S = float((1 * u.day).to_value(u.s))
_M_SUN_MAX = 1000.0                         # above this the K's are almost surely wrong (units?)


# --- small helpers -----------------------------------------------------------------
def _strip(x: Any, unit: u.Unit, name: str) -> Any:
    """Quantity -> float array in ``unit``; floats pass through (already in ``unit``)."""
    # radians count as dimensionless for angles, but a dimensionless input stays a plain ratio
    return to_unit(x, unit, name, equivalencies=None if unit is u.one else u.dimensionless_angles())


def parse_value_error(text: str) -> tuple[float, float]:
    """Parse ``"85.2±0.4"`` (also ``"85.2+-0.4"``, ``"85.2 +/- 0.4"``) into ``(85.2, 0.4)``.

    Meant for command-line options such as ``--k1 85.2±0.4``.

    Raises
    ------
    InputError
        When the text is not of that form or the error is negative.
    """
    m = re.fullmatch(r"\s*([-+]?[\d.]+(?:[eE][-+]?\d+)?)\s*(?:±|\+/-|\+-)\s*([\d.]+(?:[eE][-+]?\d+)?)\s*",
                     str(text))
    if m is None:
        raise InputError(f"cannot read {text!r} as VALUE±ERROR (e.g. 85.2±0.4 or 85.2+-0.4)")
    try:
        value, error = float(m.group(1)), float(m.group(2))
    except ValueError as exc:
        raise InputError(f"cannot read {text!r} as VALUE±ERROR (e.g. 85.2±0.4 or 85.2+-0.4)") from exc
    return value, error


def total_mass(period: float | u.Quantity, sma: float | u.Quantity) -> float:
    """Total mass from Kepler's third law, ``G (M1 + M2) = 4 pi^2 a^3 / P^2``.

    Parameters
    ----------
    period : float or Quantity
        Orbital period (days if a float).
    sma : float or Quantity
        Semi-major axis of the relative orbit (solar radii if a float).

    Returns
    -------
    float
        M1 + M2 in nominal solar masses (IAU 2015 B3 nominal GM_sun).
    """
    p = np.asarray(_strip(period, u.day, "period"), float) * _DAY_S
    a = np.asarray(_strip(sma, u.R_sun, "sma"), float) * _R_SUN
    out = 4 * np.pi**2 * a**3 / (_GM_SUN * p**2)
    return float(out) if np.ndim(out) == 0 else out


def mass_function(period: float | u.Quantity, k_primary: float | u.Quantity,
                  eccentricity: float = 0.0) -> float:
    """Spectroscopic mass function of a single-lined binary.

    ``f(M) = M2^3 sin^3 i / (M1 + M2)^2 = P K1^3 (1 - e^2)^{3/2} / (2 pi G)``.

    Parameters
    ----------
    period : float or Quantity
        Days if a float.
    k_primary : float or Quantity
        Semi-amplitude of the observed star, km/s if a float.
    eccentricity : float

    Returns
    -------
    float
        f(M) in nominal solar masses.

    References
    ----------
    .. [1] Hilditch, R. W. 2001, An Introduction to Close Binary Stars (CUP), ch. 2.
    """
    p = np.asarray(_strip(period, u.day, "period"), float)
    k = np.asarray(_strip(k_primary, u.km / u.s, "k_primary"), float)
    e = np.asarray(eccentricity, float)
    out = MSIN3I_FACTOR * (1 - e**2) ** 1.5 * k**3 * p
    return float(out) if np.ndim(out) == 0 else out


def minimum_masses(period, k_primary, k_secondary, eccentricity=0.0) -> tuple[float, float]:
    """``M1 sin^3 i`` and ``M2 sin^3 i`` (nominal solar masses) of a double-lined binary.

    ``M1 sin^3 i = P (1-e^2)^{3/2} (K1+K2)^2 K2 / (2 pi G)`` and likewise with K1 for M2.
    Floats are days and km/s.
    """
    p = np.asarray(_strip(period, u.day, "period"), float)
    k1 = np.asarray(_strip(k_primary, u.km / u.s, "k_primary"), float)
    k2 = np.asarray(_strip(k_secondary, u.km / u.s, "k_secondary"), float)
    base = MSIN3I_FACTOR * (1 - np.asarray(eccentricity, float) ** 2) ** 1.5 * (k1 + k2) ** 2 * p
    return base * k2, base * k1


def projected_semi_major_axis(period, k_primary, k_secondary=0.0, eccentricity=0.0):
    """``a sin i = P (1-e^2)^{1/2} (K1 + K2) / (2 pi)`` in nominal solar radii (floats: days, km/s).

    With ``k_secondary=0`` this is the primary's own ``a1 sin i``.
    """
    p = np.asarray(_strip(period, u.day, "period"), float)
    k1 = np.asarray(_strip(k_primary, u.km / u.s, "k_primary"), float)
    k2 = np.asarray(_strip(k_secondary, u.km / u.s, "k_secondary"), float)
    out = ASINI_FACTOR * np.sqrt(1 - np.asarray(eccentricity, float) ** 2) * (k1 + k2) * p
    return float(out) if np.ndim(out) == 0 else out


def semi_amplitude(period, mass_primary, mass_secondary, inclination=90.0, eccentricity=0.0) -> float:
    """Reflex semi-amplitude K1 (km/s) of the star of mass ``mass_primary`` due to its companion.

    ``K1 = (2 pi G / P)^{1/3} M2 sin i / ((M1 + M2)^{2/3} (1 - e^2)^{1/2})``; masses in
    solar masses (or Quantity), period in days, inclination in degrees.
    """
    p = np.asarray(_strip(period, u.day, "period"), float) * _DAY_S
    m1 = np.asarray(_strip(mass_primary, u.M_sun, "mass_primary"), float)
    m2 = np.asarray(_strip(mass_secondary, u.M_sun, "mass_secondary"), float)
    inc = np.radians(np.asarray(_strip(inclination, u.deg, "inclination"), float))
    e = np.asarray(eccentricity, float)
    k = (2 * np.pi * _GM_SUN / p) ** (1 / 3) * m2 * np.sin(inc) / ((m1 + m2) ** (2 / 3) * np.sqrt(1 - e**2))
    out = k / 1e3
    return float(out) if np.ndim(out) == 0 else out


def luminosity(radius, teff):
    """Luminosity ``L = 4 pi R^2 sigma T^4`` in nominal solar luminosities.

    ``radius`` in nominal solar radii, ``teff`` in K (or Quantities).  With the IAU 2015
    nominal values, R = 1 R_sun and T = 5772 K give 1 L_sun to 1e-4.
    """
    r = np.asarray(_strip(radius, u.R_sun, "radius"), float) * _R_SUN
    t = np.asarray(_strip(teff, u.K, "teff"), float)
    out = 4 * np.pi * r**2 * _SIGMA_SB * t**4 / _L_SUN
    return float(out) if np.ndim(out) == 0 else out


def bolometric_magnitude(luminosity):
    """Absolute bolometric magnitude on the IAU 2015 Resolution B2 scale.

    ``M_bol = -2.5 log10(L / L0)`` with ``L0 = 3.0128e28 W``, so M_bol,sun = 4.74.
    ``luminosity`` in nominal solar luminosities (or a Quantity).
    """
    lum = np.asarray(_strip(luminosity, u.L_sun, "luminosity"), float) * _L_SUN
    out = -2.5 * np.log10(lum / _L_BOL0)
    return float(out) if np.ndim(out) == 0 else out


def surface_gravity(mass, radius):
    """``log10 g`` in cgs (g = G M / R^2), mass in solar masses, radius in solar radii."""
    m = np.asarray(_strip(mass, u.M_sun, "mass"), float)
    r = np.asarray(_strip(radius, u.R_sun, "radius"), float)
    out = np.log10(_GM_SUN * m / (r * _R_SUN) ** 2) + 2.0  # +2: m/s^2 -> cm/s^2
    return float(out) if np.ndim(out) == 0 else out


def distance_from_parallax(parallax):
    """Distance in pc, ``d = 1 / p`` with p in arcsec (the IAU definition of the parsec).

    ``parallax`` in milliarcseconds if a float, or an angle Quantity.  The simple
    inversion is biased when the parallax error exceeds ~10-20% of the parallax.
    """
    p = np.asarray(_strip(parallax, u.mas, "parallax"), float)
    out = 1000.0 / p
    return float(out) if np.ndim(out) == 0 else out


# --- main-sequence reference line of the mass-radius figure ----------------------------
# (No main-sequence mass-luminosity check: its coefficients were from memory, with no source
# to cite, so a verdict printed beside a star's luminosity could not be trusted.)
def main_sequence_radius(mass):
    """Main-sequence radius (R_sun) of a star of ``mass`` (M_sun), a rough relation.

    Notes
    -----
    The power law R ≈ M^0.8 commonly quoted for the upper main sequence (M ≳ 1 M_sun) and
    R ≈ M^0.9 below (common practice; exponents from memory).  It marks where an
    unevolved star would lie on the mass–radius diagram; evolved stars lie above it.
    Used only for the reference line of the mass–radius figure.
    """
    m = np.asarray(mass, float)
    out = np.where(m >= 1.0, m**0.8, m**0.9)
    return float(out) if out.ndim == 0 else out


# --- result -----------------------------------------------------------------------
_UNITS = {
    "a": "R_sun", "mass_ratio": "", "mass_sum": "M_sun",
    "mass_primary": "M_sun", "mass_secondary": "M_sun",
    "radius_primary": "R_sun", "radius_secondary": "R_sun",
    "logg_primary": "dex (cgs)", "logg_secondary": "dex (cgs)",
    "density_primary": "g / cm3", "density_secondary": "g / cm3",
    "density_primary_solar": "rho_sun", "density_secondary_solar": "rho_sun",
    "vsync_primary": "km / s", "vsync_secondary": "km / s",
    "luminosity_primary": "L_sun", "luminosity_secondary": "L_sun",
    "log_luminosity_primary": "dex (L_sun)", "log_luminosity_secondary": "dex (L_sun)",
    "mbol_primary": "mag", "mbol_secondary": "mag",
    "distance": "pc",
}
_INPUT_UNITS = {"period": "d", "inclination": "deg", "frac_radius_primary": "", "frac_radius_secondary": "",
                "eccentricity": "", "k_primary": "km / s", "k_secondary": "km / s",
                "teff_primary": "K", "teff_secondary": "K", "parallax": "mas"}


@dataclass(frozen=True, eq=False)
class AbsoluteDimensions:
    """Absolute dimensions of both stars, with uncertainties propagated by samples.

    Attributes
    ----------
    values, uncertainties : dict of str -> float
        Median and standard deviation of the samples of each quantity: ``a`` (R_sun),
        ``mass_ratio`` (M2/M1), ``mass_sum``, ``mass_primary``, ``mass_secondary``
        (M_sun), ``radius_*`` (R_sun), ``logg_*`` (cgs), ``density_*`` (g/cm^3),
        ``density_*_solar`` (nominal solar units, M/R^3), ``vsync_*`` (km/s, synchronous rotation); with
        temperatures ``luminosity_*`` (L_sun), ``log_luminosity_*`` and ``mbol_*``
        (IAU 2015 B2 scale); with a parallax ``distance`` (pc).
    units : dict of str -> str
    samples : dict of str -> ndarray
        All of the same length; the inputs (``input_*``) are included.
    inputs : dict of str -> dict
        Value, uncertainty, unit and source of each input.
    budget : dict of str -> str
        Which inputs dominate each uncertainty, by the labels of the printed tables,
        e.g. ``"71% from K2, 22% from K1, 7% from r1"``.
    budget_shares : dict of str -> dict of str -> float
        The same as variance fractions, keyed by input name (``k_secondary``, ...).
    warnings : list of str
    n_samples : int
    """

    values: dict[str, float]
    uncertainties: dict[str, float | None]
    units: dict[str, str]
    samples: dict[str, np.ndarray] = field(repr=False)
    inputs: dict[str, dict[str, Any]] = field(repr=False)
    budget: dict[str, str] = field(repr=False)
    budget_shares: dict[str, dict[str, float]] = field(repr=False)
    warnings: list[str] = field(default_factory=list)
    n_samples: int = 0

    def to_dict(self) -> dict[str, dict[str, Any]]:
        """JSON-able ``{name: {"value", "uncertainty", "unit"}}``."""
        return {k: {"value": float(v), "uncertainty": (None if self.uncertainties.get(k) is None
                                                       else float(self.uncertainties[k])),
                    "unit": self.units.get(k, "")} for k, v in self.values.items()}

    def summary(self) -> str:
        lines = [f"Absolute dimensions ({self.n_samples} samples; median ± standard deviation)"]
        for k, v in self.values.items():
            dom = self.budget.get(k, "")
            dom_s = f"   [{dom}]" if dom else ""
            text = format_value(v, self.uncertainties.get(k))
            unit = self.units.get(k, "") + ("" if self.uncertainties.get(k) is not None else " (no uncertainty)")
            lines.append(f"  {k:<26s} {text:>24s} {unit:<12s}{dom_s}".rstrip())
        for w in self.warnings:
            lines.append(f"  warning: {w}")
        return "\n".join(lines)

    def __repr__(self) -> str:
        m1, m2 = self.values.get("mass_primary"), self.values.get("mass_secondary")
        r1, r2 = self.values.get("radius_primary"), self.values.get("radius_secondary")
        rtxt = "" if r1 is None else f", R = {r1:.4g}, {r2:.4g} R_sun"
        return f"<AbsoluteDimensions M = {m1:.4g}, {m2:.4g} M_sun{rtxt}>"


# --- input gathering --------------------------------------------------------------------
def _user_input(x: Any, unit: u.Unit, name: str) -> tuple[float, float | None] | None:
    """None | float | Quantity | (value, error) | "V±E" -> (value, error or None)."""
    if x is None:
        return None
    if isinstance(x, str):
        return parse_value_error(x)
    if isinstance(x, u.Quantity) and x.isscalar:
        return float(_strip(x, unit, name)), None
    if isinstance(x, (tuple, list)) or (isinstance(x, (u.Quantity, np.ndarray)) and np.ndim(x) == 1):
        if len(x) != 2:
            raise InputError(f"`{name}` must be a value or a (value, error) pair, got {len(x)} numbers")
        val = float(np.asarray(_strip(x[0], unit, name), float))
        err = None if x[1] is None else float(np.asarray(_strip(x[1], unit, name), float))
        if err is not None and (not np.isfinite(err) or err < 0):
            raise InputError(f"the error of `{name}` must be finite and >= 0, got {err}")
        return val, err
    try:
        return float(x), None
    except (TypeError, ValueError) as exc:
        raise InputError(f"`{name}` must be a number, a Quantity or a (value, error) pair") from exc


def _get(obj: Any, attr: str) -> dict:
    d = getattr(obj, attr, None)
    return d if isinstance(d, dict) else {}


def _from_fit(fit: Any, key: str) -> tuple[float | None, float | None, np.ndarray | None]:
    """(value, error, samples) of ``key`` in a duck-typed fit result; Nones where absent."""
    vals, errs, samp = _get(fit, "values"), _get(fit, "uncertainties"), _get(fit, "samples")
    val = vals.get(key)
    err = errs.get(key)
    s = samp.get(key)
    if key == "eccentricity":
        if val is None and "ecosw" in vals and "esinw" in vals:
            val = float(np.hypot(vals["ecosw"], vals["esinw"]))
        if s is None and "ecosw" in samp and "esinw" in samp:
            s = np.hypot(np.asarray(samp["ecosw"], float), np.asarray(samp["esinw"], float))
    if s is not None:
        s = np.asarray(s, float)
        if s.ndim != 1 or s.size == 0:
            s = None
    if val is None and s is not None:
        val = float(np.median(s))
    if err is None and s is not None and s.size > 1:
        err = float(np.std(s))
    return (None if val is None else float(val)), (None if err is None else float(err)), s


def _same_sample_set(eclipse_fit: Any, orbit: Any) -> bool:
    """True when the orbit's samples are rows of the eclipse fit's samples (a joint fit).

    A joint fit's samples hold the velocity semi-amplitudes too; identical, non-constant
    K1 draws of the same length can only come from the same sample set.
    """
    a, b = _get(eclipse_fit, "samples"), _get(orbit, "samples")
    if "k_primary" not in a or "k_primary" not in b:
        return False
    x, y = np.asarray(a["k_primary"], float), np.asarray(b["k_primary"], float)
    return x.shape == y.shape and x.size > 1 and np.ptp(x) > 0 and bool(np.array_equal(x, y))


class _Input:
    __slots__ = ("name", "value", "error", "samples", "group", "source")

    def __init__(self, name, value, error, samples, group, source):
        self.name, self.value, self.error, self.samples = name, value, error, samples
        self.group, self.source = group, source


def _derive(x: dict[str, np.ndarray], have_radii: bool) -> dict[str, np.ndarray]:
    """All output quantities from arrays of inputs (vectorised; no checks)."""
    p, inc, e = x["period"], np.radians(x["inclination"]), x["eccentricity"]
    k1, k2 = x["k_primary"], x["k_secondary"]
    sini = np.sin(inc)
    m1s, m2s = minimum_masses(p, k1, k2, e)
    out: dict[str, np.ndarray] = {}
    out["a"] = projected_semi_major_axis(p, k1, k2, e) / sini
    out["mass_ratio"] = k1 / k2
    out["mass_primary"] = m1s / sini**3
    out["mass_secondary"] = m2s / sini**3
    out["mass_sum"] = out["mass_primary"] + out["mass_secondary"]
    if have_radii:
        for star in ("primary", "secondary"):
            r = x[f"frac_radius_{star}"] * out["a"]
            m = out[f"mass_{star}"]
            out[f"radius_{star}"] = r
            out[f"logg_{star}"] = surface_gravity(m, r)
            out[f"density_{star}"] = m * _M_SUN_G / (4 / 3 * np.pi * (r * _R_SUN_CM) ** 3)  # g / cm^3
            out[f"density_{star}_solar"] = m / r**3                # nominal solar units
            out[f"vsync_{star}"] = 2 * np.pi * r * _R_SUN / (p * _DAY_S) / 1e3
            if f"teff_{star}" in x:
                lum = luminosity(r, x[f"teff_{star}"])
                out[f"luminosity_{star}"] = lum
                out[f"log_luminosity_{star}"] = np.log10(lum)
                out[f"mbol_{star}"] = bolometric_magnitude(lum)
    if "parallax" in x:
        out["distance"] = distance_from_parallax(x["parallax"])
    return out


def absolute_dimensions(
    eclipse_fit: Any = None,
    orbit: Any = None,
    *,
    k_primary: Any = None,
    k_secondary: Any = None,
    teff_primary: Any = None,
    teff_secondary: Any = None,
    parallax: Any = None,
    period: Any = None,
    inclination: Any = None,
    frac_radius_primary: Any = None,
    frac_radius_secondary: Any = None,
    eccentricity: Any = None,
    n_samples: int = 20000,
    seed: int | np.random.Generator | None = None,
) -> AbsoluteDimensions:
    """Masses, radii, gravities, densities, luminosities of both stars.

    Parameters
    ----------
    eclipse_fit : object, optional
        A light-curve fit (e.g. :class:`~eclipsekit.fit.EclipseFit`) or anything with
        ``values``, ``uncertainties`` and ``samples`` dicts holding ``period``,
        ``inclination`` (deg), ``frac_radius_primary``, ``frac_radius_secondary`` and
        ``eccentricity`` (or ``ecosw`` and ``esinw``).
    orbit : object, optional
        A velocity fit (:class:`~eclipsekit.spectroscopy.OrbitFit` or alike) with
        ``k_primary`` and ``k_secondary`` (km/s), optionally ``eccentricity``, ``period``.
    k_primary, k_secondary : float, Quantity, (value, error) or "V±E", optional
        Semi-amplitudes (km/s) measured elsewhere; they override ``orbit``.
    teff_primary, teff_secondary : float, Quantity or (value, error), optional
        Effective temperatures (K); give luminosities and bolometric magnitudes.
    parallax : float, Quantity or (value, error), optional
        Parallax (mas if a float); gives the distance d = 1/p.
    period, inclination, frac_radius_primary, frac_radius_secondary, eccentricity : optional
        Override or replace the light-curve values (days, degrees, R/a, e); given as a
        value or a (value, error) pair.  An override is drawn independently of the fit's
        other samples.
    n_samples : int
        Number of Monte Carlo samples.
    seed : int or Generator, optional
        For reproducible samples.

    Returns
    -------
    AbsoluteDimensions

    Raises
    ------
    InputError
        Negative or missing K, sin i = 0, fractional radii outside (0, 1), e outside
        [0, 1), non-positive temperatures or parallax, masses above ~1000 M_sun.

    Notes
    -----
    With P in days and K in km/s (Hilditch 2001, eqs. 2.51-2.52; constants from IAU
    2015 Resolution B3)::

        a sin i      = 1.976569e-2 (1 - e^2)^{1/2} (K1 + K2) P        [R_sun]
        M1 sin^3 i   = 1.036149e-7 (1 - e^2)^{3/2} (K1 + K2)^2 K2 P   [M_sun]

    R = r a; log g from G M / R^2; synchronous rotation v = 2 pi R / P;
    L = 4 pi R^2 sigma T^4; M_bol = -2.5 log10(L / 3.0128e28 W) (IAU 2015 B2).

    Uncertainties are propagated by samples: the light-curve samples and the orbit
    samples are each resampled (with replacement, whole rows, so each set keeps its
    internal correlations such as r1-r2 or r-i) and paired at random, because the two
    data sets are independent.  A joint light-curve and velocity fit
    (``fit_eclipses(..., velocities=rv)``) has one sample set for both: its rows are
    drawn whole, so K1, K2, e and the geometry keep their joint correlations (its
    ``orbit`` is used when ``orbit`` is not given).  Inputs without samples are drawn from normal
    distributions.  Each quantity is reported as the median and standard deviation of
    its samples.  The uncertainty budget propagates each input alone (the others held
    at their medians) and reports its share of the summed variances; shared
    correlations between inputs of one fit are therefore not attributed.

    The eccentricity comes from whichever fit measured it more precisely (the orbit
    fit when it used the light curve's e cos w, e sin w as priors), else from any fit
    that holds a value, else e = 0 (with a warning).  Eccentricity samples below zero
    (Gaussian draws of a small e) are reflected to |e|.

    References
    ----------
    .. [1] Hilditch, R. W. 2001, An Introduction to Close Binary Stars (CUP).
    .. [2] Prsa, A. et al. 2016, AJ 152, 41 (IAU 2015 Resolution B3, nominal solar values).
    .. [3] Mamajek, E. E. et al. 2015, arXiv:1510.06262 (IAU 2015 Resolution B2, M_bol scale).
    """
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
    n_samples = int(n_samples)
    if n_samples < 100:
        raise InputError(f"`n_samples` must be at least 100, got {n_samples}")
    notes = _notes.Notes()
    if orbit is None and getattr(eclipse_fit, "orbit", None) is not None:
        orbit = eclipse_fit.orbit  # a joint light-curve + velocity fit carries its orbit
    given = {"period": period, "inclination": inclination, "frac_radius_primary": frac_radius_primary,
             "frac_radius_secondary": frac_radius_secondary, "eccentricity": eccentricity,
             "k_primary": k_primary, "k_secondary": k_secondary, "teff_primary": teff_primary,
             "teff_secondary": teff_secondary, "parallax": parallax}
    inputs = _gather_inputs(eclipse_fit, orbit, given, notes)
    have_radii = _check_inputs(inputs, notes)
    _check_nominal(inputs, have_radii, notes)
    for name, inp in inputs.items():
        if inp.samples is None and (inp.error is None) and inp.source != "assumed":
            notes.warn(f"`{name}` has no uncertainty; it is treated as exact")
    if eclipse_fit is not None and not _get(eclipse_fit, "samples"):
        notes.warn("the light-curve fit has no samples: its parameters are drawn independently "
                   "(their correlations are ignored)")

    # rows of one joint sample set (see eclipsekit.fit.joint) must stay paired: one group for both fits
    draws = _draw_inputs(inputs, _same_sample_set(eclipse_fit, orbit), n_samples, rng, notes)
    out = _derive(draws, have_radii)
    values = {k: float(np.median(v)) for k, v in out.items()}
    # exact inputs give exact outputs: no uncertainty (None), not a rounding-noise "± 0.000000"
    uncert = {k: float(np.std(v)) if has_uncertainty(values[k], float(np.std(v))) else None for k, v in out.items()}
    budget, shares = _uncertainty_budget(draws, out, have_radii)

    samples = dict(out)
    for k, v in draws.items():
        samples[f"input_{k}"] = v
    info = {k: {"value": v.value, "uncertainty": v.error, "unit": _INPUT_UNITS[k], "source": v.source}
            for k, v in inputs.items()}
    return AbsoluteDimensions(values=values, uncertainties=uncert, units={k: _UNITS[k] for k in values},
                              samples=samples, inputs=info, budget=budget, budget_shares=shares,
                              warnings=notes.messages,
                              n_samples=int(next(iter(out.values())).size))


# --- the steps of absolute_dimensions() ---------------------------------------------------
_INPUT_QUANTITIES = {"period": u.day, "inclination": u.deg, "frac_radius_primary": u.one,
                     "frac_radius_secondary": u.one, "eccentricity": u.one, "k_primary": u.km / u.s,
                     "k_secondary": u.km / u.s, "teff_primary": u.K, "teff_secondary": u.K, "parallax": u.mas}


def _gather_inputs(eclipse_fit: Any, orbit: Any, given: dict[str, Any], notes: _notes.Notes) -> dict[str, _Input]:
    """Each input from the first place that has it: the arguments, the light-curve fit, the orbit."""
    inputs: dict[str, _Input] = {}
    # 1. explicit arguments win
    for name, x in given.items():
        got = _user_input(x, _INPUT_QUANTITIES[name], name)
        if got is not None:
            inputs[name] = _Input(name, got[0], got[1], None, name, "argument")

    # 2. the light-curve fit: geometry
    if eclipse_fit is not None:
        for name in ("period", "inclination", "frac_radius_primary", "frac_radius_secondary"):
            if name in inputs:
                continue
            val, err, s = _from_fit(eclipse_fit, name)
            if val is not None:
                inputs[name] = _Input(name, val, err, s, "light curve", "eclipse_fit")

    # 3. the orbit: K's, and period if still missing
    if orbit is not None:
        for name in ("k_primary", "k_secondary", "period"):
            if name in inputs:
                continue
            val, err, s = _from_fit(orbit, name)
            if val is not None and np.isfinite(val):
                inputs[name] = _Input(name, val, err, s, "orbit", "orbit")

    if "eccentricity" not in inputs:
        inputs["eccentricity"] = _eccentricity_input(eclipse_fit, orbit, notes)
    return inputs


def _eccentricity_input(eclipse_fit: Any, orbit: Any, notes: _notes.Notes) -> _Input:
    """e measured more precisely (light curve or orbit) > any value held by a fit > 0 (assumed)."""
    cands = []
    for fit, group, src in ((eclipse_fit, "light curve", "eclipse_fit"), (orbit, "orbit", "orbit")):
        if fit is not None:
            val, err, s = _from_fit(fit, "eccentricity")
            if val is not None:
                cands.append(_Input("eccentricity", val, err, s, group, src))
    measured = sorted((c for c in cands if c.error), key=lambda c: c.error)
    if len(measured) == 2:
        a_, b_ = measured
        if abs(a_.value - b_.value) > 3 * np.hypot(a_.error, b_.error):
            notes.warn(f"eccentricity differs between the light curve and the orbit ({a_.value:.4f} ± "
                       f"{a_.error:.4f} from the {a_.group}, {b_.value:.4f} ± {b_.error:.4f} from the {b_.group}); "
                       f"the more precise one is used")
    if measured:
        return measured[0]
    if cands:
        return cands[0]
    notes.warn("no eccentricity given; a circular orbit (e = 0) is assumed")
    return _Input("eccentricity", 0.0, 0.0, None, "eccentricity", "assumed")


def _check_inputs(inputs: dict[str, _Input], notes: _notes.Notes) -> bool:
    """Refuse missing or unphysical inputs; return whether both fractional radii are known."""
    for name, hint in (("k_primary", "give `orbit`, or `k_primary` with its error (km/s)"),
                       ("k_secondary", "double-lined velocities are needed for masses; give `k_secondary`"),
                       ("period", "give `eclipse_fit`, `orbit` or `period`"),
                       ("inclination", "give `eclipse_fit` or `inclination` in degrees")):
        if name not in inputs:
            raise InputError(f"`{name}` is missing: {hint}")
    have_radii = "frac_radius_primary" in inputs and "frac_radius_secondary" in inputs
    if not have_radii:
        notes.warn("fractional radii not given: only masses and the semi-major axis are computed")

    def val(name: str) -> float:
        return inputs[name].value

    for name in ("k_primary", "k_secondary"):
        if not np.isfinite(val(name)) or val(name) <= 0:
            raise InputError(f"`{name}` must be a positive semi-amplitude in km/s, got {val(name)}")
    if not val("period") > 0:
        raise InputError(f"`period` must be positive, got {val('period')} d")
    inc = val("inclination")
    if not (0 < inc < 180) or abs(np.sin(np.radians(inc))) < 1e-6:
        raise InputError(f"`inclination` {inc} deg gives sin i = 0; masses would be infinite "
                         f"(an eclipsing binary has i near 90 deg)")
    if not 0 <= val("eccentricity") < 1:
        raise InputError(f"`eccentricity` must be in [0, 1), got {val('eccentricity')}")
    for name in ("frac_radius_primary", "frac_radius_secondary"):
        if name in inputs and not 0 < val(name) < 1:
            raise InputError(f"`{name}` (R/a) must be in (0, 1), got {val(name)}")
    for name in ("teff_primary", "teff_secondary"):
        if name in inputs:
            if not val(name) > 0:
                raise InputError(f"`{name}` must be a positive temperature in K, got {val(name)}")
            if not 1500 <= val(name) <= 100000:
                notes.warn(f"`{name}` = {val(name):.0f} K is outside 1500-100000 K; check the units (kelvin)")
    if "parallax" in inputs and not val("parallax") > 0:
        raise InputError(f"`parallax` must be positive (mas) to give a distance, got {val('parallax')}")
    return have_radii


def _check_nominal(inputs: dict[str, _Input], have_radii: bool, notes: _notes.Notes) -> None:
    """Checks of the result at the nominal inputs: absurd masses, q > 1, no eclipse, not detached."""
    values = {k: v.value for k, v in inputs.items()}
    nominal = _derive({k: np.array([v]) for k, v in values.items()}, have_radii)
    for star in ("primary", "secondary"):
        m = float(nominal[f"mass_{star}"][0])
        if m > _M_SUN_MAX:
            raise InputError(f"K1 = {values['k_primary']}, K2 = {values['k_secondary']} km/s give "
                             f"M_{star} = {m:.3g} M_sun (> {_M_SUN_MAX:g}); check that K is in km/s "
                             f"and the period in days")
    if nominal["mass_ratio"][0] > 1:
        notes.warn(f"mass ratio M2/M1 = {nominal['mass_ratio'][0]:.3f} > 1: the secondary is the more massive "
                   f"star; check that rv1 belongs to the star eclipsed at primary eclipse")
    if have_radii:
        inc = values["inclination"]
        rsum = values["frac_radius_primary"] + values["frac_radius_secondary"]
        if abs(np.cos(np.radians(inc))) > rsum:
            notes.warn(f"at i = {inc:.2f} deg the stars (r1 + r2 = {rsum:.3f}) would not eclipse; check the inputs")
        if rsum > 0.6:
            notes.warn(f"r1 + r2 = {rsum:.3f}: the stars are probably not detached, spherical stars")
    parallax = inputs.get("parallax")
    if parallax is not None and parallax.error and parallax.error > 0.1 * parallax.value:
        notes.warn("parallax error exceeds 10% of the parallax: d = 1/p is biased")


def _draw_inputs(inputs: dict[str, _Input], joint: bool, n_samples: int, rng: np.random.Generator,
                 notes: _notes.Notes) -> dict[str, np.ndarray]:
    """Samples of every input; unphysical draws (K <= 0, e >= 1, ...) dropped.

    Whole rows of each fit's samples are drawn together (keyed by group and length, in
    case a fit has sample arrays of different lengths), so each fit keeps its correlations;
    a ``joint`` fit's light-curve and orbit samples are one group.
    """
    group_index: dict[tuple[str, int], np.ndarray] = {}
    draws: dict[str, np.ndarray] = {}
    for name, inp in inputs.items():
        if inp.samples is not None:
            key = ("joint" if joint and inp.source in ("eclipse_fit", "orbit") else inp.group, inp.samples.size)
            if key not in group_index:
                group_index[key] = rng.integers(0, inp.samples.size, n_samples)
            draws[name] = inp.samples[group_index[key]]
        elif inp.error:
            draws[name] = inp.value + inp.error * rng.standard_normal(n_samples)
        else:
            draws[name] = np.full(n_samples, inp.value)
    draws["eccentricity"] = np.abs(draws["eccentricity"])  # e >= 0: reflect Gaussian draws of a small e

    ok = (draws["k_primary"] > 0) & (draws["k_secondary"] > 0) & (draws["period"] > 0) \
        & (draws["eccentricity"] >= 0) & (draws["eccentricity"] < 1) \
        & (np.abs(np.sin(np.radians(draws["inclination"]))) > 1e-6)
    for name in ("frac_radius_primary", "frac_radius_secondary", "teff_primary", "teff_secondary", "parallax"):
        if name in draws:
            ok &= draws[name] > 0
    if not ok.all():
        frac = 1 - ok.mean()
        if frac > 0.01:
            notes.warn(f"{100 * frac:.1f}% of the samples were unphysical (K <= 0, e >= 1, ...) and were "
                       f"dropped; the uncertainties are large compared with the values")
        draws = {k: v[ok] for k, v in draws.items()}
    return draws


def _uncertainty_budget(draws: dict[str, np.ndarray], out: dict[str, np.ndarray], have_radii: bool
                        ) -> tuple[dict[str, str], dict[str, dict[str, float]]]:
    """Each input's share of each output's variance, propagating that input alone (the others at their medians)."""
    medians = {k: np.full(1, float(np.median(v))) for k, v in draws.items()}
    varying = [k for k, v in draws.items() if np.ptp(v) > 0]
    partial: dict[str, dict[str, float]] = {k: {} for k in out}
    for name in varying:
        x = dict(medians)
        x[name] = draws[name]
        res = _derive(x, have_radii)
        for q, arr in res.items():
            partial[q][name] = float(np.var(arr)) if np.size(arr) > 1 else 0.0
    budget, shares = {}, {}
    for q, parts in partial.items():
        tot = sum(parts.values())
        if tot <= 0:
            continue
        sh = {k: v / tot for k, v in sorted(parts.items(), key=lambda kv: -kv[1]) if v / tot >= 0.005}
        shares[q] = sh
        # the inputs by their labels in the printed tables (K2, r1, ...), as the summary shows them
        budget[q] = ", ".join(f"{100 * v:.0f}% from {short_label(k)}" for k, v in sh.items() if v >= 0.01)
    return budget, shares
