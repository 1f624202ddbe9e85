"""Benchmark of eclipsekit.fit.fit_eclipses on a simulated 20,000-point sector.

A 27.8-day, 2-minute-cadence sector (one 1-day mid-sector gap), 1 mmag white noise,
a slow drift, a detached eclipsing binary with a mildly eccentric orbit.  Times:

* the period search (for the start values; reported, not a target);
* the least-squares fit from the period-search start (target < 5 s), median of repeats;
* the same fit done "the plain way" in the same run (lmfit with absolute t0, the
  baseline coefficients as ordinary lmfit parameters, all points), for the ratio;
* a 32-walker x 2,000-step MCMC (target < 45 s);
* optionally residual permutation (``--permutation``);
* with ``--previous REV`` (default: the 0.1 release commit), the least-squares fit with limb
  darkening free (``free=["limb_darkening"]``) and the same MCMC by the implementation at
  REV, run in the same session from a temporary git worktree, for the ratios.

The default fit frees the limb darkening of both stars (decorrelated combinations with weak
priors), so its least-squares time is compared with the previous implementation's fit with
all four coefficients free.

Usage: python scripts/bench_fit.py [--repeats 3] [--steps 2000] [--walkers 32] [--no-mcmc] [--permutation]
       [--previous REV | --no-previous]
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
import warnings

import lmfit
import numpy as np

import eclipsekit as ek
from eclipsekit import eclipse
from eclipsekit.data import LightCurve
from eclipsekit.errors import EclipsekitWarning

fit_eclipses = ek.fit_eclipses  # the public name, the same in every version (see --previous)
PREVIOUS = "1177892"  # the 0.1 release, before the fit package and the fitted limb darkening

TRUTH = dict(period=3.4713, t0=2460101.3217, radius_sum=0.185, radius_ratio=0.78, inclination=88.1,
             surface_brightness_ratio=0.62, ecosw=0.012, esinw=-0.035, third_light=0.0)
LD = dict(ld_primary=(0.40, 0.25), ld_secondary=(0.45, 0.22))


def make_sector(seed: int = 1) -> LightCurve:
    rng = np.random.default_rng(seed)
    t = 2460100.0 + np.arange(20000 + 720) * (2.0 / 1440)
    t = np.concatenate([t[:10000], t[10720:]])  # a 1-day gap in the middle (data download)
    sigma = 1e-3 * np.log(10) / 2.5  # 1 mmag in relative flux
    drift = 1 + 1.5e-3 * (t - t.mean()) / np.ptp(t)
    f = eclipse.model_flux(t, **TRUTH, **LD) * drift + rng.normal(0, sigma, t.size)
    return LightCurve(t, f, np.full(t.size, sigma), meta={"exposure_time": 2.0 / 1440})


def plain_fit(lc: LightCurve, start: dict) -> tuple[float, int, dict]:
    """The simple way: absolute t0, baseline terms as lmfit parameters, every point."""
    gap = np.nonzero(np.diff(lc.time) > 0.5)[0] + 1
    seg = np.zeros(len(lc), int)
    seg[gap[0]:] = 1
    mids = [lc.time[seg == s].mean() for s in (0, 1)]
    p = lmfit.Parameters()
    for k in ("period", "t0", "radius_sum", "radius_ratio", "inclination", "surface_brightness_ratio", "ecosw", "esinw"):
        lo, hi = {"radius_sum": (1e-3, 0.8), "radius_ratio": (0.02, 50), "inclination": (30, 90),
                  "surface_brightness_ratio": (1e-4, 50), "ecosw": (-0.9, 0.9), "esinw": (-0.9, 0.9)}.get(k, (-np.inf, np.inf))
        p.add(k, value=start[k], min=lo, max=hi)
    for s in (0, 1):
        p.add(f"c0_{s}", value=1.0)
        p.add(f"c1_{s}", value=0.0)
    n = [0]

    def resid(par):
        v = par.valuesdict()
        n[0] += 1
        try:
            m = eclipse.model_flux(lc.time, **{k: v[k] for k in start}, **LD)
        except ValueError:
            return np.full(len(lc), 1e3)
        base = np.where(seg == 0, v["c0_0"] + v["c1_0"] * (lc.time - mids[0]), v["c0_1"] + v["c1_1"] * (lc.time - mids[1]))
        return (lc.flux - m * base) / lc.flux_err

    t1 = time.perf_counter()
    res = lmfit.minimize(resid, p, method="least_squares")
    return time.perf_counter() - t1, n[0], res.params.valuesdict()


def previous_figures(rev: str, args: argparse.Namespace) -> dict:
    """Least-squares (limb darkening free) and MCMC times of the implementation at ``rev``, in a subprocess."""
    import json
    import os
    import subprocess
    import tempfile

    repo = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    tmp = tempfile.mkdtemp(prefix="eclipsekit-previous-")
    subprocess.run(["git", "worktree", "add", "--detach", tmp, rev], cwd=repo, check=True, capture_output=True)
    try:
        cmd = [sys.executable, os.path.abspath(__file__), "--as-previous", "--repeats", str(args.repeats),
               "--steps", str(args.steps), "--walkers", str(args.walkers)] + (["--no-mcmc"] if args.no_mcmc else [])
        out = subprocess.run(cmd, env={**os.environ, "PYTHONPATH": tmp}, capture_output=True, text=True, check=True)
        return json.loads(out.stdout.strip().splitlines()[-1])
    finally:
        subprocess.run(["git", "worktree", "remove", "--force", tmp], cwd=repo, capture_output=True)


def as_previous(args: argparse.Namespace) -> int:
    """The figures of an older implementation (run with PYTHONPATH pointing at it), as one JSON line."""
    import json

    from eclipsekit.period import find_period

    lc = make_sector()
    search = find_period(lc, progress=False)
    times = []
    for _ in range(args.repeats):
        t1 = time.perf_counter()
        fit_eclipses(lc, search, progress=False, free=["limb_darkening"], **LD)
        times.append(time.perf_counter() - t1)
    out = {"lsq": statistics.median(times)}
    if not args.no_mcmc:
        t1 = time.perf_counter()
        mc = fit_eclipses(lc, search, errors="mcmc", mcmc_walkers=args.walkers, mcmc_steps=args.steps,
                          progress=False, seed=3, **LD)
        out.update(mcmc=time.perf_counter() - t1, mcmc_sampling=mc.diagnostics["mcmc_seconds"])
    print(json.dumps(out))
    return 0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--steps", type=int, default=2000)
    ap.add_argument("--walkers", type=int, default=32)
    ap.add_argument("--no-mcmc", action="store_true")
    ap.add_argument("--permutation", action="store_true")
    ap.add_argument("--previous", default=PREVIOUS, help="git revision of the implementation to compare with")
    ap.add_argument("--no-previous", action="store_true")
    ap.add_argument("--as-previous", action="store_true", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    warnings.simplefilter("ignore")
    if args.as_previous:
        return as_previous(args)
    prev = None if args.no_previous else previous_figures(args.previous, args)
    lc = make_sector()
    print(f"sector: {len(lc)} points over {lc.baseline:.1f} d, 1 mmag noise; truth {TRUTH}")

    # model alone
    tm = []
    for _ in range(20):
        t1 = time.perf_counter()
        eclipse.model_flux(lc.time, **TRUTH, **LD)
        tm.append(time.perf_counter() - t1)
    t_model = statistics.median(tm)
    tmv = []
    for i in range(20):  # a different radius ratio each call, as in a fit
        t1 = time.perf_counter()
        eclipse.model_flux(lc.time, **{**TRUTH, "radius_ratio": TRUTH["radius_ratio"] * (1 + 1e-7 * (i + 1))}, **LD)
        tmv.append(time.perf_counter() - t1)
    t_model_vary = statistics.median(tmv)
    print(f"model_flux on the sector: median {t_model * 1e3:.2f} ms (same parameters), "
          f"{t_model_vary * 1e3:.2f} ms (radius ratio changing every call)")

    from eclipsekit.period import find_period

    from eclipsekit.errors import NoEclipseFound

    t1 = time.perf_counter()
    try:
        search = find_period(lc, progress=False)
        t_search = time.perf_counter() - t1
        print(f"period search: {t_search:.2f} s -> P = {search.period:.6f} d, t0 = {search.t0:.5f}, "
              f"phase_secondary = {search.phase_secondary:.4f}")
    except NoEclipseFound as exc:
        # stand-in with period-search-like errors, so the fit benchmark still runs
        props = eclipse.eclipse_properties(**{k: v for k, v in TRUTH.items() if k != "t0"}, **LD)
        search = dict(period=TRUTH["period"] + 2e-4, t0=TRUTH["t0"] - 3e-3, period_err=1e-4, t0_err=1e-3,
                      depth_primary=0.9 * props["depth_primary"], depth_secondary=0.9 * props["depth_secondary"],
                      duration_primary=0.85 * props["duration_primary"],
                      duration_secondary=0.85 * props["duration_secondary"],
                      phase_secondary=props["phase_secondary"] + 0.002)
        print(f"period search FAILED ({exc}); using a stand-in start with period-search-like errors: {search}")

    times, evals = [], []
    for _ in range(args.repeats):
        t1 = time.perf_counter()
        fit = fit_eclipses(lc, search, progress=False, **LD)
        times.append(time.perf_counter() - t1)
        evals.append(fit.diagnostics["n_model_evaluations"])
    t_lsq = statistics.median(times)
    print(fit.summary())
    dev = {k: (fit.values[k] - TRUTH[k]) / fit.uncertainties[k] for k in ("radius_sum", "radius_ratio", "inclination",
                                                                          "surface_brightness_ratio")}
    print("deviation from truth in sigma:", {k: round(v, 2) for k, v in dev.items()})

    from eclipsekit.fit import estimate_start

    st = estimate_start(search)
    start = {k: st[k] for k in ("period", "t0", "radius_sum", "radius_ratio", "inclination",
                                "surface_brightness_ratio", "ecosw", "esinw")}
    t_plain, n_plain, vplain = plain_fit(lc, start)
    dev_plain = {k: round((vplain[k] - TRUTH[k]) / fit.uncertainties[k], 1) for k in dev}
    print(f"plain lmfit fit (absolute t0, baseline as parameters, all points, same start values): "
          f"{t_plain:.2f} s, {n_plain} model evaluations; deviation from truth in (eclipsekit) sigma: {dev_plain}")
    print()
    print(f"RESULT least-squares fit from the period-search start: median {t_lsq:.2f} s over {args.repeats} runs "
          f"(target < 5 s), {statistics.median(evals):.0f} model evaluations, points fitted "
          f"{fit.diagnostics['n_fitted']}/{len(lc)}, attempts {len(fit.diagnostics['attempts'])}")
    print(f"RESULT ratio plain-way fit / eclipsekit fit: {t_plain / t_lsq:.2f}")
    if prev:
        print(f"RESULT previous implementation ({args.previous}), limb darkening free, same run: "
              f"{prev['lsq']:.2f} s; ratio previous / now {prev['lsq'] / t_lsq:.2f}")

    if args.permutation:
        t1 = time.perf_counter()
        pb = fit_eclipses(lc, search, errors="permutation", progress=True, **LD)
        t_pb = time.perf_counter() - t1
        print(f"RESULT residual permutation ({pb.diagnostics['permutation']['n_shifts']} shifts): {t_pb:.1f} s, "
              f"{pb.diagnostics['n_model_evaluations']} model evaluations")

    if not args.no_mcmc:
        t1 = time.perf_counter()
        mc = fit_eclipses(lc, search, errors="mcmc", mcmc_walkers=args.walkers, mcmc_steps=args.steps,
                          progress=sys.stderr.isatty(), seed=3, **LD)
        t_mc = time.perf_counter() - t1
        d = mc.diagnostics["mcmc"]
        n_ev = mc.diagnostics["n_model_evaluations"]
        print(mc.summary())
        print(f"RESULT MCMC {d['walkers']} walkers x {d['steps']} steps: {t_mc:.1f} s total "
              f"({mc.diagnostics['mcmc_seconds']:.1f} s sampling, target < 45 s), {n_ev} model evaluations, "
              f"{mc.diagnostics['mcmc_seconds'] / (d['walkers'] * d['steps']) * 1e3:.2f} ms per step; "
              f"max tau {max(d['autocorr_time'].values()):.0f} steps, chain/tau {d['chain_over_tau']:.0f}, "
              f"acceptance {d['acceptance_fraction']:.2f}")
        for k in ("radius_sum", "radius_ratio", "inclination"):
            print(f"RESULT   {k}: covariance +-{fit.uncertainties[k]:.2g}, MCMC +-{mc.uncertainties[k]:.2g}")
        if prev and "mcmc" in prev:
            print(f"RESULT previous implementation ({args.previous}) MCMC, same run: {prev['mcmc']:.1f} s total "
                  f"({prev['mcmc_sampling']:.1f} s sampling); ratio previous / now {prev['mcmc'] / t_mc:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
