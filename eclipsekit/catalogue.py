"""The survey catalogue: one Parquet row per target, written incrementally and atomically.

Each finished target is one small Parquet file (a *part*) in ``DIR/parts/``, written
under a temporary name and renamed into place, so a crash loses at most the targets
still in flight.  At the end of a run the parts of the run's targets are streamed, batch
by batch, into ``DIR/catalogue.parquet`` (again through a temporary file): no step holds
the whole catalogue in memory.  The column names are a contract read by other tools
(``DESIGN.md``); units are in the Parquet schema metadata (``unit`` of each field, and
the ``units`` JSON object of the schema).
"""

from __future__ import annotations

import json
import math
import os
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

import pyarrow as pa
import pyarrow.dataset as pads
import pyarrow.parquet as pq

from .results import write_atomic

__all__ = ["SCHEMA", "UNITS", "QUANTITIES", "STATUSES", "FAILURES", "empty_row", "part_path", "write_part",
           "read_part", "append_journal", "read_journal", "compact", "read_catalogue"]

#: Result.json's status words, then the survey's own for targets that gave no analysis.
STATUSES = ("ok", "poor_fit", "caution", "no_eclipse_found", "unreadable", "failed", "timeout", "crashed")
#: Status words of targets whose analysis gave no answer.
FAILURES = ("unreadable", "failed", "timeout", "crashed")

#: Quantities with an ``<name>_uncertainty`` column, and their units (astropy unit strings).
QUANTITIES: dict[str, str] = {
    "period": "d", "t0": "d", "depth_primary": "", "depth_secondary": "",
    "radius_sum": "", "radius_ratio": "", "frac_radius_primary": "", "frac_radius_secondary": "",
    "inclination": "deg", "ecosw": "", "esinw": "", "eccentricity": "", "omega": "deg",
    "surface_brightness_ratio": "", "light_ratio": "", "third_light": "",
    "mass_primary": "solMass", "mass_secondary": "solMass", "radius_primary": "solRad", "radius_secondary": "solRad",
    "luminosity_primary": "solLum", "luminosity_secondary": "solLum",
}

_TEXT = ("source", "status", "message", "stages", "result_dir", "key", "eclipsekit_version")
_OTHER: dict[str, tuple[pa.DataType, str]] = {
    "secondary_phase": (pa.float64(), ""), "significance": (pa.float64(), ""),
    "reduced_chi_square": (pa.float64(), ""), "n_points": (pa.int64(), ""), "seconds": (pa.float64(), "s"),
}


def _schema() -> pa.Schema:
    fields = [pa.field(name, pa.string()) for name in _TEXT[:3]]
    units: dict[str, str] = {}
    for name, unit in QUANTITIES.items():
        for column in (name, f"{name}_uncertainty"):
            fields.append(pa.field(column, pa.float64(), metadata={"unit": unit}))
            units[column] = unit
    for name, (kind, unit) in _OTHER.items():
        fields.append(pa.field(name, kind, metadata={"unit": unit}))
        units[name] = unit
    fields += [pa.field(name, pa.string()) for name in _TEXT[3:]]
    meta = {"units": json.dumps(units), "description": "eclipsekit survey catalogue: one row per target; "
            "NaN = not determined; status words as in result.json plus unreadable, failed, timeout, crashed"}
    return pa.schema(fields, metadata=meta)


#: Columns of the catalogue, in order, with units in the field and schema metadata.
SCHEMA = _schema()
#: Unit of every numeric column ("" for dimensionless).
UNITS: dict[str, str] = json.loads(SCHEMA.metadata[b"units"])


def empty_row(source: str) -> dict[str, Any]:
    """A row with every column present: NaN numbers, empty text."""
    row: dict[str, Any] = {}
    for field in SCHEMA:
        if pa.types.is_string(field.type):
            row[field.name] = ""
        elif pa.types.is_integer(field.type):
            row[field.name] = 0
        else:
            row[field.name] = math.nan
    row["source"] = source
    return row


def part_path(out: str | os.PathLike, ident: str) -> Path:
    """Where the part of target ``ident`` (a hex digest) lives: ``parts/<2 hex>/<ident>.parquet``.

    The two-character subfolders keep folders small for large surveys.
    """
    return Path(out) / "parts" / ident[:2] / f"{ident}.parquet"


def write_part(out: str | os.PathLike, ident: str, row: Mapping[str, Any]) -> Path:
    """Write one target's row as its own Parquet file, atomically (temporary file, then rename)."""
    path = part_path(out, ident)
    path.parent.mkdir(parents=True, exist_ok=True)
    table = pa.Table.from_pylist([{f.name: row.get(f.name) for f in SCHEMA}], schema=SCHEMA)
    return write_atomic(path, lambda tmp: pq.write_table(table, tmp))


def read_part(path: str | os.PathLike) -> dict[str, Any] | None:
    """The row of a part file, or None when there is none (or it cannot be read)."""
    try:
        rows = pq.read_table(path, schema=SCHEMA).to_pylist()
    except (OSError, pa.ArrowException):
        return None
    return rows[0] if len(rows) == 1 else None


def append_journal(out: str | os.PathLike, record: Mapping[str, Any]) -> None:
    """Append one line to ``DIR/journal.jsonl``: a target computed (who, when, how long).

    One ``write`` of a short line to a file opened in append mode, so lines from several
    worker processes do not interleave (POSIX ``O_APPEND``).
    """
    line = (json.dumps(dict(record), default=str) + "\n").encode("utf-8")
    fd = os.open(Path(out) / "journal.jsonl", os.O_WRONLY | os.O_APPEND | os.O_CREAT, 0o644)
    try:
        os.write(fd, line)
    finally:
        os.close(fd)


def read_journal(out: str | os.PathLike) -> list[dict[str, Any]]:
    """Every record of ``DIR/journal.jsonl`` (a torn last line, from a crash, is skipped)."""
    path = Path(out) / "journal.jsonl"
    if not path.is_file():
        return []
    records = []
    for line in path.read_text(encoding="utf-8").splitlines():
        try:
            records.append(json.loads(line))
        except json.JSONDecodeError:
            continue
    return records


def compact(paths: Iterable[str | os.PathLike], target: str | os.PathLike, batch_rows: int = 65536) -> Path:
    """Stream the part files ``paths`` (in order) into one Parquet file ``target``, atomically.

    pyarrow.dataset reads the parts batch by batch and a ParquetWriter appends each
    batch, so memory stays bounded whatever the number of targets.
    """
    files = [str(p) for p in paths]

    def _write(tmp: str) -> None:
        with pq.ParquetWriter(tmp, SCHEMA) as writer:
            if files:
                dataset = pads.dataset(files, schema=SCHEMA, format="parquet")
                for batch in dataset.to_batches(batch_size=batch_rows):
                    writer.write_batch(batch)

    return write_atomic(target, _write)


def read_catalogue(path: str | os.PathLike) -> Any:
    """A catalogue.parquet as an astropy Table, with the units from its schema metadata."""
    from astropy.table import Table

    table = pq.read_table(path)
    units = json.loads((table.schema.metadata or {}).get(b"units", b"{}"))
    out = Table(table.to_pydict())
    for name, unit in units.items():
        if name in out.colnames and unit:
            out[name].unit = unit
    out.meta["description"] = (table.schema.metadata or {}).get(b"description", b"").decode()
    return out
