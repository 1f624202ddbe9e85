"""Benchmark `eclipsekit survey`: throughput, scaling from 1 to 2 workers, memory, overhead per target.

Makes N invented light curves of 20,000 points (two thirds detached binaries drawn with
the package's model, one third constant stars; white noise), then in one run:

* runs each target's analysis directly in this process, one after the other (the
  survey's own per-target work: read, analysis, result files), for the baseline, once
  to warm up and again just before the 1-worker survey of the same stage, so that both
  meet the same load on a shared machine;
* runs :func:`eclipsekit.survey.survey` on a LocalCluster of 1 and then 2 single-threaded
  worker processes with the settings of the survey's own cluster, started beforehand and
  passed as ``scheduler`` (cluster start-up is a fixed cost, reported apart), for the
  ``search`` and ``all`` stages;

and prints targets per minute, the 2-worker / 1-worker speed-up, the peak resident memory
of each worker, and the overhead: the 1-worker survey's wall time over the direct run's,
in all and per target (without the fixed cost of a run, timed by re-running the same
command with every target done), and the overhead per target beyond the analysis itself
(target: below 5%): the median time a worker spends between two analyses (the next target's
key, writing the part and journal line, the scheduler's round trip), from the journal.  Medians of the per-target times are
printed too.  The 2-worker speed-up is only meaningful on an otherwise idle machine.

Usage::

    python scripts/bench_survey.py [--targets 12] [--targets-all 6] [--points 20000]
"""

from __future__ import annotations

import argparse
import logging
import resource
import statistics
import tempfile
import time
from pathlib import Path

import numpy as np


def make_light_curves(folder: Path, n: int, points: int, seed: int = 7) -> list[str]:
    """Invented targets: detached binaries (package model) and constant stars, 2-minute cadence."""
    import eclipsekit as ek

    rng = np.random.default_rng(seed)
    t = np.arange(points) * 2.0 / 1440
    files = []
    for i in range(n):
        if i % 3 == 2:
            flux = np.ones(points)
        else:
            flux = ek.model_flux(t, period=rng.uniform(1.0, 6.0), t0=rng.uniform(0, 1), radius_sum=rng.uniform(0.1, 0.25),
                                 radius_ratio=rng.uniform(0.5, 0.95), inclination=rng.uniform(85.0, 90.0),
                                 surface_brightness_ratio=rng.uniform(0.4, 0.9))
        flux = flux + rng.normal(0, 1e-3, points)
        path = folder / f"target{i:03d}.csv"
        np.savetxt(path, np.c_[t, flux, np.full(points, 1e-3)], delimiter=",", header="time,flux,flux_err",
                   comments="", fmt="%.7f")
        files.append(str(path))
    return files


def direct(files: list[str], out: Path, stages: str) -> list[float]:
    """Seconds per target of the survey's per-target work run directly in this process."""
    from eclipsekit.survey import SurveySettings, _compute, collect_targets

    settings = SurveySettings(stages=stages)
    times = []
    for target in collect_targets(files):
        clock = time.perf_counter()
        _compute(target, out, settings)
        times.append(time.perf_counter() - clock)
    return times


def median_gap(out: Path) -> float:
    """Median time a worker spends between one target's analysis and the next's (journal timestamps).

    The journal line is written after the target's catalogue part, with the analysis's own
    seconds, so end(i) = time(i) and start(i) = time(i) - seconds(i); the gap covers the key and
    marker of the next target, writing the part and journal line, and the round trip through
    the scheduler: everything a survey adds per target beyond the analysis.
    """
    from eclipsekit.catalogue import read_journal

    gaps = []
    by_worker: dict = {}
    for rec in read_journal(out):
        by_worker.setdefault(rec["pid"], []).append(rec)
    for recs in by_worker.values():
        recs.sort(key=lambda r: r["time"])
        gaps += [b["time"] - b["seconds"] - a["time"] for a, b in zip(recs, recs[1:])]
    return float(np.median(gaps)) if gaps else float("nan")


def _peak_rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # Linux: kilobytes


def on_cluster(files: dict[str, list[str]], out: Path, workers: int, direct_out: Path | None = None) -> dict:
    """Survey wall times per stage on a fresh LocalCluster of ``workers`` processes, and worker memory.

    With ``direct_out``, the direct run of each stage is repeated just before the survey, so
    that the two meet the same load on a shared machine (``result[stages]["direct"]``).
    """
    from distributed import Client, LocalCluster

    import dask

    from eclipsekit.survey import _local_cluster_config, survey

    result: dict = {}
    clock = time.perf_counter()
    with dask.config.set(_local_cluster_config()), LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=None,
                      silence_logs=logging.ERROR) as cluster:
        result["startup"] = time.perf_counter() - clock
        for stages, chosen in files.items():
            before = direct(chosen, direct_out / f"again-{stages}", stages) if direct_out is not None else None
            clock = time.perf_counter()
            table = survey(chosen, out / f"{stages}-{workers}", scheduler=cluster.scheduler_address, stages=stages,
                           progress=False)
            wall = time.perf_counter() - clock
            # the same command again: every target skipped, so its time is the survey's fixed cost per
            # run (connecting, checking each target's key, compacting, the catalogue figures)
            clock = time.perf_counter()
            survey(chosen, out / f"{stages}-{workers}", scheduler=cluster.scheduler_address, stages=stages,
                   progress=False)
            result[stages] = {"wall": wall, "fixed": time.perf_counter() - clock, "direct": before,
                              "task_median": float(np.median(table["seconds"])),
                              "gap_median": median_gap(out / f"{stages}-{workers}"),
                              "statuses": sorted(set(str(s) for s in table["status"]))}
        with Client(cluster) as client:
            result["peak_mb"] = sorted(client.run(_peak_rss_mb).values())
    return result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--targets", type=int, default=12, help="targets of the search stage")
    parser.add_argument("--targets-all", type=int, default=6, help="targets of the all stage (fits are slow)")
    parser.add_argument("--points", type=int, default=20000)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        files = make_light_curves(folder, max(args.targets, args.targets_all), args.points)
        chosen = {"search": files[:args.targets], "all": files[:args.targets_all]}
        base = {stages: direct(f, folder / f"direct-{stages}", stages) for stages, f in chosen.items()}
        runs = {1: on_cluster(chosen, folder, 1, direct_out=folder), 2: on_cluster(chosen, folder, 2)}
    print(f"{args.points} points per light curve; direct = the same per-target work in one process")
    for stages, f in chosen.items():
        n = len(f)
        # the direct run just before the 1-worker survey (the same load); the first one warms the caches
        total = sum(runs[1][stages]["direct"])
        one, two = runs[1][stages]["wall"], runs[2][stages]["wall"]
        print(f"\n[{stages}] {n} targets; statuses {runs[1][stages]['statuses']}")
        print(f"  direct           {60 * n / total:7.2f} targets/min   median "
              f"{statistics.median(runs[1][stages]['direct']):.2f} s (first pass {60 * n / sum(base[stages]):.2f}/min)")
        print(f"  survey 1 worker  {60 * n / one:7.2f} targets/min   median task {runs[1][stages]['task_median']:.2f} s")
        print(f"  survey 2 workers {60 * n / two:7.2f} targets/min   median task {runs[2][stages]['task_median']:.2f} s")
        print(f"  scaling 1 -> 2 workers: x{one / two:.2f}")
        fixed = runs[1][stages]["fixed"]
        print(f"  fixed cost per run (a re-run with every target done): {fixed:.1f} s")
        gap, task = runs[1][stages]["gap_median"], runs[1][stages]["task_median"]
        print(f"  overhead per target beyond the analysis (1 worker): median gap between analyses {1000 * gap:.0f} ms"
              f" = {100 * gap / task:.1f}% of the median analysis (target < 5%)")
        print(f"  1-worker survey wall / direct - 1: {100 * (one / total - 1):+.1f}% in all; "
              f"{100 * ((one - fixed) / total - 1):+.1f}% with the re-run's fixed cost taken out (includes the "
              "first run's one-off costs and the load's drift between the two)")
    for w in (1, 2):
        print(f"\n{w} worker(s): cluster start-up {runs[w]['startup']:.1f} s; peak memory per worker "
              + ", ".join(f"{mb:.0f} MB" for mb in runs[w]["peak_mb"]))


if __name__ == "__main__":
    main()
