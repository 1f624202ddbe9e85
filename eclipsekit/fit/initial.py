"""Initial values and the fitted parameter vector of one eclipse fit."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping

import numpy as np

from ..data import LightCurve
from ..errors import InputError
from ..limb_darkening import TYPICAL, parameterisation
from .parameters import (DEFAULT_FREE, INTERNAL_NAMES, LD_LAWS, PARAMETERS, ParameterMap, bounds, is_finite,
                         ld_fit_names, ld_names, parameter_names)
from .settings import FitSettings

__all__ = ["InitialParameters", "initial_parameters"]


@dataclass(frozen=True)
class InitialParameters:
    """Where the least squares start.

    Attributes
    ----------
    values : dict
        Physical start value of every model parameter (t0 moved to the epoch nearest the
        middle of the data).
    vary : frozenset of str
        Names of the fitted parameters.
    mapping : ParameterMap
        The fitted vector.
    durations : (float, float)
        Primary and secondary eclipse durations (days) from the start.
    start : dict
        The start estimate it came from (:func:`~eclipsekit.fit.start.estimate_start`).
    internal_bounds : dict
        Bounds of ``t0_offset`` and ``period_offset`` (whether fitted or not).
    """

    values: dict[str, float]
    vary: frozenset[str]
    mapping: ParameterMap
    durations: tuple[float, float]
    start: dict[str, Any]
    internal_bounds: dict[str, tuple[float, float]]


def initial_parameters(lc: LightCurve, start: Mapping[str, Any], settings: FitSettings) -> InitialParameters:
    """Start values, which parameters vary, and the fitted vector with its bounds.

    Defaults (see :func:`~eclipsekit.fit.fit_eclipses`): :data:`DEFAULT_FREE` vary, plus
    e cos w and e sin w when the start says the orbit is eccentric; values given by
    keyword are held fixed unless freed.  Start values outside their bounds are clipped
    into them; given values or limb-darkening coefficients outside them are an InputError.
    """
    ld_law = settings.ld_law
    names = parameter_names(ld_law)
    val = {n: float(start[n]) for n in PARAMETERS}
    val.update(_ld_values(start, settings))
    combos, ld_priors = _ld_combinations(val, settings)
    val.update(combos)
    vary = set(DEFAULT_FREE) | set(combos)
    if start.get("eccentric"):
        vary |= {"ecosw", "esinw"}
    val.update(settings.values)
    vary = (vary - set(settings.values) - settings.fix) | settings.free
    ld = set(n for n in val if n.startswith("ld"))
    every = list(dict.fromkeys(names + list(combos)))
    for n in every:
        lo, hi = bounds(n, ld_law)
        if (lo is not None and val[n] < lo) or (hi is not None and val[n] > hi):
            if n in settings.values or n in ld:
                raise InputError(f"`{n}` = {val[n]} is outside its bounds [{lo}, {hi}]")
            val[n] = float(np.clip(val[n], lo, hi))

    P0, T00 = val["period"], val["t0"]
    t_mid = 0.5 * (lc.time[0] + lc.time[-1])
    t_ref = T00 + round((t_mid - T00) / P0) * P0
    val["t0"] = t_ref  # the same eclipse moved by whole periods to the middle of the data
    n_cyc = max(1.0, float(np.max(np.abs(lc.time - t_ref))) / P0)
    w1, w2 = start.get("duration_primary", np.nan), start.get("duration_secondary", np.nan)
    w1 = w1 if is_finite(w1) and w1 > 0 else 0.1 * P0
    w2 = w2 if is_finite(w2) and w2 > 0 else w1
    # the epoch and period offsets may move by the start's uncertainty (10 sigma) or about an eclipse width
    perr, terr = start.get("period_err", np.nan), start.get("t0_err", np.nan)
    t0_half = min(0.1 * P0, max(w1, 10 * terr if is_finite(terr) else 0.0, 0.02 * P0 if w1 > 0.2 * P0 else 0))
    p_half = min(0.1 * P0, max(0.5 * w1, 10 * perr * n_cyc if is_finite(perr) else 0.0))
    internal_bounds = {"t0_offset": (-t0_half, t0_half), "period_offset": (-p_half, p_half)}

    free = [n for n in every if n in vary]
    limits = []
    for n in free:
        lo, hi = internal_bounds.get(INTERNAL_NAMES.get(n, n)) or bounds(n, ld_law)
        limits.append((-np.inf if lo is None else lo, np.inf if hi is None else hi))
    priors = {n: p for n, p in ld_priors.items() if n in vary}
    priors.update(settings.priors)
    mapping = ParameterMap(free=free, fixed={n: val[n] for n in names if n not in vary}, t_ref=t_ref, p_ref=P0,
                           n_cycles=n_cyc, limits=limits, ld_law=ld_law, priors=priors)
    return InitialParameters(values=val, vary=frozenset(vary), mapping=mapping, durations=(w1, w2),
                             start=dict(start), internal_bounds=internal_bounds)


def _ld_combinations(val: Mapping[str, float], settings: FitSettings
                     ) -> tuple[dict[str, float], dict[str, tuple[float, float]]]:
    """Fitted limb-darkening combinations (start values) and their weak priors, for the stars that get them.

    By default every star's limb darkening is fitted as the decorrelated combinations of
    :mod:`eclipsekit.limb_darkening`, each with a weak Gaussian prior centred on the
    coefficients given (``ld_primary``/``ld_secondary``) or the law's typical ones.  A
    star whose coefficients the user names in ``free``, ``fix`` or a fixed value keeps
    them as the fitted quantities instead, exactly as asked (fixed unless freed).
    """
    law = settings.ld_law
    pz = parameterisation(law)
    chosen = set(settings.free) | set(settings.fix) | set(settings.values) | set(settings.priors)
    combos: dict[str, float] = {}
    priors: dict[str, tuple[float, float]] = {}
    for star, given in ((1, settings.ld_primary), (2, settings.ld_secondary)):
        own = set(ld_names(law)) & {n for n in chosen if n.startswith(f"ld{star}_")}
        if not pz.names or own:
            continue
        centre = pz.to_fit(tuple(given) if given is not None else TYPICAL[law])
        start = pz.to_fit(tuple(val[f"ld{star}_{j + 1}"] for j in range(len(TYPICAL[law]))))
        for name, x0, mu, sd in zip(ld_fit_names(law, star), start, centre, pz.prior_sigma):
            combos[name] = float(x0)
            priors[name] = (float(mu), float(sd))
    return combos, priors


def _ld_values(start: Mapping[str, Any], settings: FitSettings) -> dict[str, float]:
    """Limb-darkening coefficients: given, else an earlier fit's (in the start), else the law's defaults."""
    defaults = LD_LAWS[settings.ld_law][0]
    out = {}
    for star, given in ((1, settings.ld_primary), (2, settings.ld_secondary)):
        coeffs = tuple(defaults) if given is None else given
        if given is None and f"ld{star}_1" in start:
            coeffs = tuple(start.get(f"ld{star}_{j + 1}", defaults[j]) for j in range(len(defaults)))
        for j, c in enumerate(coeffs):
            out[f"ld{star}_{j + 1}"] = c
    return out
