"""Light curves and radial-velocity curves, and the readers that make them.

The containers (:class:`LightCurve`, :class:`VelocityCurve`) hold plain numpy arrays
in days, normalised flux and km/s.  They are validated once, when made; the numerical
core trusts them afterwards.  Every point removed on the way is kept in a rejection
record with its reason, so nothing is dropped silently.

The readers (:func:`read_light_curve`, :func:`read_velocities`) take CSV,
whitespace-separated ASCII with ``#`` comments, ECSV and FITS binary tables (through
astropy.io), find the columns by common names unless told, and turn every problem
with the file into a one-line :class:`~eclipsekit.errors.InputError` naming the file,
row and column.  Files are only ever read.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field, replace
from os import PathLike
from pathlib import Path
from typing import Any

import numpy as np
from astropy import units as u
from astropy.io import ascii as astropy_ascii
from astropy.io import fits
from astropy.stats import sigma_clip
from astropy.table import Table
from astropy.time import Time
from astropy.utils.exceptions import AstropyWarning

from . import _columns
from ._validate import (ERR_FACTOR, FLUX_FACTOR, MAX_ABS_TIME, MAX_TIME_SPAN, VALUE_LIMIT, finite_or_none,
                        light_curve_range_problem)
from .errors import EclipsekitWarning, InputError

__all__ = ["sample_paths", "LightCurve", "VelocityCurve", "read_light_curve", "read_velocities", "magnitudes_to_flux",
           "TIME_SYSTEMS", "MIN_POINTS", "MIN_VELOCITIES", "MAX_ABS_TIME", "MAX_TIME_SPAN", "ERR_FACTOR",
           "FLUX_FACTOR", "VALUE_LIMIT"]

#: Time systems a light curve or velocity curve may be in.
TIME_SYSTEMS = ("BJD_TDB", "HJD", "JD", "MJD", "unknown")
#: Fewest usable photometric points a light curve may have.
MIN_POINTS = 20
#: Fewest primary velocities a velocity curve may have (K and gamma plus one to spare).
MIN_VELOCITIES = 3


def _rejections_merge(old: dict[str, np.ndarray], reason: str, rows: np.ndarray) -> dict[str, np.ndarray]:
    new = {k: np.asarray(v, dtype=int) for k, v in old.items()}
    rows = np.asarray(rows, dtype=int)
    if rows.size:
        new[reason] = np.union1d(new.get(reason, np.empty(0, int)), rows)
    return new


class _Series:
    """What :class:`LightCurve` and :class:`VelocityCurve` share: length, span, rejection record.

    Subclasses are frozen dataclasses with ``time``, ``meta`` and ``rejected`` fields.
    """

    def _finish_meta(self, defaults: dict[str, Any]) -> None:
        """Fill ``meta`` over ``defaults`` and store ``rejected`` as int arrays (in ``__post_init__``)."""
        meta = dict(defaults)
        meta.update(self.meta or {})
        object.__setattr__(self, "meta", meta)
        object.__setattr__(self, "rejected", {k: np.asarray(v, dtype=int) for k, v in (self.rejected or {}).items()})

    def __len__(self) -> int:
        return self.time.size

    @property
    def baseline(self) -> float:
        """Time span covered, in days."""
        return float(self.time[-1] - self.time[0]) if self.time.size else 0.0

    @property
    def n_rejected(self) -> int:
        return int(sum(v.size for v in self.rejected.values()))


@dataclass(frozen=True, eq=False)
class LightCurve(_Series):
    """A cleaned photometric time series.

    Attributes
    ----------
    time : ndarray
        Times in days, sorted, in the time system ``meta["time_system"]``; any
        offset found in the file has been added (see ``meta["time_offset"]``).
    flux : ndarray
        Relative flux, normalised to a median out-of-eclipse level of about 1.
    flux_err : ndarray
        One-sigma uncertainties of ``flux`` (all > 0).
    row : ndarray of int
        Row of the input table (0-based, data rows only) that each point came from.
    meta : dict
        ``source`` (file name or None), ``time_system`` (``"BJD_TDB"``, ``"HJD"``,
        ``"JD"``, ``"MJD"`` or ``"unknown"``), ``time_offset`` (days added to the
        file's times), ``passband`` (str or None), ``exposure_time`` (days or None),
        ``input_kind`` (``"flux"`` or ``"magnitude"``), ``normalisation`` (the
        divisor applied), ``columns`` (the columns used), plus reader notes.
    rejected : dict of str -> ndarray of int
        Input rows removed, by reason (e.g. ``"non-finite"``, ``"quality flag"``,
        ``"duplicate time"``, ``"outlier"``).
    """

    time: np.ndarray
    flux: np.ndarray
    flux_err: np.ndarray
    row: np.ndarray | None = None
    meta: dict[str, Any] = field(default_factory=dict)
    rejected: dict[str, np.ndarray] = field(default_factory=dict)

    def __post_init__(self) -> None:
        t = np.ascontiguousarray(self.time, dtype=float)
        f = np.ascontiguousarray(self.flux, dtype=float)
        e = np.ascontiguousarray(self.flux_err, dtype=float)
        if not (t.ndim == f.ndim == e.ndim == 1) or not (t.size == f.size == e.size):
            raise InputError("`time`, `flux` and `flux_err` must be 1-D arrays of the same length")
        if not (np.all(np.isfinite(t)) and np.all(np.isfinite(f)) and np.all(np.isfinite(e))):
            raise InputError("`time`, `flux` and `flux_err` must be finite (use the readers to clean raw data)")
        if np.any(e <= 0):
            raise InputError("`flux_err` must be positive")
        row = np.arange(t.size) if self.row is None else np.asarray(self.row, dtype=int)
        if row.shape != t.shape:
            raise InputError("`row` must be as long as `time`")
        problem = light_curve_range_problem(t, f, e)
        if problem is not None:
            i, role, text = problem
            raise InputError(f"`{role}` at row {row[i]}: {text}")
        if t.size > 1 and np.any(np.diff(t) < 0):
            order = np.argsort(t, kind="stable")
            t, f, e, row = t[order], f[order], e[order], row[order]
        row = np.ascontiguousarray(row)
        object.__setattr__(self, "time", t)
        object.__setattr__(self, "flux", f)
        object.__setattr__(self, "flux_err", e)
        object.__setattr__(self, "row", row)
        self._finish_meta({"source": None, "time_system": "unknown", "time_offset": 0.0, "passband": None,
                           "exposure_time": None})

    # -- derived properties (also len(), baseline, n_rejected from _Series) --------
    @property
    def cadence(self) -> float:
        """Median interval between consecutive points, in days."""
        return float(np.median(np.diff(self.time))) if self.time.size > 1 else float("nan")

    def without(self, mask: np.ndarray, reason: str) -> "LightCurve":
        """Return a copy with the points where ``mask`` is True moved to the rejection record."""
        mask = np.asarray(mask, dtype=bool)
        keep = ~mask
        return replace(self, time=self.time[keep], flux=self.flux[keep], flux_err=self.flux_err[keep],
                       row=self.row[keep], rejected=_rejections_merge(self.rejected, reason, self.row[mask]))

    def summary_dict(self) -> dict[str, Any]:
        """What was read and kept, as a JSON-serialisable dict (see :meth:`summary`)."""
        return {
            "kind": "light curve",
            "source": self.meta.get("source"),
            "format": self.meta.get("format"),
            "columns": dict(self.meta.get("columns") or {}),
            "input_kind": self.meta.get("input_kind"),
            "passband": self.meta.get("passband"),
            "time_system": self.meta.get("time_system"),
            "time_offset": finite_or_none(self.meta.get("time_offset")),
            "exposure_time": finite_or_none(self.meta.get("exposure_time")),
            "normalisation": finite_or_none(self.meta.get("normalisation")),
            "flux_err_estimated": bool(self.meta.get("flux_err_estimated", False)),
            "n_rows": _json_int(self.meta.get("n_rows")),
            "n_points": len(self),
            "n_rejected": self.n_rejected,
            "rejected": {k: int(v.size) for k, v in self.rejected.items()},
            "time_start": finite_or_none(self.time[0]) if len(self) else None,
            "time_end": finite_or_none(self.time[-1]) if len(self) else None,
            "time_span": self.baseline,
            "median_cadence": finite_or_none(self.cadence),
            "largest_gaps": _largest_gaps(self.time),
            "median_flux_err": finite_or_none(np.median(self.flux_err)) if len(self) else None,
            "notes": list(self.meta.get("notes") or []),
        }

    def summary(self) -> str:
        """Multi-line text: source, time system, points kept and rejected by reason, span, cadence, gaps."""
        d = self.summary_dict()
        lines = [f"Light curve: {d['source'] or '<arrays>'}" + (f" ({d['format']})" if d["format"] else "")]
        lines += _describe_columns_and_time(d)
        if d["input_kind"] == "magnitude":
            lines.append("  input: magnitudes, converted to relative flux (Pogson)")
        if d["passband"]:
            lines.append(f"  passband: {d['passband']}")
        if d["exposure_time"] is not None:
            lines.append(f"  exposure time: {d['exposure_time']:.6g} d ({d['exposure_time'] * 86400:.4g} s)")
        if d["normalisation"] is not None:
            lines.append(f"  normalised by: {d['normalisation']:.8g} (median out-of-eclipse level)")
        lines.append(f"  points kept: {d['n_points']}" + (f" of {d['n_rows']} rows" if d["n_rows"] is not None else ""))
        lines += _describe_rejections(d["rejected"])
        lines.append(f"  flux errors: {'estimated from point-to-point scatter' if d['flux_err_estimated'] else 'from file'}"
                     + (f", median {d['median_flux_err']:.3g}" if d["median_flux_err"] is not None else ""))
        lines += _describe_span(d)
        lines += [f"  note: {note}" for note in d["notes"]]
        return "\n".join(lines)

    def __repr__(self) -> str:
        src = self.meta.get("source") or "<arrays>"
        return (f"<LightCurve {src}: {len(self)} points over {self.baseline:.3f} d, "
                f"{self.n_rejected} rejected, time system {self.meta.get('time_system')}>")


@dataclass(frozen=True, eq=False)
class VelocityCurve(_Series):
    """Radial velocities of one or both stars, in km/s (positive = receding).

    Attributes
    ----------
    time : ndarray
        Times in days (same conventions as :class:`LightCurve`).
    rv1, rv1_err : ndarray
        Primary's velocities and errors; NaN where the star was not measured.
    rv2, rv2_err : ndarray
        Secondary's velocities and errors; all NaN for a single-lined binary.
    row, meta, rejected
        As for :class:`LightCurve`.
    """

    time: np.ndarray
    rv1: np.ndarray
    rv1_err: np.ndarray
    rv2: np.ndarray | None = None
    rv2_err: np.ndarray | None = None
    row: np.ndarray | None = None
    meta: dict[str, Any] = field(default_factory=dict)
    rejected: dict[str, np.ndarray] = field(default_factory=dict)

    def __post_init__(self) -> None:
        t = np.ascontiguousarray(self.time, dtype=float)
        n = t.size
        arrays = {}
        for name in ("rv1", "rv1_err", "rv2", "rv2_err"):
            v = getattr(self, name)
            v = np.full(n, np.nan) if v is None else np.ascontiguousarray(v, dtype=float)
            if v.shape != (n,):
                raise InputError(f"`{name}` must be a 1-D array as long as `time`")
            arrays[name] = v
        if not np.all(np.isfinite(t)):
            raise InputError("`time` must be finite")
        for star in ("rv1", "rv2"):
            has = np.isfinite(arrays[star])
            err = arrays[star + "_err"][has]
            if np.any(~np.isfinite(err)) or np.any(err <= 0):
                raise InputError(f"`{star}_err` must be positive and finite wherever `{star}` is given")
            arrays[star + "_err"] = np.where(has, arrays[star + "_err"], np.nan)
        if not (np.any(np.isfinite(arrays["rv1"])) or np.any(np.isfinite(arrays["rv2"]))):
            raise InputError("no velocities given: `rv1` and `rv2` are both empty")
        order = np.argsort(t, kind="stable")
        row = np.arange(n) if self.row is None else np.asarray(self.row, dtype=int)
        object.__setattr__(self, "time", t[order])
        for name, v in arrays.items():
            object.__setattr__(self, name, v[order])
        object.__setattr__(self, "row", row[order])
        self._finish_meta({"source": None, "time_system": "unknown", "time_offset": 0.0})

    @property
    def double_lined(self) -> bool:
        """True when both stars' velocities are given (each at some epoch)."""
        return bool(np.any(np.isfinite(self.rv1)) and np.any(np.isfinite(self.rv2)))

    def swapped(self, why: str) -> "VelocityCurve":
        """A copy with the two stars' columns exchanged (rv1 <-> rv2), ``why`` added to the notes.

        ``meta["labels_swapped"]`` records it; ``meta["columns"]`` names the file's columns
        under their new roles.
        """
        meta = dict(self.meta)
        cols = dict(meta.get("columns") or {})
        if cols:
            cols = {**cols, "rv1": cols.get("rv2"), "rv1_err": cols.get("rv2_err"),
                    "rv2": cols.get("rv1"), "rv2_err": cols.get("rv1_err")}
        meta.update(columns=cols, labels_swapped=not meta.get("labels_swapped", False),
                    notes=[*(meta.get("notes") or []), why])
        return replace(self, rv1=self.rv2, rv1_err=self.rv2_err, rv2=self.rv1, rv2_err=self.rv1_err, meta=meta)

    def summary_dict(self) -> dict[str, Any]:
        """What was read and kept, as a JSON-serialisable dict (see :meth:`summary`)."""
        return {
            "kind": "velocities",
            "source": self.meta.get("source"),
            "format": self.meta.get("format"),
            "columns": dict(self.meta.get("columns") or {}),
            "time_system": self.meta.get("time_system"),
            "time_offset": finite_or_none(self.meta.get("time_offset")),
            "n_rows": _json_int(self.meta.get("n_rows")),
            "n_epochs": len(self),
            "n_primary": int(np.isfinite(self.rv1).sum()),
            "n_secondary": int(np.isfinite(self.rv2).sum()),
            "double_lined": self.double_lined,
            "n_rejected": self.n_rejected,
            "rejected": {k: int(v.size) for k, v in self.rejected.items()},
            "time_start": finite_or_none(self.time[0]) if len(self) else None,
            "time_end": finite_or_none(self.time[-1]) if len(self) else None,
            "time_span": self.baseline,
            "median_rv1_err": finite_or_none(np.nanmedian(self.rv1_err)) if np.isfinite(self.rv1_err).any() else None,
            "median_rv2_err": finite_or_none(np.nanmedian(self.rv2_err)) if np.isfinite(self.rv2_err).any() else None,
            "notes": list(self.meta.get("notes") or []),
        }

    def summary(self) -> str:
        """Multi-line text: source, time system, epochs per star, rejections, span."""
        d = self.summary_dict()
        lines = [f"Velocities: {d['source'] or '<arrays>'}" + (f" ({d['format']})" if d["format"] else "")]
        lines += _describe_columns_and_time(d)
        lines.append(f"  epochs kept: {d['n_epochs']}" + (f" of {d['n_rows']} rows" if d["n_rows"] is not None else ""))
        lines.append(f"  primary (rv1): {d['n_primary']} velocities"
                     + (f", median error {d['median_rv1_err']:.3g} km/s" if d["median_rv1_err"] is not None else "")
                     if d["n_primary"] else "  primary (rv1): none (single-lined: the secondary's velocities only)")
        if d["n_secondary"]:
            lines.append(f"  secondary (rv2): {d['n_secondary']} velocities"
                         + (f", median error {d['median_rv2_err']:.3g} km/s" if d["median_rv2_err"] is not None else ""))
        else:
            lines.append("  secondary (rv2): none (single-lined)")
        lines += _describe_rejections(d["rejected"])
        if d["time_start"] is not None:
            lines.append(f"  time span: {d['time_span']:.4f} d ({d['time_start']:.6f} to {d['time_end']:.6f})")
        lines += [f"  note: {note}" for note in d["notes"]]
        return "\n".join(lines)

    def __repr__(self) -> str:
        src = self.meta.get("source") or "<arrays>"
        n1 = int(np.isfinite(self.rv1).sum())
        n2 = int(np.isfinite(self.rv2).sum())
        return f"<VelocityCurve {src}: {n1} primary and {n2} secondary velocities>"


# ---------------------------------------------------------------------------------
# Summary helpers
# ---------------------------------------------------------------------------------
def _json_int(value: Any) -> int | None:
    return None if value is None else int(value)


def _largest_gaps(time: np.ndarray, n: int = 3) -> list[dict[str, float]]:
    """The ``n`` longest intervals between consecutive times, longest first.

    Only intervals longer than twice the median interval count as gaps, so a
    uniformly sampled series has none.
    """
    if time.size < 3:
        return []
    steps = np.diff(time)
    order = np.argsort(steps, kind="stable")[::-1][:n]
    order = order[steps[order] > 2.0 * np.median(steps)]
    return [{"start": float(time[i]), "end": float(time[i + 1]), "length": float(steps[i])} for i in order]


def _describe_columns_and_time(d: dict[str, Any]) -> list[str]:
    cols = ", ".join(f"{role}={name}" for role, name in d["columns"].items() if name is not None)
    offset = d["time_offset"] or 0.0
    lines = [f"  columns: {cols}"] if cols else []
    lines.append(f"  time system: {d['time_system']}" + (f", offset {offset:.10g} d added to the file's times" if offset else ""))
    return lines


def _describe_rejections(rejected: dict[str, int]) -> list[str]:
    if not rejected:
        return ["  rejected: none"]
    return [f"  rejected: {sum(rejected.values())}"] + [f"    {reason}: {count}" for reason, count in rejected.items()]


def _describe_span(d: dict[str, Any]) -> list[str]:
    if d["time_start"] is None:
        return []
    lines = [f"  time span: {d['time_span']:.4f} d ({d['time_start']:.6f} to {d['time_end']:.6f})"]
    if d["median_cadence"] is not None:
        lines.append(f"  median cadence: {d['median_cadence']:.6g} d ({d['median_cadence'] * 1440:.4g} min)")
    gaps = "; ".join(f"{g['length']:.4g} d after {g['start']:.6f}" for g in d["largest_gaps"])
    lines.append(f"  largest gaps: {gaps or 'none (no interval over twice the median cadence)'}")
    return lines


# ---------------------------------------------------------------------------------
# Reading tables
# ---------------------------------------------------------------------------------
_FITS_MAGIC = b"SIMPLE  ="
_MISSING_TEXT = {"", "nan", "na", "n/a", "null", "none", "-", "--", "---"}


@dataclass(frozen=True)
class _RawTable:
    """A table as read from a file, before any interpretation."""

    table: Table
    header: dict[str, Any]
    path: Path
    format: str

    @property
    def name(self) -> str:
        return str(self.path)


def _one_line(exc: BaseException) -> str:
    """First line of an exception message, for the one-line errors of the command line."""
    text = str(exc).strip().splitlines()
    return (text[0][:200] if text else type(exc).__name__)


def _check_path(path: str | PathLike) -> Path:
    try:
        p = Path(path)
    except TypeError:
        raise InputError(f"`path` must be a file name, got {type(path).__name__}") from None
    if not p.exists():
        raise InputError(f"{p}: no such file")
    if p.is_dir():
        raise InputError(f"{p}: is a directory, not a file")
    try:
        size = p.stat().st_size
    except OSError as exc:
        raise InputError(f"{p}: cannot read ({_one_line(exc)})") from None
    if size == 0:
        raise InputError(f"{p}: the file is empty")
    return p


def _read_bytes(p: Path) -> bytes:
    try:
        return p.read_bytes()
    except OSError as exc:
        raise InputError(f"{p}: cannot read ({_one_line(exc)})") from None


def _load_table(path: str | PathLike) -> _RawTable:
    """Read the first table in a FITS, ECSV, CSV or whitespace-separated ASCII file.

    FITS is recognised by its magic bytes, ECSV by its header line; other text is
    read as CSV when its first content line has commas, else as whitespace-separated
    columns, with the header taken from the last comment line when the first content
    line is numbers.  Every failure becomes an :class:`InputError` naming the file.
    """
    p = _check_path(path)
    data = _read_bytes(p)
    if data.startswith(_FITS_MAGIC):
        raw = _read_fits(p)
    else:
        raw = _read_text(p, _decode_text(p, data))
    if len(raw.table) == 0:
        raise InputError(f"{p}: has a header but no data rows (columns: {_list_columns(raw.table.colnames)})")
    return raw


def _decode_text(p: Path, data: bytes) -> str:
    if b"\x00" in data:
        raise InputError(f"{p}: a binary file that is neither FITS nor text; give a FITS, ECSV, CSV or ASCII table")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        pass
    # Old tables may be Latin-1; accept them only if they look like text (no control characters).
    if any(b < 32 and b not in b"\t\n\r\f\v" for b in data):
        raise InputError(f"{p}: a binary file that is neither FITS nor text; give a FITS, ECSV, CSV or ASCII table")
    return data.decode("latin-1")


def _is_number(token: str) -> bool:
    try:
        float(token)
    except ValueError:
        return token.strip().lower() in _MISSING_TEXT
    return True


def _text_reader_args(lines: list[str]) -> tuple[dict[str, Any], str]:
    """astropy.io.ascii arguments for a text table, and a short name of the format."""
    if lines and lines[0].lstrip().startswith("# %ECSV"):
        return {"format": "ecsv"}, "ECSV"
    comments = []
    first = None
    for line in lines:
        stripped = line.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            comments.append(stripped)
            continue
        first = stripped
        break
    if first is None:
        raise InputError("no data rows")  # re-raised with the file name by the caller
    csv = "," in first
    tokens = first.split(",") if csv else first.split()
    delimiter = {"delimiter": ","} if csv else {}
    name = "CSV" if csv else "ASCII"
    if not all(_is_number(t) for t in tokens):
        return ({"format": "csv", "comment": "#"} if csv else {"format": "basic"}), name
    # The first content line is data: the header, if any, is the last comment line.
    if comments:
        header_tokens = comments[-1].lstrip("#").replace(",", " ").split()
        if len(header_tokens) == len(tokens) and not all(_is_number(t) for t in header_tokens):
            return {"format": "commented_header", "header_start": len(comments) - 1, **delimiter}, name
    return {"format": "no_header", **delimiter}, name


def _read_text(p: Path, text: str) -> _RawTable:
    lines = text.splitlines()
    try:
        kwargs, name = _text_reader_args(lines)
    except InputError as exc:
        raise InputError(f"{p}: {exc}") from None
    if name == "ASCII":  # astropy splits on spaces or on tabs, not on a mix: make it spaces
        lines = [line.replace("\t", " ") for line in lines]
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", AstropyWarning)
            table = astropy_ascii.read(lines, guess=False, **kwargs)
    except InputError:
        raise
    except Exception as exc:  # astropy raises many types on malformed text; report them all alike
        raise InputError(f"{p}: cannot read the {name} table ({_one_line(exc)})") from None
    if not isinstance(table, Table):  # pragma: no cover - defensive
        raise InputError(f"{p}: cannot read the {name} table")
    return _RawTable(table=table, header=dict(table.meta or {}), path=p, format=name)


def _read_fits(p: Path) -> _RawTable:
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", AstropyWarning)
            with fits.open(p, memmap=False, mode="readonly") as hdul:
                index = next((i for i, hdu in enumerate(hdul)
                              if isinstance(hdu, (fits.BinTableHDU, fits.TableHDU))), None)
                if index is None:
                    raise InputError(f"{p}: FITS file with no table extension; give a FITS binary table")
                header = {k: v for k, v in hdul[0].header.items() if k}
                header.update({k: v for k, v in hdul[index].header.items() if k})
                table = Table.read(hdul[index], format="fits", character_as_bytes=False)
    except InputError:
        raise
    except Exception as exc:  # corrupt or truncated FITS: astropy raises OSError, ValueError, ...
        raise InputError(f"{p}: cannot read the FITS file ({_one_line(exc)})") from None
    table.meta.clear()
    return _RawTable(table=table, header=header, path=p, format="FITS")


def _list_columns(colnames: list[str]) -> str:
    """Column names for a one-line message (odd names quoted, so no line breaks get in)."""
    shown = [name if name.isprintable() and name.strip() == name and name else repr(name) for name in colnames]
    return ", ".join(shown) if shown else "none"


# ---------------------------------------------------------------------------------
# Columns and values
# ---------------------------------------------------------------------------------
def _column(raw: _RawTable, override: str | None, option: str, found: str | None) -> str | None:
    """The column named by ``override`` (case-insensitive), else the detected ``found``."""
    if override is None:
        return found
    if not isinstance(override, str):
        raise InputError(f"`{option}` must be a column name, got {override!r}")
    match = _columns.find_column(raw.table.colnames, [override.strip().lower()])
    if match is None:
        raise InputError(f"{raw.name}: column {override!r} (from `{option}`) not found; "
                         f"columns found: {_list_columns(raw.table.colnames)}")
    return match


def _missing_column(raw: _RawTable, what: str, option: str, extra: str = "") -> InputError:
    # the command line shows its own option for `option` (eclipsekit.cli._in_option_terms; for a velocity
    # file, the --rv-* options)
    return InputError(f"{raw.name}: no {what} column found (columns found: {_list_columns(raw.table.colnames)}); "
                      f"name it with `{option}`{extra}")


def _numeric(raw: _RawTable, name: str) -> np.ndarray:
    """Column ``name`` as float64; empty or masked cells become NaN; text raises InputError."""
    col = raw.table[name]
    if isinstance(col, Time):  # an ECSV time column: Julian dates in the column's own scale
        return np.asarray(col.jd, dtype=float)
    if col.ndim != 1:
        raise InputError(f"{raw.name}: column {name!r} is not a simple column (shape {col.shape}); "
                         "name a 1-D column instead")
    mask = np.ma.getmaskarray(col) if hasattr(col, "mask") else np.zeros(len(col), bool)
    data = np.asarray(col.filled() if hasattr(col, "filled") and mask.any() else col)
    if data.dtype.kind in "biuf":
        out = data.astype(float)
    else:
        out = np.empty(len(data), dtype=float)
        for i, value in enumerate(data):
            text = value.decode("utf-8", "replace") if isinstance(value, bytes) else str(value)
            out[i] = _parse_number(raw, name, i, text, mask[i])
    out[mask] = np.nan
    return out


def _parse_number(raw: _RawTable, name: str, i: int, text: str, masked: bool) -> float:
    if masked or text.strip().lower() in _MISSING_TEXT:
        return np.nan
    try:
        return float(text)
    except ValueError:
        raise InputError(f"{raw.name}: data row {i + 1}, column {name!r}: {text.strip()[:40]!r} is not a number") from None


def _scale_to(raw: _RawTable, name: str, values: np.ndarray, unit: u.UnitBase) -> np.ndarray:
    """Convert ``values`` to ``unit`` when the column carries a unit astropy understands."""
    col_unit = getattr(raw.table[name], "unit", None)
    if col_unit is None or isinstance(col_unit, u.UnrecognizedUnit):
        return values
    try:
        return values * col_unit.to(unit)
    except (u.UnitsError, ValueError, TypeError):
        return values  # e.g. a flux column labelled "electron / s": not a unit we convert


def _check_all_nan(raw: _RawTable, name: str, values: np.ndarray) -> None:
    if not np.any(np.isfinite(values)):
        raise InputError(f"{raw.name}: all values in column {name!r} are NaN or empty")


def _check_positive_errors(raw: _RawTable, name: str, err: np.ndarray, use: np.ndarray) -> None:
    """Errors must be > 0 wherever used: name the first bad row (1-based data row)."""
    bad = np.flatnonzero(use & np.isfinite(err) & (err <= 0))
    if bad.size:
        i = bad[0]
        raise InputError(f"{raw.name}: data row {i + 1}, column {name!r}: error {err[i]:g} is not positive "
                         f"({bad.size} such rows); errors must be > 0")


def _reject(keep: np.ndarray, rejected: dict[str, np.ndarray], mask: np.ndarray, reason: str) -> None:
    """Move rows where ``mask`` (and still kept) to ``rejected[reason]``, in place."""
    newly = keep & mask
    if newly.any():
        rejected[reason] = np.union1d(rejected.get(reason, np.empty(0, int)), np.flatnonzero(newly))
        keep &= ~mask


def _first_occurrence_duplicates(time: np.ndarray, keep: np.ndarray) -> np.ndarray:
    """Mask of kept rows whose time equals that of an earlier kept row (the first is kept)."""
    idx = np.flatnonzero(keep)
    _, first = np.unique(time[idx], return_index=True)
    dup = np.zeros(time.size, bool)
    dup[idx] = True
    dup[idx[first]] = False
    return dup


# ---------------------------------------------------------------------------------
# Time reference
# ---------------------------------------------------------------------------------
def _validate_time_system(time_system: str | None) -> str | None:
    if time_system is None:
        return None
    if not isinstance(time_system, str):
        raise InputError(f"`time_system` must be one of {', '.join(TIME_SYSTEMS)}, got {time_system!r}")
    aliases = {s.lower(): s for s in TIME_SYSTEMS}
    aliases.update({"bjd": "BJD_TDB", "bjd-tdb": "BJD_TDB", "bjd_tdb": "BJD_TDB"})
    key = time_system.strip().lower()
    if key not in aliases:
        raise InputError(f"`time_system` must be one of {', '.join(TIME_SYSTEMS)}, got {time_system!r}")
    return aliases[key]


def _validate_time_offset(time_offset: float | u.Quantity | None) -> float | None:
    if time_offset is None:
        return None
    try:
        value = float(u.Quantity(time_offset, u.day).value) if isinstance(time_offset, u.Quantity) else float(time_offset)
    except (TypeError, ValueError, u.UnitsError):
        raise InputError(f"`time_offset` must be a number of days, got {time_offset!r}") from None
    if not math.isfinite(value):
        raise InputError(f"`time_offset` must be finite, got {time_offset!r}")
    return value


def _header_time_reference(header: dict[str, Any]) -> tuple[str | None, float | None, float]:
    """Time system, offset (days) and unit scale (to days) from FITS time keywords.

    ``BJDREFI + BJDREFF`` (or ``MJDREF``, ``JDREF``) is the offset of the TIME column;
    ``TIMESYS``/``TIMEREF`` give the scale and reference position (FITS time standard,
    Rots et al. 2015, A&A 574, A36).
    """
    def get(key: str) -> Any:
        return header.get(key)

    system = offset = None
    timesys = str(get("TIMESYS") or "").strip().upper()
    timeref = str(get("TIMEREF") or "").strip().upper()
    if get("BJDREFI") is not None or get("BJDREFF") is not None:
        offset = float(get("BJDREFI") or 0) + float(get("BJDREFF") or 0)
        system = "BJD_TDB" if timesys in ("", "TDB") else "unknown"
    elif get("MJDREFI") is not None or get("MJDREF") is not None:
        offset = float(get("MJDREFI") or get("MJDREF") or 0) + float(get("MJDREFF") or 0)
        system = "MJD"
    elif get("JDREF") is not None:
        offset = float(get("JDREF"))
        system = "JD"
    elif timesys == "TDB" and timeref == "SOLARSYSTEM":
        system = "BJD_TDB"
    if system == "BJD_TDB" and timeref == "HELIOCENTRIC":
        system = "HJD"
    scale = 1.0
    unit = get("TIMEUNIT")
    if unit:
        try:
            scale = float(u.Unit(str(unit).strip()).to(u.day))
        except (ValueError, u.UnitsError, TypeError):
            scale = 1.0
    return system, offset, scale


def _time_reference(raw: _RawTable, time_name: str, time_system: str | None,
                    time_offset: float | None) -> tuple[str, float, float]:
    """(system, offset in days, scale to days): explicit arguments, then FITS header, then the column name."""
    if isinstance(raw.table[time_name], Time):  # converted to JD by `_numeric`
        return time_system or "JD", float(time_offset or 0.0), 1.0
    name_system, name_offset = _columns.time_system_from_name(time_name)
    head_system, head_offset, scale = _header_time_reference(raw.header)
    system = time_system or head_system or name_system or "unknown"
    offset = time_offset if time_offset is not None else (
        head_offset if head_offset is not None else (name_offset or 0.0))
    col_unit = getattr(raw.table[time_name], "unit", None)
    if scale == 1.0 and col_unit is not None and not isinstance(col_unit, u.UnrecognizedUnit):
        try:
            scale = float(col_unit.to(u.day))
        except (u.UnitsError, TypeError, ValueError):
            scale = 1.0
    return system, float(offset), scale


def _exposure_time(header: dict[str, Any], cadence: float) -> float | None:
    """Exposure (integration window) of one point, in days, from FITS keywords, else None.

    In order: ``FRAMETIM`` x ``NUM_FRM`` (seconds: the window from the first frame's
    start to the last frame's end), ``TIMEDEL`` (days, the cadence of contiguous
    integrations), ``INT_TIME`` x ``NUM_FRM`` (seconds), ``EXPTIME`` (seconds), and
    ``EXPOSURE`` (days) only when it is no longer than the cadence -- in satellite
    files ``EXPOSURE`` is the total time on source, not one point's exposure.
    """
    def num(key: str) -> float | None:
        value = header.get(key)
        try:
            value = float(value)
        except (TypeError, ValueError):
            return None
        return value if math.isfinite(value) and value > 0 else None

    frames = num("NUM_FRM")
    candidates = [
        num("FRAMETIM") * frames / 86400.0 if num("FRAMETIM") and frames else None,
        num("TIMEDEL"),
        num("INT_TIME") * frames / 86400.0 if num("INT_TIME") and frames else None,
        num("EXPTIME") / 86400.0 if num("EXPTIME") else None,
    ]
    exposure = num("EXPOSURE")
    if exposure is not None and math.isfinite(cadence) and exposure <= 1.01 * cadence:
        candidates.append(exposure)
    return next((c for c in candidates if c is not None), None)


# ---------------------------------------------------------------------------------
# Photometric conversions
# ---------------------------------------------------------------------------------
def magnitudes_to_flux(mag: np.ndarray, mag_err: np.ndarray | None = None, *,
                       reference: float | None = None) -> tuple[np.ndarray, np.ndarray | None, float]:
    """Convert magnitudes to relative flux with the Pogson relation.

    Parameters
    ----------
    mag : ndarray
        Magnitudes.
    mag_err : ndarray, optional
        One-sigma errors of ``mag``.
    reference : float, optional
        Magnitude of unit flux; default the median of the finite ``mag``.

    Returns
    -------
    flux, flux_err : ndarray
        ``F = 10**(-0.4 (m - m_ref))`` and ``sigma_F = F 0.4 ln(10) sigma_m`` (first-order
        propagation); ``flux_err`` is None when ``mag_err`` is.
    reference : float
        The ``m_ref`` used.

    References
    ----------
    .. [1] Pogson, N. 1856, MNRAS, 17, 12 (m = -2.5 log10 F).
    """
    mag = np.asarray(mag, dtype=float)
    if reference is None:
        finite = mag[np.isfinite(mag)]
        reference = float(np.median(finite)) if finite.size else 0.0
    flux = 10.0 ** (-0.4 * (mag - reference))
    flux_err = None if mag_err is None else flux * 0.4 * np.log(10.0) * np.asarray(mag_err, dtype=float)
    return flux, flux_err, float(reference)


def _out_of_eclipse_level(flux: np.ndarray) -> float:
    """Median out-of-eclipse flux: the median after iterative 3-sigma clipping.

    The clipping is centred on the median with a MAD-based scale, so the points in
    eclipse (a minority, far below) are removed while the symmetric noise of the
    out-of-eclipse points is not biased.
    """
    clipped = sigma_clip(flux, sigma=3.0, maxiters=10, cenfunc="median", stdfunc="mad_std", masked=True)
    kept = np.asarray(clipped.compressed() if np.ma.is_masked(clipped) else np.asarray(clipped))
    return float(np.median(kept if kept.size else flux))


def _scatter_error(flux: np.ndarray) -> float:
    """Per-point error from the point-to-point scatter: 1.4826 MAD(diff) / sqrt(2).

    Differences of consecutive points cancel slow variations; the MAD makes the
    estimate robust to eclipse ingress/egress steps; 1.4826 scales a MAD to a
    Gaussian sigma and sqrt(2) undoes the variance doubling of a difference.
    """
    diff = np.diff(flux)
    return float(1.4826 * np.median(np.abs(diff - np.median(diff))) / np.sqrt(2.0))


# ---------------------------------------------------------------------------------
# Readers
# ---------------------------------------------------------------------------------
def _light_curve_columns(raw: _RawTable, *, time_col, flux_col, err_col, mag_col, mag_err_col,
                         quality_col) -> dict[str, str | None]:
    names = raw.table.colnames
    time = _column(raw, time_col, "time_col", _columns.find_time_column(names))
    if time is None:
        raise _missing_column(raw, "time", "time_col")
    if flux_col is not None and mag_col is not None:
        raise InputError("give either `flux_col` or `mag_col`, not both")
    if mag_col is not None:
        kind, value = "mag", _column(raw, mag_col, "mag_col", None)
    else:
        value = _column(raw, flux_col, "flux_col", _columns.find_column(names, _columns.FLUX_NAMES))
        kind = "flux"
        if value is None:
            value = _columns.find_column(names, _columns.MAG_NAMES)
            kind = "mag"
    if value is None:
        raise _missing_column(raw, "flux or magnitude", "flux_col", " or `mag_col`")
    if value == time:
        raise InputError(f"{raw.name}: the time and {kind} columns are both {value!r}")
    if mag_err_col is not None and (kind != "mag" or err_col not in (None, False)):
        raise InputError("`mag_err_col` names the error of a magnitude column; give it with `mag_col` "
                         "(or a detected magnitude column) and without `err_col`")
    err_override, err_option = (mag_err_col, "mag_err_col") if mag_err_col is not None else (err_col, "err_col")
    others = [n for n in names if n not in (time, value)]
    if err_override is False:  # no error column wanted: errors from the scatter
        err = None
    else:
        err = _column(raw, err_override, err_option,
                      _columns.find_column(others, _columns.error_candidates(value, kind)))
    quality = _column(raw, quality_col, "quality_col", _columns.find_column(others, _columns.QUALITY_NAMES))
    return {"time": time, kind: value, "err": err, "quality": quality}


def read_light_curve(path: str | PathLike, *, time_col: str | None = None, flux_col: str | None = None,
                     err_col: str | bool | None = None, mag_col: str | None = None,
                     mag_err_col: str | bool | None = None,
                     quality_col: str | None = None, time_system: str | None = None,
                     time_offset: float | u.Quantity | None = None, normalise: bool = True) -> LightCurve:
    """Read a light curve from a CSV, whitespace ASCII, ECSV or FITS table.

    Parameters
    ----------
    path : str or path-like
        The file.  FITS is recognised by its content, ECSV by its header; other text
        is read as CSV (commas) or whitespace-separated columns, ``#`` starting comments.
    time_col, flux_col, err_col, mag_col, mag_err_col, quality_col : str, optional
        Column names (case-insensitive), overriding detection by common names.  None
        (the default) detects the column.  ``err_col=False`` (or ``mag_err_col=False``)
        uses no error column at all: the errors are then estimated from the scatter.
    time_system : {"BJD_TDB", "HJD", "JD", "MJD", "unknown"}, optional
        Overrides the system implied by the FITS header or the time column's name.
    time_offset : float or Quantity, optional
        Days to add to the file's times, overriding a FITS ``BJDREFI``/``BJDREFF``
        offset or one implied by the column's name (``BTJD``: 2457000, ``BKJD``:
        2454833, ``HJD-2450000``: 2450000).
    normalise : bool, optional
        Divide flux and errors by the median out-of-eclipse level (default True).

    Returns
    -------
    LightCurve
        Sorted, cleaned; ``rejected`` holds the rows removed by reason
        (``"quality flag"``, ``"non-finite"``, ``"time out of range"`` (``|time|`` over
        :data:`MAX_ABS_TIME`), ``"duplicate time"`` (first kept), ``"flux out of range"``
        (over :data:`FLUX_FACTOR` times the median ``|flux|``), ``"flux error out of
        range"`` (not within :data:`ERR_FACTOR` of the median error)).

    Raises
    ------
    InputError
        Unreadable file, missing column, text in a numeric column, all-NaN column,
        errors <= 0, fewer than :data:`MIN_POINTS` usable points, a span over
        :data:`MAX_TIME_SPAN`, or values beyond :data:`VALUE_LIMIT` (see
        :func:`eclipsekit._validate.light_curve_range_problem`).

    Warns
    -----
    EclipsekitWarning
        When errors are estimated from the scatter: no error column found, one that is
        empty (all NaN), or ``err_col=False``.

    Notes
    -----
    Magnitudes become relative flux by the Pogson relation (see
    :func:`magnitudes_to_flux`).  The normalisation level is the median of the
    flux after iterative 3-sigma clipping about the median (MAD scale), which drops
    the eclipses.  Missing errors are 1.4826 MAD(diff F)/sqrt(2) for every point.
    The input file is only read.
    """
    system_arg = _validate_time_system(time_system)
    offset_arg = _validate_time_offset(time_offset)
    raw = _load_table(path)
    cols = _light_curve_columns(raw, time_col=time_col, flux_col=flux_col, err_col=err_col, mag_col=mag_col,
                                mag_err_col=mag_err_col, quality_col=quality_col)
    kind = "mag" if "mag" in cols else "flux"
    value_name = cols[kind]
    system, offset, scale = _time_reference(raw, cols["time"], system_arg, offset_arg)
    time = _numeric(raw, cols["time"]) * scale + offset
    value = _numeric(raw, value_name)
    err = _numeric(raw, cols["err"]) if cols["err"] else None
    quality = _numeric(raw, cols["quality"]) if cols["quality"] else None

    _check_all_nan(raw, cols["time"], time)
    _check_all_nan(raw, value_name, value)
    # an empty error column is no error column (the errors are then estimated from the scatter)
    empty_err = cols["err"] if err is not None and not np.any(np.isfinite(err)) else None
    if empty_err is not None:
        err, cols["err"] = None, None
    keep = np.ones(time.size, bool)
    rejected: dict[str, np.ndarray] = {}
    if quality is not None:
        _reject(keep, rejected, np.isfinite(quality) & (quality != 0), "quality flag")
    finite = np.isfinite(time) & np.isfinite(value) & (np.isfinite(err) if err is not None else True)
    _reject(keep, rejected, ~finite, "non-finite")
    _reject(keep, rejected, np.abs(time) > MAX_ABS_TIME, "time out of range")
    if err is not None:
        _check_positive_errors(raw, cols["err"], err, keep)
    _reject(keep, rejected, _first_occurrence_duplicates(time, keep), "duplicate time")
    _check_enough(raw, int(keep.sum()), rejected, MIN_POINTS, "usable points")

    rows = np.flatnonzero(keep)
    t, v = time[rows], value[rows]
    e = err[rows] if err is not None else None
    notes: list[str] = []
    if np.any(np.diff(t) < 0):
        notes.append("input was not sorted by time; sorted")
    order = np.argsort(t, kind="stable")
    t, v, rows = t[order], v[order], rows[order]
    e = e[order] if e is not None else None

    meta: dict[str, Any] = {"input_kind": "flux" if kind == "flux" else "magnitude"}
    if kind == "mag":
        with np.errstate(over="ignore", under="ignore"):  # extreme magnitudes: rejected just below
            v, e, meta["magnitude_reference"] = magnitudes_to_flux(v, e)
    t, v, e, rows = _reject_out_of_range(t, v, e, rows, rejected)
    _check_enough(raw, rows.size, rejected, MIN_POINTS, "usable points")
    level = _out_of_eclipse_level(v) if normalise else 1.0
    if normalise and not (math.isfinite(level) and level > 0):
        raise InputError(f"{raw.name}: cannot normalise: the median out-of-eclipse flux in {value_name!r} is "
                         f"{level:g}; use normalise=False for such data")
    v = v / level
    if e is not None:
        e = e / level
    else:
        why = (f"error column {empty_err!r} is empty (all NaN)" if empty_err is not None
               else "error column not used, as asked" if err_col is False or mag_err_col is False
               else "no error column found")
        e = _estimated_errors(raw, value_name, v, why)
        notes.append(f"{why}: errors estimated from the point-to-point scatter")
    _check_ranges(raw, cols, value_name, t, v, e, rows)
    meta.update({
        "source": str(raw.path), "format": raw.format, "time_system": system, "time_offset": offset,
        "passband": _passband(raw, value_name), "exposure_time": _exposure_time(raw.header, _median_step(t)),
        "normalisation": level if normalise else None, "columns": cols, "n_rows": len(raw.table),
        "flux_err_estimated": err is None, "notes": notes,
    })
    return LightCurve(t, v, e, row=rows, meta=meta, rejected=rejected)


def _reject_out_of_range(t: np.ndarray, v: np.ndarray, e: np.ndarray | None, rows: np.ndarray,
                         rejected: dict[str, np.ndarray]) -> tuple[np.ndarray, ...]:
    """Move rows whose flux or error is out of range to ``rejected`` (in place); return the rest.

    ``"flux out of range"``: not finite after a magnitude conversion, or ``|flux|`` above
    :data:`FLUX_FACTOR` times the median ``|flux|``.  ``"flux error out of range"``: an
    error not within :data:`ERR_FACTOR` of the median error (such a point would carry
    1e6 times the weight of the others, or none).  Such values are fill values or slips,
    not measurements; removing them keeps weights and their sums finite in the kernels.
    """
    bad_flux = ~np.isfinite(v)
    scale = float(np.median(np.abs(v[~bad_flux]))) if (~bad_flux).any() else 0.0
    if scale > 0:
        bad_flux |= np.abs(v) > FLUX_FACTOR * scale
    bad_err = np.zeros(v.size, bool)
    if e is not None:
        usable = np.isfinite(e) & (e > 0) & ~bad_flux
        median = float(np.median(e[usable])) if usable.any() else math.nan
        with np.errstate(invalid="ignore"):
            bad_err = ~bad_flux & ~((e >= median / ERR_FACTOR) & (e <= median * ERR_FACTOR))
    for reason, mask in (("flux out of range", bad_flux), ("flux error out of range", bad_err)):
        if mask.any():
            rejected[reason] = np.union1d(rejected.get(reason, np.empty(0, int)), rows[mask])
    keep = ~(bad_flux | bad_err)
    return t[keep], v[keep], (e[keep] if e is not None else None), rows[keep]


def _check_ranges(raw: _RawTable, cols: dict[str, str | None], value_name: str, t: np.ndarray, v: np.ndarray,
                  e: np.ndarray, rows: np.ndarray) -> None:
    """A one-line InputError naming file, row and column for a value outside the numerical ranges."""
    problem = light_curve_range_problem(t, v, e)
    if problem is not None:
        i, role, text = problem
        column = {"time": cols["time"], "flux": value_name, "flux_err": cols["err"] or "estimated error"}[role]
        raise InputError(f"{raw.name}: data row {rows[i] + 1}, column {column!r}: {text}")


def _check_enough(raw: _RawTable, n: int, rejected: dict[str, np.ndarray], minimum: int, what: str) -> None:
    if n < minimum:
        why = ", ".join(f"{k}: {v.size}" for k, v in rejected.items())
        raise InputError(f"{raw.name}: only {n} {what} of {len(raw.table)} rows (need at least {minimum})"
                         + (f"; rejected {why}" if why else ""))


def _median_step(t: np.ndarray) -> float:
    return float(np.median(np.diff(t))) if t.size > 1 else float("nan")


def _estimated_errors(raw: _RawTable, name: str, flux: np.ndarray, why: str) -> np.ndarray:
    """One error for every point from the point-to-point scatter, with one warning saying ``why``."""
    sigma = _scatter_error(flux)
    if not (math.isfinite(sigma) and sigma > 0):
        raise InputError(f"{raw.name}: {why}, and the flux in {name!r} has no point-to-point scatter "
                         "to estimate errors from; name an error column with `err_col`")
    warnings.warn(f"{raw.name}: {why}; using {sigma:.3g} (relative flux) for every point, "
                  "estimated from the point-to-point scatter", EclipsekitWarning, stacklevel=3)
    return np.full(flux.size, sigma)


def _passband(raw: _RawTable, value_name: str) -> str | None:
    for key in ("FILTER", "BANDPASS", "PASSBAND", "BAND"):
        value = raw.header.get(key)
        if isinstance(value, str) and value.strip():
            return value.strip()
    return _columns.passband_from_name(value_name)


def _velocity_columns(raw: _RawTable, *, time_col, rv1_col, rv1_err_col, rv2_col,
                      rv2_err_col) -> dict[str, str | None]:
    """The columns of a velocity file; one star's velocities may be missing (a single-lined file)."""
    names = raw.table.colnames
    time = _column(raw, time_col, "time_col", _columns.find_time_column(names))
    if time is None:
        raise _missing_column(raw, "time", "time_col")
    # the secondary's own names first, so that a file with only rv2 columns keeps them as star 2
    rv2 = _column(raw, rv2_col, "rv2_col", _columns.find_column(names, _columns.velocity_candidates(2)))
    rv1 = _column(raw, rv1_col, "rv1_col", _columns.find_column(
        [n for n in names if n != rv2], _columns.velocity_candidates(1)))
    if rv1 is None and rv2 is None:
        raise _missing_column(raw, "velocity (rv1 or rv2)", "rv1_col",
                              "; or `rv2_col` for the secondary's velocities")
    used = {time, rv1, rv2}
    # generic names ("err", "sigma") only for a single-lined file, where they are unambiguous
    generic_ok = rv1 is None or rv2 is None
    errs = {}
    for star, col, override in ((1, rv1, rv1_err_col), (2, rv2, rv2_err_col)):
        if col is None:
            errs[star] = None
            continue
        cands = _columns.error_candidates(col, "velocity", generic=generic_ok)
        found = _column(raw, override, f"rv{star}_err_col",
                        _columns.find_column([n for n in names if n not in used], cands))
        if found is None:
            raise _missing_column(raw, f"error column for {col!r}", f"rv{star}_err_col",
                                  "; velocities need errors (km/s)")
        errs[star] = found
    return {"time": time, "rv1": rv1, "rv1_err": errs[1], "rv2": rv2, "rv2_err": errs[2]}


def read_velocities(path: str | PathLike, *, time_col: str | None = None, rv1_col: str | None = None,
                    rv1_err_col: str | None = None, rv2_col: str | None = None, rv2_err_col: str | None = None,
                    time_system: str | None = None,
                    time_offset: float | u.Quantity | None = None) -> VelocityCurve:
    """Read radial velocities (km/s) of one or both stars from a table file.

    Parameters
    ----------
    path : str or path-like
        CSV, whitespace ASCII, ECSV or FITS table (as for :func:`read_light_curve`)
        with columns time, rv1, rv1_err and optionally rv2, rv2_err.
    time_col, rv1_col, rv1_err_col, rv2_col, rv2_err_col : str, optional
        Column names (case-insensitive), overriding detection.
    time_system, time_offset
        As for :func:`read_light_curve`.

    Returns
    -------
    VelocityCurve
        Sorted by time.  A file may hold one star's velocities only: ``rv1`` columns
        (a single-lined binary) or ``rv2`` columns (only the secondary's lines
        measured).  A star not measured at an epoch (empty cell or NaN) is NaN
        there; an epoch is rejected (``"non-finite"``) only when its time or both
        velocities are missing.  Repeated times are kept.  Columns with an
        astropy-readable unit (ECSV, FITS) are converted to km/s.

    Raises
    ------
    InputError
        As for :func:`read_light_curve`; also a missing error column (velocities
        need errors), a velocity without a positive error, or fewer than
        :data:`MIN_VELOCITIES` velocities of the star measured (the primary's when both are).
    """
    system_arg = _validate_time_system(time_system)
    offset_arg = _validate_time_offset(time_offset)
    raw = _load_table(path)
    cols = _velocity_columns(raw, time_col=time_col, rv1_col=rv1_col, rv1_err_col=rv1_err_col,
                             rv2_col=rv2_col, rv2_err_col=rv2_err_col)
    system, offset, scale = _time_reference(raw, cols["time"], system_arg, offset_arg)
    time = _numeric(raw, cols["time"]) * scale + offset
    kms = u.km / u.s
    values = {k: (_scale_to(raw, cols[k], _numeric(raw, cols[k]), kms) if cols[k] else np.full(time.size, np.nan))
              for k in ("rv1", "rv1_err", "rv2", "rv2_err")}
    _check_all_nan(raw, cols["time"], time)
    for star in ("rv1", "rv2"):
        if cols[star] and not (cols["rv1"] and cols["rv2"]):  # a file's only velocity column
            _check_all_nan(raw, cols[star], values[star])
    keep = np.ones(time.size, bool)
    rejected: dict[str, np.ndarray] = {}
    has1, has2 = np.isfinite(values["rv1"]), np.isfinite(values["rv2"])
    _reject(keep, rejected, ~np.isfinite(time) | ~(has1 | has2), "non-finite")
    for star in ("rv1", "rv2"):
        if cols[star]:
            _check_velocity_errors(raw, cols[star + "_err"], values[star + "_err"],
                                   keep & np.isfinite(values[star]))
    if (keep & has1).any() or not cols["rv2"]:
        _check_enough(raw, int((keep & has1).sum()), rejected, MIN_VELOCITIES, "primary velocities")
    else:  # only the secondary's velocities
        _check_enough(raw, int((keep & has2).sum()), rejected, MIN_VELOCITIES, "secondary velocities")
    rows = np.flatnonzero(keep)
    notes = ["input was not sorted by time; sorted"] if np.any(np.diff(time[rows]) < 0) else []
    meta = {"source": str(raw.path), "format": raw.format, "time_system": system, "time_offset": offset,
            "columns": cols, "n_rows": len(raw.table), "notes": notes}
    return VelocityCurve(time[rows], values["rv1"][rows], values["rv1_err"][rows],
                         values["rv2"][rows], values["rv2_err"][rows], row=rows, meta=meta, rejected=rejected)


def _check_velocity_errors(raw: _RawTable, name: str, err: np.ndarray, use: np.ndarray) -> None:
    missing = np.flatnonzero(use & ~np.isfinite(err))
    if missing.size:
        raise InputError(f"{raw.name}: data row {missing[0] + 1}, column {name!r}: error missing where a "
                         "velocity is given; velocities need errors")
    _check_positive_errors(raw, name, err, use)


def _guess_kind(path: str | PathLike) -> str:
    """``"velocities"`` when the file has a velocity column and no flux/magnitude column, else ``"light curve"``."""
    raw = _load_table(path)
    names = raw.table.colnames
    has_rv = _columns.find_column(names, _columns.velocity_candidates(1) + _columns.velocity_candidates(2)) is not None
    has_phot = _columns.find_column(names, _columns.FLUX_NAMES + _columns.MAG_NAMES) is not None
    return "velocities" if has_rv and not has_phot else "light curve"


def sample_paths() -> tuple[Path, Path]:
    """Paths of the bundled demo sample: (light curve, velocities) of the invented system EKD-1.

    The files are made by ``scripts/make_samples.py``; ``truth.json`` beside them holds
    the parameters they were made with.
    """
    from importlib.resources import files

    folder = files("eclipsekit") / "sample_data"
    return Path(str(folder / "demo_light_curve.csv")), Path(str(folder / "demo_velocities.csv"))
