"""Light curves and radial-velocity curves, and the readers that make them.

The containers (:class:`LightCurve`, :class:`VelocityCurve`) hold plain numpy arrays
in days, normalised flux and km/s.  They are validated once, when made; the numerical
core trusts them afterwards.  Every point removed on the way is kept in a rejection
record with its reason, so nothing is dropped silently.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from .errors import InputError

__all__ = ["LightCurve", "VelocityCurve"]


def _rejections_merge(old: dict[str, np.ndarray], reason: str, rows: np.ndarray) -> dict[str, np.ndarray]:
    new = {k: np.asarray(v, dtype=int) for k, v in old.items()}
    rows = np.asarray(rows, dtype=int)
    if rows.size:
        new[reason] = np.union1d(new.get(reason, np.empty(0, int)), rows)
    return new


@dataclass(frozen=True, eq=False)
class LightCurve:
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
        if t.size > 1 and np.any(np.diff(t) < 0):
            order = np.argsort(t, kind="stable")
            t, f, e, row = t[order], f[order], e[order], row[order]
        row = np.ascontiguousarray(row)
        object.__setattr__(self, "time", t)
        object.__setattr__(self, "flux", f)
        object.__setattr__(self, "flux_err", e)
        object.__setattr__(self, "row", row)
        meta = {"source": None, "time_system": "unknown", "time_offset": 0.0, "passband": None,
                "exposure_time": None}
        meta.update(self.meta or {})
        object.__setattr__(self, "meta", meta)
        object.__setattr__(self, "rejected", {k: np.asarray(v, dtype=int) for k, v in (self.rejected or {}).items()})

    # -- derived properties -------------------------------------------------------
    def __len__(self) -> int:
        return self.time.size

    @property
    def baseline(self) -> float:
        """Time span covered, in days."""
        return float(self.time[-1] - self.time[0]) if self.time.size else 0.0

    @property
    def cadence(self) -> float:
        """Median interval between consecutive points, in days."""
        return float(np.median(np.diff(self.time))) if self.time.size > 1 else float("nan")

    @property
    def n_rejected(self) -> int:
        return int(sum(v.size for v in self.rejected.values()))

    def without(self, mask: np.ndarray, reason: str) -> "LightCurve":
        """Return a copy with the points where ``mask`` is True moved to the rejection record."""
        mask = np.asarray(mask, dtype=bool)
        keep = ~mask
        return replace(self, time=self.time[keep], flux=self.flux[keep], flux_err=self.flux_err[keep],
                       row=self.row[keep], rejected=_rejections_merge(self.rejected, reason, self.row[mask]))

    def __repr__(self) -> str:
        src = self.meta.get("source") or "<arrays>"
        return (f"<LightCurve {src}: {len(self)} points over {self.baseline:.3f} d, "
                f"{self.n_rejected} rejected, time system {self.meta.get('time_system')}>")


@dataclass(frozen=True, eq=False)
class VelocityCurve:
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
        if not np.any(np.isfinite(arrays["rv1"])):
            raise InputError("no primary velocities (`rv1`) given")
        order = np.argsort(t, kind="stable")
        row = np.arange(n) if self.row is None else np.asarray(self.row, dtype=int)
        object.__setattr__(self, "time", t[order])
        for name, v in arrays.items():
            object.__setattr__(self, name, v[order])
        object.__setattr__(self, "row", row[order])
        meta = {"source": None, "time_system": "unknown", "time_offset": 0.0}
        meta.update(self.meta or {})
        object.__setattr__(self, "meta", meta)
        object.__setattr__(self, "rejected", {k: np.asarray(v, dtype=int) for k, v in (self.rejected or {}).items()})

    def __len__(self) -> int:
        return self.time.size

    @property
    def double_lined(self) -> bool:
        """True when the secondary's velocities are given at some epoch."""
        return bool(np.any(np.isfinite(self.rv2)))

    def __repr__(self) -> str:
        src = self.meta.get("source") or "<arrays>"
        n1 = int(np.isfinite(self.rv1).sum())
        n2 = int(np.isfinite(self.rv2).sum())
        return f"<VelocityCurve {src}: {n1} primary and {n2} secondary velocities>"
