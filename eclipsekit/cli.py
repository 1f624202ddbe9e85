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
    raise NotImplementedError  # filled in by the readers' work


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="eclipsekit", description="Analysis of detached eclipsing binary stars.")
    parser.add_argument("--version", action="version", version=f"eclipsekit {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    p = sub.add_parser("inspect", help="read a light curve or velocity file and summarise it")
    p.add_argument("file", help="light-curve or velocity file (CSV, ASCII, ECSV or FITS)")
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
