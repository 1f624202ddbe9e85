"""Plain-text summary of a result: the table printed at the end of a run and saved as ``summary.txt``."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

__all__ = ["format_value", "format_summary"]

_LABELS = {
    "period": "Period", "t0": "Epoch of primary minimum",
    "radius_sum": "r1 + r2", "radius_ratio": "k = r2/r1", "frac_radius_primary": "r1 = R1/a",
    "frac_radius_secondary": "r2 = R2/a", "inclination": "Inclination", "eccentricity": "Eccentricity",
    "omega": "Argument of periastron", "ecosw": "e cos(omega)", "esinw": "e sin(omega)",
    "surface_brightness_ratio": "Surface brightness ratio J", "light_ratio": "Light ratio L2/L1",
    "third_light": "Third light", "depth_primary": "Primary depth", "depth_secondary": "Secondary depth",
    "ld1_1": "LD primary, 1st coefficient", "ld1_2": "LD primary, 2nd coefficient",
    "ld2_1": "LD secondary, 1st coefficient", "ld2_2": "LD secondary, 2nd coefficient",
    "k_primary": "K1", "k_secondary": "K2", "gamma": "Systemic velocity", "gamma_offset": "gamma2 - gamma1",
    "mass_ratio": "Mass ratio q = M2/M1", "mass_function": "Mass function", "rms_primary": "rms primary",
    "rms_secondary": "rms secondary", "jitter_primary": "Jitter primary", "jitter_secondary": "Jitter secondary",
    "a": "Semi-major axis", "mass_sum": "M1 + M2", "mass_primary": "M1", "mass_secondary": "M2", "radius_primary": "R1",
    "radius_secondary": "R2", "logg_primary": "log g1 (cgs)", "logg_secondary": "log g2 (cgs)",
    "density_primary": "Mean density 1", "density_secondary": "Mean density 2",
    "vsync_primary": "v_sync 1", "vsync_secondary": "v_sync 2", "luminosity_primary": "L1",
    "luminosity_secondary": "L2", "mbol_primary": "M_bol 1", "mbol_secondary": "M_bol 2", "distance": "Distance",
}

_BUDGET_SHOWN = ("mass_primary", "mass_secondary", "radius_primary", "radius_secondary")

_TITLES = {
    "ephemeris": "Ephemeris", "geometry": "Geometry", "photometry": "Photometry",
    "spectroscopy": "Spectroscopic orbit", "absolute": "Absolute dimensions",
}


def format_value(value: float | None, uncertainty: float | None = None, *, digits: int = 6) -> str:
    """``value ± uncertainty``, rounded to the precision of the uncertainty.

    The uncertainty is given to two significant figures and the value to the same
    decimal place (common practice).  The one number formatter of every summary table.

    Parameters
    ----------
    value : float or None
        None or a non-finite value prints as a dash.
    uncertainty : float or None
        None, zero or a non-finite uncertainty (a fixed or exact value) prints the value
        alone, to ``digits`` significant figures (or 5 decimals from 1e5 up, e.g. a
        Julian date).
    digits : int
        Significant figures of a value without uncertainty.

    Examples
    --------
    >>> format_value(1.234567, 0.0123)
    '1.235 ± 0.012'
    >>> format_value(2459001.234567891, None)
    '2459001.23457'
    >>> format_value(3.14159265358979, None, digits=11)
    '3.1415926536'
    """
    if value is None or not math.isfinite(value):
        return "—"
    if uncertainty is None or not math.isfinite(uncertainty) or uncertainty <= 0:
        return f"{value:.{digits}g}" if abs(value) < 1e5 else f"{value:.5f}"
    decimals = max(0, 1 - int(math.floor(math.log10(uncertainty))))
    decimals = min(decimals, 12)
    return f"{value:.{decimals}f} ± {uncertainty:.{decimals}f}"


def format_summary(result: Mapping[str, Any]) -> str:
    """Format a ``result.json`` dict as a readable table."""
    lines = [f"eclipsekit {result.get('eclipsekit_version', '')} — status: {result.get('status', '?')}"]
    if result.get("message"):
        lines.append(f"  {result['message']}")
    inp = (result.get("input") or {}).get("light_curve")
    if inp:
        rej = ", ".join(f"{n} {why}" for why, n in inp.get("n_rejected", {}).items() if n) or "none"
        lines.append(f"  light curve {inp.get('file')}: {inp.get('n_points_used')} points used "
                     f"(rejected: {rej}); time system {inp.get('time_system')}")
    for section, title in _TITLES.items():
        block = result.get(section)
        if not block:
            continue
        rows = [(name, q) for name, q in block.items() if isinstance(q, dict) and "value" in q]
        if not rows:
            continue
        lines.append("")
        lines.append(title)
        for name, q in rows:
            unit = q.get("unit") or ""
            unit = {"solRad": "R_sun", "solMass": "M_sun", "solLum": "L_sun", "dex(cm / s2)": ""}.get(unit, unit)
            label = _LABELS.get(name, name)
            lines.append(f"  {label:<30s} {format_value(q.get('value'), q.get('uncertainty')):>28s} {unit}".rstrip())
        budget = block.get("uncertainty_budget") if isinstance(block, dict) else None
        if budget:
            lines.append("  Where the uncertainty comes from:")
            for name in _BUDGET_SHOWN:
                if budget.get(name):
                    lines.append(f"    {_LABELS.get(name, name) + ':':<8s} {budget[name]}")
    fit = result.get("fit") or {}
    if "reduced_chi_square" in fit:
        lines.append("")
        lines.append(f"Fit: {fit.get('method')}, uncertainties from {fit.get('uncertainties')}; "
                     f"reduced chi-square {fit.get('reduced_chi_square') or float('nan'):.3f}, "
                     f"{fit.get('n_free_parameters')} free parameters")
    if fit.get("warnings"):
        lines.append("")
        lines.append("Warnings")
        lines.extend(f"  - {w}" for w in fit["warnings"])
    return "\n".join(lines)
