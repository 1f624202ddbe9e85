"""Coverage study of the default uncertainties of eclipsekit.fit_eclipses.

Each invented system of tests/_systems.py has a light curve from the independent
brute-force reference of tests/_brute_force.py (grid integration of the discs, Kepler's
equation by brentq; never the package's own model), computed once and repeated with new
white noise for every realisation.  Each realisation is fitted with
``fit_eclipses(lc, progress=False, seed=s)`` and no other option: the default path
(period search, limb darkening fitted with weak priors, ``errors="auto"``), except where
``CASES`` below says otherwise.

For honest Gaussian one-sigma intervals the truth lies inside in 68.27% of the
realisations, with binomial standard error sqrt(p (1 - p) / n) (common practice).  A
fit "contains" the truth when |z| < 1, z = (fit - truth) / reported sigma, or, when the
auto rule chose an MCMC (whose intervals may be asymmetric), when
``fit.intervals[name]`` = (lower, upper) holds it.  The 95% column uses the 2.5-97.5
percentiles of ``fit.samples[name]``.  The p columns are two-sided exact binomial tests
of each count against 68.27% and 95% (scipy.stats.binomtest).  The mean and standard
deviation of z should be near 0 and 1.  The output is Markdown, headed by the command
line that produced it.

Usage: python scripts/calibrate_errors.py [--system partial] [--n 50] [--seed 0] [--n-orbits 5]
       [--workers 1] [--output FILE] [--rows FILE]

With ``--workers N`` the realisations are fitted in N processes; the rows keep seed order,
so the report does not depend on N.
"""

from __future__ import annotations

import argparse
import collections
import concurrent.futures
import dataclasses
import functools
import json
import os
import re
import shlex
import signal
import sys
import time
import warnings

import numpy as np
from scipy import stats
from tqdm import tqdm

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))

from _systems import NOISE, SYSTEMS, light_curve_arrays, truth  # noqa: E402

import eclipsekit  # noqa: E402
from eclipsekit.errors import EclipsekitError  # noqa: E402

GEOMETRY = ("radius_sum", "radius_ratio", "inclination", "surface_brightness_ratio")

#: per system: options added to the default fit, the quantities tabulated, and the one whose
#: 95% interval is the pass criterion (None: the 68% criterion on the geometry)
CASES: dict[str, dict] = {
    "partial": dict(options={}, keys=GEOMETRY, check95=None),
    "total": dict(options={}, keys=GEOMETRY, check95=None),
    "power-2": dict(options={}, keys=GEOMETRY, check95=None),
    "eccentric": dict(options={}, keys=GEOMETRY + ("ecosw", "esinw"), check95=None),
    # k, i and third light nearly degenerate: third light freed, the 95% interval of k judged
    "grazing": dict(options={"free": ["third_light"]}, keys=GEOMETRY + ("third_light",), check95="radius_ratio"),
}

P68 = 0.6827  # Gaussian probability within one sigma (standard tables)
P95 = 0.95
#: pass band of the one-sigma coverage (lead's criterion: 68 +- 8%) and the 95% target
TOL68, MIN95 = 0.08, 0.90
#: |z| beyond which a realisation is listed so it can be reproduced
Z_OUTLIER = 4.0


@dataclasses.dataclass
class Realisation:
    """What one fit says about the quantities tabulated (or why it failed)."""

    seed: int
    seconds: float
    method: str = "failed"
    status: str = "failed"
    z: dict[str, float] = dataclasses.field(default_factory=dict)
    inside68: dict[str, bool] = dataclasses.field(default_factory=dict)
    inside95: dict[str, bool] = dataclasses.field(default_factory=dict)
    warnings: list[str] = dataclasses.field(default_factory=list)
    error: str = ""
    n_effective: float = np.nan  # MCMC only: effective independent samples


def fit_one(name: str, seed: int, n_orbits: int) -> Realisation:
    """Fit realisation ``seed`` of system ``name`` by the default path and compare with the truth."""
    t, f, e = light_curve_arrays(name, seed, n_orbits)
    case, tr = CASES[name], truth(name)
    t1 = time.perf_counter()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            fit = eclipsekit.fit_eclipses(eclipsekit.LightCurve(t, f, e), progress=False, seed=seed,
                                          **case["options"])
        except EclipsekitError as exc:
            return Realisation(seed, time.perf_counter() - t1, error=f"{type(exc).__name__}: {exc}")
    out = Realisation(seed, time.perf_counter() - t1, method=fit.errors_method, status=fit.status,
                      warnings=[str(w.message) for w in caught],
                      n_effective=fit.diagnostics.get("mcmc", {}).get("n_effective", np.nan))
    for key in case["keys"]:
        value, sigma = fit.values[key], fit.uncertainties[key]
        out.z[key] = (value - tr[key]) / sigma if sigma else np.nan
        if fit.errors_method == "mcmc" and key in fit.intervals:
            lo, hi = fit.intervals[key]
            out.inside68[key] = bool(lo <= tr[key] <= hi)
        else:
            out.inside68[key] = bool(abs(out.z[key]) < 1)
        lo, hi = np.percentile(fit.samples[key], [2.5, 97.5])
        out.inside95[key] = bool(lo <= tr[key] <= hi)
    return out


def coverage_table(name: str, rows: list[Realisation]) -> list[str]:
    """Markdown table: per quantity, truth, coverage at 68% and 95% with binomial errors, z statistics."""
    ok = [r for r in rows if r.method != "failed"]
    n, tr = len(ok), truth(name)
    if n == 0:
        return ["No fit succeeded."]
    se68, se95 = np.sqrt(P68 * (1 - P68) / n), np.sqrt(P95 * (1 - P95) / n)
    lines = [f"| quantity | truth | inside 68% (expect {100 * P68:.1f} +- {100 * se68:.1f}) | p68 "
             f"| inside 95% (expect 95.0 +- {100 * se95:.1f}) | p95 | mean z | sd z | max abs z |",
             "| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: |"]
    for key in CASES[name]["keys"]:
        z = np.array([r.z[key] for r in ok])
        k68, k95 = sum(r.inside68[key] for r in ok), sum(r.inside95[key] for r in ok)
        # two-sided exact binomial test of the count against the nominal probability (scipy)
        p68, p95 = stats.binomtest(k68, n, P68).pvalue, stats.binomtest(k95, n, P95).pvalue
        lines.append(f"| {key} | {tr[key]:.6g} | {100 * k68 / n:.1f} | {p68:.2f} | {100 * k95 / n:.1f} | {p95:.2f} "
                     f"| {np.nanmean(z):+.2f} | {np.nanstd(z, ddof=1):.2f} | {np.nanmax(np.abs(z)):.2f} |")
    return lines


def verdict(name: str, rows: list[Realisation]) -> str:
    """The pass criterion of the system, with the numbers it was judged on."""
    ok = [r for r in rows if r.method != "failed"]
    key95 = CASES[name]["check95"]
    if not ok:
        return "**Criterion: FAIL** (no fit succeeded)"
    if key95 is not None:
        frac = np.mean([r.inside95[key95] for r in ok])
        good = frac >= MIN95
        return (f"**Criterion ({key95} 95% interval contains the truth in >= {100 * MIN95:.0f}%): "
                f"{'PASS' if good else 'FAIL'}** ({100 * frac:.1f}% of {len(ok)})")
    fracs = {k: np.mean([r.inside68[k] for r in ok]) for k in GEOMETRY}
    bad = [k for k, v in fracs.items() if abs(v - P68) > TOL68]
    return (f"**Criterion (68% coverage within {100 * P68:.0f} +- {100 * TOL68:.0f}% for "
            f"{', '.join(GEOMETRY)}): {'PASS' if not bad else 'FAIL: ' + ', '.join(bad)}**")


def oddities(rows: list[Realisation]) -> list[str]:
    """Failed fits, statuses other than "ok", |z| outliers and the warnings seen, with their seeds."""
    lines = []
    failed = [r for r in rows if r.method == "failed"]
    if failed:
        lines.append("- failed fits: " + "; ".join(f"seed {r.seed}: {r.error}" for r in failed))
    not_ok = collections.defaultdict(list)
    for r in rows:
        if r.method != "failed" and r.status != "ok":
            not_ok[r.status].append(r.seed)
    for status, seeds in not_ok.items():
        lines.append(f"- status {status!r}: seeds {seeds}")
    outliers = [f"seed {r.seed} {k} z = {z:+.2f}" for r in rows for k, z in r.z.items() if abs(z) > Z_OUTLIER]
    if outliers:
        lines.append(f"- |z| > {Z_OUTLIER:g}: " + "; ".join(outliers))
    # numbers masked so that one kind of warning is counted once
    seen = collections.Counter(re.sub(r"[-+]?\d[\d.e+-]*", "#", w)[:100] for r in rows for w in set(r.warnings))
    for msg, count in seen.most_common():
        lines.append(f"- warning in {count} fits: {msg}")
    return lines or ["- none: every fit succeeded with status 'ok', no |z| > 4, no warning"]


def report(name: str, rows: list[Realisation], n_orbits: int, command: str, wall: float, n_asked: int) -> str:
    """The whole Markdown report of one system."""
    s, ok = SYSTEMS[name], [r for r in rows if r.method != "failed"]
    opts = CASES[name]["options"]
    methods = collections.Counter(r.method for r in rows)
    per_method = ", ".join(f"{m} {np.mean([r.seconds for r in rows if r.method == m]):.1f} s ({c} fits)"
                           for m, c in sorted(methods.items()))
    n_points = int(round(s["period"] / (2.0 / 1440))) * n_orbits
    lines = [f"### Coverage: system `{name}`", "",
             f"`{command}`", "",
             f"{len(rows)} realisations ({len(ok)} fitted"
             + (f"; interrupted, {n_asked} asked" if len(rows) < n_asked else "") + f"), {n_orbits} orbits, {n_points} points, white noise "
             f"{NOISE[name]:g} per 2-min point; fit options: {opts or 'none (default path)'}.", ""]
    lines += coverage_table(name, rows)
    mcmc = methods.get("mcmc", 0)
    lines += ["", verdict(name, rows), "",
              f"- auto rule chose MCMC in {mcmc} of {len(ok)} fits"
              + (f" (seeds {[r.seed for r in rows if r.method == 'mcmc']})" if 0 < mcmc <= 20 else "")
              + (f"; median effective samples {np.nanmedian([r.n_effective for r in rows if r.method == 'mcmc']):.0f}"
                 if mcmc else ""),
              f"- mean time per fit {np.mean([r.seconds for r in rows]):.1f} s; by method: {per_method}; "
              f"wall time {wall / 60:.1f} min",
              ]
    lines += oddities(rows)
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--system", choices=sorted(CASES), default="partial")
    ap.add_argument("--n", type=int, default=50, help="number of noise realisations (default 50)")
    ap.add_argument("--seed", type=int, default=0,
                    help="seed of the first realisation; realisation i uses seed + i for the noise and the fit")
    ap.add_argument("--n-orbits", type=int, default=5, help="orbits per light curve (default 5, as the tests)")
    ap.add_argument("--workers", type=int, default=1, help="processes fitting realisations in parallel (default 1)")
    ap.add_argument("--output", help="also write the Markdown report to this file")
    ap.add_argument("--rows", help="write each realisation's z, coverage and method to this JSON-lines file")
    args = ap.parse_args(argv)
    if args.n < 2 or args.n_orbits < 1 or args.workers < 1:
        ap.error("--n must be at least 2, --n-orbits and --workers at least 1")
    command = "python scripts/calibrate_errors.py " + " ".join(shlex.quote(a) for a in (
        sys.argv[1:] if argv is None else argv))
    t1 = time.perf_counter()
    seeds = range(args.seed, args.seed + args.n)
    one = functools.partial(fit_one, args.system, n_orbits=args.n_orbits)
    pool = concurrent.futures.ProcessPoolExecutor(args.workers) if args.workers > 1 else None
    results = pool.map(one, seeds) if pool else map(one, seeds)  # both yield in seed order
    bar = tqdm(results, total=len(seeds), file=sys.stderr, disable=not sys.stderr.isatty(), desc=args.system)
    rows = []
    # a long run stopped with Ctrl-C or `kill` still reports the realisations it finished
    signal.signal(signal.SIGTERM, signal.default_int_handler)
    try:
        for row in bar:
            rows.append(row)
            if args.rows:
                with open(args.rows, "a") as fh:
                    fh.write(json.dumps(dataclasses.asdict(row)) + "\n")
    except KeyboardInterrupt:
        if len(rows) < 2:
            return 1
    finally:
        if pool:
            pool.shutdown(cancel_futures=True)
    text = report(args.system, rows, args.n_orbits, command.strip(), time.perf_counter() - t1, args.n)
    print(text)
    if args.output:
        with open(args.output, "w") as fh:
            fh.write(text)
    return 0


if __name__ == "__main__":
    sys.exit(main())
