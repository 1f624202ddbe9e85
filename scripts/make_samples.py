"""Write the demo sample: an invented detached eclipsing binary, light curve and velocities.

The system is made up for demonstrations and tests of the pipeline (it is no real star):
"demo system EKD-1", observed by an imaginary satellite for one 27-day sector at a
2-minute cadence, with 22 spectra of both stars.  The light curve is computed with
eclipsekit's own model (:func:`eclipsekit.model_flux`), with a slow instrumental drift
and a mid-sector gap added; the velocities with :func:`eclipsekit.orbit.radial_velocities`.
Re-run this script whenever the model changes::

    python scripts/make_samples.py

It writes ``samples/demo_light_curve.csv``, ``samples/demo_velocities.csv``,
``samples/README.md`` (the true parameters) and the same CSV files into
``eclipsekit/sample_data/`` so that an installed package can run ``eclipsekit demo``.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np

from eclipsekit.eclipse import model_flux
from eclipsekit.orbit import radial_velocities

ROOT = Path(__file__).resolve().parent.parent

#: The invented system's true parameters (conventions of the README).
TRUTH = {
    "period": 3.2418127,            # d
    "t0": 2459412.38416,            # BJD_TDB, mid-primary eclipse
    "radius_sum": 0.2030,           # r1 + r2
    "radius_ratio": 0.7180,         # k = r2 / r1
    "inclination": 87.60,           # deg
    "surface_brightness_ratio": 0.7400,
    "ecosw": 0.00850,
    "esinw": -0.01200,
    "third_light": 0.0,
    "ld_primary": (0.36, 0.24),     # quadratic law
    "ld_secondary": (0.42, 0.22),
    "k_primary": 91.80,             # km/s
    "k_secondary": 118.40,          # km/s
    "gamma": -14.20,                # km/s
    "teff_primary": 7550.0,         # K
    "teff_secondary": 6600.0,       # K
}
NOISE_FLUX = 6.0e-4                 # per 2-minute point
NOISE_RV = (0.9, 1.3)               # km/s, primary and secondary
SEED = 20261202


def light_curve(rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Flux of one 27-day sector at 2-minute cadence with a mid-sector gap and a slow drift."""
    cadence = 2.0 / 1440.0
    start = TRUTH["t0"] - 1.1
    time = start + np.arange(0.0, 27.0, cadence)
    gap = (time > start + 13.2) & (time < start + 14.3)   # data downlink
    time = time[~gap]
    p = {k: TRUTH[k] for k in ("period", "t0", "radius_sum", "radius_ratio", "inclination",
                               "surface_brightness_ratio", "ecosw", "esinw", "third_light")}
    flux = model_flux(time, **p, ld_law="quadratic", ld_primary=TRUTH["ld_primary"],
                      ld_secondary=TRUTH["ld_secondary"])
    # instrumental drift, different in the two halves of the sector, and an arbitrary flux scale
    half = time > start + 13.75
    x = (time - time.mean()) / 27.0
    drift = np.where(half, 1.0012 - 0.0009 * x, 0.9995 + 0.0015 * x + 0.002 * x**2)
    scale = 14250.0  # e-/s
    flux = scale * flux * drift * (1.0 + NOISE_FLUX * rng.standard_normal(time.size))
    err = np.full(time.size, scale * NOISE_FLUX)
    return {"bjd_tdb": time, "flux": flux, "flux_err": err}


def velocities(rng: np.random.Generator) -> dict[str, np.ndarray]:
    """22 epochs over two seasons; the secondary is unmeasured when the lines are blended."""
    time = np.sort(TRUTH["t0"] - 420.0 + np.concatenate([rng.uniform(0, 60, 12), rng.uniform(360, 430, 10)]))
    rv1, rv2 = radial_velocities(time, period=TRUTH["period"], t0=TRUTH["t0"], k_primary=TRUTH["k_primary"],
                                 k_secondary=TRUTH["k_secondary"], gamma=TRUTH["gamma"], ecosw=TRUTH["ecosw"],
                                 esinw=TRUTH["esinw"])
    e1 = np.full(time.size, NOISE_RV[0])
    e2 = np.full(time.size, NOISE_RV[1])
    rv1 = rv1 + e1 * rng.standard_normal(time.size)
    rv2 = rv2 + e2 * rng.standard_normal(time.size)
    blended = np.abs(rv1 - rv2) < 40.0  # lines too close to separate
    rv2[blended] = np.nan
    e2[blended] = np.nan
    return {"bjd_tdb": time, "rv1": rv1, "rv1_err": e1, "rv2": rv2, "rv2_err": e2}


def write_csv(path: Path, columns: dict[str, np.ndarray], formats: dict[str, str]) -> None:
    names = list(columns)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(",".join(names) + "\n")
        for i in range(len(columns[names[0]])):
            cells = []
            for name in names:
                value = columns[name][i]
                cells.append("" if not np.isfinite(value) else format(value, formats[name]))
            fh.write(",".join(cells) + "\n")


def main() -> None:
    rng = np.random.default_rng(SEED)
    samples = ROOT / "samples"
    packaged = ROOT / "eclipsekit" / "sample_data"
    samples.mkdir(exist_ok=True)
    packaged.mkdir(exist_ok=True)
    lc_path = samples / "demo_light_curve.csv"
    rv_path = samples / "demo_velocities.csv"
    write_csv(lc_path, light_curve(rng), {"bjd_tdb": ".6f", "flux": ".2f", "flux_err": ".2f"})
    write_csv(rv_path, velocities(rng), {"bjd_tdb": ".5f", "rv1": ".2f", "rv1_err": ".2f", "rv2": ".2f",
                                         "rv2_err": ".2f"})
    for path in (lc_path, rv_path):
        shutil.copyfile(path, packaged / path.name)
    truth = {k: (list(v) if isinstance(v, tuple) else v) for k, v in TRUTH.items()}
    (samples / "truth.json").write_text(json.dumps(truth, indent=2) + "\n")
    shutil.copyfile(samples / "truth.json", packaged / "truth.json")
    print(f"wrote {lc_path}, {rv_path} and truth.json (and copies in {packaged})")


if __name__ == "__main__":
    main()
