"""Measure the Kwee-van Woerden uncertainty formula against the scatter of KvW times.

For several cadences and noise levels, eclipses of an invented binary from the independent
brute-force reference (tests/_timing_data.py) at known times are timed with KvW's formula
uncertainty and with the propagated uncertainty eclipsekit reports; the (robust) standard deviation of
(measured − true) / σ is the factor by which σ misjudges the scatter (1 is right).

    python scripts/calibrate_kvw.py [--orbits 150]
"""

from __future__ import annotations

import argparse
import os
import sys

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))

from _timing_data import light_curve, model_parameters  # noqa: E402

from eclipsekit import eclipse_times  # noqa: E402
from eclipsekit.data import LightCurve  # noqa: E402


def factor(cadence_min: float, noise: float, n_orbits: int, seed: int) -> dict[str, tuple[float, float]]:
    t, f, e, truth = light_curve(lambda c, tc: 0.0, n_orbits, cadence_min / 1440, noise, seed)
    lc = LightCurve(t, f, e, meta={"time_system": "BJD_TDB"})
    ephemeris = {k: model_parameters()[k] for k in ("period", "t0")} | {"duration": 0.19}
    res = eclipse_times(lc, ephemeris, method="kvw", progress=False)
    true = {(k, c): tt for k, c, tt in truth}
    dt = np.array([r["time"] - true[(r["eclipse"], r["cycle"])] for r in res.table])
    out = {}
    for column in ("time_uncertainty_kvw_formula", "time_uncertainty"):
        z = dt / np.asarray(res.table[column])
        out[column] = (float(1.4826 * np.median(np.abs(z - np.median(z)))), float(np.std(z)))
    return out, len(dt)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--orbits", type=int, default=150)
    args = ap.parse_args()
    print("sd(z) of z = (measured - true) / uncertainty; robust = 1.4826 MAD; 1 is right")
    print(f"{'cadence':>8} {'noise':>7} {'KvW formula: robust':>20} {'sd':>6} {'propagated: robust':>19} {'sd':>6} {'n':>5}")
    for cadence in (2.0, 10.0, 30.0):
        for noise in (3e-4, 1e-3, 3e-3):
            found, n = factor(cadence, noise, args.orbits, seed=int(cadence * 1000 + noise * 1e4))
            (fr, fs), (pr, ps) = found["time_uncertainty_kvw_formula"], found["time_uncertainty"]
            print(f"{cadence:>6.0f} m {noise:>7.0e} {fr:>20.3f} {fs:>6.3f} {pr:>19.3f} {ps:>6.3f} {n:>5}")


if __name__ == "__main__":
    main()
