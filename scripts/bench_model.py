"""Benchmark of eclipsekit.eclipse.model_flux (issue 3).

100,000 times over 100 days of a detached binary (P = 3 d, ~10% of the points in
eclipse, quadratic limb darkening), single core.  Three cases: circular; e = 0.3;
30-minute exposures smeared with supersample 7.  Each case is timed

* "fit-like": the parameters change slightly before every call (as in a fit), so no
  cached orbit geometry or occultation table is reused;
* "repeat": identical parameters every call (caches warm);
* "plain": a reference written the simple way in the same run - Kepler's equation
  solved on every point, the occultation integrated over 64 equal annuli on every point,
  no masking (and for smearing, 7 midpoint sub-exposures of every point).

The accuracy of model_flux is measured against a precise slow path on all points in
eclipse: direct kink-aware quadrature (error < 1e-12) at the separations of an
independent full-orbit solve, and for smearing a 401-point midpoint average.

A fourth case is an MCMC's view: "parameters changing every call" on scripts/bench_fit.py's
sector (20,000 two-minute points, e = 0.037) restricted to the points within 1.5 eclipse
durations of each eclipse (~7,000 points, as the fit does), with radius ratio, radius sum,
inclination and limb darkening drawn from a narrow posterior-like cloud (fixed seed).  It is
timed per parameter set for model_flux, for model_flux_batch with 32 sets per call (an
ensemble sampler's walkers), and for the previous implementation (the package's
orbit/eclipse/occultation modules at git revision ``--previous``, loaded under another
name) in the same run.

Usage: python scripts/bench_model.py [--repeats N] [--previous REV] [--only-changing]
"""

from __future__ import annotations

import argparse
import importlib
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402

from eclipsekit import _occultation as occ  # noqa: E402
from eclipsekit.eclipse import eclipse_properties, model_flux, model_flux_batch  # noqa: E402
from eclipsekit.orbit import sky_separation, solve_kepler  # noqa: E402

N = 100_000
TIME = np.linspace(0.0, 100.0, N)
SYSTEM = dict(period=3.0, t0=0.5, radius_sum=0.15, radius_ratio=0.8, inclination=88.5,
              surface_brightness_ratio=0.7, ld_law="quadratic", ld_primary=(0.45, 0.2), ld_secondary=(0.5, 0.18))
CASES = {
    "circular": dict(),
    "e=0.3": dict(ecosw=0.1, esinw=float(np.sqrt(0.3 ** 2 - 0.1 ** 2))),
    "30-min smearing x7": dict(exposure_time=30.0 / 1440.0, supersample=7),
}


# ----------------------------------------------------------------------------------------------
# plain reference: everything on every point
# ----------------------------------------------------------------------------------------------
def plain_model(t, *, period, t0, radius_sum, radius_ratio, inclination, surface_brightness_ratio,
                ecosw=0.0, esinw=0.0, ld_law="quadratic", ld_primary=(0.4, 0.2), ld_secondary=(0.4, 0.2),
                exposure_time=0.0, supersample=1, n_annuli=64, chunk=20_000):
    if exposure_time > 0 and supersample > 1:
        off = exposure_time * ((np.arange(supersample) + 0.5) / supersample - 0.5)
        tt = (t[:, None] + off[None, :]).ravel()
        f = plain_model(tt, period=period, t0=t0, radius_sum=radius_sum, radius_ratio=radius_ratio,
                        inclination=inclination, surface_brightness_ratio=surface_brightness_ratio,
                        ecosw=ecosw, esinw=esinw, ld_law=ld_law, ld_primary=ld_primary, ld_secondary=ld_secondary)
        return f.reshape(len(t), supersample).mean(axis=1)
    e = np.hypot(ecosw, esinw)
    w = np.arctan2(esinw, ecosw) if e > 0 else 0.0
    # periastron from nu = 90 - w at t0 (the plain way; exact at i = 90)
    nu0 = np.pi / 2 - w
    e0 = 2 * np.arctan(np.sqrt((1 - e) / (1 + e)) * np.tan(nu0 / 2))
    tp = t0 - period * (e0 - e * np.sin(e0)) / (2 * np.pi)
    ecc = solve_kepler(2 * np.pi * (t - tp) / period, e)
    nu = 2 * np.arctan2(np.sqrt(1 + e) * np.sin(ecc / 2), np.sqrt(1 - e) * np.cos(ecc / 2))
    r = 1 - e * np.cos(ecc)
    sth = np.sin(nu + w)
    d = r * np.sqrt(1 - (np.sin(np.radians(inclination)) * sth) ** 2)
    k = radius_ratio
    r1 = radius_sum / (1 + k)
    l2 = surface_brightness_ratio * k * k
    # 64 equal annuli, midpoint radii; hidden arc of each annulus
    edges = np.linspace(0, 1, n_annuli + 1)
    rm = 0.5 * (edges[1:] + edges[:-1])
    area = np.pi * (edges[1:] ** 2 - edges[:-1] ** 2)
    mu = np.sqrt(1 - rm ** 2)

    def hidden(z, p, coeffs):
        inten = 1 - coeffs[0] * (1 - mu) - coeffs[1] * (1 - mu) ** 2
        out = np.empty(z.shape)
        for s in range(0, len(z), chunk):
            zz = z[s:s + chunk, None]
            x = (rm ** 2 + zz ** 2 - p * p) / (2 * rm * np.maximum(zz, 1e-12))
            frac = np.arccos(np.clip(x, -1, 1)) / np.pi
            out[s:s + chunk] = (frac * inten * area).sum(axis=1) / (inten * area).sum()
        return out

    f1 = np.where(sth > 0, hidden(d / r1, k, ld_primary), 0.0)
    f2 = np.where(sth < 0, hidden(d / (k * r1), 1 / k, ld_secondary), 0.0)
    return 1 - (f1 + l2 * f2) / (1 + l2)


# ----------------------------------------------------------------------------------------------
# precise slow path for the accuracy check
# ----------------------------------------------------------------------------------------------
def precise_model(t, kw):
    d, star1_front = sky_separation(t, period=kw["period"], t0=kw["t0"], ecosw=kw.get("ecosw", 0.0),
                                    esinw=kw.get("esinw", 0.0), inclination=kw["inclination"])
    k = kw["radius_ratio"]
    r1 = kw["radius_sum"] / (1 + k)
    l2 = kw["surface_brightness_ratio"] * k * k
    a1, b1 = occ.intensity_terms(kw["ld_law"], kw["ld_primary"])
    a2, b2 = occ.intensity_terms(kw["ld_law"], kw["ld_secondary"])
    f = np.ones_like(t)
    prim = (~star1_front) & (d < kw["radius_sum"])
    sec = star1_front & (d < kw["radius_sum"])
    f[prim] -= occ.hidden_fraction_quadrature(d[prim] / r1, k, a1, b1, 96) / (1 + l2)
    f[sec] -= l2 * occ.hidden_fraction_quadrature(d[sec] / (k * r1), 1 / k, a2, b2, 96) / (1 + l2)
    return f


def accuracy(case_kw):
    kw = dict(SYSTEM, **case_kw)
    fast = model_flux(TIME, **kw)
    texp = kw.get("exposure_time", 0.0)
    if texp:
        # subset of points in or near eclipse; 401-point midpoint average (error ~4e-8)
        idx = np.nonzero(fast < 1.0)[0][::10]
        x = (np.arange(401) + 0.5) / 401 - 0.5
        base = {k: v for k, v in kw.items() if k not in ("exposure_time", "supersample")}
        ref = precise_model((TIME[idx, None] + texp * x[None, :]).ravel(), base).reshape(len(idx), -1).mean(axis=1)
        return np.max(np.abs(fast[idx] - ref)), np.mean(fast < 1.0)
    ref = precise_model(TIME, kw)
    return np.max(np.abs(fast - ref)), np.mean(fast < 1.0)


def timed(fn, repeats):
    out = []
    for i in range(repeats):
        t0 = time.perf_counter()
        fn(i)
        out.append(time.perf_counter() - t0)
    return float(np.median(out))


# ----------------------------------------------------------------------------------------------
# parameters changing every call (an MCMC) on bench_fit's windowed sector; previous implementation
# ----------------------------------------------------------------------------------------------
#: the last revision before the batched model (override with --previous)
PREVIOUS = "1177892"
FIT_TRUTH = dict(period=3.4713, t0=2460101.3217, radius_sum=0.185, radius_ratio=0.78, inclination=88.1,
                 surface_brightness_ratio=0.62, ecosw=0.012, esinw=-0.035, third_light=0.0,
                 ld_primary=(0.40, 0.25), ld_secondary=(0.45, 0.22))
WALKERS = 32


def previous_model_flux(rev: str):
    """model_flux of revision ``rev``: its numerical modules written to a temporary package and imported."""
    root = Path(__file__).resolve().parents[1]
    pkg = Path(tempfile.mkdtemp(prefix="eclipsekit_previous_")) / "eclipsekit_previous"
    pkg.mkdir()
    (pkg / "__init__.py").write_text("")
    for name in ("eclipse", "_occultation", "orbit", "errors", "_validate"):
        text = subprocess.run(["git", "-C", str(root), "show", f"{rev}:eclipsekit/{name}.py"], check=True,
                              capture_output=True, text=True).stdout
        (pkg / f"{name}.py").write_text(text)
    sys.path.insert(0, str(pkg.parent))
    return importlib.import_module("eclipsekit_previous.eclipse").model_flux


def windowed_sector_times() -> np.ndarray:
    """bench_fit.py's sector times within 1.5 eclipse durations of each eclipse."""
    t = 2460100.0 + np.arange(20000 + 720) * (2.0 / 1440)
    t = np.concatenate([t[:10000], t[10720:]])
    props = eclipse_properties(**{k: v for k, v in FIT_TRUTH.items() if k != "t0"})
    period, t0 = FIT_TRUTH["period"], FIT_TRUTH["t0"]
    keep = np.zeros(t.size, bool)
    for tc, dur in ((t0, props["duration_primary"]), (t0 + props["phase_secondary"] * period,
                                                        props["duration_secondary"])):
        x = (t - tc) / period
        x -= np.floor(x + 0.5)
        keep |= np.abs(x * period) < 1.5 * dur
    return t[keep]


def posterior_cloud(n: int, seed: int = 11) -> list[dict]:
    """n parameter sets scattered like a posterior (relative widths ~1e-3, 0.02 deg, 0.01 in LD)."""
    rng = np.random.default_rng(seed)
    sets = []
    for _ in range(n):
        kw = dict(FIT_TRUTH)
        kw["radius_ratio"] *= 1 + 2e-3 * rng.normal()
        kw["radius_sum"] *= 1 + 1e-3 * rng.normal()
        kw["inclination"] += 0.02 * rng.normal()
        kw["ld_primary"] = (0.40 + 0.01 * rng.normal(), 0.25 + 0.01 * rng.normal())
        kw["ld_secondary"] = (0.45 + 0.01 * rng.normal(), 0.22 + 0.01 * rng.normal())
        sets.append(kw)
    return sets


def changing_parameters(repeats: int, rev: str) -> list[str]:
    t = windowed_sector_times()
    sets = posterior_cloud(WALKERS * max(repeats, 8))
    batches = [{k: np.array([s[k] for s in sets[j:j + WALKERS]]) for k in sets[0]}
               for j in range(0, len(sets), WALKERS)]
    old = previous_model_flux(rev)
    model_flux(t, **sets[0])
    model_flux_batch(t, **batches[0])
    old(t, **sets[0])
    n_calls = len(sets)
    # interleaved rounds (one call of each kind per round): load changes on a shared machine hit all three
    rounds = max(repeats, 8) * 3
    times = np.empty((rounds, 3))
    for r in range(rounds):
        for j, call in enumerate((lambda: model_flux(t, **sets[r % n_calls]),
                                  lambda: model_flux_batch(t, **batches[r % len(batches)]),
                                  lambda: old(t, **sets[r % n_calls]))):
            t1 = time.perf_counter()
            call()
            times[r, j] = time.perf_counter() - t1
    t_new, t_batch, t_old = np.median(times, axis=0)
    t_batch /= WALKERS
    # accuracy: batch rows against single calls, and both against the previous implementation
    b = model_flux_batch(t, **batches[0])
    single = np.array([model_flux(t, **s) for s in sets[:WALKERS]])
    prev = np.array([old(t, **s) for s in sets[:WALKERS]])
    in_eclipse = np.mean(single < 1.0)
    return [f"parameters changing every call, bench_fit sector within 1.5 durations of each eclipse: {t.size} "
            f"times, {100 * in_eclipse:.0f}% in eclipse, e = 0.037, quadratic LD, {n_calls} parameter sets",
            f"  model_flux              {1e3 * t_new:6.3f} ms per set (median of {rounds} interleaved rounds)",
            f"  model_flux_batch (M={WALKERS}) {1e3 * t_batch:6.3f} ms per set (median call / {WALKERS})",
            f"  previous model_flux     {1e3 * t_old:6.3f} ms per set (revision {rev}, same rounds)",
            f"  ratios previous/model_flux {t_old / t_new:5.1f}x, previous/batch {t_old / t_batch:5.1f}x; "
            f"target batch <= 0.4 ms per set",
            f"  max |batch - single| {np.max(np.abs(b - single)):.1e}; max |new - previous| "
            f"{np.max(np.abs(single - prev)):.1e} (the previous phase carried the rounding of a BJD-sized "
            "time of periastron, ~1e-9)"]


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=40)
    ap.add_argument("--previous", default=PREVIOUS, help="git revision of the previous implementation")
    ap.add_argument("--only-changing", action="store_true", help="only the parameters-changing-every-call case")
    args = ap.parse_args(argv)
    lines = []
    for name, extra in ({} if args.only_changing else CASES).items():
        kw = dict(SYSTEM, **extra)
        err, frac = accuracy(extra)
        model_flux(TIME, **kw)  # warm-up (imports, first allocation)

        def fitlike(i, kw=kw):
            # a fit changes the geometry every call: nothing cached is reused
            model_flux(TIME, **dict(kw, radius_ratio=kw["radius_ratio"] * (1 + 1e-7 * (i + 1)),
                                    inclination=kw["inclination"] - 1e-7 * (i + 1)))

        t_fit = timed(fitlike, args.repeats)
        t_rep = timed(lambda i, kw=kw: model_flux(TIME, **kw), args.repeats)
        n_plain = 3 if "exposure_time" in extra else 5
        t_plain = timed(lambda i, kw=kw: plain_model(TIME, **kw), n_plain)
        err_plain = np.max(np.abs(plain_model(TIME, **kw) - model_flux(TIME, **kw)))
        lines.append(f"{name:>19s}: in eclipse {100 * frac:4.1f}%  model_flux {1e3 * t_fit:6.2f} ms fit-like "
                     f"({N / t_fit / 1e6:5.1f} Mpts/s), {1e3 * t_rep:6.2f} ms repeat | plain {1e3 * t_plain:8.1f} ms "
                     f"| plain/fit-like {t_plain / t_fit:6.1f}x | max error {1e6 * err:.1e} ppm "
                     f"(plain 64-annulus differs by {1e6 * err_plain:.0f} ppm)")
    if lines:
        print(f"bench_model: {N} times, P = 3 d, quadratic LD, single core, median of {args.repeats} calls "
              "(plain: 3-5 calls)")
        for line in lines:
            print(line)
    for line in changing_parameters(args.repeats, args.previous):
        print(line)


if __name__ == "__main__":
    main()
