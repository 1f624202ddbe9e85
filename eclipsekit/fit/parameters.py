"""The eclipse parameters: names, units, bounds, limb-darkening laws and the fitted vector.

Everything that knows a parameter's name, unit or bound lives here (STYLE section 5), and
so does :class:`ParameterMap`, the one place that turns the vector the optimisers see
into physical values and back.

The epoch is fitted as an offset from a reference epoch ``t_ref`` (the start's t0 moved
by whole periods to the middle of the data) and the period as the timing shift it
produces at the edge of the data, ``(P - P_ref) * n_cycles``.  Both are then O(1e-3)
days, so finite-difference steps are meaningful (a step relative to t0 ~ 2.46e6 d would
be ~0.04 d) and the epoch at mid-data is nearly uncorrelated with the period.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping, Sequence

import lmfit
import numpy as np
from astropy import units as u

from .._validate import as_float, as_times
from ..errors import InputError
from ..limb_darkening import COEFFICIENT_BOUNDS, TYPICAL, parameterisation

__all__ = ["PARAMETERS", "DERIVED", "LD_LAWS", "ALIASES", "DEFAULT_FREE", "INTERNAL_NAMES", "ParameterMap",
           "eclipse_parameters", "parameter_names", "ld_names", "ld_fit_names", "fittable_names", "ld_coefficients", "bounds", "unit",
           "expand_names", "as_days", "is_finite"]

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
    # the model's own domain, [0, 1): a negative value made every MCMC batch holding one fail (found by the
    # coverage calibration); over-subtracted backgrounds belong in the photometry, not here
    "third_light": ("", 0.0, 0.95, "fraction of the out-of-eclipse flux from neither star"),
}

#: limb-darkening law -> (typical coefficients, bounds of each coefficient): one set for the model and the fit
LD_LAWS: dict[str, tuple[tuple[float, ...], tuple[tuple[float, float], ...]]] = {
    law: (TYPICAL[law], COEFFICIENT_BOUNDS[law]) for law in TYPICAL}

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

#: shortcuts accepted by ``free=`` and ``fix=``: groups of result-table names (never single letters)
ALIASES: dict[str, tuple[str, ...]] = {
    "eccentricity": ("ecosw", "esinw"),
    "limb_darkening": ("ld1_1", "ld1_2", "ld2_1", "ld2_2"),
    "ld1": ("ld1_1", "ld1_2"),
    "ld2": ("ld2_1", "ld2_2"),
}

DEFAULT_FREE = ("period", "t0", "radius_sum", "radius_ratio", "inclination", "surface_brightness_ratio")

_NO_PRIORS = np.zeros(0)

#: physical name -> name of the fitted offset that replaces it in the vector
INTERNAL_NAMES = {"t0": "t0_offset", "period": "period_offset"}


def ld_names(ld_law: str) -> list[str]:
    """Names of the limb-darkening coefficients of both stars: ld1_1, ld1_2, ld2_1, ..."""
    n = len(LD_LAWS[ld_law][0])
    return [f"ld{s}_{j + 1}" for s in (1, 2) for j in range(n)]


def ld_fit_names(ld_law: str, star: int | None = None) -> list[str]:
    """Names of the fitted limb-darkening combinations (see :mod:`eclipsekit.limb_darkening`).

    ``ld{i}_sum``, ``ld{i}_diff`` (quadratic), ``ld{i}_h1``, ``ld{i}_h2`` (power-2),
    ``ld{i}_1`` (linear, the coefficient itself); of one star or of both.
    """
    suffixes = parameterisation(ld_law).names
    return [f"ld{s}_{x}" for s in ((1, 2) if star is None else (star,)) for x in suffixes]


def fittable_names(ld_law: str) -> list[str]:
    """Every name ``free``, ``fix``, ``priors`` and fixed values accept: parameters, coefficients, combinations."""
    return parameter_names(ld_law) + [n for n in ld_fit_names(ld_law) if n not in ld_names(ld_law)]


def parameter_names(ld_law: str) -> list[str]:
    """All eclipse-model parameters for the limb-darkening law, in reporting order."""
    return list(PARAMETERS) + ld_names(ld_law)


def ld_coefficients(v: Mapping[str, float], ld_law: str) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """The (primary, secondary) limb-darkening coefficients held in the values ``v``."""
    n = len(LD_LAWS[ld_law][0])
    return tuple(v[f"ld1_{j + 1}"] for j in range(n)), tuple(v[f"ld2_{j + 1}"] for j in range(n))


def bounds(name: str, ld_law: str) -> tuple[float | None, float | None]:
    """Physical (lower, upper) bound of a parameter; None where unbounded."""
    if name in PARAMETERS:
        return PARAMETERS[name][1], PARAMETERS[name][2]
    suffix = name.split("_", 1)[1]
    pz = parameterisation(ld_law)
    if suffix in pz.names and name not in ld_names(ld_law):
        return pz.bounds[pz.names.index(suffix)]
    return LD_LAWS[ld_law][1][int(suffix) - 1]


def unit(name: str) -> str:
    """Unit of a parameter or derived quantity ('' when dimensionless)."""
    if name in PARAMETERS:
        return PARAMETERS[name][0]
    return DERIVED.get(name, "")


def as_days(x: Any, name: str) -> float | None:
    """Float days from a float, an astropy Quantity or an astropy Time (as JD); None stays None."""
    if x is None:
        return None
    if hasattr(x, "jd") and not hasattr(x, "unit"):
        return float(as_times(x, name))
    return as_float(x, name, u.day)


def is_finite(x: Any) -> bool:
    """True for a finite number (anything float() accepts), False for None, NaN or text."""
    try:
        return x is not None and math.isfinite(float(x))
    except (TypeError, ValueError):
        return False


def expand_names(names: Iterable[str] | str, ld_law: str, arg: str) -> set[str]:
    """Parameter names from ``names`` with the shortcuts of :data:`ALIASES` expanded.

    ``arg`` names the argument in the message of the InputError raised for an unknown name.
    """
    if isinstance(names, str):
        names = [names]
    valid = set(fittable_names(ld_law))
    out: set[str] = set()
    for n in names:
        n = str(n)
        if n in ALIASES:
            out.update(x for x in ALIASES[n] if x in valid)
        elif n in valid:
            out.add(n)
        else:
            raise InputError(f"`{arg}`: unknown parameter {n!r}; valid: {', '.join(sorted(valid | set(ALIASES)))}")
    return out


def eclipse_parameters(start: Mapping[str, float], *, ld_law: str = "quadratic",
                       free: Iterable[str] = DEFAULT_FREE) -> lmfit.Parameters:
    """lmfit Parameters (public names, physical bounds) for a start dict; ``free`` ones vary."""
    free = set(free)
    p = lmfit.Parameters()
    for name in parameter_names(ld_law):
        lo, hi = bounds(name, ld_law)
        p.add(name, value=float(start[name]), vary=name in free,
              min=-np.inf if lo is None else lo, max=np.inf if hi is None else hi)
    return p


@dataclass(frozen=True)
class ParameterMap:
    """The fitted parameter vector and its link to physical values.

    Attributes
    ----------
    free : list of str
        Physical names of the fitted parameters, in vector order.
    fixed : dict
        Physical values of every model parameter that is not fitted.
    t_ref, p_ref, n_cycles : float
        Reference epoch and period of the offsets ``t0_offset = t0 - t_ref`` and
        ``period_offset = (period - p_ref) * n_cycles``.
    limits : list of (float, float)
        Bounds of each fitted quantity in the fitted parameterisation.
    ld_law : str
        Limb-darkening law; fitted combinations of its coefficients (``ld1_sum``, ...)
        are turned into the coefficients themselves (``ld1_1``, ...).
    priors : dict of str -> (float, float)
        Gaussian priors (centre, sigma) on physical values, fitted combinations or the
        light ratio ``light_ratio`` = J k^2.
    """

    free: list[str]
    fixed: dict[str, float]
    t_ref: float
    p_ref: float
    n_cycles: float
    limits: list[tuple[float, float]]
    ld_law: str = "quadratic"
    priors: dict[str, tuple[float, float]] = field(default_factory=dict)
    internal: list[str] = field(init=False)
    _ld_stars: tuple[int, ...] = field(init=False, repr=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "internal", [INTERNAL_NAMES.get(n, n) for n in self.free])
        # stars whose limb darkening is fitted as combinations of the coefficients
        combos = set(ld_fit_names(self.ld_law)) - set(ld_names(self.ld_law))
        object.__setattr__(self, "_ld_stars", tuple(s for s in (1, 2)
                                                     if any(n in combos for n in ld_fit_names(self.ld_law, s)
                                                            if n in self.free)))

    def varies(self, name: str) -> bool:
        """Whether parameter ``name`` varies in the fit (fitted, or a coefficient of fitted combinations)."""
        if name in self.free:
            return True
        return name.startswith("ld") and name[2:3].isdigit() and int(name[2]) in self._ld_stars

    def _coefficients(self, v: dict[str, Any]) -> None:
        """Limb-darkening coefficients from fitted combinations, in place (scalars or arrays)."""
        pz = parameterisation(self.ld_law)
        for s in self._ld_stars:
            combo = [v[n] for n in ld_fit_names(self.ld_law, s)]
            if np.ndim(combo[0]):
                coeffs = np.array([pz.from_fit(tuple(c)) for c in np.column_stack(combo)]).T
            else:
                coeffs = pz.from_fit(tuple(combo))
            for j, c in enumerate(coeffs):
                v[f"ld{s}_{j + 1}"] = c

    def prior_residuals(self, v: Mapping[str, float]) -> np.ndarray:
        """(value - centre) / sigma of every prior at physical values ``v``."""
        if not self.priors:
            return _NO_PRIORS
        out = []
        for n, (mu, sd) in self.priors.items():
            x = v["surface_brightness_ratio"] * v["radius_ratio"] ** 2 if n == "light_ratio" else v[n]
            out.append((x - mu) / sd)
        return np.asarray(out, float)

    # -- between the vector and physical values ------------------------------------
    def physical(self, internal: Mapping[str, float]) -> dict[str, float]:
        """Physical values of every parameter for fitted values keyed by their internal names."""
        v = dict(self.fixed)
        v.update(internal)
        if "t0_offset" in v:
            v["t0"] = self.t_ref + v.pop("t0_offset")
        if "period_offset" in v:
            v["period"] = self.p_ref + v.pop("period_offset") / self.n_cycles
        if self._ld_stars:
            self._coefficients(v)
        return v

    def physical_rows(self, x: np.ndarray) -> dict[str, np.ndarray]:
        """Physical values of every parameter for rows of fitted vectors ``x`` (arrays of the rows' length)."""
        n = x.shape[0]
        v: dict[str, Any] = {k: np.full(n, val) for k, val in self.fixed.items()}
        for j, name in enumerate(self.free):
            col = x[:, j]
            if name == "t0":
                col = self.t_ref + col
            elif name == "period":
                col = self.p_ref + col / self.n_cycles
            v[name] = col
        if self._ld_stars:
            self._coefficients(v)
        return v

    def internal_value(self, name: str, value: float) -> float:
        """The fitted-parameterisation value of parameter ``name`` at physical ``value``."""
        if name == "t0":
            return value - self.t_ref
        if name == "period":
            return (value - self.p_ref) * self.n_cycles
        return value

    def vector(self, values: Mapping[str, float]) -> np.ndarray:
        """The fitted vector at physical ``values``."""
        return np.array([self.internal_value(n, values[n]) for n in self.free])

    def samples(self, x: np.ndarray, best: Mapping[str, float], names: Sequence[str]) -> dict[str, np.ndarray]:
        """Physical samples of ``names`` from rows of fitted vectors ``x``; the others stay at ``best``."""
        out: dict[str, np.ndarray] = {}
        nrow = x.shape[0]
        for n in names:
            if n in self.free:
                col = x[:, self.free.index(n)]
                if n == "t0":
                    col = self.t_ref + col
                elif n == "period":
                    col = self.p_ref + col / self.n_cycles
                out[n] = np.asarray(col, float)
            elif not self.varies(n):
                out[n] = np.full(nrow, best[n])
        if self._ld_stars:
            cols = {n: x[:, self.free.index(n)] for n in self.free}
            self._coefficients(cols)
            out.update({n: np.asarray(cols[n], float) for n in names if n not in self.free and self.varies(n)})
        return out

    def sigma(self, name: str, sigma_internal: float) -> float:
        """Physical standard deviation of parameter ``name`` from that of its fitted quantity."""
        # the period is fitted as the timing shift (P - P_ref) * n_cycles
        return float(sigma_internal / self.n_cycles if name == "period" else sigma_internal)

    # -- bounds and folding --------------------------------------------------------
    @property
    def lower(self) -> np.ndarray:
        return np.array([lim[0] for lim in self.limits], float)

    @property
    def upper(self) -> np.ndarray:
        return np.array([lim[1] for lim in self.limits], float)

    def fold(self, x: np.ndarray) -> np.ndarray:
        """Fold rows of fitted vectors (in place) to their equivalent geometry."""
        # inclination above 90 deg is the same geometry seen from the other side
        if "inclination" in self.free:
            i = self.free.index("inclination")
            x[:, i] = 90.0 - np.abs(x[:, i] - 90.0)
        return x

    def lmfit_parameters(self, values: Mapping[str, float]) -> lmfit.Parameters:
        """lmfit Parameters (internal names, bounds) at physical ``values``, clipped into the bounds."""
        p = lmfit.Parameters()
        for n, ni, (lo, hi) in zip(self.free, self.internal, self.limits):
            x = float(np.clip(self.internal_value(n, values[n]), lo, hi))
            p.add(ni, value=x, min=lo, max=hi)
        return p

    def at_bounds(self, params: lmfit.Parameters) -> list[str]:
        """Fitted parameters that ended at a bound (i = 90 deg, a physical limit, excepted)."""
        out = []
        for ni, n in zip(self.internal, self.free):
            par = params[ni]
            lo, hi = par.min, par.max
            tol = 1e-6 * (hi - lo)
            if n == "inclination" and par.value >= hi - tol:
                continue  # i = 90 deg is a physical limit, not a failure
            if n == "third_light" and par.value <= lo + tol:
                continue  # no third light is a physical limit too
            if n in ("third_light", "ecosw", "esinw") or n.startswith("ld"):
                if abs(par.value - lo) <= tol or abs(par.value - hi) <= tol:
                    out.append(n)
                continue
            if par.value - lo <= tol or hi - par.value <= tol:
                out.append(n)
        return out
