"""Figures for papers and catalogues, drawn with plain matplotlib.

Each function returns a :class:`matplotlib.figure.Figure` (made without pyplot, so
nothing depends on an interactive backend).  Sizes suit one journal column
(88 mm ≈ 3.5 in wide); the palette is the colour-blind-safe set of Okabe & Ito (2008,
"Color Universal Design").
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import FuncFormatter, LogLocator

from .orbit import orbital_phase

__all__ = [
    "PALETTE",
    "plot_periodograms",
    "plot_folded_light_curve",
    "plot_eclipses",
    "plot_velocities",
    "plot_mass_radius_luminosity",
    "plot_analysis",
    "plot_o_minus_c",
    "plot_catalogue",
    "save_figure",
]

#: Okabe & Ito colour-blind-safe palette.
PALETTE = {
    "black": "#000000", "orange": "#E69F00", "sky": "#56B4E9", "green": "#009E73",
    "yellow": "#F0E442", "blue": "#0072B2", "vermillion": "#D55E00", "purple": "#CC79A7",
}
_DATA = "#9a9a9a"
_COLUMN = 3.5  # inches: one journal column
_RC = {
    "font.size": 8, "axes.labelsize": 8, "axes.titlesize": 8, "xtick.labelsize": 7, "ytick.labelsize": 7,
    "legend.fontsize": 7, "axes.linewidth": 0.6, "lines.linewidth": 1.0, "xtick.direction": "in",
    "ytick.direction": "in", "xtick.top": True, "ytick.right": True, "savefig.dpi": 300,
}


def _figure(height: float, width: float = _COLUMN) -> Figure:
    import matplotlib

    matplotlib.rcParams.update(_RC)
    return Figure(figsize=(width, height), layout="constrained")


#: mantissas of the labelled ticks of a log axis, sparsest first (see _plain_log_axis)
_LOG_SUBS = ((1.0,), (1.0, 2.0, 5.0), (1.0, 2.0, 3.0, 5.0), (1.0, 1.5, 2.0, 3.0, 5.0, 7.0),
             (1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 6.0, 8.0))
#: fewest labelled ticks wanted on a log axis
_MIN_LOG_TICKS = 4


def _plain_log_axis(axis: Any, limits: tuple[float, float] | None = None) -> None:
    """Label a logarithmic axis with plain numbers (0.5, 1, 2, ...) rather than powers of ten.

    The labelled ticks are the sparsest set of :data:`_LOG_SUBS` that puts at least
    :data:`_MIN_LOG_TICKS` ticks within ``limits`` (default: the axis's current view), so
    an axis spanning less than a decade still carries enough numbers to read values off.
    """
    lo, hi = sorted(limits if limits is not None else axis.get_view_interval())
    for subs in _LOG_SUBS:
        candidate = LogLocator(base=10, subs=subs, numticks=100)
        ticks = candidate.tick_values(lo, hi)
        if np.count_nonzero((ticks >= lo) & (ticks <= hi)) >= _MIN_LOG_TICKS:
            locator = candidate
            break
    else:
        locator = LogLocator(base=10, subs=_LOG_SUBS[-1], numticks=100)
    axis.set_major_locator(locator)
    axis.set_major_formatter(FuncFormatter(lambda x, _: f"{x:g}"))
    axis.set_minor_formatter(FuncFormatter(lambda x, _: ""))


def _binned(x: np.ndarray, y: np.ndarray, n_bins: int, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
    """Mean of ``y`` in equal bins of ``x`` over [lo, hi] (empty bins dropped)."""
    edges = np.linspace(lo, hi, n_bins + 1)
    idx = np.digitize(x, edges) - 1
    ok = (idx >= 0) & (idx < n_bins)
    counts = np.bincount(idx[ok], minlength=n_bins)
    sums = np.bincount(idx[ok], weights=y[ok], minlength=n_bins)
    centre = 0.5 * (edges[1:] + edges[:-1])
    good = counts > 0
    return centre[good], sums[good] / counts[good]


def plot_periodograms(search: Any, lc: Any = None, fit: Any = None) -> Figure:
    """Box-least-squares power and PDM θ against trial period, with the period marked.

    With the eclipse ``fit``, the period marked, folded on and given in the title is the
    fitted one (the final answer), and the title says so; without it, the search's.
    With the light curve ``lc``, a third panel shows it folded on that period (or
    against time when no eclipse was found).  A dotted line marks the other reading of
    an ambiguous search (``alternative_period``).
    """
    from .summary import format_value

    fig = _figure(4.6 if lc is not None else 3.3)
    axes = fig.subplots(3 if lc is not None else 2, 1)
    ax1, ax2 = axes[0], axes[1]
    ax2.sharex(ax1)
    if getattr(search, "bls_periods", None) is not None and len(search.bls_periods):
        order = np.argsort(search.bls_periods)
        power = search.bls_power[order] / np.nanmax(search.bls_power)
        ax1.plot(search.bls_periods[order], power, color=PALETTE["blue"], lw=0.6)
    ax1.set_ylabel("BLS power (normalised)")
    if getattr(search, "pdm_periods", None) is not None and len(search.pdm_periods):
        order = np.argsort(search.pdm_periods)
        ax2.plot(search.pdm_periods[order], search.pdm_theta[order], color=PALETTE["green"], lw=0.6)
    ax2.set_ylabel(r"PDM $\theta$")
    ax2.set_xlabel("Trial period (d)")
    ax1.set_xscale("log")
    _plain_log_axis(ax2.xaxis)
    period = getattr(search, "period", None)
    found = getattr(search, "found", True) and period is not None and np.isfinite(period)
    t0 = getattr(search, "t0", None)
    if fit is not None:
        period, t0 = fit.values["period"], fit.values["t0"]
        title = f"P = {format_value(period, fit.uncertainties.get('period'))} d (eclipse fit)"
    else:
        title = f"P = {format_value(period, getattr(search, 'period_err', None))} d (period search)"
    if found:
        for ax in (ax1, ax2):
            ax.axvline(period, color=PALETTE["vermillion"], lw=0.8, ls="--", zorder=0)
            alternative = getattr(search, "alternative_period", None)
            if alternative is not None and np.isfinite(alternative):
                ax.axvline(alternative, color=PALETTE["sky"], lw=0.8, ls=":", zorder=0)
        ax1.set_title(title, loc="left")
    else:
        ax1.set_title("No significant periodic eclipse", loc="left")
    if lc is not None:
        ax3 = axes[2]
        if found:
            phase = orbital_phase(lc.time, period, t0, -0.25)
            ax3.plot(phase, lc.flux, ".", ms=1.0, color=_DATA, alpha=0.5, rasterized=True)
            bx, by = _binned(phase, lc.flux, 400, -0.25, 0.75)
            ax3.plot(bx, by, ".", ms=2.0, color=PALETTE["blue"])
            ax3.set_xlim(-0.25, 0.75)
            ax3.set_xlabel("Orbital phase")
        else:
            ax3.plot(lc.time, lc.flux, ".", ms=1.0, color=_DATA, rasterized=True)
            ax3.set_xlabel("Time (d)")
        ax3.set_ylabel("Relative flux")
    return fig


def _eclipse_geometry(fit: Any) -> dict[str, float]:
    """Secondary phase and eclipse durations (in phase) implied by the fitted parameters."""
    from .eclipse import eclipse_properties

    v = fit.values
    props = eclipse_properties(
        period=v["period"], radius_sum=v["radius_sum"], radius_ratio=v["radius_ratio"],
        inclination=v["inclination"], surface_brightness_ratio=v["surface_brightness_ratio"],
        ecosw=v.get("ecosw", 0.0), esinw=v.get("esinw", 0.0), third_light=v.get("third_light", 0.0),
        ld_law=fit.ld_law, ld_primary=fit.ld_primary, ld_secondary=fit.ld_secondary)
    return {
        "phase_secondary": float(props["phase_secondary"]),
        "width_primary": float(props["duration_primary"]) / v["period"],
        "width_secondary": float(props["duration_secondary"]) / v["period"],
    }


def _baseline_panel(ax: Any, x: np.ndarray, fit: Any, near: np.ndarray | None = None) -> None:
    """The fitted baseline (relative to its median, ppt) and the flux divided by the eclipse model."""
    sel = slice(None) if near is None else near
    level = float(np.median(fit.baseline))
    out = fit.lc.flux / fit.model(fit.lc.time) / level - 1.0
    ax.plot(x[sel], 1e3 * out[sel], ".", ms=1.0, color=_DATA, alpha=0.5, rasterized=True)
    ax.plot(x[sel], 1e3 * (fit.baseline[sel] / level - 1.0), ".", ms=1.2, color=PALETTE["orange"],
            rasterized=True, label="baseline")
    ax.set_ylabel("Baseline (ppt)")


def plot_folded_light_curve(fit: Any) -> Figure:
    """Detrended light curve folded on the fitted period, with the model, the baseline and the residuals.

    The middle panel shows the baseline that multiplies the eclipse model (polynomial,
    orbital harmonics and/or Gaussian process) over the flux divided by the eclipse model.
    """
    v = fit.values
    period, t0 = v["period"], v["t0"]
    time = fit.lc.time
    phase = orbital_phase(time, period, t0, -0.25)
    flux = fit.detrended_flux
    model_at_data = fit.model(time)
    grid_phase = np.linspace(-0.25, 0.75, 4001)
    grid_model = fit.model(t0 + grid_phase * period)

    fig = _figure(4.2)
    ax1, axb, ax2 = fig.subplots(3, 1, sharex=True, height_ratios=[3, 1, 1])
    _baseline_panel(axb, phase, fit)
    ax1.plot(phase, flux, ".", ms=1.0, color=_DATA, alpha=0.5, rasterized=True, label="data")
    bx, by = _binned(phase, flux, 400, -0.25, 0.75)
    ax1.plot(bx, by, ".", ms=2.0, color=PALETTE["blue"], label="binned")
    ax1.plot(grid_phase, grid_model, color=PALETTE["vermillion"], lw=0.8, label="model")
    ax1.set_ylabel("Relative flux")
    ax1.legend(loc="lower right", frameon=False, markerscale=3)
    resid = flux - model_at_data
    ax2.plot(phase, 1e3 * resid, ".", ms=1.0, color=_DATA, alpha=0.5, rasterized=True)
    rx, ry = _binned(phase, resid, 400, -0.25, 0.75)
    ax2.plot(rx, 1e3 * ry, ".", ms=2.0, color=PALETTE["blue"])
    ax2.axhline(0.0, color=PALETTE["vermillion"], lw=0.8)
    ax2.set_ylabel("O−C (ppt)")
    ax2.set_xlabel("Orbital phase")
    ax2.set_xlim(-0.25, 0.75)
    lim = 5 * max(np.std(resid), 1e-6) * 1e3
    ax2.set_ylim(-lim, lim)
    return fig


def plot_eclipses(fit: Any) -> Figure:
    """Close-ups of the primary and secondary eclipses with the model, the baseline under them and residuals."""
    v = fit.values
    period, t0 = v["period"], v["t0"]
    geom = _eclipse_geometry(fit)
    time = fit.lc.time
    flux = fit.detrended_flux
    resid = flux - fit.model(time)
    fig = _figure(3.9, width=2 * _COLUMN * 0.95)
    axes = fig.subplots(3, 2, sharex="col", height_ratios=[3, 1, 1])
    centres = (0.0, geom["phase_secondary"])
    widths = (geom["width_primary"], geom["width_secondary"])
    for col, (name, centre, width) in enumerate(zip(("Primary", "Secondary"), centres, widths)):
        half = 0.8 * width if width > 0 else 0.05
        phase = orbital_phase(time, period, t0, start=centre - 0.5) - centre
        near = np.abs(phase) < half
        top, bottom = axes[0, col], axes[2, col]
        _baseline_panel(axes[1, col], phase, fit, near)
        grid = np.linspace(-half, half, 1500)
        top.plot(phase[near], flux[near], ".", ms=1.2, color=_DATA, alpha=0.6, rasterized=True)
        bx, by = _binned(phase[near], flux[near], 120, -half, half)
        top.plot(bx, by, ".", ms=2.0, color=PALETTE["blue"])
        top.plot(grid, fit.model(t0 + (centre + grid) * period), color=PALETTE["vermillion"], lw=0.8)
        top.set_title(f"{name} eclipse (phase {centre:.4f})", loc="left")
        bottom.plot(phase[near], 1e3 * resid[near], ".", ms=1.2, color=_DATA, alpha=0.6, rasterized=True)
        bottom.axhline(0.0, color=PALETTE["vermillion"], lw=0.8)
        bottom.set_xlabel("Phase from mid-eclipse")
        bottom.set_xlim(-half, half)
        if np.any(near):
            lim = 5 * max(np.std(resid[near]), 1e-6) * 1e3
            bottom.set_ylim(-lim, lim)
    axes[0, 0].set_ylabel("Relative flux")
    axes[2, 0].set_ylabel("O−C (ppt)")
    axes[1, 1].set_ylabel("")
    return fig


def plot_velocities(orbit: Any) -> Figure:
    """Radial velocities of both stars folded on the period, with the orbit and the residuals."""
    rv = orbit.rv
    period, t0 = orbit.values["period"], orbit.values["t0"]
    phase = orbital_phase(rv.time, period, t0)
    grid = np.linspace(0.0, 1.0, 1001)
    m1, m2 = orbit.model(t0 + grid * period)
    d1, d2 = orbit.model(rv.time)
    fig = _figure(3.4)
    ax1, ax2 = fig.subplots(2, 1, sharex=True, height_ratios=[3, 1])
    stars = [("Primary", rv.rv1, rv.rv1_err, m1, d1, PALETTE["blue"], "o"),
             ("Secondary", rv.rv2, rv.rv2_err, m2, d2, PALETTE["orange"], "s")]
    for label, obs, err, model, at_data, colour, marker in stars:
        if model is None or not np.any(np.isfinite(obs)):
            continue
        ok = np.isfinite(obs)
        ax1.errorbar(phase[ok], obs[ok], err[ok], fmt=marker, ms=3, color=colour, mfc="white", mew=0.8,
                     elinewidth=0.6, capsize=0, label=label)
        ax1.plot(grid, model, color=colour, lw=0.9)
        ax2.errorbar(phase[ok], obs[ok] - at_data[ok], err[ok], fmt=marker, ms=3, color=colour, mfc="white",
                     mew=0.8, elinewidth=0.6, capsize=0)
    gamma = orbit.values.get("gamma")
    if gamma is not None:
        ax1.axhline(gamma, color=PALETTE["black"], lw=0.5, ls=":")
    ax2.axhline(0.0, color=PALETTE["black"], lw=0.6)
    ax1.set_ylabel("Radial velocity (km s$^{-1}$)")
    ax1.legend(loc="best", frameon=False)
    ax2.set_ylabel("O−C (km s$^{-1}$)")
    ax2.set_xlabel("Orbital phase")
    ax2.set_xlim(0.0, 1.0)
    return fig


def plot_mass_radius_luminosity(dimensions: Any) -> Figure:
    """Both stars on mass–radius and mass–luminosity diagrams.

    The mass–radius panel carries a rough main-sequence radius line; the mass–luminosity
    panel carries no reference relation (none with citable coefficients is built in).
    """
    from .dimensions import main_sequence_radius

    v, e = dimensions.values, dimensions.uncertainties
    has_lum = "luminosity_primary" in v
    fig = _figure(3.0 if not has_lum else 3.0, width=_COLUMN if not has_lum else 2 * _COLUMN * 0.95)
    axes = np.atleast_1d(fig.subplots(1, 2 if has_lum else 1))
    masses = np.array([v["mass_primary"], v["mass_secondary"]])
    lo, hi = 0.5 * masses.min(), 2.0 * masses.max()
    grid = np.geomspace(max(lo, 0.1), min(hi, 50.0), 200)
    panels = [("radius", "Radius (R$_\\odot$)", main_sequence_radius)]
    if has_lum:
        panels.append(("luminosity", "Luminosity (L$_\\odot$)", None))
    for ax, (quantity, label, relation) in zip(axes, panels):
        if relation is not None:
            ax.plot(grid, relation(grid), color=PALETTE["black"], lw=0.8, ls="--", label="main sequence (rough)")
        for star, colour, marker in (("primary", PALETTE["blue"], "o"), ("secondary", PALETTE["orange"], "s")):
            m, dm = v[f"mass_{star}"], e.get(f"mass_{star}") or 0.0
            y, dy = v[f"{quantity}_{star}"], e.get(f"{quantity}_{star}") or 0.0
            ax.errorbar(m, y, yerr=dy, xerr=dm, fmt=marker, ms=4, color=colour, elinewidth=0.8, capsize=0,
                        label=star.capitalize())
        ax.set_xscale("log")
        ax.set_yscale("log")
        _plain_log_axis(ax.xaxis)
        _plain_log_axis(ax.yaxis)
        ax.set_xlabel("Mass (M$_\\odot$)")
        ax.set_ylabel(label)
    axes[0].legend(loc="upper left", frameon=False)
    return fig


def save_figure(fig: Figure, folder: str | os.PathLike, name: str,
                formats: tuple[str, ...] = ("png", "pdf")) -> dict[str, Path]:
    """Save ``fig`` as ``folder/name.<fmt>`` for each format, each file written atomically."""
    from .results import write_atomic

    out = {}
    for fmt in formats:
        path = Path(folder) / f"{name}.{fmt}"
        out[f"{name}.{fmt}"] = write_atomic(path, lambda tmp, fmt=fmt: fig.savefig(tmp, format=fmt))
    return out


def plot_analysis(analysis: Any, folder: str | os.PathLike | None = None,
                  formats: tuple[str, ...] = ("png", "pdf")) -> dict[str, Any]:
    """Draw every figure an :class:`~eclipsekit.pipeline.Analysis` supports.

    Returns the figures by name, or, when ``folder`` is given, the paths written.
    """
    figures: dict[str, Figure] = {}
    # a given ephemeris has no periodogram
    if analysis.search is not None and getattr(analysis.search, "method", None) != "given":
        figures["periodograms"] = plot_periodograms(analysis.search, fit=analysis.eclipse_fit)
    if analysis.eclipse_fit is not None:
        figures["light_curve"] = plot_folded_light_curve(analysis.eclipse_fit)
        figures["eclipses"] = plot_eclipses(analysis.eclipse_fit)
    if analysis.orbit is not None:
        figures["velocities"] = plot_velocities(analysis.orbit)
    if analysis.dimensions is not None:
        figures["mass_radius"] = plot_mass_radius_luminosity(analysis.dimensions)
    if folder is None:
        return figures
    written: dict[str, Any] = {}
    for name, fig in figures.items():
        written.update(save_figure(fig, folder, name, formats))
    return written


_TERM_LABELS = {"period_change": "period change", "apsidal_motion": "apsidal trend",
                "light_travel_time": "light-travel-time orbit"}


def plot_o_minus_c(times: Any) -> Figure:
    """O−C diagram of an :class:`~eclipsekit.timings.EclipseTimes`, in minutes against cycle.

    Primary eclipses are filled circles, secondary eclipses open squares (shape and fill, not
    colour alone); the selected model's terms (:func:`~eclipsekit.ocdiagram.analyse_o_minus_c`)
    are drawn as a line, dashed for the secondaries when it has an apsidal trend.
    """
    fig = _figure(2.6)
    ax = fig.add_subplot()
    table = times.table
    kinds = np.asarray(table["eclipse"])
    cycle = np.asarray(table["cycle"], float)
    oc = np.asarray(table["o_minus_c"], float) * 1440.0
    err = np.asarray(table["time_uncertainty"], float) * 1440.0
    styles = {"primary": dict(marker="o", mfc=PALETTE["blue"], mec=PALETTE["blue"], label="primary"),
              "secondary": dict(marker="s", mfc="white", mec=PALETTE["vermillion"], label="secondary")}
    for kind, style in styles.items():
        sel = kinds == kind
        if sel.any():
            ax.errorbar(cycle[sel], oc[sel], yerr=err[sel], ls="none", ms=3, mew=0.7, elinewidth=0.5,
                        ecolor=style["mec"], **style)
    curves = getattr(times.oc, "curves", None) or {}
    selected = [_TERM_LABELS[t] for t in getattr(times.oc, "selected_terms", ())]
    if selected and "primary" in curves:
        label = "selected model: " + " + ".join(selected)
        if not all(getattr(times.oc, t)["detected"] for t in times.oc.selected_terms):
            label += " (not all detected)"
        ax.plot(curves["cycle"], curves["primary"] * 1440.0, color=PALETTE["black"], lw=0.9, label=label)
        if "apsidal_motion" in times.oc.selected_terms and "secondary" in curves:
            ax.plot(curves["cycle"], curves["secondary"] * 1440.0, color=PALETTE["vermillion"], ls="--", lw=0.9,
                    label="selected model, secondary")
    ax.axhline(0.0, color=_DATA, lw=0.5)
    ax.set_xlabel("Cycle")
    ax.set_ylabel("O − C (min)")
    ax.legend(loc="best", frameon=False)
    return fig


def plot_catalogue(table: Any) -> dict[str, Figure]:
    """The figures of a survey catalogue: period histogram, depth against period, counts by status.

    ``table`` has the catalogue's columns (``status``, ``period``, ``depth_primary``,
    ``depth_secondary``); targets without a period are left out of the first two.
    """
    period = np.asarray(table["period"], float) if len(table) else np.array([])
    has = np.isfinite(period) & (period > 0)
    figures: dict[str, Figure] = {}

    fig = _figure(2.6)
    ax = fig.subplots()
    if has.any():
        lo, hi = period[has].min(), period[has].max()
        edges = np.geomspace(lo / 1.05, hi * 1.05, max(5, min(40, int(np.sqrt(has.sum())) + 4)))
        ax.hist(period[has], bins=edges, color=PALETTE["blue"], edgecolor="white", linewidth=0.4)
        ax.set_xscale("log")
        _plain_log_axis(ax.xaxis)
    ax.set_xlabel("Period (d)")
    ax.set_ylabel("Targets")
    ax.set_title(f"{int(has.sum())} targets with a period", loc="left")
    figures["catalogue_periods"] = fig

    fig = _figure(2.8)
    ax = fig.subplots()
    for column, colour, marker, label in (("depth_primary", PALETTE["blue"], "o", "primary"),
                                          ("depth_secondary", PALETTE["orange"], "s", "secondary")):
        depth = np.asarray(table[column], float) if len(table) else np.array([])
        ok = has & np.isfinite(depth) & (depth > 0)
        ax.plot(period[ok], depth[ok], marker, ms=3, mfc="none", mew=0.7, color=colour, label=label, ls="none")
    if has.any():
        ax.set_xscale("log")
        ax.set_yscale("log")
        _plain_log_axis(ax.xaxis)
        ax.legend(loc="best", frameon=False)
    ax.set_xlabel("Period (d)")
    ax.set_ylabel("Eclipse depth (fraction of flux)")
    figures["catalogue_depths"] = fig

    fig = _figure(2.6)
    ax = fig.subplots()
    words, counts = np.unique(np.asarray(table["status"], str), return_counts=True) if len(table) else ([], [])
    ax.barh(list(words), list(counts), color=PALETTE["green"])
    for y, n in enumerate(counts):
        ax.text(n, y, f" {n}", va="center", fontsize=7)
    ax.set_xlabel("Targets")
    ax.set_title("Targets by status", loc="left")
    ax.invert_yaxis()
    figures["catalogue_status"] = fig
    return figures
