"""The options of one eclipse fit, validated once into a frozen :class:`FitSettings`."""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping

import numpy as np

from ..data import LightCurve
from ..errors import FitError, InputError
from .parameters import LD_LAWS, as_days, expand_names, fittable_names
from .uncertainties import METHODS

__all__ = ["FitSettings", "make_settings", "ERROR_METHODS"]

#: the ``errors=`` choices: "auto" (covariance when it can be trusted, else MCMC) and the uncertainty
#: plug-ins of eclipsekit.fit.uncertainties
ERROR_METHODS = ("auto",) + tuple(METHODS)


@dataclass(frozen=True)
class FitSettings:
    """Validated options of :func:`~eclipsekit.fit.fit_eclipses` (see its docstring).

    Times are in days; ``gap``, ``exposure_time`` and ``supersample`` are resolved from
    the light curve when not given.  ``free`` and ``fix`` hold expanded parameter names;
    ``values`` the parameter values given by keyword or ``fixed`` (held fixed unless
    freed); ``priors`` Gaussian priors (centre, sigma) by name.
    """

    errors: str = "auto"
    ld_law: str = "quadratic"
    ld_primary: tuple[float, ...] | None = None
    ld_secondary: tuple[float, ...] | None = None
    baseline_degree: int = 1
    baseline: str = "auto"
    harmonics: int | None = None
    gp_start: dict[str, float] | None = None
    gap: float = 0.5
    clip_sigma: float | None = 5.0
    window: bool | None = None
    exposure_time: float = 0.0
    supersample: int = 1
    supersample_auto: bool = False
    period: float | None = None
    t0: float | None = None
    free: frozenset[str] = frozenset()
    fix: frozenset[str] = frozenset()
    values: dict[str, float] = field(default_factory=dict)
    priors: dict[str, tuple[float, float]] = field(default_factory=dict)
    mcmc_walkers: int = 32
    mcmc_steps: int = 2000
    mcmc_burn: int | None = None
    mcmc_thin: int | None = None
    n_samples: int = 4000
    n_shifts: int | None = None
    progress: bool = True
    seed: int | None = None
    check_limb_darkening: bool = True
    check_third_light: bool = True
    mcmc_seconds: float | None = None
    mcmc_profile: bool = False
    mcmc_until_converged: bool = False


def make_settings(
    lc: LightCurve,
    *,
    period: Any = None,
    t0: Any = None,
    fix: Iterable[str] = (),
    free: Iterable[str] = (),
    errors: str = "auto",
    exposure_time: Any = None,
    supersample: int | None = None,
    ld_law: str = "quadratic",
    ld_primary: Iterable[float] | None = None,
    ld_secondary: Iterable[float] | None = None,
    baseline_degree: int = 1,
    baseline: str = "auto",
    harmonics: int | None = None,
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
    check_limb_darkening: bool = True,
    check_third_light: bool = True,
    fixed: Mapping[str, Any] | None = None,
    priors: Mapping[str, Any] | None = None,
    mcmc_seconds: float | None = None,
    **values: Any,
) -> FitSettings:
    """Validate the options of :func:`~eclipsekit.fit.fit_eclipses` for the light curve ``lc``.

    Raises
    ------
    InputError
        An option is of the wrong kind or out of range (the message names it).
    FitError
        Fewer than 20 points in ``lc``.
    """
    if not isinstance(lc, LightCurve):
        raise InputError(f"`lc` must be an eclipsekit LightCurve, got {type(lc).__name__}")
    _check_choices(errors, ld_law, baseline_degree)
    _check_baseline(baseline, harmonics)
    if len(lc) < 20:
        raise FitError(f"only {len(lc)} points in the light curve: too few to fit the eclipses")
    for name, x in (("mcmc_walkers", mcmc_walkers), ("mcmc_steps", mcmc_steps), ("n_samples", n_samples)):
        if int(x) != x or x < 1:
            raise InputError(f"`{name}` must be a positive integer, got {x!r}")
    if mcmc_burn is not None and not 0 <= int(mcmc_burn) < int(mcmc_steps):
        raise InputError(f"`mcmc_burn` must be in [0, mcmc_steps), got {int(mcmc_burn)}")
    if n_shifts is not None and int(n_shifts) < 2:
        raise InputError(f"`n_shifts` must be >= 2, got {n_shifts}")
    supersample_in = supersample
    exp_d, supersample = _exposure(lc, exposure_time, supersample)
    P_in, T_in = as_days(period, "period"), as_days(t0, "t0")
    if P_in is not None and P_in <= 0:
        raise InputError(f"`period` must be positive, got {P_in}")
    nld = len(LD_LAWS[ld_law][0])
    coeffs = {}
    for star, given in (("primary", ld_primary), ("secondary", ld_secondary)):
        coeffs[star] = None if given is None else tuple(float(c) for c in np.atleast_1d(given))
        if coeffs[star] is not None and len(coeffs[star]) != nld:
            raise InputError(f"`ld_{star}` needs {nld} coefficient(s) for the {ld_law} law, got {len(coeffs[star])}")
    names = fittable_names(ld_law)
    given_values: dict[str, float] = {}
    for n, x in {**values, **dict(fixed or {})}.items():
        if n not in names:
            raise InputError(f"unknown parameter {n!r} to hold fixed; valid: {', '.join(names)}")
        given_values[n] = as_days(x, n) if n in ("period", "t0") else float(x)
    prior_set = _priors(priors, names)
    free_set = expand_names(free, ld_law, "free")
    fix_set = expand_names(fix, ld_law, "fix")
    if free_set & fix_set:
        raise InputError(f"parameters both fixed and free: {sorted(free_set & fix_set)}")
    return FitSettings(
        errors=errors, ld_law=ld_law, ld_primary=coeffs["primary"], ld_secondary=coeffs["secondary"],
        baseline_degree=int(baseline_degree), baseline=baseline,
        harmonics=None if harmonics is None else int(harmonics), gap=max(0.5, 10 * lc.cadence) if gap is None else float(gap),
        clip_sigma=clip_sigma, window=window, exposure_time=exp_d, supersample=supersample,
        supersample_auto=supersample_in is None, period=P_in, t0=T_in,
        free=frozenset(free_set), fix=frozenset(fix_set), values=given_values, priors=prior_set,
        mcmc_walkers=int(mcmc_walkers), mcmc_seconds=None if mcmc_seconds is None else float(mcmc_seconds),
        check_third_light=check_third_light,
        mcmc_steps=int(mcmc_steps), mcmc_burn=mcmc_burn, mcmc_thin=mcmc_thin, n_samples=n_samples,
        n_shifts=n_shifts, progress=progress, seed=seed, check_limb_darkening=check_limb_darkening)


def _priors(priors: Mapping[str, Any] | None, names: list[str]) -> dict[str, tuple[float, float]]:
    """Validated Gaussian priors: name -> (centre, sigma), sigma finite and positive."""
    out: dict[str, tuple[float, float]] = {}
    for n, spec in dict(priors or {}).items():
        if n not in names and n != "light_ratio":
            raise InputError(f"`priors`: unknown parameter {n!r}; valid: light_ratio, {', '.join(names)}")
        try:
            mu, sd = (float(x) for x in spec)
        except (TypeError, ValueError):
            raise InputError(f"`priors[{n!r}]` must be (value, sigma), got {spec!r}") from None
        if not (math.isfinite(mu) and math.isfinite(sd) and sd > 0):
            raise InputError(f"`priors[{n!r}]` needs a finite value and a positive sigma, got ({mu}, {sd})")
        out[n] = (mu, sd)
    return out


def _check_choices(errors: str, ld_law: str, baseline_degree: int) -> None:
    if errors not in ERROR_METHODS:
        raise InputError(f"`errors` must be one of {list(ERROR_METHODS)}, got {errors!r}")
    if ld_law not in LD_LAWS:
        raise InputError(f"`ld_law` must be one of {list(LD_LAWS)}, got {ld_law!r}")
    if int(baseline_degree) != baseline_degree or not 0 <= baseline_degree <= 5:
        raise InputError(f"`baseline_degree` must be an integer 0..5, got {baseline_degree!r}")


def _check_baseline(baseline: str, harmonics: int | None) -> None:
    from .baseline import BASELINES, MAX_HARMONICS

    if baseline not in BASELINES:
        raise InputError(f"`baseline` must be one of {list(BASELINES)}, got {baseline!r}")
    if harmonics is not None:
        if int(harmonics) != harmonics or not 0 <= harmonics <= MAX_HARMONICS:
            raise InputError(f"`harmonics` must be an integer 0..{MAX_HARMONICS}, got {harmonics!r}")
        if baseline == "polynomial" and harmonics:
            raise InputError("`harmonics` needs baseline='fourier' or 'gp' (the polynomial baseline has none)")


#: Gauss-Legendre instants per exposure by default, and for exposures longer than a third of an
#: eclipse (the model's quadrature is split at the contacts: 7 nodes reach ~1 ppm up to a third of
#: the eclipse, 15 nodes ~1e-5 at 1.5 eclipse durations; see :func:`eclipsekit.eclipse.model_flux`)
SUPERSAMPLE_DEFAULT, SUPERSAMPLE_LONG = 7, 15


def _exposure(lc: LightCurve, exposure_time: Any, supersample: int | None) -> tuple[float, int]:
    """Exposure time (days; default ``lc.meta["exposure_time"]`` or 0) and instants per exposure.

    By default one instant per 2 minutes of exposure, at most :data:`SUPERSAMPLE_DEFAULT`
    (raised by :func:`supersample_for_durations` once the eclipse durations are known).
    """
    exp_d = as_days(exposure_time, "exposure_time") if exposure_time is not None else lc.meta.get("exposure_time")
    exp_d = float(exp_d or 0.0)
    if exp_d < 0:
        raise InputError(f"`exposure_time` must be >= 0, got {exp_d}")
    if supersample is None:
        supersample = min(_per_two_minutes(exp_d), SUPERSAMPLE_DEFAULT)
    if int(supersample) != supersample or supersample < 1:
        raise InputError(f"`supersample` must be a positive integer, got {supersample!r}")
    return exp_d, int(supersample)


def _per_two_minutes(exp_d: float) -> int:
    return max(1, int(math.ceil(exp_d / (2.0 / 1440) - 1e-9))) if exp_d > 0 else 1


def supersample_for_durations(settings: FitSettings, durations: tuple[float, float]) -> FitSettings:
    """``settings`` with more instants per exposure when an exposure exceeds a third of an eclipse.

    Only when the user did not choose ``supersample``; durations in days (0 for an eclipse not seen).
    """
    shortest = min((d for d in durations if d > 0), default=math.inf)
    if not settings.supersample_auto or settings.exposure_time <= shortest / 3:
        return settings
    n = min(_per_two_minutes(settings.exposure_time), SUPERSAMPLE_LONG)
    return dataclasses.replace(settings, supersample=max(settings.supersample, n))
