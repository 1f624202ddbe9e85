"""Quantities derived from the fitted parameters, for the best values and for every sample.

Fractional radii, eccentricity, omega and light ratio follow from the definitions in
DESIGN.md (r1 + r2 = radius_sum, k = r2 / r1, L2 / L1 = J k^2); the eclipse depths need
the model (:func:`eclipsekit.eclipse.eclipse_properties`).
"""

from __future__ import annotations

from typing import Iterable, Mapping

import numpy as np

from .. import eclipse
from .parameters import DERIVED, ld_coefficients

__all__ = ["derived_from", "eclipse_props", "depths", "depth_samples", "add_derived_samples", "add_derived_values",
           "summarise_samples"]


def derived_from(s: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
    """Fractional radii, eccentricity, omega (deg) and light ratio from arrays of the parameters."""
    rs, k = np.asarray(s["radius_sum"], float), np.asarray(s["radius_ratio"], float)
    ec, es = np.asarray(s["ecosw"], float), np.asarray(s["esinw"], float)
    e = np.hypot(ec, es)
    # omega is undefined for a circular orbit: 90 deg there by convention (primary eclipse at periastron)
    om = np.where(e > 0, np.degrees(np.arctan2(es, ec)) % 360.0, 90.0)
    return dict(frac_radius_primary=rs / (1 + k), frac_radius_secondary=rs * k / (1 + k), eccentricity=e,
                omega=om, light_ratio=np.asarray(s["surface_brightness_ratio"], float) * k * k)


def eclipse_props(v: Mapping[str, float], ld_law: str) -> dict[str, float]:
    """:func:`eclipsekit.eclipse.eclipse_properties` (depths, durations) at physical values ``v``."""
    ld1, ld2 = ld_coefficients(v, ld_law)
    return eclipse.eclipse_properties(
        period=v["period"], radius_sum=v["radius_sum"], radius_ratio=v["radius_ratio"],
        inclination=v["inclination"], surface_brightness_ratio=v["surface_brightness_ratio"], ecosw=v["ecosw"],
        esinw=v["esinw"], third_light=v["third_light"], ld_law=ld_law, ld_primary=ld1, ld_secondary=ld2)


def depths(v: Mapping[str, float], ld_law: str) -> tuple[float, float]:
    """Fractional depths of the primary and secondary eclipse at physical values ``v``."""
    props = eclipse_props(v, ld_law)
    return float(props["depth_primary"]), float(props["depth_secondary"])


def depth_samples(samples: Mapping[str, np.ndarray], names: Iterable[str], free_names: Iterable[str],
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
            dp[j], ds[j] = depths({n: samples[n][j] for n in names}, ld_law)
        except (ValueError, ArithmeticError):
            dp[j], ds[j] = np.nan, np.nan
    if n_depth < nrow:
        rest = np.setdiff1d(np.arange(nrow), idx)
        # linear regression of the depths on the free parameters over the exact subset
        X = np.column_stack([np.ones(nrow)] + [samples[n] - np.mean(samples[n]) for n in free_names
                                               if np.ptp(samples[n]) > 0])
        for arr in (dp, ds):
            okk = np.isfinite(arr[idx])
            if not okk.any():  # the model failed on every exact row: no depths to regress on
                arr[rest] = np.nan
                continue
            coef, *_ = np.linalg.lstsq(X[idx][okk], arr[idx][okk], rcond=None)
            resid_d = arr[idx][okk] - X[idx][okk] @ coef
            arr[rest] = X[rest] @ coef + rng.choice(resid_d, rest.size)
    return dp, ds


def add_derived_samples(samples: dict[str, np.ndarray], names: Iterable[str], free_names: Iterable[str],
                        ld_law: str, rng: np.random.Generator) -> None:
    """Add every quantity of :data:`DERIVED` to ``samples`` (in place; depths draw from ``rng``)."""
    samples.update(derived_from(samples))
    samples["depth_primary"], samples["depth_secondary"] = depth_samples(samples, names, free_names, ld_law, rng)


def add_derived_values(values: dict[str, float], names: Iterable[str], ld_law: str) -> None:
    """Add every quantity of :data:`DERIVED` to the best ``values`` (in place; depths NaN where the model fails)."""
    for k, a in derived_from({k: np.atleast_1d(values[k]) for k in names}).items():
        values[k] = float(a[0])
    try:
        values["depth_primary"], values["depth_secondary"] = depths(values, ld_law)
    except (ValueError, ArithmeticError):
        values["depth_primary"] = values["depth_secondary"] = float("nan")


def summarise_samples(samples: Mapping[str, np.ndarray], names: Iterable[str], free_names: Iterable[str],
                      interval: str = "std") -> dict[str, float | None]:
    """One-sigma uncertainty of each parameter in ``names`` and of each derived quantity.

    ``interval`` "std" is the sample standard deviation, "central68" half the width of
    the central 68.27% interval (15.865 to 84.135 percentiles).  None for fixed
    parameters and quantities that do not vary across the samples.
    """
    names, free_names = list(names), set(free_names)
    unc: dict[str, float | None] = {}
    for n in names + list(DERIVED):
        if n not in samples:
            continue
        s = samples[n]
        s = s[np.isfinite(s)]
        if n in names and n not in free_names:
            unc[n] = None
        elif s.size < 2 or np.ptp(s) == 0:
            unc[n] = None
        elif interval == "central68":
            q = np.percentile(s, [15.865, 84.135])
            unc[n] = float(0.5 * (q[1] - q[0]))
        else:
            unc[n] = float(np.std(s, ddof=1))
    return unc
