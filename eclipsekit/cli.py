"""Command line: ``eclipsekit <command> ...``, a thin layer over the Python API.

Exit codes: 0 ok, 1 the analysis could not conclude (no eclipse found, fit failed),
2 bad input or usage.
"""

from __future__ import annotations

import argparse
import sys
import warnings
from collections.abc import Sequence

from . import __version__
from .errors import EclipsekitError, EclipsekitWarning, InputError

__all__ = ["main"]


def _common(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--quiet", action="store_true", help="no progress bars or warnings on the terminal")
    parser.add_argument("--debug", action="store_true", help="show full tracebacks")


def _cmd_inspect(args: argparse.Namespace) -> int:
    """Read a light-curve or velocity file and print what was kept and rejected."""
    import json

    from .data import _guess_kind, read_light_curve, read_velocities

    photometry_options = (args.flux_col, args.err_col, args.mag_col)
    time_options = {"time_col": args.time_col, "time_system": args.time_system, "time_offset": args.time_offset}
    if any(o is not None for o in photometry_options) or _guess_kind(args.file) == "light curve":
        data = read_light_curve(args.file, flux_col=args.flux_col, err_col=args.err_col, mag_col=args.mag_col,
                                **time_options)
    else:
        data = read_velocities(args.file, **time_options)
    if args.json:
        print(json.dumps(data.summary_dict(), indent=2))
    else:
        print(data.summary())
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="eclipsekit", description="Analysis of detached eclipsing binary stars.")
    parser.add_argument("--version", action="version", version=f"eclipsekit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    p = sub.add_parser("inspect", help="read a light curve or velocity file and summarise it")
    p.add_argument("file", help="light-curve or velocity file (CSV, ASCII, ECSV or FITS)")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    p.add_argument("--time-col", metavar="NAME", help="name of the time column")
    p.add_argument("--flux-col", metavar="NAME", help="name of the flux column")
    p.add_argument("--err-col", metavar="NAME", help="name of the flux (or magnitude) error column")
    p.add_argument("--mag-col", metavar="NAME", help="name of a magnitude column (instead of flux)")
    p.add_argument("--time-system", metavar="SYSTEM", help="BJD_TDB, HJD, JD, MJD or unknown")
    p.add_argument("--time-offset", metavar="DAYS", type=float, help="days to add to the file's times")
    _common(p)
    p.set_defaults(func=_cmd_inspect)
    return parser


class _ArgumentParserError(Exception):
    pass


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit code."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse already printed usage or help
        return int(exc.code or 0)
    debug = getattr(args, "debug", False)
    with warnings.catch_warnings():
        if getattr(args, "quiet", False):
            warnings.simplefilter("ignore", EclipsekitWarning)
        else:
            warnings.simplefilter("always", EclipsekitWarning)
            warnings.showwarning = _show_warning
        try:
            return int(args.func(args) or 0)
        except EclipsekitError as exc:
            if debug:
                raise
            print(f"eclipsekit: error: {exc}", file=sys.stderr)
            return 2 if isinstance(exc, InputError) else 1
        except KeyboardInterrupt:
            print("eclipsekit: interrupted", file=sys.stderr)
            return 130


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:
    print(f"eclipsekit: warning: {message}", file=sys.stderr)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
