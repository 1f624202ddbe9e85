"""Writing and reading results: ``result.json``, ECSV tables and the text summary.

Every quantity is written as ``{"value": float, "uncertainty": float | null, "unit": str}``
(``../shared/DESIGN.md``), with ``"fixed": true`` when it was held fixed and
``"interval_68": [lower, upper]`` when its central 68% interval is asymmetric.  Each file is
written under a temporary name and renamed into place, so it is never half written; the
folder as a whole is filled at the end of a run (:func:`output_folder`, in ``_output_folder.py``).
"""

from __future__ import annotations

import json
import os
import secrets
from collections.abc import Callable, Iterable, Mapping
from pathlib import Path
from typing import Any

import numpy as np
from astropy.table import Table

from ._output_folder import MANIFEST, output_folder, prepare_output_dir
from ._validate import finite_or_none
from ._version import __version__
from .errors import InputError
from .summary import is_asymmetric

__all__ = [
    "SECTIONS",
    "quantity",
    "result_dict",
    "parameters_table",
    "write_atomic",
    "prepare_output_dir",
    "output_folder",
    "MANIFEST",
    "load_result",
    "ResultSummary",
    "dimensions_result",
]

#: Which quantity goes in which section of ``result.json``, with its default unit
#: (astropy unit strings; "" for dimensionless).
SECTIONS: dict[str, dict[str, str]] = {
    "ephemeris": {"period": "d", "t0": "d"},
    "geometry": {
        "radius_sum": "", "radius_ratio": "", "frac_radius_primary": "", "frac_radius_secondary": "",
        "inclination": "deg", "eccentricity": "", "omega": "deg", "ecosw": "", "esinw": "",
    },
    "photometry": {
        "surface_brightness_ratio": "", "light_ratio": "", "third_light": "",
        "ld1_1": "", "ld1_2": "", "ld2_1": "", "ld2_2": "",
        # the fitted limb-darkening combinations (eclipsekit.limb_darkening), when fitted
        "ld1_sum": "", "ld1_diff": "", "ld2_sum": "", "ld2_diff": "",
        "ld1_h1": "", "ld1_h2": "", "ld2_h1": "", "ld2_h2": "",
        "depth_primary": "", "depth_secondary": "",
    },
    "spectroscopy": {
        "k_primary": "km / s", "k_secondary": "km / s", "gamma": "km / s", "gamma_offset": "km / s",
        "mass_ratio": "", "mass_function": "solMass", "jitter_primary": "km / s", "jitter_secondary": "km / s",
        "rms_primary": "km / s", "rms_secondary": "km / s",
    },
    "absolute": {
        "a": "solRad", "mass_sum": "solMass", "mass_primary": "solMass", "mass_secondary": "solMass",
        "radius_primary": "solRad", "radius_secondary": "solRad",
        "logg_primary": "dex(cm / s2)", "logg_secondary": "dex(cm / s2)",
        "density_primary": "g / cm3", "density_secondary": "g / cm3",
        "vsync_primary": "km / s", "vsync_secondary": "km / s",
        "luminosity_primary": "solLum", "luminosity_secondary": "solLum",
        "mbol_primary": "mag", "mbol_secondary": "mag", "distance": "pc",
    },
}


#: Optional model terms, reported only when they were fitted.
_ONLY_WHEN_FITTED = {"gamma_offset", "jitter_primary", "jitter_secondary"}


def quantity(value: Any, uncertainty: Any = None, unit: str = "", *, fixed: bool = False,
             interval: tuple[float, float] | None = None) -> dict[str, Any]:
    """One quantity in the ``result.json`` form.

    ``fixed`` adds ``"fixed": true``; ``interval`` (lower, upper) adds ``"interval_68"``.
    """
    out = {"value": finite_or_none(value), "uncertainty": finite_or_none(uncertainty), "unit": unit}
    if fixed:
        out["fixed"] = True
    if interval is not None:
        out["interval_68"] = [finite_or_none(interval[0]), finite_or_none(interval[1])]
    return out


def _section(sources: Iterable[Any], names: Mapping[str, str]) -> dict[str, Any]:
    """Collect the named quantities from result objects with ``values``/``uncertainties``.

    Units are those of :data:`SECTIONS` (astropy unit strings), whatever the object's own labels.
    A quantity in the source's ``fixed`` is marked fixed; one whose interval in the
    source's ``intervals`` is asymmetric (:func:`is_asymmetric`) carries it.

    A later source overrides an earlier one (e.g. the eclipse fit's period over the
    period search's).
    """
    out: dict[str, Any] = {}
    for src in sources:
        if src is None:
            continue
        values = getattr(src, "values", {}) or {}
        uncs = getattr(src, "uncertainties", {}) or {}
        free = getattr(src, "free", None)
        fixed = set(held_fixed(src))
        intervals = getattr(src, "intervals", None) or {}
        for name, unit in names.items():
            if name in _ONLY_WHEN_FITTED and free is not None and name not in free:
                continue
            # fit statistics such as rms_primary are attributes rather than fitted values
            value = values.get(name, getattr(src, name, None))
            if finite_or_none(value) is not None:
                interval = intervals.get(name)
                out[name] = quantity(value, uncs.get(name), unit, fixed=name in fixed,
                                     interval=interval if is_asymmetric(value, interval) else None)
    return out


def held_fixed(fit: Any) -> list[str]:
    """Names of the model parameters a fit held fixed: its ``fixed`` list.

    For a fit that does not list them (a velocity fit, or an eclipse fit made before
    ``EclipseFit.fixed`` was filled), the model parameters it neither fitted nor computed
    from fitted limb-darkening combinations.
    """
    if getattr(fit, "fixed", None):
        return list(fit.fixed)
    free, law = getattr(fit, "free", None), getattr(fit, "ld_law", None)
    if free is None or law is None:
        return []
    from .fit.parameters import ld_fit_names, ld_names, parameter_names

    coefficients = set(ld_names(law))
    combined = {s for s in (1, 2) if any(n in free for n in ld_fit_names(law, s) if n not in coefficients)}
    return [n for n in parameter_names(law)
            if n not in free and not (n in coefficients and int(n[2]) in combined)]


def result_dict(analysis: Any) -> dict[str, Any]:
    """Build the ``result.json`` content of an :class:`~eclipsekit.pipeline.Analysis`."""
    lc = analysis.lc
    fit = analysis.eclipse_fit
    search = analysis.search
    search_values = None
    if search is not None:
        # The period search's estimates, in the same form as the fits' (used when no fit exists).
        search_values = _Estimates(
            {"period": search.period, "t0": search.t0},
            {"period": search.period_err, "t0": search.t0_err},
        )
    out: dict[str, Any] = {
        "eclipsekit_version": __version__,
        "command": analysis.command,
        "status": analysis.status,
        "message": analysis.message,
        "input": _input_section(analysis),
        "ephemeris": _section([search_values, fit], SECTIONS["ephemeris"]),
    }
    out["ephemeris"]["time_system"] = lc.meta.get("time_system", "unknown") if lc is not None else "unknown"
    if fit is not None:
        out["geometry"] = _section([fit], SECTIONS["geometry"])
        out["photometry"] = _section([fit], SECTIONS["photometry"])
        out["photometry"]["ld_law"] = fit.ld_law
    if analysis.orbit is not None or analysis.dimensions is not None:
        out["spectroscopy"] = _section([analysis.dimensions, analysis.orbit], SECTIONS["spectroscopy"])
    if analysis.dimensions is not None:
        out["absolute"] = _section([analysis.dimensions], SECTIONS["absolute"])
        out["absolute"]["uncertainty_budget"] = dict(getattr(analysis.dimensions, "budget", {}) or {})
    out["fit"] = _fit_section(analysis)
    if search is not None:
        # wall-clock timings are no result: left out, so that the same input and seed give the same file
        out["period_search"] = {k: v for k, v in search.to_dict().items() if k != "timings"}
    return out


class _Estimates:
    """Minimal ``values``/``uncertainties`` holder (for quantities that come from no fit)."""

    def __init__(self, values: dict[str, float], uncertainties: dict[str, float | None]):
        self.values = values
        self.uncertainties = uncertainties
        self.units: dict[str, str] = {}


def _input_section(analysis: Any) -> dict[str, Any]:
    lc = analysis.lc
    section: dict[str, Any] = {}
    if lc is not None:
        fitted = analysis.eclipse_fit.lc if analysis.eclipse_fit is not None else lc
        section["light_curve"] = {
            "file": lc.meta.get("source"),
            "n_points_used": int(len(fitted)),
            "n_rejected": {k: int(v.size) for k, v in fitted.rejected.items()},
            "time_system": lc.meta.get("time_system", "unknown"),
            "time_offset": lc.meta.get("time_offset", 0.0),
            "exposure_time": quantity(
                None if lc.meta.get("exposure_time") is None else lc.meta["exposure_time"] * 86400.0, None, "s"),
            "passband": lc.meta.get("passband"),
        }
    rv = analysis.rv
    if rv is not None:
        section["velocities"] = {
            "file": rv.meta.get("source"),
            "n_primary": int(np.isfinite(rv.rv1).sum()),
            "n_secondary": int(np.isfinite(rv.rv2).sum()),
            "n_rejected": {k: int(v.size) for k, v in rv.rejected.items()},
            "time_system": rv.meta.get("time_system", "unknown"),
            "time_converted_from": rv.meta.get("time_converted_from"),
            "labels": getattr(analysis.orbit, "labels", None),
            "noise_model": getattr(analysis.orbit, "noise_model", None),
        }
    for name, given in (analysis.user_inputs or {}).items():
        section[name] = given
    return section


def _fit_section(analysis: Any) -> dict[str, Any]:
    fit = analysis.eclipse_fit
    section: dict[str, Any] = {"warnings": list(analysis.warnings)}
    if fit is None:
        return section
    section.update({
        "method": ("joint least squares of light curve and velocities (lmfit)"
                   if getattr(fit, "orbit", None) is not None else "least squares (lmfit)"),
        "uncertainties": fit.errors_method,  # the method used ("auto" resolved to covariance or mcmc)
        "errors_reasons": list(fit.diagnostics.get("errors_reasons") or []),
        "reduced_chi_square": finite_or_none(fit.redchi),
        "rms": quantity(fit.rms, None, ""),
        "bic": finite_or_none(fit.bic),
        "n_free_parameters": int(fit.n_free),
        "free_parameters": list(fit.free),
        "fixed_parameters": held_fixed(fit),
        "priors": {name: {"value": finite_or_none(mu), "sigma": finite_or_none(sd)}
                   for name, (mu, sd) in _priors_used(fit).items()},
        "n_samples": int(len(next(iter(fit.samples.values())))) if fit.samples else 0,
        "exposure_time": quantity((fit.exposure_time or 0.0) * 86400.0, None, "s"),
        "supersample": int(fit.supersample or 1),
        "success": bool(fit.success),
        "message": fit.message,
        "status": getattr(fit, "status", "ok"),
        "status_reasons": list(getattr(fit, "status_reasons", []) or []),
        "notes": list(getattr(fit, "notes", []) or []) + _velocity_notes(analysis),
    })
    for key in ("baseline", "noise_model", "gp_hyperparameters"):  # what the fit decided (see notes)
        found = fit.diagnostics.get(key)
        if found:
            section[key] = {k: (finite_or_none(v) if isinstance(v, (int, float, np.floating)) and not
                                isinstance(v, bool) else v) for k, v in found.items() if k != "note"}
    mcmc = fit.diagnostics.get("mcmc")
    if mcmc:
        section["mcmc"] = {k: (finite_or_none(v) if isinstance(v, (int, float, np.floating)) else v)
                           for k, v in mcmc.items()}
    if analysis.orbit is not None:
        section["velocity_fit_reduced_chi_square"] = finite_or_none(getattr(analysis.orbit, "redchi", None))
    return section


def _velocity_notes(analysis: Any) -> list[str]:
    """What the velocity step decided (labels, noise model, time conversion): notes, not warnings."""
    rv_meta = getattr(analysis.rv, "meta", None) or {}
    converted = [n for n in rv_meta.get("notes") or [] if n.startswith("velocity times converted")]
    return converted + list(getattr(analysis.orbit, "notes", []) or [])


def _priors_used(fit: Any) -> dict[str, tuple[float, float]]:
    """Every Gaussian prior of the fit: its ``priors``, or for a fit that does not list them
    (made before ``EclipseFit.priors`` was filled) those of its fitted problem."""
    if getattr(fit, "priors", None):
        return dict(fit.priors)
    mapping = getattr(getattr(fit, "_problem", None), "mapping", None)
    return dict(getattr(mapping, "priors", None) or {})


def parameters_table(result: Mapping[str, Any]) -> Table:
    """All quantities of a ``result.json`` dict as an astropy Table, one row per quantity."""
    rows = []
    for section in SECTIONS:
        for name, q in (result.get(section) or {}).items():
            if isinstance(q, dict) and "value" in q:
                rows.append((section, name, q["value"], q["uncertainty"], q["unit"], bool(q.get("fixed", False))))
    table = Table(rows=rows or None, names=("section", "name", "value", "uncertainty", "unit", "fixed"),
                  dtype=(str, str, float, float, str, bool))
    table["value"] = [np.nan if r[2] is None else r[2] for r in rows]
    table["uncertainty"] = [np.nan if r[3] is None else r[3] for r in rows]
    table.meta["comments"] = ["eclipsekit results; NaN uncertainty = not determined; fixed = held at its value"]
    return table


# -- files -------------------------------------------------------------------------
def write_atomic(path: str | os.PathLike, write: Callable[[str], None]) -> Path:
    """Call ``write(tmp_name)`` for a temporary file beside ``path``, then rename it into place.

    The rename is atomic on POSIX file systems, so ``path`` is either the old file,
    absent, or complete — never half written.  The temporary file is created by ``write``
    itself (not made in advance with private permissions), so the file's permissions
    follow the umask like any file the user makes.
    """
    path = Path(path)
    tmp = path.with_name(f".{path.stem}-{secrets.token_hex(8)}{''.join(path.suffixes)}.part")
    try:
        write(str(tmp))
        os.replace(tmp, path)
    except BaseException as exc:
        if os.path.exists(tmp):
            os.remove(tmp)
        if isinstance(exc, OSError) and exc.filename is not None and str(tmp) in str(exc.filename):
            raise OSError(exc.errno, exc.strerror, str(path)) from exc  # name the file, not its hidden temporary
        raise
    return path


def write_json(path: str | os.PathLike, content: Mapping[str, Any]) -> Path:
    """Write ``content`` as indented JSON, atomically."""
    def _write(tmp: str) -> None:
        with open(tmp, "w", encoding="utf-8") as fh:
            json.dump(content, fh, indent=2, default=_json_default)
            fh.write("\n")
    return write_atomic(path, _write)


def write_table(path: str | os.PathLike, table: Table) -> Path:
    """Write an astropy Table as ECSV, atomically."""
    return write_atomic(path, lambda tmp: table.write(tmp, format="ascii.ecsv", overwrite=True))


def write_text(path: str | os.PathLike, text: str) -> Path:
    def _write(tmp: str) -> None:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text if text.endswith("\n") else text + "\n")
    return write_atomic(path, _write)


def _json_default(obj: Any) -> Any:
    if isinstance(obj, np.generic):
        return obj.item()
    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, Path):
        return str(obj)
    raise TypeError(f"cannot write {type(obj).__name__} to JSON")


# -- reading back --------------------------------------------------------------------
class ResultSummary:
    """A ``result.json`` read back, with ``values``/``uncertainties``/``units`` and Gaussian samples.

    Used by ``eclipsekit dimensions RESULT.json``: the file keeps no samples, so the
    samples are independent Gaussian draws (correlations between the light-curve
    parameters are lost, which overestimates the spread of quantities whose inputs are
    anti-correlated; a warning says so).
    """

    def __init__(self, content: Mapping[str, Any], source: str | None = None, n_samples: int = 20000,
                 seed: int | None = 1):
        self.content = dict(content)
        self.source = source
        self.values: dict[str, float] = {}
        self.uncertainties: dict[str, float | None] = {}
        self.units: dict[str, str] = {}
        for section in ("ephemeris", "geometry", "photometry"):
            for name, q in (content.get(section) or {}).items():
                if isinstance(q, dict) and q.get("value") is not None:
                    self.values[name] = float(q["value"])
                    self.uncertainties[name] = q.get("uncertainty")
                    self.units[name] = q.get("unit", "")
        rng = np.random.default_rng(seed)
        self.samples = {
            name: (v + (self.uncertainties[name] or 0.0) * rng.standard_normal(n_samples))
            for name, v in self.values.items()
        }

    def __repr__(self) -> str:
        return f"<ResultSummary {self.source or ''}: {len(self.values)} quantities>"


def load_result(path: str | os.PathLike, n_samples: int = 20000) -> ResultSummary:
    """Read a ``result.json`` written by eclipsekit."""
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{str(path)!r}: no such result file")
    try:
        content = json.loads(path.read_text(encoding="utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InputError(f"{str(path)!r} is not a result.json file ({exc.__class__.__name__})") from None
    if not isinstance(content, dict) or "geometry" not in content:
        raise InputError(f"{str(path)!r} holds no eclipse-fit geometry; run `eclipsekit fit` or `run` first")
    return ResultSummary(content, source=str(path), n_samples=n_samples)


#: the status message's part saying a run stopped after the eclipse fit (dropped once masses are computed)
NO_VELOCITIES = ("no velocities given: stopped after the eclipse fit (velocities, or the amplitudes K1 and K2, "
                 "give masses and radii)")


def dimensions_result(light: ResultSummary, orbit: Any, dimensions: Any, notes: Iterable[str],
                      command: str | None = None) -> dict[str, Any]:
    """A read-back ``result.json`` with the spectroscopic and absolute sections added."""
    content = dict(light.content)
    content["eclipsekit_version"] = __version__
    content["command"] = command
    # the light-curve fit's caveat still applies to the masses and radii
    content["status"] = content.get("status") if content.get("status") in ("poor_fit", "caution") else "ok"
    # the eclipse fit's own caveat stays; "stopped after the eclipse fit" no longer holds
    kept = [part for part in str(content.get("message") or "").split("; ") if part and part != NO_VELOCITIES]
    content["message"] = "; ".join(kept)
    content["spectroscopy"] = _section([dimensions, orbit], SECTIONS["spectroscopy"])
    content["absolute"] = _section([dimensions], SECTIONS["absolute"])
    content["absolute"]["uncertainty_budget"] = dict(getattr(dimensions, "budget", {}) or {})
    fit = dict(content.get("fit") or {})
    warnings_ = list(fit.get("warnings") or [])
    for note in [*notes, *(getattr(orbit, "warnings", []) or []), *(getattr(dimensions, "warnings", []) or [])]:
        if note not in warnings_:
            warnings_.append(note)
    fit["warnings"] = warnings_
    content["fit"] = fit
    return content


# -- eclipse timings (eclipsekit timings; run --timings) -----------------------------------------
#: Units of the quantities of timings.json (astropy unit strings), by key.
TIMING_UNITS = {
    "period": "d", "t0": "d", "secondary_offset": "d", "quadratic_term": "d", "dp_de": "d / cycle", "dp_dt": "",
    "trend_difference": "d / cycle", "secondary_displacement": "d", "ecosw_from_timing": "",
    "omega_dot": "deg / cycle", "semi_amplitude": "d", "phase": "deg", "mass_function": "solMass",
    "a12_sin_i": "AU",
}
_LTT_KEYS = ("semi_amplitude", "period", "phase", "mass_function", "a12_sin_i")


def _timing_section(values: Mapping[str, Any]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in values.items():
        if isinstance(value, tuple) and len(value) == 2:
            out[key] = quantity(value[0], value[1], TIMING_UNITS.get(key, ""))
        elif isinstance(value, (bool, np.bool_)):
            out[key] = bool(value)
        elif isinstance(value, (int, float, np.integer, np.floating)):
            out[key] = finite_or_none(value) if not isinstance(value, (int, np.integer)) else int(value)
        else:
            out[key] = value
    return out


def timings_dict(times: Any, command: str | None = None) -> dict[str, Any]:
    """The ``timings.json`` content of an :class:`~eclipsekit.timings.EclipseTimes`."""
    table = times.table
    kinds = np.asarray(table["eclipse"]) if len(table) else np.zeros(0, str)
    out: dict[str, Any] = {
        "eclipsekit_version": __version__,
        "command": command,
        "status": times.status,
        "message": times.message,
        "input": {"light_curve": times.source, "time_system": times.time_system, "method": times.method,
                  "n_timed": {"primary": int(np.sum(kinds == "primary")),
                              "secondary": int(np.sum(kinds == "secondary"))},
                  "n_skipped": {k: int(v) for k, v in times.skipped.items()},
                  "reference_ephemeris": {"period": quantity(times.reference["period"], None, "d"),
                                          "t0": quantity(times.reference["t0"], None, "d")}},
    }
    oc = times.oc
    if oc is None:
        missing = {"note": times.message}
        out["ephemeris"] = dict(missing)
        out["period_change"] = dict(missing)
        out["apsidal_motion"] = dict(missing)
        out["light_travel_time"] = {**{k: quantity(None, None, TIMING_UNITS[k]) for k in _LTT_KEYS},
                                    "delta_chi_square": None, "delta_bic": None, "p_value": None,
                                    "detected": False, **missing}
    else:
        out["ephemeris"] = _timing_section(oc.ephemeris)
        out["ephemeris"]["time_system"] = times.time_system
        out["ephemeris"]["error_scale"] = finite_or_none(oc.error_scale)
        out["period_change"] = _timing_section(oc.period_change)
        out["apsidal_motion"] = _timing_section(oc.apsidal_motion)
        out["light_travel_time"] = _timing_section(oc.light_travel_time)
        out["selected_terms"] = list(oc.selected_terms)
    out["warnings"] = list(times.warnings)
    return out
