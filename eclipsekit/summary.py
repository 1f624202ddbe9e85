"""Plain-text summary of a result: the table printed at the end of a run and saved as ``summary.txt``."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any


__all__ = ["ASYMMETRY", "DIGITS", "LABELS", "short_label", "is_asymmetric", "has_uncertainty", "format_value", "format_summary", "format_timings"]

#: A 68% interval is asymmetric when its two sides differ by more than this fraction of the
#: larger one (below that, the sampling noise of a few thousand draws and the two-figure
#: rounding of the printed uncertainty hide the difference).  result.json then carries the
#: interval and the summary prints ``value +upper/-lower``.
ASYMMETRY = 0.2

#: the label of each quantity in the printed tables
LABELS = {
    "period": "Period", "t0": "Epoch of primary minimum",
    "radius_sum": "r1 + r2", "radius_ratio": "k = r2/r1", "frac_radius_primary": "r1 = R1/a",
    "frac_radius_secondary": "r2 = R2/a", "inclination": "Inclination", "eccentricity": "Eccentricity",
    "omega": "Argument of periastron", "ecosw": "e cos(omega)", "esinw": "e sin(omega)",
    "surface_brightness_ratio": "Surface brightness ratio J", "light_ratio": "Light ratio L2/L1",
    "third_light": "Third light", "depth_primary": "Primary depth", "depth_secondary": "Secondary depth",
    "ld1_1": "LD primary, 1st coefficient", "ld1_2": "LD primary, 2nd coefficient",
    "ld2_1": "LD secondary, 1st coefficient", "ld2_2": "LD secondary, 2nd coefficient",
    "ld1_sum": "LD primary, u1 + u2", "ld1_diff": "LD primary, u1 - u2",
    "ld2_sum": "LD secondary, u1 + u2", "ld2_diff": "LD secondary, u1 - u2",
    "ld1_h1": "LD primary, h1", "ld1_h2": "LD primary, h2", "ld2_h1": "LD secondary, h1", "ld2_h2": "LD secondary, h2",
    "k_primary": "K1", "k_secondary": "K2", "gamma": "Systemic velocity", "gamma_offset": "gamma2 - gamma1",
    "mass_ratio": "Mass ratio q = M2/M1", "mass_function": "Mass function", "rms_primary": "rms primary",
    "rms_secondary": "rms secondary", "jitter_primary": "Jitter primary", "jitter_secondary": "Jitter secondary",
    "a": "Semi-major axis", "mass_sum": "M1 + M2", "mass_primary": "M1", "mass_secondary": "M2", "radius_primary": "R1",
    "radius_secondary": "R2", "logg_primary": "log g1 (cgs)", "logg_secondary": "log g2 (cgs)",
    "density_primary": "Mean density 1", "density_secondary": "Mean density 2",
    "vsync_primary": "v_sync 1", "vsync_secondary": "v_sync 2", "luminosity_primary": "L1",
    "luminosity_secondary": "L2", "mbol_primary": "M_bol 1", "mbol_secondary": "M_bol 2", "distance": "Distance",
    "teff_primary": "Teff1", "teff_secondary": "Teff2", "parallax": "Parallax",
}

#: statistics of the residuals, not estimates: they have no uncertainty to report
_STATISTICS = ("rms_primary", "rms_secondary")

_BUDGET_SHOWN = ("mass_primary", "mass_secondary", "radius_primary", "radius_secondary")

_TITLES = {
    "ephemeris": "Ephemeris", "geometry": "Geometry", "photometry": "Photometry",
    "spectroscopy": "Spectroscopic orbit", "absolute": "Absolute dimensions",
}


def short_label(name: str) -> str:
    """The label of ``name`` without its definition ("r1" for "r1 = R1/a"), for inline use."""
    return LABELS.get(name, name).split(" = ")[0]


def is_asymmetric(value: float | None, interval: tuple[float, float] | None) -> bool:
    """Whether the sides of ``interval`` around ``value`` differ by more than :data:`ASYMMETRY` of the larger."""
    if interval is None or value is None or not all(x is not None and math.isfinite(x) for x in (value, *interval)):
        return False
    below, above = value - interval[0], interval[1] - value
    return abs(above - below) > ASYMMETRY * max(abs(above), abs(below))


#: significant figures of a printed number that has no uncertainty (a statistic such as an rms)
DIGITS = 4


def format_value(value: float | None, uncertainty: float | None = None, *, digits: int = DIGITS,
                 interval: tuple[float, float] | None = None) -> str:
    """``value ± uncertainty`` (or ``value +upper/-lower``), rounded to the precision of the uncertainty.

    The uncertainty is given to two significant figures and the value to the same
    decimal place (common practice).  The one number formatter of every summary table.

    Parameters
    ----------
    value : float or None
        None or a non-finite value prints as a dash.
    uncertainty : float or None
        None, zero or a non-finite uncertainty (a fixed or exact value) prints the value
        alone, to ``digits`` significant figures without an exponent from 1e-4 to 1e5
        (whole numbers beyond ``digits`` figures), or with 5 decimals from 1e5 up (e.g.
        a Julian date).  An uncertainty below 1e-12 of the value (floating-point noise
        of an exact input) counts as none: a zero error is never printed.
    digits : int
        Significant figures of a value without uncertainty (default :data:`DIGITS`).
    interval : (float, float), optional
        Central 68% interval (lower, upper).  When its sides differ by more than
        :data:`ASYMMETRY` of the larger (and ``value`` lies inside it)
        the value prints as ``value +upper/-lower``, both sides to two significant
        figures of the smaller; otherwise as ``value ± uncertainty``.

    Examples
    --------
    >>> format_value(1.234567, 0.0123)
    '1.235 ± 0.012'
    >>> format_value(2459001.234567891, None)
    '2459001.23457'
    >>> format_value(0.706188, None)
    '0.7062'
    >>> format_value(12345.6, None)
    '12346'
    >>> format_value(3.14159265358979, None, digits=11)
    '3.1415926536'
    >>> format_value(0.26, 0.0996)
    '0.26 ± 0.10'
    >>> format_value(0.312, 0.02, interval=(0.301, 0.345))
    '0.312 +0.033/-0.011'
    """
    if value is None or not math.isfinite(value):
        return "—"
    if interval is not None and is_asymmetric(value, interval):
        below, above = value - interval[0], interval[1] - value
        if below > 0 and above > 0:
            decimals = _decimals(min(below, above))
            return f"{value:.{decimals}f} +{above:.{decimals}f}/-{below:.{decimals}f}"
    if not has_uncertainty(value, uncertainty):
        if abs(value) >= 1e5:
            return f"{value:.5f}"
        return f"{value:.0f}" if abs(value) >= 10 ** digits else f"{value:.{digits}g}"
    decimals = _decimals(uncertainty)
    return f"{value:.{decimals}f} ± {uncertainty:.{decimals}f}"


def has_uncertainty(value: float, uncertainty: float | None) -> bool:
    """Whether ``uncertainty`` is a usable error of ``value``: finite, positive, above rounding noise."""
    scale = abs(value) if value is not None and math.isfinite(value) else 0.0
    return uncertainty is not None and math.isfinite(uncertainty) and uncertainty > 1e-12 * max(scale, 1e-300)


def _decimals(uncertainty: float) -> int:
    """Decimal places that show ``uncertainty`` to two significant figures (at most 12).

    Rounding can carry into the next decade (0.0996 -> 0.100): then one place fewer (0.10).
    """
    decimals = min(max(0, 1 - int(math.floor(math.log10(uncertainty)))), 12)
    rounded = round(uncertainty, decimals)
    if decimals > 0 and rounded > 0 and 1 - int(math.floor(math.log10(rounded))) < decimals:
        decimals -= 1
    return decimals


#: significant figures of a value held fixed: enough to show the value given
_FIXED_DIGITS = 10


def format_summary(result: Mapping[str, Any]) -> str:
    """Format a ``result.json`` dict as a readable table.

    The first line carries the status word, and why when it is not "ok"; values held
    fixed are marked "(fixed)"; then come the priors, the fit's notes and its warnings.
    """
    status, message = result.get("status", "?"), result.get("message")
    first = f"eclipsekit {result.get('eclipsekit_version', '')} — status: {status}"
    lines = [f"{first}: {message}" if status != "ok" and message else first]
    if status == "ok" and message:
        lines.append(f"  {message}")
    inp = (result.get("input") or {}).get("light_curve")
    if inp:
        rej = ", ".join(f"{n} {why}" for why, n in inp.get("n_rejected", {}).items() if n) or "none"
        lines.append(f"  light curve {inp.get('file')}: {inp.get('n_points_used')} points used "
                     f"(rejected: {rej}); time system {inp.get('time_system')}")
    for section, title in _TITLES.items():
        lines += _section_lines(result.get(section), title)
    lines += _fit_lines(result.get("fit") or {})
    return "\n".join(lines)


def _section_lines(block: Mapping[str, Any] | None, title: str) -> list[str]:
    """One block of the table: a title, a row per quantity, the uncertainty budget."""
    rows = [(name, q) for name, q in (block or {}).items() if isinstance(q, dict) and "value" in q]
    if not rows:
        return []
    lines = ["", title]
    for name, q in rows:
        unit = q.get("unit") or ""
        unit = {"solRad": "R_sun", "solMass": "M_sun", "solLum": "L_sun", "dex(cm / s2)": ""}.get(unit, unit)
        if q.get("fixed"):
            text = format_value(q.get("value"), None, digits=_FIXED_DIGITS)
            unit = f"{unit} (fixed)".lstrip()
        else:
            text = format_value(q.get("value"), q.get("uncertainty"), interval=q.get("interval_68"))
            if (name not in _STATISTICS and q.get("value") is not None and q.get("interval_68") is None
                    and not has_uncertainty(q["value"], q.get("uncertainty"))):
                unit = f"{unit} (no uncertainty)".lstrip()
        lines.append(f"  {LABELS.get(name, name):<30s} {text:>28s} {unit}".rstrip())
    budget = block.get("uncertainty_budget")
    if budget:
        lines.append("  Where the uncertainty comes from:")
        for name in _BUDGET_SHOWN:
            if budget.get(name):
                lines.append(f"    {LABELS.get(name, name) + ':':<8s} {budget[name]}")
    return lines


def _fit_lines(fit: Mapping[str, Any]) -> list[str]:
    """The fit's method line, why an MCMC replaced the covariance, priors, notes and warnings."""
    lines: list[str] = []
    if "reduced_chi_square" in fit:
        lines += ["", f"Fit: {fit.get('method')}, uncertainties from {fit.get('uncertainties')}; "
                      f"reduced chi-square {fit.get('reduced_chi_square') or float('nan'):.3f}, "
                      f"{fit.get('n_free_parameters')} free parameters"]
        if fit.get("uncertainties") == "mcmc" and fit.get("errors_reasons"):
            lines.append(f"  MCMC instead of the covariance matrix: {'; '.join(fit['errors_reasons'])}")
    if fit.get("priors"):
        lines += ["", "Priors"]
        for name, p in fit["priors"].items():
            label = f"{LABELS.get(name, name)} ({name})" if name in LABELS else name
            lines.append(f"  {label:<44s} {format_value(p.get('value'), p.get('sigma')):>20s}")
    if fit.get("notes"):
        lines.append("")
        lines.extend(f"note: {n}" for n in fit["notes"])
    if fit.get("warnings"):
        lines += ["", "Warnings"]
        lines.extend(f"  - {w}" for w in fit["warnings"])
    return lines


# -- eclipse timings -------------------------------------------------------------------------------
_TIMING_ROWS = (
    ("ephemeris", "period", "Period"), ("ephemeris", "t0", "Epoch of primary minimum"),
    ("ephemeris", "secondary_offset", "Primary to secondary minimum"),
    ("period_change", "dp_de", "dP/dE"), ("period_change", "dp_dt", "dP/dt"),
    ("apsidal_motion", "trend_difference", "Secondary minus primary period"),
    ("apsidal_motion", "ecosw_from_timing", "e cos(omega) from timing"),
    ("apsidal_motion", "omega_dot", "d(omega)/dE"),
    ("light_travel_time", "semi_amplitude", "Light-time semi-amplitude"),
    ("light_travel_time", "period", "Third-body period"), ("light_travel_time", "phase", "Light-time phase"),
    ("light_travel_time", "mass_function", "Third-body mass function"),
)
_TESTS = (("period_change", "Period change"), ("apsidal_motion", "Apsidal trend"),
          ("light_travel_time", "Third body (light time)"))


def _small(q: Mapping[str, Any]) -> str:
    """A quantity as ``value ± uncertainty``; tiny numbers with a power of ten."""
    value, err = q.get("value"), q.get("uncertainty")
    if value is not None and value != 0 and abs(value) < 1e-3 and math.isfinite(value):
        power = int(math.floor(math.log10(abs(value))))
        scale = 10.0 ** power
        return f"({format_value(value / scale, None if err is None else err / scale)})e{power}"
    return format_value(value, err, digits=11)


def format_timings(content: Mapping[str, Any]) -> str:
    """The summary of a ``timings.json`` dict, as printed by ``eclipsekit timings`` (``timings.txt``)."""
    inp = content.get("input") or {}
    timed = inp.get("n_timed") or {}
    lines = [f"Eclipse timings, status {content.get('status')} ({inp.get('method')} method): "
             f"{timed.get('primary', 0)} primary and {timed.get('secondary', 0)} secondary eclipses timed, "
             f"time system {inp.get('time_system')}"]
    if content.get("message"):
        lines.append(f"  {content['message']}")
    for reason, n in (inp.get("n_skipped") or {}).items():
        lines.append(f"  skipped {n}: {reason}")
    lines += ["", f"{'quantity':<34}{'value ± uncertainty':>34}  unit"]
    for section, key, label in _TIMING_ROWS:
        q = (content.get(section) or {}).get(key)
        if isinstance(q, Mapping) and q.get("value") is not None:
            lines.append(f"{label:<34}{_small(q):>34}  {q.get('unit', '')}")
    selected = " + ".join(content.get("selected_terms") or []) or "none"
    lines += ["", f"Terms beyond the linear ephemeris; selected (lowest BIC): {selected}",
              "each tested against the selected model without it (detected: ΔBIC > 10):"]
    for section, label in _TESTS:
        block = content.get(section) or {}
        if block.get("delta_chi_square") is None:
            lines.append(f"  {label:<26} not tested: {block.get('note', '')}")
            continue
        word = "DETECTED" if block.get("detected") else "not significant"
        lines.append(f"  {label:<26} {word}: Δχ² = {block['delta_chi_square']:.1f}, ΔBIC = {block['delta_bic']:.1f}, "
                     f"p = {block['p_value']:.2g}")
    notes = [(content.get(s) or {}).get("note") for s, _ in _TESTS]
    lines += [f"note: {n}" for n in dict.fromkeys(n for n in notes if n)]
    lines += [f"warning: {w}" for w in content.get("warnings") or []]
    return "\n".join(lines)
