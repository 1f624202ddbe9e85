"""Validity checks of a finished eclipse fit: warnings when the answer may be biased.

DESIGN.md ("Validity"): the spherical-star model is for detached systems; say so
clearly when the fitted geometry leaves that domain, rather than returning numbers
without comment.  Also: an eccentricity that suggests a misidentified secondary, a
poorly constrained radius ratio, a chi-square well above the noise, and fixed limb
darkening that the data contradict.
"""

from __future__ import annotations

import math
from typing import Any, Callable, Mapping

import numpy as np

from .. import orbit
from ..errors import FitError, InputError
from .parameters import LD_LAWS, parameter_names
from .problem import window_mask

__all__ = ["validity_warnings", "limb_darkening_shift", "limb_darkening_warning"]


def validity_warnings(values: Mapping[str, float], uncertainties: Mapping[str, float | None], time: np.ndarray,
                      flux_err: np.ndarray, residuals: np.ndarray, baseline: np.ndarray,
                      durations: tuple[float, float], redchi: float, redchi_reference: float
                      ) -> list[tuple[str, str]]:
    """Warnings on the fitted geometry and the quality of the fit, as (kind, message); empty when none applies.

    ``kind`` is "bias" (the answer may be biased), "poor" (the model does not describe
    the data) or "info" (the answer is honest but weak).  ``time``, ``flux_err``,
    ``residuals`` and ``baseline`` are at every point of the light curve fitted;
    ``durations`` those of the fitted primary and secondary eclipse (days);
    ``redchi_reference`` the reduced chi-square of the noise alone (out of eclipse).
    """
    out = []
    r1, r2 = values["frac_radius_primary"], values["frac_radius_secondary"]
    if max(r1, r2) > 0.25:
        out.append(("bias", f"fractional radius {'r1' if r1 >= r2 else 'r2'} = {max(r1, r2):.3f} > 0.25: the "
                   "star is probably tidally distorted and the spherical-star model (meant for well-detached "
                   "systems) may be biased (common practice)"))
    oot = ~window_mask(time, values, durations[0], durations[1], flank=0.1)
    if oot.sum() > 50:
        msg = _out_of_eclipse_variation(values, time[oot], flux_err[oot], residuals[oot] / baseline[oot], redchi)
        if msg:
            out.append(("bias", msg))
    e_fit = values["eccentricity"]
    if e_fit > 0.7:
        out.append(("bias", f"eccentricity {e_fit:.2f} is large; check the secondary eclipse identification"))
    uk = uncertainties.get("radius_ratio")
    if uk is not None and values["radius_ratio"] > 0 and uk / values["radius_ratio"] > 0.1:
        out.append(("info", f"radius ratio poorly constrained ({100 * uk / values['radius_ratio']:.0f}%): partial "
                   "eclipses; a spectroscopic light ratio would help, as a prior (`priors['light_ratio']`)"))
    if redchi > 3 * redchi_reference + 1:
        out.append(("poor", f"reduced chi-square {redchi:.2f} is high compared with the out-of-eclipse scatter "
                   f"({redchi_reference:.2f}): the model does not describe the eclipses well"))
    poor = _eclipse_residual_excess(values, time, flux_err, residuals, durations)
    if poor:
        out.append(("poor", poor))
    return out


def _eclipse_residual_excess(values: Mapping[str, float], time: np.ndarray, flux_err: np.ndarray,
                             residuals: np.ndarray, durations: tuple[float, float]) -> str | None:
    """A message when the residuals inside the eclipses are larger than those outside them.

    With a model that describes the eclipses, the mean squared normalised residual is the
    same inside and outside them; its sampling scatter over n points is sqrt(2/n) of its
    value (chi-square distribution), and 5 such sigmas is the threshold used here.
    """
    inside = window_mask(time, values, durations[0], durations[1], flank=0.0)
    n_in, n_out = int(inside.sum()), int((~inside).sum())
    if n_in < 20 or n_out < 20:
        return None
    z2 = (residuals / flux_err) ** 2
    rc_in, rc_out = float(np.mean(z2[inside])), float(np.mean(z2[~inside]))
    if rc_in > rc_out * (1 + 5 * math.sqrt(2.0 / n_in)):
        return (f"residuals inside the eclipses are larger than outside them (mean squared normalised residual "
                f"{rc_in:.2f} vs {rc_out:.2f} over {n_in} points in eclipse): the model does not describe the "
                "eclipses")
    return None


def _out_of_eclipse_variation(values: Mapping[str, float], time: np.ndarray, flux_err: np.ndarray,
                              rel_resid: np.ndarray, redchi: float) -> str | None:
    """Warning when the out-of-eclipse residuals vary at the orbital period or its first harmonic."""
    ph = ((time - values["t0"]) / values["period"]) % 1.0
    A = orbit.phase_harmonics(ph, 2)
    wts = 1 / flux_err
    coef, *_ = np.linalg.lstsq(A * wts[:, None], rel_resid * wts, rcond=None)
    try:
        ccov = np.linalg.inv((A * wts[:, None]).T @ (A * wts[:, None])) * max(redchi, 1.0)
    except np.linalg.LinAlgError:
        return None
    amp1, amp2 = math.hypot(coef[0], coef[1]), math.hypot(coef[2], coef[3])
    se = math.sqrt(np.mean(np.diag(ccov)))
    ref = values["depth_primary"] if math.isfinite(values["depth_primary"]) else 0.0
    big = max(amp1, amp2)
    # significant, and at least 1% of the primary depth (where it starts to matter for the radii)
    if big > 5 * se and big > 0.01 * ref:
        return (f"out-of-eclipse variation at the orbital period (reflection/ellipsoidal-like, "
                f"semi-amplitude {big * 1e6:.0f} ppm, {big / se:.0f} sigma) is not in the spherical-"
                "star model; the radii may be biased")
    return None


def limb_darkening_shift(values: Mapping[str, float], uncertainties: Mapping[str, float | None],
                         free_names: list[str], redchi: float, n_points: int, ld_law: str,
                         refit: Callable[..., Any]) -> dict[str, float]:
    """What freeing the linear limb-darkening terms changes: one extra least-squares fit.

    ``refit(free=, fix=, ld_primary=, ld_secondary=)`` runs that fit (from ``values``) and
    returns its EclipseFit.  Returns the shift of each fitted geometric parameter in units
    of the fixed-LD fit's sigma, and ``delta_chi2``: the chi-square improvement
    (noise-scaled by the freer fit's reduced chi-square) for the two extra terms; {} when
    the refit fails.
    """
    free_check = list(free_names) + ["ld1_1", "ld2_1"]
    fix_check = [n for n in parameter_names(ld_law) if n not in free_check]
    nld = len(LD_LAWS[ld_law][0])
    coeffs = {star: tuple(values[f"ld{star}_{j + 1}"] for j in range(nld)) for star in (1, 2)}
    try:
        fit = refit(free=free_check, fix=fix_check, ld_primary=coeffs[1], ld_secondary=coeffs[2])
    except (FitError, InputError):
        return {}
    chi2_fixed = redchi * (n_points - len(free_names))
    chi2_free = fit.redchi * (n_points - fit.n_free)
    out = {"delta_chi2": float((chi2_fixed - chi2_free) / max(fit.redchi, 1e-300))}
    for name in ("radius_sum", "radius_ratio", "inclination", "surface_brightness_ratio"):
        sigma = uncertainties.get(name)
        if name in free_names and sigma:
            out[name] = float((fit.values[name] - values[name]) / sigma)
    return out


def limb_darkening_warning(shift: Mapping[str, float], values: Mapping[str, float]) -> str | None:
    """Warning when the data clearly prefer other limb darkening and that moves the geometry."""
    dchi2 = shift.get("delta_chi2", 0.0)
    moved = {k: v for k, v in shift.items() if k != "delta_chi2" and abs(v) > 3.0}
    # warn only when the data significantly prefer other coefficients (chi-square drop for 2 extra terms
    # above 13.8, the 0.1% point of chi2 with 2 degrees of freedom; standard tables) AND that moves the
    # geometry by more than 3 of its quoted sigmas; right coefficients give a drop ~ chi2(2)
    if not (moved and dchi2 > 13.8):
        return None
    worst = ", ".join(f"{k} by {v:+.1f} sigma" for k, v in sorted(moved.items(), key=lambda kv: -abs(kv[1])))
    return (f"limb darkening is held fixed at {values['ld1_1']:g}/{values['ld2_1']:g} (linear "
            f"terms) but the data prefer other values (chi-square drop {dchi2:.0f} for 2 terms), "
            f"which moves {worst}: free ld1_1 ld2_1, or give coefficients that suit these stars")
