"""Command line: ``eclipsekit <command> ...``, a thin layer over the Python API.

Exit codes: 0 an answer (status "ok", or "poor_fit" / "caution" with the caveat on the
summary's first line), 1 the analysis could not conclude (no eclipse found, fit failed),
2 bad input or usage.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import re
import shlex
import sys
import warnings
from collections.abc import Sequence
from typing import Any

from ._version import __version__
from .errors import EclipsekitError, EclipsekitWarning, InputError

__all__ = ["main"]


def _common(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--quiet", action="store_true", help="no progress bars or warnings on the terminal")
    parser.add_argument("--debug", action="store_true", help="show full tracebacks")



# ---- value parsing -----------------------------------------------------------------
def _value_error(text: str) -> tuple[float, float]:
    """``V±E`` (or ``V+-E``, ``V +/- E``) as (value, error); the error must be given, and positive.

    A bare number is refused: taken as exact, it would give answers with no (or a
    falsely small) uncertainty.
    """
    from .dimensions import parse_value_error

    try:
        value, error = parse_value_error(text)
    except InputError as exc:
        try:
            float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(str(exc)) from None
        raise argparse.ArgumentTypeError(f"{text!r} has no uncertainty: give it as {text.strip()}±E (or "
                                         f"{text.strip()}+-E), E its one-sigma uncertainty") from None
    if not error > 0:
        raise argparse.ArgumentTypeError(f"{text!r}: the uncertainty must be positive")
    return value, error


def _positive_float(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}") from None
    if not value > 0:
        raise argparse.ArgumentTypeError(f"expected a positive number, got {text!r}")
    return value


def _reader_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("light-curve columns and time")
    g.add_argument("--time-col", metavar="NAME", help="name of the time column")
    g.add_argument("--flux-col", metavar="NAME", help="name of the flux column")
    g.add_argument("--err-col", metavar="NAME", help="name of the flux (or magnitude) error column; 'none' to "
                   "use no error column and estimate the errors from the point-to-point scatter")
    g.add_argument("--mag-col", metavar="NAME", help="name of a magnitude column (converted to flux)")
    g.add_argument("--time-system", metavar="SYSTEM",
                   help="BJD_TDB, HJD, JD, MJD or unknown (overrides what is detected)")
    g.add_argument("--time-offset", type=float, metavar="DAYS", help="days to add to the file's times (e.g. 2457000)")


def _velocity_reader_options(p: argparse.ArgumentParser, labels: bool = True, coordinates: bool = True) -> None:
    g = p.add_argument_group("velocity columns and time")
    g.add_argument("--rv-time-col", metavar="NAME", help="name of the velocity file's time column")
    g.add_argument("--rv1-col", metavar="NAME", help="name of the primary's velocity column (km/s)")
    g.add_argument("--rv1-err-col", metavar="NAME", help="name of the primary's velocity error column")
    g.add_argument("--rv2-col", metavar="NAME", help="name of the secondary's velocity column (km/s)")
    g.add_argument("--rv2-err-col", metavar="NAME", help="name of the secondary's velocity error column")
    g.add_argument("--rv-time-system", metavar="SYSTEM",
                   help="time system of the velocities: BJD_TDB, HJD, JD, MJD or unknown")
    g.add_argument("--rv-time-offset", type=float, metavar="DAYS",
                   help="days to add to the velocity file's times (e.g. 2450000)")
    if labels:
        g.add_argument("--rv-labels", choices=("auto", "given", "swapped"), default="auto",
                       help="which velocity column is the star eclipsed at primary eclipse: auto (default: "
                            "decided from the light curve's ephemeris), given (rv1), swapped (rv2)")
    if coordinates:
        g.add_argument("--coordinates", metavar="\"RA DEC\"",
                       help="the target's position (degrees, or sexagesimal RA in hours): velocity times in "
                            "another time system than the light curve's are converted (light-travel time)")


def _read_rv(args: argparse.Namespace, path: str):
    """The velocity file, with the --rv-* column and time options; its errors name those options."""
    from .data import read_velocities

    try:
        return read_velocities(path, time_col=args.rv_time_col, rv1_col=args.rv1_col, rv1_err_col=args.rv1_err_col,
                               rv2_col=args.rv2_col, rv2_err_col=args.rv2_err_col, time_system=args.rv_time_system,
                               time_offset=args.rv_time_offset)
    except EclipsekitError as exc:
        exc.option_names = _VELOCITY_OPTION_OF
        raise


def _period_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("period search")
    g.add_argument("--min-period", type=_positive_float, help="shortest trial period (days)")
    g.add_argument("--max-period", type=_positive_float, help="longest trial period (days)")


def _fit_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("eclipse fit")
    g.add_argument("--period", type=_positive_float, help="start the fit from this period (days), skipping the search")
    g.add_argument("--t0", type=float, help="time of primary mid-eclipse to start from (days)")
    g.add_argument("--exposure-time", type=float, metavar="SECONDS",
                   help="integration time of each point in seconds (turns on exposure smearing)")
    g.add_argument("--supersample", type=int, metavar="N",
                   help="integration points per exposure with --exposure-time (default: the fit's own)")
    g.add_argument("--ld-law", choices=["uniform", "linear", "quadratic", "power-2"], default="quadratic",
                   help="limb-darkening law (default: quadratic)")
    # the list options extend (repeatable) and give back a light-curve FILE they swallowed: _recover_file
    g.add_argument("--ld1", nargs="+", action="extend", metavar="C",
                   help="limb-darkening coefficients of the primary: the centre of the fitted limb darkening's "
                        "weak prior (default: typical values)")
    g.add_argument("--ld2", nargs="+", action="extend", metavar="C",
                   help="limb-darkening coefficients of the secondary (as --ld1)")
    g.add_argument("--free", nargs="+", action="extend", default=[], metavar="NAME",
                   help="parameters to fit that are fixed by default (e.g. third_light, eccentricity)")
    g.add_argument("--fix", nargs="+", action="extend", default=[], metavar="NAME[=VALUE]",
                   help="parameters to hold fixed, at VALUE or else at the start value (period, t0 in days)")
    g.add_argument("--prior", nargs="+", action="extend", default=[], metavar="NAME=VALUE±SIGMA",
                   help="Gaussian prior on a fitted parameter or on light_ratio (L2/L1); also +- or +/-")
    g.add_argument("--errors", choices=_ERROR_CHOICES, default="auto",
                   help="how uncertainties are estimated (default: auto, the covariance matrix when it can "
                        "be trusted, else an MCMC)")
    g.add_argument("--baseline", choices=("auto", "polynomial", "fourier", "gp"), default="auto",
                   help="out-of-eclipse baseline multiplying the eclipses: a polynomial per segment, plus "
                        "orbital harmonics (fourier), plus a Gaussian process (gp); default: auto, chosen from "
                        "the out-of-eclipse residuals")
    g.add_argument("--harmonics", type=int, metavar="N",
                   help="orbital harmonics of the fourier/gp baseline (0-4; default: chosen by the BIC)")
    g.add_argument("--mcmc-seconds", type=_positive_float, metavar="S",
                   help="time budget of the MCMC (default: none; with a budget, results depend on the machine's speed)")
    g.add_argument("--mcmc-walkers", type=int, default=32, metavar="N", help="MCMC walkers (default: 32)")
    g.add_argument("--mcmc-steps", type=int, default=2000, metavar="N", help="MCMC steps per walker (default: 2000)")
    g.add_argument("--seed", type=int, help="random seed, for repeatable sampling")


#: the demo's default random seed: the README's example output is a demo run with it
DEMO_SEED = 1

#: the --errors choices (eclipsekit.fit.settings.ERROR_METHODS, not imported here to keep --help fast)
_ERROR_CHOICES = ("auto", "covariance", "mcmc", "permutation")

#: list options that can swallow the positional FILE: dest -> option
_LIST_OPTIONS = {"free": "--free", "fix": "--fix", "prior": "--prior", "ld1": "--ld1", "ld2": "--ld2"}


def _dimension_options(p: argparse.ArgumentParser, joint: bool = False) -> None:
    g = p.add_argument_group("spectroscopy and absolute dimensions")
    g.add_argument("--rv", help="radial-velocity file (columns time, rv1, rv1_err and/or rv2, rv2_err; km/s; "
                                "named with the --rv-* options)")
    g.add_argument("--k1", type=_value_error, metavar="V±E", help="primary's velocity semi-amplitude, km/s")
    g.add_argument("--k2", type=_value_error, metavar="V±E", help="secondary's velocity semi-amplitude, km/s")
    g.add_argument("--teff1", type=_value_error, metavar="T±E", help="primary's effective temperature, K")
    g.add_argument("--teff2", type=_value_error, metavar="T±E", help="secondary's effective temperature, K")
    g.add_argument("--parallax", type=_value_error, metavar="P±E", help="parallax in milliarcseconds")
    if joint:
        g.add_argument("--joint", action="store_true",
                       help="fit light curve and velocities together (shared period, epoch, e cos w, e sin w)")


def _output_options(p: argparse.ArgumentParser, default: str | None) -> None:
    g = p.add_argument_group("output")
    g.add_argument("--out", default=default, metavar="DIR", help=f"output folder (default: {default})")
    g.add_argument("--overwrite", action="store_true",
                   help="write into an existing, non-empty folder: replaces the files an earlier run wrote there, "
                        "keeps all others")


def _read_lc(args: argparse.Namespace):
    from .data import read_light_curve

    # --err-col none: use no error column (errors from the scatter), read_light_curve's err_col=False
    err_col = False if args.err_col is not None and args.err_col.strip().lower() == "none" else args.err_col
    return read_light_curve(args.file, time_col=args.time_col, flux_col=args.flux_col, err_col=err_col,
                            mag_col=args.mag_col, time_system=args.time_system, time_offset=args.time_offset)


#: Python names in the velocity reader's messages -> options that set them for --rv FILE (the
#: light-curve column options do not apply to it)
_VELOCITY_OPTION_OF: dict[str, str] = {
    "time_col": "--rv-time-col", "rv1_col": "--rv1-col", "rv1_err_col": "--rv1-err-col", "rv2_col": "--rv2-col",
    "rv2_err_col": "--rv2-err-col", "time_system": "--rv-time-system", "time_offset": "--rv-time-offset"}


# ---- eclipse-fit options ------------------------------------------------------------
def _known_names() -> set[str]:
    """Every name --free, --fix and --prior accept under some limb-darkening law."""
    from .fit.parameters import ALIASES, LD_LAWS, fittable_names

    return {n for law in LD_LAWS for n in fittable_names(law)} | set(ALIASES) | {"light_ratio"}


def _is_item(dest: str, token: str, known: set[str]) -> bool:
    """Whether ``token`` reads as a value of the list option ``dest`` (else it may be the FILE it swallowed)."""
    if dest in ("ld1", "ld2"):
        try:
            float(token)
        except ValueError:
            return False
        return True
    return token.split("=", 1)[0].strip() in known


def _recover_file(args: argparse.Namespace) -> None:
    """Give ``args.file`` back the light-curve FILE a list option took (``--free a b FILE``).

    A list option takes every following word up to the next option; a word that is no
    parameter name (or number, for --ld1/--ld2) cannot be its value, so when FILE is
    missing the last such word is FILE.
    """
    if args.file is not None:
        return
    known = _known_names()
    strays = [(dest, token) for dest in _LIST_OPTIONS for token in (getattr(args, dest) or [])
              if not _is_item(dest, token, known)]
    if not strays:
        raise InputError(f"give the light-curve FILE, e.g. `eclipsekit {args.command} lc.csv`")
    dest, token = strays[-1]
    values = getattr(args, dest)
    del values[len(values) - 1 - values[::-1].index(token)]
    args.file = token


def _fit_choices(args: argparse.Namespace) -> dict[str, Any]:
    """``fix``, ``free``, ``fixed`` and ``priors`` for :func:`~eclipsekit.analyse` from --fix, --free, --prior.

    Raises
    ------
    InputError
        An unknown name, a --fix VALUE that is no number, a --prior without a positive SIGMA.
    """
    from .fit.parameters import ALIASES, bounds, fittable_names

    valid = fittable_names(args.ld_law)
    fix: list[str] = []
    fixed: dict[str, float] = {}
    for token in args.fix:
        name, sep, text = (part.strip() for part in token.partition("="))
        _check_name("--fix", name, valid + ([] if sep else list(ALIASES)))
        if not sep:
            fix.append(name)
            continue
        try:
            fixed[name] = float(text)
        except ValueError:
            fixed[name] = math.nan
        if not math.isfinite(fixed[name]):
            raise InputError(f"--fix {token}: VALUE must be a number, as in --fix inclination=89.5")
        lo, hi = bounds(name, args.ld_law)
        if not (lo is None or lo <= fixed[name]) or not (hi is None or fixed[name] <= hi):
            raise InputError(f"--fix {token}: VALUE must lie within the bounds [{lo}, {hi}] of {name}")
    for name in args.free:
        _check_name("--free", name, valid + list(ALIASES))
    return {"fix": tuple(fix), "free": tuple(args.free), "fixed": fixed,
            "priors": dict(_prior(token, valid) for token in args.prior)}


def _prior(token: str, valid: list[str]) -> tuple[str, tuple[float, float]]:
    """``NAME=VALUE±SIGMA`` (also ``+-``, ``+/-``) as (name, (value, sigma)); sigma must be positive."""
    from .dimensions import parse_value_error

    name, _, text = (part.strip() for part in token.partition("="))
    _check_name("--prior", name, valid + ["light_ratio"])
    try:
        value, sigma = parse_value_error(text)
    except InputError:
        sigma = math.nan
    if not sigma > 0:
        raise InputError(f"--prior {token}: give the prior as NAME=VALUE±SIGMA with a positive SIGMA "
                         f"(or VALUE+-SIGMA), e.g. --prior light_ratio=0.19±0.02")
    return name, (value, sigma)


def _check_name(option: str, name: str, valid: list[str]) -> None:
    if name not in valid:
        raise InputError(f"{option}: unknown parameter {name!r}; valid: {', '.join(sorted(set(valid)))}")


def _floats(option: str, tokens: list[str] | None) -> list[float] | None:
    if tokens is None:
        return None
    try:
        return [float(t) for t in tokens]
    except ValueError:
        raise InputError(f"{option} takes numbers (limb-darkening coefficients), got {' '.join(tokens)!r}") from None


#: Python argument names in the package's messages -> the command-line options that set them.  The
#: package names Python arguments in backticks (`err_col`, `priors['x']`, `overwrite=True`); the
#: command line shows the option instead, when the command has it (see _in_option_terms).
_OPTION_OF = {"baseline": "--baseline", "harmonics": "--harmonics",
              "free": "--free", "fix": "--fix", "fixed": "--fix", "priors": "--prior", "errors": "--errors",
              "mcmc_seconds": "--mcmc-seconds", "mcmc_walkers": "--mcmc-walkers", "mcmc_steps": "--mcmc-steps",
              "exposure_time": "--exposure-time", "supersample": "--supersample", "ld_law": "--ld-law",
              "ld_primary": "--ld1", "ld_secondary": "--ld2", "period": "--period", "t0": "--t0",
              "min_period": "--min-period", "max_period": "--max-period", "oversample": "--oversample",
              "seed": "--seed", "time_col": "--time-col", "flux_col": "--flux-col", "err_col": "--err-col",
              "mag_err_col": "--err-col", "mag_col": "--mag-col", "time_system": "--time-system",
              "time_offset": "--time-offset", "k_primary": "--k1", "k_secondary": "--k2",
              "teff_primary": "--teff1", "teff_secondary": "--teff2", "parallax": "--parallax",
              "velocities": "--rv", "rv": "--rv", "joint": "--joint", "out": "--out",
              "orbit": "--rv", "overwrite": "--overwrite",
              "rv1_col": "--rv1-col", "rv1_err_col": "--rv1-err-col", "rv2_col": "--rv2-col",
              "rv2_err_col": "--rv2-err-col", "coordinates": "--coordinates", "labels": "--rv-labels",
              "velocity_labels": "--rv-labels", "method": "--method",
              "fit_or_ephemeris": "--from",
              # eclipsekit survey
              "inputs": "INPUTS", "workers": "--workers", "scheduler": "--scheduler",
              "stages": "--stages", "timeout": "--timeout"}

#: Python values in messages -> what the option takes (`err_col=False` is --err-col none)
_OPTION_VALUE = {"True": "", "False": "none", "None": "none"}

_PYTHON_NAME = re.compile(r"`(\w+)(?:\[([^\]`]*)\]|=([^`]*))?`")


def _option_names(args: argparse.Namespace) -> dict[str, str]:
    """The part of :data:`_OPTION_OF` whose options the command ``args`` came from has.

    ``demo`` is ``run`` on the bundled sample: its messages name the options of ``run``.
    """
    dests = set(vars(args))
    if args.command == "demo":
        dests |= set(vars(build_parser().parse_args(["run", "lc.csv"])))
    return {name: option for name, option in _OPTION_OF.items() if option.lstrip("-").replace("-", "_").lower() in dests}


def _in_option_terms(message: str, names: dict[str, str]) -> str:
    """The package's messages name Python arguments (`priors['x']`); on the command line, name the options.

    ``names`` maps the Python names to the options of the command at hand; a name
    without an option there is left as it is (never an option the command lacks).
    """
    def option(m: re.Match) -> str:
        name, key, value = m.group(1), m.group(2), m.group(3)
        if name not in names:
            return m.group(0)
        if key is not None:
            value = key
        if value is None or not value.strip("=[]()'\" ,"):
            return names[name]
        value = value.strip()
        value = _OPTION_VALUE.get(value, " ".join(re.findall(r"[^\s\[\]()'\",]+", value)))
        return f"{names[name]} {value}".rstrip()

    return _PYTHON_NAME.sub(option, message)


def _command_line(argv: Sequence[str] | None) -> str:
    return shlex.join(["eclipsekit", *(sys.argv[1:] if argv is None else argv)])


# ---- commands ----------------------------------------------------------------------
def _cmd_inspect(args: argparse.Namespace) -> int:
    """Read a light-curve or velocity file and print what was kept and rejected."""
    from .data import _guess_kind

    photometry_options = (args.flux_col, args.err_col, args.mag_col)
    velocity_options = (args.rv1_col, args.rv1_err_col, args.rv2_col, args.rv2_err_col, args.rv_time_col,
                        args.rv_time_system, args.rv_time_offset)
    if any(o is not None for o in photometry_options):
        data = _read_lc(args)
    elif any(o is not None for o in velocity_options) or _guess_kind(args.file) == "velocities":
        # the light-curve time options also apply to a velocity file given to `inspect`
        for rv_name, lc_name in (("rv_time_col", "time_col"), ("rv_time_system", "time_system"),
                                 ("rv_time_offset", "time_offset")):
            if getattr(args, rv_name) is None:
                setattr(args, rv_name, getattr(args, lc_name))
        data = _read_rv(args, args.file)
    else:
        data = _read_lc(args)
    print(json.dumps(data.summary_dict(), indent=2) if args.json else data.summary())
    return 0


def _cmd_period(args: argparse.Namespace) -> int:
    """Search for the orbital period and print the result."""
    from .errors import NoEclipseFound
    from .period import find_period

    lc = _read_lc(args)
    try:
        options = {} if args.oversample is None else {"oversample": args.oversample}
        search = find_period(lc, min_period=args.min_period, max_period=args.max_period,
                             progress=not args.quiet, **options)
    except NoEclipseFound as exc:
        if args.plot and exc.search is not None:
            _save_periodograms(exc.search, args.plot, lc)
        if args.json:
            print(json.dumps({"status": "no_eclipse_found", "message": str(exc),
                              **({"period_search": exc.search.to_dict()} if exc.search is not None else {})},
                             indent=2))
        raise
    if args.plot:
        _save_periodograms(search, args.plot, lc)
    print(json.dumps({"status": "ok", **search.to_dict()}, indent=2) if args.json else search.summary())
    return 0


def _save_periodograms(search, path: str, lc=None) -> None:
    from pathlib import Path

    from .plots import plot_periodograms
    from .results import write_atomic

    fig = plot_periodograms(search, lc)
    target = Path(path)
    write_atomic(target, lambda tmp: fig.savefig(tmp, format=target.suffix.lstrip(".") or "png"))


def _cmd_analyse(args: argparse.Namespace) -> int:
    """``fit``, ``run`` and ``demo``: the pipeline, then the result files."""
    from .data import sample_paths
    from .pipeline import analyse
    from .results import prepare_output_dir

    if args.command == "demo":
        lc_path, rv_path = sample_paths()
        lc, rv = str(lc_path), str(rv_path)
        # spectroscopic temperatures "measured" for the invented demo system (see samples/README.md);
        # no fit options: the defaults are meant to be right
        args.teff1, args.teff2 = (7550.0, 150.0), (6600.0, 150.0)
        choices: dict[str, Any] = {}
        fit_options: dict[str, Any] = {}
    else:
        choices = _fit_choices(args)
        fit_options = {"ld_law": args.ld_law, "ld_primary": _floats("--ld1", args.ld1),
                       "ld_secondary": _floats("--ld2", args.ld2), "mcmc_walkers": args.mcmc_walkers,
                       "mcmc_steps": args.mcmc_steps, "baseline": args.baseline}
        for option in ("supersample", "mcmc_seconds", "harmonics"):
            if getattr(args, option) is not None:
                fit_options[option] = getattr(args, option)
        lc = _read_lc(args)
        rv = _read_rv(args, args.rv) if getattr(args, "rv", None) else None
    coordinates = None
    if getattr(args, "coordinates", None):
        from .time_systems import parse_coordinates

        coordinates = parse_coordinates(args.coordinates)
    prepare_output_dir(args.out, overwrite=args.overwrite)  # refuse a bad folder before the long work
    exposure = None if getattr(args, "exposure_time", None) is None else args.exposure_time / 86400.0
    analysis = analyse(
        lc, rv,
        k_primary=getattr(args, "k1", None), k_secondary=getattr(args, "k2", None),
        teff_primary=getattr(args, "teff1", None), teff_secondary=getattr(args, "teff2", None),
        parallax=getattr(args, "parallax", None),
        min_period=getattr(args, "min_period", None), max_period=getattr(args, "max_period", None),
        period=getattr(args, "period", None), t0=getattr(args, "t0", None), exposure_time=exposure,
        errors=getattr(args, "errors", "auto"), progress=not args.quiet, seed=getattr(args, "seed", None),
        joint=getattr(args, "joint", False), coordinates=coordinates,
        velocity_labels=getattr(args, "rv_labels", "auto"), command=args.command_line, fit_options=fit_options,
        **choices)
    if getattr(args, "timings", False) and analysis.eclipse_fit is not None:
        from .timings import eclipse_times

        analysis.eclipse_times = eclipse_times(analysis.lc, analysis.eclipse_fit, progress=not args.quiet)
    written = analysis.write(args.out, overwrite=args.overwrite)
    print(_in_option_terms(analysis.summary(), _option_names(args)))
    if analysis.eclipse_times is not None:
        print()
        print(analysis.eclipse_times.summary())
    print()
    print(f"Results written to {args.out}/: " + ", ".join(sorted(p.name for p in written.values())))
    # "poor_fit" and "caution" are answers with a caveat (on the summary's first line); the rest did not conclude
    return 0 if analysis.status in ("ok", "poor_fit", "caution") else 1


def _cmd_dimensions(args: argparse.Namespace) -> int:
    """Absolute dimensions from a result.json and velocities (or amplitudes)."""
    from .dimensions import absolute_dimensions
    from .pipeline import write_dimension_files
    from .results import dimensions_result, load_result, prepare_output_dir
    from .spectroscopy import fit_velocities

    light = load_result(args.result)
    if args.rv is None and args.k1 is None:
        raise InputError("give velocities with --rv FILE, or amplitudes with --k1 V±E (and --k2 V±E)")
    if args.rv is not None and (args.k1 is not None or args.k2 is not None):
        raise InputError("give either --rv or --k1/--k2, not both")
    if args.out:
        prepare_output_dir(args.out, overwrite=args.overwrite)
    orbit = None
    rv = None
    if args.rv is not None:
        from .errors import FitError
        from .spectroscopy import orbit_doubts

        rv = _read_rv(args, args.rv)
        orbit = fit_velocities(rv, light, seed=args.seed, labels=args.rv_labels)
        doubts = orbit_doubts(orbit)
        if doubts:
            raise FitError("; ".join(doubts) + "; masses not computed")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", EclipsekitWarning)
        dims = absolute_dimensions(light, orbit, k_primary=args.k1, k_secondary=args.k2, teff_primary=args.teff1,
                                   teff_secondary=args.teff2, parallax=args.parallax, seed=args.seed)
    notes = list(getattr(orbit, "notes", []) or []) + [str(w.message) for w in caught] + [
        "result.json keeps no samples: light-curve parameters were drawn as independent Gaussians, so their "
        "correlations are not propagated"]
    content = dimensions_result(light, orbit, dims, notes, command=args.command_line)
    from .summary import format_summary

    text = format_summary(content)
    print(_in_option_terms(text, _option_names(args)))
    if args.out:
        written = write_dimension_files(args.out, content, text, orbit=orbit, dimensions=dims,
                                        overwrite=args.overwrite)
        print()
        print(f"Results written to {args.out}/: " + ", ".join(sorted(p.name for p in written)))
    return 0


def _cmd_timings(args: argparse.Namespace) -> int:
    """Times of minimum and the O−C analysis, from a result.json, an ephemeris, or a fit made here."""
    from .pipeline import write_timing_files
    from .results import load_result, output_folder, prepare_output_dir
    from .timings import eclipse_times

    if args.from_result is not None and (args.period is not None or args.t0 is not None):
        raise InputError("give either --from RESULT.json or --period/--t0, not both")
    if (args.period is None) != (args.t0 is None):
        raise InputError("give both --period and --t0 (or neither, to search and fit first)")
    lc = _read_lc(args)
    prepare_output_dir(args.out, overwrite=args.overwrite)  # refuse a bad folder before the long work
    if args.from_result is not None:
        source = load_result(args.from_result)
    elif args.period is not None and args.method == "kvw":
        source = {"period": args.period, "t0": args.t0}   # the model-free method needs no fit
    else:
        analysis = _analysis_for_timings(args, lc)
        if analysis.eclipse_fit is None:
            print(analysis.summary())
            return 1
        source = analysis.eclipse_fit
    times = eclipse_times(lc, source, method=args.method, progress=not args.quiet)
    with output_folder(args.out, overwrite=args.overwrite, command=args.command_line) as folder:
        written = write_timing_files(folder, times, command=args.command_line)
    print(times.summary())
    print()
    print(f"Results written to {args.out}/: " + ", ".join(sorted(p.name for p in written.values())))
    return 0 if times.status == "ok" else 1


def _analysis_for_timings(args: argparse.Namespace, lc: Any) -> Any:
    """The period search (unless --period) and the eclipse fit, as `run` does them."""
    from .pipeline import analyse

    exposure = None if args.exposure_time is None else args.exposure_time / 86400.0
    fit_options = {"ld_law": args.ld_law, "ld_primary": _floats("--ld1", args.ld1),
                   "ld_secondary": _floats("--ld2", args.ld2), "mcmc_walkers": args.mcmc_walkers,
                   "mcmc_steps": args.mcmc_steps}
    for option in ("supersample", "mcmc_seconds"):
        if getattr(args, option) is not None:
            fit_options[option] = getattr(args, option)
    return analyse(lc, min_period=args.min_period, max_period=args.max_period, period=args.period, t0=args.t0,
                   exposure_time=exposure, errors=args.errors, progress=not args.quiet, seed=args.seed,
                   command=args.command_line, fit_options=fit_options, **_fit_choices(args))


def _cmd_survey(args: argparse.Namespace) -> int:
    """Many light curves on dask.distributed into DIR/catalogue.parquet; print the summary."""
    from .survey import summarise, survey

    table = survey(args.inputs, args.out, workers=args.workers, scheduler=args.scheduler, stages=args.stages,
                   redo=args.redo, timeout=args.timeout, figures=args.figures, progress=not args.quiet)
    print(summarise(table))
    return 0


def _survey_parser(sub: Any) -> None:
    p = sub.add_parser("survey", help="many light curves on a dask cluster into one resumable catalogue")
    p.add_argument("inputs", nargs="+", metavar="INPUTS",
                   help="light-curve files, folders (searched recursively) or a table listing files "
                        "(columns light_curve, and optionally velocities, teff_primary, teff_primary_err, "
                        "teff_secondary, teff_secondary_err, period)")
    p.add_argument("--out", required=True, metavar="DIR", help="output folder (catalogue.parquet, targets/, ...)")
    p.add_argument("--workers", type=int, metavar="N", help="worker processes of the local cluster "
                   "(default: one per CPU core)")
    p.add_argument("--scheduler", metavar="ADDRESS", help="use the running dask scheduler at ADDRESS "
                   "(e.g. tcp://10.0.0.5:8786) instead of a local cluster")
    p.add_argument("--stages", choices=["search", "fit", "all"], default="all",
                   help="search: period and eclipse verdict; fit: also the eclipse fit; all (default): also "
                        "velocities and temperatures from a listing table")
    p.add_argument("--redo", action="store_true", help="recompute targets already done with the same input")
    p.add_argument("--timeout", type=_positive_float, metavar="S", help="seconds allowed per target")
    p.add_argument("--figures", action="store_true", help="also draw each target's figures")
    _common(p)
    p.set_defaults(func=_cmd_survey)


# ---- parser ------------------------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``eclipsekit`` command."""
    parser = argparse.ArgumentParser(prog="eclipsekit", description="Analysis of detached eclipsing binary stars.")
    parser.add_argument("--version", action="version", version=f"eclipsekit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    p = sub.add_parser("inspect", help="read a light curve or velocity file and summarise it")
    p.add_argument("file", help="light-curve or velocity file (CSV, ASCII, ECSV or FITS)")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    _reader_options(p)
    _velocity_reader_options(p, labels=False, coordinates=False)
    _common(p)
    p.set_defaults(func=_cmd_inspect)

    p = sub.add_parser("period", help="find the orbital period and epoch of primary eclipse")
    p.add_argument("file", help="light-curve file")
    _reader_options(p)
    _period_options(p)
    p.add_argument("--oversample", type=_positive_float, default=None,
                   help="frequency-grid oversampling factor (default: the search's own)")
    p.add_argument("--json", action="store_true", help="print the result as JSON")
    p.add_argument("--plot", metavar="FILE", help="save the periodograms to FILE (PNG or PDF)")
    _common(p)
    p.set_defaults(func=_cmd_period)

    # `run` is `fit` plus the spectroscopy and absolute-dimension options
    for name, help_text, with_dimensions in (
            ("fit", "find the period and fit both eclipses; write the results", False),
            ("run", "the whole job: period, eclipse fit, velocities, absolute dimensions, files", True)):
        p = sub.add_parser(name, help=help_text)
        # optional for argparse only: a list option may have swallowed it (_recover_file gives it back)
        p.add_argument("file", nargs="?", metavar="FILE", help="light-curve file (required)")
        _reader_options(p)
        _period_options(p)
        _fit_options(p)
        if with_dimensions:
            _dimension_options(p, joint=True)
            _velocity_reader_options(p)
            p.add_argument("--timings", action="store_true",
                           help="also time every eclipse and write the O-C analysis (as `eclipsekit timings`)")
        _output_options(p, "eclipsekit-results")
        _common(p)
        p.set_defaults(func=_cmd_analyse)
        p.usage = p.format_usage().removeprefix("usage: ").replace("[FILE]", "FILE").strip()

    p = sub.add_parser("timings", help="times of minimum of every eclipse, O-C diagram, period change, "
                                      "third-body light-travel time")
    p.add_argument("file", nargs="?", metavar="FILE", help="light-curve file (required)")
    p.add_argument("--from", dest="from_result", metavar="RESULT", help="result.json of `fit` or `run`: its "
                   "eclipse model times the eclipses (default: search and fit first, as `run`)")
    p.add_argument("--method", choices=["model", "kvw"], default=None,
                   help="model: the fitted eclipse model moved in time (default); kvw: Kwee & van Woerden "
                        "1956 (with --period/--t0 it needs no fit)")
    _reader_options(p)
    _period_options(p)
    _fit_options(p)
    _output_options(p, "eclipsekit-timings")
    _common(p)
    p.set_defaults(func=_cmd_timings)
    p.usage = p.format_usage().removeprefix("usage: ").replace("[FILE]", "FILE").strip()

    p = sub.add_parser("dimensions", help="masses, radii, gravities (and luminosities) from a result.json")
    p.add_argument("result", help="result.json written by `eclipsekit fit` or `run`")
    _dimension_options(p)
    _velocity_reader_options(p, coordinates=False)
    p.add_argument("--seed", type=int, help="random seed, for repeatable sampling")
    g = p.add_argument_group("output")
    g.add_argument("--out", metavar="DIR", help="also write result files into DIR")
    g.add_argument("--overwrite", action="store_true",
                   help="write into an existing, non-empty folder: replaces the files an earlier run wrote there, "
                        "keeps all others")
    _common(p)
    p.set_defaults(func=_cmd_dimensions)

    p = sub.add_parser("demo", help="run the whole job on the bundled sample of an invented system")
    p.add_argument("--seed", type=int, default=DEMO_SEED,
                   help=f"random seed (default: {DEMO_SEED}, so that the demo repeats the README's table exactly)")
    _output_options(p, "eclipsekit-demo")
    _common(p)
    p.set_defaults(func=_cmd_analyse)
    _survey_parser(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit code.

    When the reader of the output goes away (``eclipsekit inspect FILE | head -1``), exit
    quietly with code 1, as the Python documentation recommends (``signal`` module, "Note on
    SIGPIPE"): standard output is pointed at ``os.devnull`` so that the interpreter's final
    flush cannot fail again.
    """
    try:
        code = _main(argv)
        sys.stdout.flush()  # inside the try: a closed pipe shows up here, not at interpreter exit
    except BrokenPipeError:
        try:
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        except (OSError, ValueError):
            pass  # standard output is no real file (e.g. captured by a test): nothing left to flush
        return 1
    return code


def _main(argv: Sequence[str] | None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse already printed usage or help
        return int(exc.code or 0)
    debug = getattr(args, "debug", False)
    args.command_line = _command_line(argv)
    if args.command in ("fit", "run", "timings"):
        try:
            _recover_file(args)
        except InputError as exc:
            print(f"eclipsekit: error: {exc}", file=sys.stderr)
            return 2
    with warnings.catch_warnings():
        if getattr(args, "quiet", False):
            warnings.simplefilter("ignore", EclipsekitWarning)
        else:
            warnings.simplefilter("always", EclipsekitWarning)
            warnings.showwarning = _warning_printer(_option_names(args))
        try:
            return int(args.func(args) or 0)
        except EclipsekitError as exc:
            if debug:
                raise
            names = getattr(exc, "option_names", None)
            names = _option_names(args) if names is None else names
            print(f"eclipsekit: error: {_in_option_terms(str(exc), names)}", file=sys.stderr)
            return 2 if isinstance(exc, InputError) else 1
        except BrokenPipeError:
            raise  # main() ends quietly
        except OSError as exc:  # e.g. an output folder that cannot be written
            if debug:
                raise
            where = f" {exc.filename!r}" if exc.filename else ""
            print(f"eclipsekit: error: cannot write or read{where}: {exc.strerror or exc}", file=sys.stderr)
            return 2
        except KeyboardInterrupt:
            print("eclipsekit: interrupted", file=sys.stderr)
            return 130


def _warning_printer(names: dict[str, str]):
    """A ``warnings.showwarning`` printing one line, in the command's option terms."""
    def show(message, category, filename, lineno, file=None, line=None) -> None:
        print(f"eclipsekit: warning: {_in_option_terms(str(message), names)}", file=sys.stderr)

    return show


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
