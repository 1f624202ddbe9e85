"""Column names recognised by the readers, and what a time column's name reveals.

Pure functions on strings: no I/O.  Matching is case-insensitive; the first
candidate found (in the order listed) wins, so the more specific names come first.
"""

from __future__ import annotations

import re
from collections.abc import Sequence

__all__ = [
    "TIME_NAMES",
    "FLUX_NAMES",
    "MAG_NAMES",
    "QUALITY_NAMES",
    "find_column",
    "find_time_column",
    "error_candidates",
    "velocity_candidates",
    "time_system_from_name",
    "passband_from_name",
]

# Times.  A name such as "HJD-2450000" or "BJD - 2457000" is also recognised (see
# `_TIME_PATTERN`), since tables in the literature often carry the offset in the name.
TIME_NAMES = ("time", "bjd_tdb", "bjd", "btjd", "bkjd", "hjd", "jd", "mjd", "date", "times", "t")

# Fluxes, most processed first (satellite files carry several).
FLUX_NAMES = (
    "pdcsap_flux", "flux", "rel_flux", "norm_flux", "relative_flux", "normalised_flux",
    "normalized_flux", "kspsap_flux", "sap_flux", "f",
)
_FLUX_ERR_NAMES = ("flux_err", "flux_error", "fluxerr", "e_flux", "err_flux", "sigma_flux", "dflux")
MAG_NAMES = (
    "mag", "magnitude", "rel_mag", "diff_mag", "delta_mag", "vmag", "bmag", "rmag", "imag",
    "gmag", "tmag", "jmag", "hmag", "kmag", "umag", "zmag",
)
_MAG_ERR_NAMES = ("mag_err", "mag_error", "magerr", "e_mag", "err_mag", "sigma_mag", "magnitude_err")
_GENERIC_ERR_NAMES = ("err", "error", "errors", "sigma", "uncertainty", "unc", "e")
QUALITY_NAMES = ("quality", "sap_quality", "quality_flag", "qflag", "flag", "flags")

_TIME_PATTERN = re.compile(
    r"^(?P<base>time|bjd_tdb|bjd|btjd|bkjd|hjd|jd|mjd)\s*[-_]?\s*(?:-\s*)?(?P<offset>\d+(?:\.\d*)?)?$"
)


def find_column(colnames: Sequence[str], candidates: Sequence[str]) -> str | None:
    """Return the first column whose name matches a candidate (case-insensitive), or None."""
    lower = {name.strip().lower(): name for name in reversed(list(colnames))}
    for cand in candidates:
        if cand in lower:
            return lower[cand]
    return None


def find_time_column(colnames: Sequence[str]) -> str | None:
    """Return the time column: a common name, or a name with an offset such as ``HJD-2450000``."""
    found = find_column(colnames, TIME_NAMES)
    if found is not None:
        return found
    for name in colnames:
        match = _TIME_PATTERN.match(name.strip().lower())
        if match and match.group("offset"):
            return name
    return None


def error_candidates(value_col: str, kind: str, *, generic: bool = True) -> tuple[str, ...]:
    """Names that may hold the errors of column ``value_col``.

    ``kind`` is "flux", "mag" or "velocity"; with ``generic`` the bare names
    ("err", "sigma", ...) are accepted last.
    """
    v = value_col.strip().lower()
    names = (f"{v}_err", f"{v}_error", f"{v}err", f"e_{v}", f"err_{v}", f"sigma_{v}", f"{v}_sigma", f"e{v}")
    names += {"flux": _FLUX_ERR_NAMES, "mag": _MAG_ERR_NAMES}.get(kind, ())
    return names + (_GENERIC_ERR_NAMES if generic else ())


def velocity_candidates(star: int) -> tuple[str, ...]:
    """Names of the velocity column of star 1 (primary) or star 2 (secondary)."""
    suffixes = ("1", "_1", "a", "_a") if star == 1 else ("2", "_2", "b", "_b")
    names = tuple(f"{base}{s}" for base in ("rv", "v", "vr", "vrad") for s in suffixes)
    if star == 1:
        return names + ("rv_primary", "rv_prim", "rv", "vrad", "radial_velocity", "velocity")
    return names + ("rv_secondary", "rv_sec")


def time_system_from_name(name: str) -> tuple[str | None, float | None]:
    """Time system and offset implied by a time column's name.

    ``BTJD`` is BJD_TDB - 2457000 and ``BKJD`` is BJD_TDB - 2454833 (the satellite
    conventions; common practice).  A trailing number, as in ``HJD-2450000``, is the
    offset subtracted from the times in the file.

    Returns
    -------
    system : str or None
        ``"BJD_TDB"``, ``"HJD"``, ``"JD"``, ``"MJD"`` or None when the name says nothing.
    offset : float or None
        Days to add to the file's times, or None when the name says nothing.
    """
    match = _TIME_PATTERN.match(name.strip().lower())
    if not match:
        return None, None
    base, offset = match.group("base"), match.group("offset")
    systems = {"bjd_tdb": "BJD_TDB", "bjd": "BJD_TDB", "btjd": "BJD_TDB", "bkjd": "BJD_TDB",
               "hjd": "HJD", "jd": "JD", "mjd": "MJD", "time": None}
    implied = {"btjd": 2457000.0, "bkjd": 2454833.0}
    if offset is not None:
        return systems[base], float(offset)
    return systems[base], implied.get(base)


def passband_from_name(name: str) -> str | None:
    """The passband implied by a magnitude column such as ``Vmag`` (None if not implied)."""
    match = re.fullmatch(r"([ubvrigzjhkt])mag", name.strip().lower())
    if not match:
        return None
    letter = match.group(1)
    return letter if letter in "ugriz" else letter.upper()
