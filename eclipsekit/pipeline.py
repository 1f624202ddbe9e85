"""The whole job in one call: read → period search → eclipse fit → velocity fit → absolute dimensions.

:func:`analyse` chains the public functions of the package and returns an
:class:`Analysis` holding every intermediate result, which can write the result files
(:meth:`Analysis.write`) and draw the figures (:meth:`Analysis.plot`).
"""

from __future__ import annotations

import os
import time as _time
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import astropy.units as u
import numpy as np
from astropy.table import Table

from . import _notes, results
from ._validate import as_float
from .data import LightCurve, VelocityCurve, read_light_curve, read_velocities
from ._threads import one_blas_thread
from .errors import EclipsekitWarning, InputError, NoEclipseFound
from .orbit import orbital_phase
from .summary import format_summary

__all__ = ["Analysis", "analyse", "write_dimension_files", "write_timing_files", "LONG_CADENCE"]

#: Cadence (days) above which unsmeared eclipse models are biased; 10 minutes.
LONG_CADENCE = 10.0 / 1440.0


@dataclass
class Analysis:
    """Everything one run of the pipeline produced.

    Attributes
    ----------
    lc : LightCurve
        The light curve as read.
    rv : VelocityCurve or None
    search : PeriodSearch or None
    eclipse_fit : EclipseFit or None
    orbit : OrbitFit or None
    dimensions : AbsoluteDimensions or None
    eclipse_times : EclipseTimes or None
        Times of minimum and the O−C analysis (:func:`~eclipsekit.timings.eclipse_times`), when
        asked for; written with the other files.
    status : {'ok', 'poor_fit', 'caution', 'no_eclipse_found'}
        The eclipse fit's status when it ran (:attr:`EclipseFit.status
        <eclipsekit.fit.EclipseFit>`: "poor_fit" when the model does not describe the
        eclipses, "caution" when a warning says the answer may be biased), else
        "no_eclipse_found" when the period search found nothing.
    message : str
        One line: why the status is not "ok", and where the analysis stopped.
    warnings : list of str
        Every warning issued along the way.
    timings : dict of str -> float
        Wall-clock seconds per stage.
    user_inputs : dict
        Values given by hand (velocity amplitudes, temperatures, parallax), for the record.
    command : str or None
        The command line that produced the analysis, if any.
    """

    lc: LightCurve | None
    rv: VelocityCurve | None = None
    search: Any = None
    eclipse_fit: Any = None
    orbit: Any = None
    dimensions: Any = None
    eclipse_times: Any = None
    status: str = "ok"
    message: str = ""
    warnings: list[str] = field(default_factory=list)
    timings: dict[str, float] = field(default_factory=dict)
    user_inputs: dict[str, Any] = field(default_factory=dict)
    command: str | None = None

    # -- reporting -------------------------------------------------------------------
    def to_dict(self) -> dict[str, Any]:
        """The ``result.json`` content (see ``DESIGN.md``)."""
        return results.result_dict(self)

    def summary(self) -> str:
        """A concise table of the results, as printed at the end of ``eclipsekit run``."""
        return format_summary(self.to_dict())

    def __repr__(self) -> str:
        parts = [f"status={self.status!r}"]
        if self.eclipse_fit is not None:
            parts.append(f"P={self.eclipse_fit.values['period']:.7f} d")
        if self.dimensions is not None:
            v = self.dimensions.values
            parts.append(f"M1={v['mass_primary']:.3f} M2={v['mass_secondary']:.3f} Msun")
        return f"<Analysis {' '.join(parts)}>"

    def write(self, out: str | os.PathLike, *, overwrite: bool = False, figures: bool = True,
              formats: tuple[str, ...] = ("png", "pdf")) -> dict[str, Path]:
        """Write every result file into the folder ``out``.

        Files: ``result.json``, ``parameters.ecsv``, ``light_curve.ecsv``,
        ``velocities.ecsv`` (with velocities), ``summary.txt``, the figures and the
        manifest listing them.  They are all written into a hidden staging folder first and
        put in ``out`` only when complete (:func:`~eclipsekit.results.output_folder`), so
        an interrupted or failed write leaves the previous result in ``out`` as it was;
        with ``overwrite``, files an earlier run wrote there and this one did not are
        removed, the user's own files never.

        Returns
        -------
        dict of str -> Path
            The files written, by role.
        """
        written: dict[str, Path] = {}
        with results.output_folder(out, overwrite=overwrite, command=self.command) as folder:
            content = self.to_dict()
            written["parameters"] = results.write_table(folder / "parameters.ecsv",
                                                        results.parameters_table(content))
            if self.lc is not None:
                written["light_curve"] = results.write_table(folder / "light_curve.ecsv", self.light_curve_table())
            if self.rv is not None:
                written["velocities"] = results.write_table(folder / "velocities.ecsv", self.velocities_table())
            if figures:
                for name, path in self.plot(folder, formats=formats).items():
                    written[name] = path
            written["summary"] = results.write_text(folder / "summary.txt", self.summary())
            if self.eclipse_times is not None:
                written.update(write_timing_files(folder, self.eclipse_times, command=self.command, figures=figures,
                                                  formats=formats))
            written["result"] = results.write_json(folder / "result.json", content)
        return {role: Path(out) / path.name for role, path in written.items()}

    def plot(self, folder: str | os.PathLike | None = None,
             formats: tuple[str, ...] = ("png", "pdf")) -> dict[str, Any]:
        """Draw the figures; save them in ``folder`` when given, else return the figures."""
        from . import plots

        return plots.plot_analysis(self, folder, formats=formats)

    # -- tables ------------------------------------------------------------------------
    def light_curve_table(self) -> Table:
        """The light curve with model, residual, phase and a rejected flag (rejected points kept)."""
        lc = self.lc
        fit = self.eclipse_fit
        fitted = fit.lc if fit is not None else lc
        table = Table()
        table["time"] = lc.time
        table["flux"] = lc.flux
        table["flux_err"] = lc.flux_err
        table["row"] = lc.row
        used = np.isin(lc.row, fitted.row)
        reason = np.full(len(lc), "", dtype=object)
        for why, rows in fitted.rejected.items():
            reason[np.isin(lc.row, rows)] = why
        model = np.full(len(lc), np.nan)
        detrended = np.full(len(lc), np.nan)
        if fit is not None:
            order = np.argsort(lc.row)
            where = order[np.searchsorted(lc.row, fitted.row, sorter=order)]  # fitted point -> row of `lc`
            # full model (eclipses × baseline) at the fitted points
            model[where] = fit.model(fitted.time) * fit.baseline
            detrended[where] = fit.detrended_flux
        table["model"] = model
        table["residual"] = lc.flux - model
        table["detrended_flux"] = detrended
        period, t0 = self._ephemeris()
        table["phase"] = orbital_phase(lc.time, period, t0, -0.25) if period else np.nan
        table["rejected"] = ~used
        table["reason"] = reason.astype(str)
        table["time"].unit = "d"
        table.meta["time_system"] = lc.meta.get("time_system")
        table.meta["comments"] = [
            "phase: 0 at primary mid-eclipse, in [-0.25, 0.75)",
            "model: eclipse model times the fitted baseline; detrended_flux = flux / baseline",
            "rejected points (outliers from the fit) are kept with rejected = True",
        ]
        return table

    def velocities_table(self) -> Table:
        """The velocities with the orbit model and residuals."""
        rv = self.rv
        table = Table()
        table["time"] = rv.time
        for star in ("rv1", "rv2"):
            table[star] = getattr(rv, star)
            table[star + "_err"] = getattr(rv, star + "_err")
        if self.orbit is not None:
            m1, m2 = self.orbit.model(rv.time)
            table["model_rv1"] = m1
            table["residual_rv1"] = rv.rv1 - m1
            if m2 is not None:
                table["model_rv2"] = m2
                table["residual_rv2"] = rv.rv2 - m2
        period, t0 = self._ephemeris()
        if period:
            table["phase"] = orbital_phase(rv.time, period, t0)
        for col in table.colnames:
            if col != "phase":
                table[col].unit = "d" if col == "time" else "km / s"
        return table

    def _ephemeris(self) -> tuple[float | None, float]:
        if self.eclipse_fit is not None:
            return self.eclipse_fit.values["period"], self.eclipse_fit.values["t0"]
        if self.search is not None:
            return self.search.period, self.search.t0
        if self.orbit is not None:
            return self.orbit.values["period"], self.orbit.values["t0"]
        return None, 0.0


class _Timer:
    def __init__(self, timings: dict[str, float], name: str):
        self.timings, self.name = timings, name

    def __enter__(self) -> None:
        self.start = _time.perf_counter()

    def __exit__(self, *exc: Any) -> None:
        self.timings[self.name] = _time.perf_counter() - self.start


@one_blas_thread
def analyse(
    lc: LightCurve | str | os.PathLike,
    velocities: VelocityCurve | str | os.PathLike | None = None,
    *,
    k_primary: Any = None,
    k_secondary: Any = None,
    teff_primary: Any = None,
    teff_secondary: Any = None,
    parallax: Any = None,
    min_period: float | None = None,
    max_period: float | None = None,
    period: float | None = None,
    t0: float | None = None,
    exposure_time: Any = None,
    errors: str = "auto",
    baseline: str = "auto",
    fix: tuple[str, ...] = (),
    free: tuple[str, ...] = (),
    fixed: dict[str, Any] | None = None,
    priors: dict[str, Any] | None = None,
    progress: bool = True,
    seed: int | None = None,
    joint: bool = False,
    coordinates: Any = None,
    velocity_labels: str = "auto",
    command: str | None = None,
    fit_options: dict[str, Any] | None = None,
    n_jobs: int | None = None,
) -> Analysis:
    """Run the whole analysis of one eclipsing binary.

    Parameters
    ----------
    lc : LightCurve or path
        The photometry (a path is read with :func:`~eclipsekit.read_light_curve`).
    velocities : VelocityCurve or path, optional
        Radial velocities of one or both stars.
    k_primary, k_secondary : (value, error) or Quantity, optional
        Velocity semi-amplitudes measured elsewhere (km/s), used when no velocities are given.
    teff_primary, teff_secondary : (value, error) or float, optional
        Effective temperatures (K), for luminosities.
    parallax : (value, error) or float, optional
        Parallax in milliarcseconds, for the distance.
    min_period, max_period : float, optional
        Period search range in days.
    period, t0 : float, optional
        Skip the period search and start the fit from this ephemeris; both eclipses are still
        measured at it (secondary at any phase, widths: :func:`~eclipsekit.period.measure_eclipses`),
        so eccentric orbits are recognised.  Without ``t0`` the epoch is measured at ``period``.
    exposure_time : float or Quantity, optional
        Integration time of each point (days, or a Quantity).  Defaults to the value
        the reader found in the file header.
    errors : {'auto', 'covariance', 'mcmc', 'permutation'}
        How the eclipse fit's uncertainties are estimated; "auto" uses the covariance
        matrix when it can be trusted, else an MCMC (see :func:`~eclipsekit.fit_eclipses`).
    baseline : {'auto', 'polynomial', 'fourier', 'gp'}
        Out-of-eclipse baseline of the eclipse fit (see :func:`~eclipsekit.fit_eclipses`);
        "auto" chooses it from the out-of-eclipse residuals and says so in the fit's notes.
    fix, free : sequence of str
        Eclipse-fit parameters to hold fixed at their start values, or to fit.
    fixed : dict, optional
        Eclipse-fit parameters held fixed at the values given, e.g. ``{"inclination": 89.5}``
        (period and t0 in days).
    priors : dict, optional
        Gaussian priors ``{name: (value, sigma)}`` on fitted parameters or on the light
        ratio ``light_ratio`` (L2/L1, e.g. from spectroscopy).
    progress : bool
        Show progress bars.
    seed : int, optional
        Random seed for sampling, for repeatable results.
    joint : bool
        Fit the light curve and the velocities together (shared period, epoch, e cos ω
        and e sin ω; covariance uncertainties only) instead of one after the other.
    coordinates : astropy.coordinates.SkyCoord or str, optional
        The target's sky position ("RA DEC" in degrees or sexagesimal).  When the light
        curve and the velocities are in different time systems (e.g. HJD and BJD_TDB),
        the velocity times are converted with astropy's light-travel-time corrections;
        without coordinates a warning names both systems (see
        :func:`~eclipsekit.time_systems.align_velocity_times`).
    velocity_labels : {'auto', 'given', 'swapped'}
        Which velocity column is star 1 (the star eclipsed at primary eclipse); "auto"
        decides from the light curve's ephemeris (``labels`` of
        :func:`~eclipsekit.fit_velocities`).
    command : str, optional
        The command line, recorded in ``result.json``.
    fit_options : dict, optional
        Further keyword arguments to :func:`~eclipsekit.fit_eclipses`.
    n_jobs : int, optional
        Threads of the period search (default: all CPU cores); the survey runs one
        target per single-threaded worker and passes 1.

    Returns
    -------
    Analysis
        ``status`` is ``"no_eclipse_found"`` when the period search finds nothing
        significant (the later steps are then skipped), ``"no_orbit_found"`` when a
        velocity semi-amplitude is consistent with zero (no masses are computed), else the
        eclipse fit's status ("caution" also when a mass is below 0.01 M_sun).

    Raises
    ------
    InputError
        Bad or conflicting options, checked before the period search.
    """
    timings: dict[str, float] = {}
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", EclipsekitWarning)
        with _Timer(timings, "read"):
            lc, velocities = _read_inputs(lc, velocities)
            if velocities is not None:
                from .time_systems import align_velocity_times

                velocities = align_velocity_times(lc, velocities, coordinates)
        measured = {"k_primary": k_primary, "k_secondary": k_secondary, "teff_primary": teff_primary,
                    "teff_secondary": teff_secondary, "parallax": parallax}
        analysis = Analysis(lc=lc, rv=velocities, timings=timings, command=command,
                            user_inputs={k: _record(v) for k, v in measured.items() if v is not None})
        options = _RunOptions.check(
            lc, velocities, measured=measured, min_period=min_period, max_period=max_period,
            exposure_time=exposure_time, errors=errors, fix=tuple(fix), free=tuple(free),
            fixed=dict(fixed or {}), priors=dict(priors or {}), progress=progress, seed=seed, joint=joint,
            velocity_labels=velocity_labels, fit_options={"baseline": baseline, **dict(fit_options or {})},
            n_jobs=n_jobs)
        start = _search_period(analysis, options, period, t0)
        if analysis.status == "ok":
            _fit_light_curve(analysis, start, options)
            _fit_orbit_and_dimensions(analysis, options)
    analysis.warnings = _unique(
        [str(w.message) for w in caught if issubclass(w.category, EclipsekitWarning)]
        + list(getattr(analysis.eclipse_fit, "warnings", []) or [])
        + list(getattr(analysis.orbit, "warnings", []) or [])
        + list(getattr(analysis.dimensions, "warnings", []) or []))
    return analysis


# -- the steps of analyse() ---------------------------------------------------------------
@dataclass(frozen=True)
class _RunOptions:
    """The options of one :func:`analyse` call, checked against each other and the data."""

    measured: dict[str, Any]          # absolute_dimensions() inputs given by hand (None when not given)
    min_period: float | None
    max_period: float | None
    exposure: float | None            # days; None when unknown
    errors: str
    fix: tuple[str, ...]
    free: tuple[str, ...]
    fixed: dict[str, Any]
    priors: dict[str, Any]
    progress: bool
    seed: int | None
    joint: bool
    velocity_labels: str
    fit_options: dict[str, Any]
    n_jobs: int | None = None         # threads of the period search (None: all cores)

    @classmethod
    def check(cls, lc: LightCurve, velocities: VelocityCurve | None, *, exposure_time: Any,
              **options: Any) -> _RunOptions:
        """Refuse bad or conflicting options; find the exposure time and warn when long exposures go unmodelled."""
        measured = options["measured"]
        _check_fit_options(lc, options)
        if velocities is not None and (measured["k_primary"] is not None or measured["k_secondary"] is not None):
            raise InputError("give either `velocities` or `k_primary`/`k_secondary` amplitudes, not both")
        if options["velocity_labels"] not in ("auto", "given", "swapped"):
            raise InputError(f"`velocity_labels` must be 'auto', 'given' or 'swapped', got {options['velocity_labels']!r}")
        if options["joint"] and velocities is None:
            raise InputError("a joint fit needs velocities: give `velocities` (or drop `joint=True`)")
        exposure = _exposure_days(exposure_time, lc)
        if exposure is None and lc.cadence > LONG_CADENCE:
            _notes.warn(f"median cadence is {lc.cadence * 1440:.1f} min and no exposure time is known: eclipses "
                        "are smeared and the fitted radii and inclination will be biased; give `exposure_time`")
        return cls(exposure=exposure, **options)


def _check_fit_options(lc: LightCurve, options: dict[str, Any]) -> None:
    """Validate the eclipse fit's options (names, fixed values, priors, ...) now, not after the period search."""
    import inspect

    from .errors import FitError
    from .fit.settings import make_settings

    accepted = inspect.signature(make_settings).parameters  # fit_options may also hold joint-fit options
    try:
        make_settings(lc, errors=options["errors"], fix=options["fix"], free=options["free"],
                      fixed=options["fixed"], priors=options["priors"],
                      **{k: v for k, v in options["fit_options"].items() if k in accepted})
    except FitError:
        pass  # too few points: the fit itself says so, in its place


def _read_inputs(lc: LightCurve | str | os.PathLike, velocities: VelocityCurve | str | os.PathLike | None
                 ) -> tuple[LightCurve, VelocityCurve | None]:
    """Read the files given by name; data objects pass through."""
    if not isinstance(lc, LightCurve):
        lc = read_light_curve(lc)
    if velocities is not None and not isinstance(velocities, VelocityCurve):
        velocities = read_velocities(velocities)
    return lc, velocities


def _search_period(analysis: Analysis, options: _RunOptions, period: float | None, t0: float | None) -> Any:
    """The start of the eclipse fit: the period search, or the eclipses measured at the ephemeris given.

    A given ephemeris keeps the binary logic: the secondary eclipse is searched at any phase and
    both eclipses' widths are measured (:func:`~eclipsekit.period.measure_eclipses`), so that the
    fit starts from the secondary's phase and recognises an eccentric orbit.  When the search finds
    no eclipse, ``analysis`` records it (status and message).
    """
    if period is not None:
        from .period import measure_eclipses

        with _Timer(analysis.timings, "eclipses at the given ephemeris"):
            analysis.search = measure_eclipses(analysis.lc, period, t0)
        return analysis.search
    if t0 is not None:
        raise InputError("`t0` was given without `period`: give both (or neither, to search the period)")
    from .period import find_period

    with _Timer(analysis.timings, "period search"):
        try:
            analysis.search = find_period(analysis.lc, min_period=options.min_period,
                                          max_period=options.max_period, progress=options.progress,
                                          n_jobs=options.n_jobs)
        except NoEclipseFound as exc:
            analysis.search = exc.search
            analysis.status = "no_eclipse_found"
            analysis.message = str(exc)
    return analysis.search


def _fit_light_curve(analysis: Analysis, start: Any, options: _RunOptions) -> None:
    """The eclipse fit (joint with the velocities when asked)."""
    from .fit import fit_eclipses

    with _Timer(analysis.timings, "joint fit" if options.joint else "eclipse fit"):
        analysis.eclipse_fit = fit_eclipses(
            analysis.lc, start, errors=options.errors, fix=options.fix, free=options.free, fixed=options.fixed,
            priors=options.priors, exposure_time=options.exposure or 0.0, progress=options.progress,
            seed=options.seed, velocities=analysis.rv if options.joint else None, **options.fit_options)
    fit = analysis.eclipse_fit
    analysis.status = fit.status
    if fit.status != "ok":
        analysis.message = "; ".join(fit.status_reasons) or fit.status.replace("_", " ")


def _fit_orbit_and_dimensions(analysis: Analysis, options: _RunOptions) -> None:
    """The velocity fit (unless the joint fit made the orbit), then masses and radii when possible."""
    from .dimensions import absolute_dimensions
    from .spectroscopy import fit_velocities

    if options.joint:
        analysis.orbit = analysis.eclipse_fit.orbit
    elif analysis.rv is not None:
        with _Timer(analysis.timings, "velocity fit"):
            analysis.orbit = fit_velocities(analysis.rv, analysis.eclipse_fit, seed=options.seed,
                                            labels=options.velocity_labels)
        analysis.rv = analysis.orbit.rv  # relabelled when the columns were swapped
    if analysis.orbit is None and options.measured["k_primary"] is None:
        _add_message(analysis, results.NO_VELOCITIES)
        return
    if analysis.orbit is not None and not _orbit_gives_masses(analysis):
        return
    with _Timer(analysis.timings, "absolute dimensions"):
        analysis.dimensions = absolute_dimensions(analysis.eclipse_fit, analysis.orbit, **options.measured,
                                                  seed=options.seed)
    _check_masses(analysis)


#: Below this mass (M_sun, about ten Jupiter masses) a star whose lines were measured is implausible:
#: the K's, the period or the labels are wrong (the deuterium-burning limit is ~0.012 M_sun; from memory)
MIN_PLAUSIBLE_MASS = 0.01


def _add_message(analysis: Analysis, text: str) -> None:
    analysis.message = f"{analysis.message}; {text}" if analysis.message else text


def _orbit_gives_masses(analysis: Analysis) -> bool:
    """False (with status and message) when the orbit shows no motion or has one star only."""
    from .spectroscopy import orbit_doubts

    doubts = orbit_doubts(analysis.orbit)
    if doubts:
        analysis.status = "no_orbit_found"
        _add_message(analysis, "; ".join(doubts) + "; masses not computed")
        return False
    values = analysis.orbit.values
    if not (np.isfinite(values.get("k_primary", np.nan)) and np.isfinite(values.get("k_secondary", np.nan))):
        star = "secondary" if np.isfinite(values.get("k_primary", np.nan)) else "primary"
        _add_message(analysis, f"no velocities of the {star}: the orbit is fitted, masses need both stars' "
                               "velocities (or --k1/--k2)")
        return False
    return True


def _check_masses(analysis: Analysis) -> None:
    """An absurdly small mass is never "ok": the status becomes "caution" with the reason."""
    values = getattr(analysis.dimensions, "values", {}) or {}
    small = [f"M{i} = {values[key]:.3g} M_sun" for i, key in ((1, "mass_primary"), (2, "mass_secondary"))
             if np.isfinite(values.get(key, np.nan)) and values[key] < MIN_PLAUSIBLE_MASS]
    if small:
        if analysis.status == "ok":
            analysis.status = "caution"
        _add_message(analysis, f"{', '.join(small)} is below {MIN_PLAUSIBLE_MASS} M_sun, implausible for a star "
                               "whose lines were measured: check the velocities' labels, units and time system")


def write_dimension_files(out: str | os.PathLike, content: dict[str, Any], text: str, *, orbit: Any = None,
                          dimensions: Any = None, overwrite: bool = False) -> list[Path]:
    """Write ``result.json``, ``parameters.ecsv``, ``summary.txt``, velocities and figures for ``dimensions``.

    The files of ``eclipsekit dimensions``: ``content`` is the read-back result with the
    spectroscopic and absolute sections added (:func:`~eclipsekit.results.dimensions_result`)
    and ``text`` its summary.  Written like :meth:`Analysis.write`: all at once, at the end.
    """
    analysis = Analysis(lc=None, rv=getattr(orbit, "rv", None), orbit=orbit, dimensions=dimensions)
    with results.output_folder(out, overwrite=overwrite, command=content.get("command")) as folder:
        written = [results.write_table(folder / "parameters.ecsv", results.parameters_table(content))]
        if analysis.rv is not None:
            written.append(results.write_table(folder / "velocities.ecsv", analysis.velocities_table()))
        written.extend(analysis.plot(folder).values())
        written.append(results.write_text(folder / "summary.txt", text))
        written.append(results.write_json(folder / "result.json", content))
    return [Path(out) / path.name for path in written]


def write_timing_files(out: str | os.PathLike, times: Any, *, command: str | None = None, figures: bool = True,
                       formats: tuple[str, ...] = ("png", "pdf")) -> dict[str, Path]:
    """Write ``eclipse_times.ecsv``, the O−C figure, ``timings.txt`` and (last) ``timings.json`` into ``out``.

    The files of ``eclipsekit timings`` and ``run --timings`` for an
    :class:`~eclipsekit.timings.EclipseTimes`, into a folder that exists: the staging folder of
    :func:`~eclipsekit.results.output_folder` (``timings``) or of :meth:`Analysis.write` (``run``),
    so that they are in the run's manifest.
    """
    from . import plots
    from .summary import format_timings

    folder = Path(out)
    content = results.timings_dict(times, command=command)
    written = {"eclipse_times": results.write_table(folder / "eclipse_times.ecsv", times.table)}
    if figures and len(times.table):
        written.update(plots.save_figure(plots.plot_o_minus_c(times), folder, "o_minus_c", formats))
    written["timings_summary"] = results.write_text(folder / "timings.txt", format_timings(content))
    written["timings"] = results.write_json(folder / "timings.json", content)
    return written


def _exposure_days(exposure_time: Any, lc: LightCurve) -> float | None:
    """Exposure time in days: the argument (days or Quantity) or else the file header's."""
    if exposure_time is None:
        return lc.meta.get("exposure_time")
    value = as_float(exposure_time, "exposure_time", u.day)
    if value < 0:
        raise InputError(f"`exposure_time` must be zero or positive, got {exposure_time!r}")
    return value


def _record(value: Any) -> Any:
    if isinstance(value, (tuple, list)):
        return [float(v) for v in value]
    try:
        return float(value)
    except (TypeError, ValueError):
        return str(value)


def _unique(items: list[str]) -> list[str]:
    seen: dict[str, None] = {}
    for item in items:
        seen.setdefault(item, None)
    return list(seen)
