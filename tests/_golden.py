"""The demo analysis reduced to its quantities, for the golden-copy regression test."""

from __future__ import annotations

from pathlib import Path
from typing import Any

GOLDEN = Path(__file__).with_name("data") / "demo_result_golden.json"

#: result.json sections whose quantities are pinned (timings and file names are not)
SECTIONS = ("ephemeris", "geometry", "photometry", "spectroscopy", "absolute")
FIT_KEYS = ("method", "reduced_chi_square", "rms", "bic", "n_free_parameters", "free_parameters", "success",
            "warnings")


def golden_quantities() -> dict[str, Any]:
    """The demo run (sample light curve and velocities, the demo's temperatures, no fit options, seed 1)."""
    import eclipsekit as ek
    from eclipsekit.data import sample_paths

    lc, rv = sample_paths()
    analysis = ek.analyse(str(lc), str(rv), teff_primary=(7550.0, 150.0), teff_secondary=(6600.0, 150.0), seed=1,
                          progress=False)
    content = analysis.to_dict()
    out: dict[str, Any] = {"status": content["status"]}
    for section in SECTIONS:
        out[section] = content.get(section)
    out["fit"] = {k: content["fit"].get(k) for k in FIT_KEYS}
    return out
