"""Coverage study of the uncertainties of eclipsekit.fit.fit_eclipses.

One synthetic system, generated without eclipsekit's model by the brute-force grid
integration of tests/_brute_force.py, many white-noise realisations.  For each fit the
truth is inside the one-sigma interval or not; for honest Gaussian errors the fraction
is 68.3% (binomial scatter sqrt(0.683 * 0.317 / n)).  Also prints the mean and standard
deviation of the pulls (fit - truth) / sigma, which should be ~0 and ~1.

Usage: python scripts/calibrate_errors.py [--system total|partial|eccentric] [--n 100] [--mcmc 20]
       [--mcmc-steps 800] [--mcmc-walkers 24] [--sigma 1e-3] [--seed 1]
"""

from __future__ import annotations

import argparse
import os
import sys
import time
import warnings

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))

from _brute_force import brute_force_flux  # noqa: E402

from eclipsekit.data import LightCurve  # noqa: E402
from eclipsekit.errors import EclipsekitWarning  # noqa: E402
from eclipsekit.fit import fit_eclipses  # noqa: E402

SYSTEMS = {
    # total/annular eclipses, circular
    "total": dict(period=2.7, t0=2460000.512, radius_sum=0.22, radius_ratio=0.55, inclination=89.2,
                  surface_brightness_ratio=0.45, eccentricity=0.0, omega=90.0,
                  ld_primary=(0.40, 0.25), ld_secondary=(0.50, 0.22)),
    # partial eclipses (k, i and J correlated), circular
    "partial": dict(period=3.3, t0=2460000.8, radius_sum=0.2, radius_ratio=0.8, inclination=86.0,
                    surface_brightness_ratio=0.75, eccentricity=0.0, omega=90.0,
                    ld_primary=(0.40, 0.25), ld_secondary=(0.45, 0.22)),
    "eccentric": dict(period=4.3, t0=2460001.234, radius_sum=0.16, radius_ratio=0.75, inclination=88.8,
                      surface_brightness_ratio=0.7, eccentricity=0.12, omega=75.0,
                      ld_primary=(0.42, 0.22), ld_secondary=(0.48, 0.20)),
}
KEYS = ("radius_sum", "radius_ratio", "inclination", "surface_brightness_ratio")


def coverage(rows: list[dict], label: str) -> None:
    n = len(rows)
    print(f"{label}: {n} fits")
    for k in KEYS:
        pulls = np.array([r[k] for r in rows])
        inside = np.mean(np.abs(pulls) < 1)
        se = np.sqrt(0.683 * 0.317 / n)
        print(f"  {k:<26} inside 1 sigma {100 * inside:5.1f}% (expect 68.3 +- {100 * se:.1f}),"
              f" pull mean {pulls.mean():+.2f}, pull std {pulls.std(ddof=1):.2f}")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--system", choices=sorted(SYSTEMS), default="partial")
    ap.add_argument("--n", type=int, default=100)
    ap.add_argument("--mcmc", type=int, default=20)
    ap.add_argument("--mcmc-steps", type=int, default=800)
    ap.add_argument("--mcmc-walkers", type=int, default=24)
    ap.add_argument("--sigma", type=float, default=1e-3)
    ap.add_argument("--cadence-min", type=float, default=6.0)
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args(argv)
    warnings.simplefilter("ignore", EclipsekitWarning)
    sys_ = SYSTEMS[args.system]
    t = sys_["t0"] - 0.3 + np.arange(0.0, 2.2 * sys_["period"], args.cadence_min / 1440)
    t1 = time.perf_counter()
    f = brute_force_flux(t, **sys_, n_r=200, n_theta=400)
    print(f"system {args.system}: {sys_}; {t.size} points, sigma {args.sigma}; brute force {time.perf_counter() - t1:.1f} s")
    start = {k: sys_[k] for k in ("period", "t0")}
    w = np.radians(sys_["omega"])
    truth = dict(sys_, ecosw=sys_["eccentricity"] * np.cos(w), esinw=sys_["eccentricity"] * np.sin(w))
    # a realistic, imperfect start: 10% off in the geometry
    start.update(radius_sum=truth["radius_sum"] * 1.1, radius_ratio=truth["radius_ratio"] * 0.9,
                 inclination=truth["inclination"] - 1.0, surface_brightness_ratio=truth["surface_brightness_ratio"] * 1.1,
                 ecosw=truth["ecosw"], esinw=truth["esinw"])
    free = ["eccentricity"] if sys_["eccentricity"] > 0 else []
    opts = dict(ld_primary=sys_["ld_primary"], ld_secondary=sys_["ld_secondary"], free=free, progress=False,
                clip_sigma=None, ecosw=start["ecosw"], esinw=start["esinw"])
    rng = np.random.default_rng(args.seed)
    rows = []
    t1 = time.perf_counter()
    for i in range(args.n):
        lc = LightCurve(t, f + rng.normal(0, args.sigma, t.size), np.full(t.size, args.sigma))
        fit = fit_eclipses(lc, start, n_samples=100, **opts)
        rows.append({k: (fit.values[k] - truth[k]) / fit.uncertainties[k] for k in KEYS})
    print(f"covariance fits: {(time.perf_counter() - t1) / args.n:.2f} s each")
    coverage(rows, "RESULT covariance errors")
    if args.mcmc > 0:
        # the covariance fit is repeated on the SAME realisations as the MCMC, so the two coverages (and the
        # width ratios, the sharper diagnostic: no binomial scatter) compare like with like
        rows, rows_cov, ratios = [], [], []
        t1 = time.perf_counter()
        for i in range(args.mcmc):
            lc = LightCurve(t, f + rng.normal(0, args.sigma, t.size), np.full(t.size, args.sigma))
            cfit = fit_eclipses(lc, start, n_samples=100, **opts)
            fit = fit_eclipses(lc, start, errors="mcmc", mcmc_walkers=args.mcmc_walkers, mcmc_steps=args.mcmc_steps,
                               seed=i, **opts)
            rows.append({k: (fit.values[k] - truth[k]) / fit.uncertainties[k] for k in KEYS})
            rows_cov.append({k: (cfit.values[k] - truth[k]) / cfit.uncertainties[k] for k in KEYS})
            ratios.append({k: fit.uncertainties[k] / cfit.uncertainties[k] for k in KEYS + ("period",)})
            d = fit.diagnostics["mcmc"]
            print(f"  mcmc {i + 1}/{args.mcmc}: chain/tau {d['chain_over_tau']:.0f}, effective samples "
                  f"{d['n_effective']:.0f}, MCMC/covariance widths "
                  + " ".join(f"{ratios[-1][k]:.2f}" for k in KEYS + ("period",)), flush=True)
        print(f"MCMC fits ({args.mcmc_walkers} walkers x {args.mcmc_steps} steps): "
              f"{(time.perf_counter() - t1) / args.mcmc:.1f} s each (with a covariance fit)")
        coverage(rows, "RESULT MCMC errors (posterior median, half 16-84% width)")
        coverage(rows_cov, "RESULT covariance errors on the same realisations")
        print("RESULT MCMC / covariance width ratio (median, 10-90% range over the realisations):")
        for k in KEYS + ("period",):
            r = np.array([x[k] for x in ratios])
            print(f"  {k:<26} {np.median(r):.3f} ({np.percentile(r, 10):.3f}-{np.percentile(r, 90):.3f})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
