"""Fuzz the light-curve reader, the period search and the fit with mutated light curves.

Each input is a small eclipsing light curve made here (trapezoid eclipses plus Gaussian
noise) with one to three mutations of its numbers: extreme, zero, negative, tiny, huge or
missing errors; extreme, repeated, unsorted, missing, rescaled or widely spread times;
extreme, constant, inverted, rescaled or missing fluxes; a handful of rows; magnitudes
instead of fluxes; no error column.  Every input goes through ``read_light_curve`` ->
``find_period`` -> ``fit_eclipses`` as far as it gets, in worker processes, so that a
signal or a hang is caught and attributed to its input.

An outcome is *success*, an ``EclipsekitError`` subclass (the package refused the input
with a message: fine), or a *crash*: any other exception, a signal, or a hang past the
per-input limit of CPU time (``--timeout``, 120 s).  Crashes are counted by kind, and each
one's input is saved as a reproducer (``OUT/crashes/<case>.csv`` with ``<case>.txt`` holding
the traceback and the options used).  The report also gives the CPU time per input and lists
the inputs that took over 30 s.  The fit's errors come from the covariance, and from the default
rule (the MCMC when needed) on every tenth input: see :data:`FIT_OPTIONS`.

Usage::

    python scripts/fuzz_inputs.py --n 10000 --seed 1 --workers 2 --out fuzz_out
    python scripts/fuzz_inputs.py --start 4000 --n 10000 --seed 1 --out fuzz_out   # continue a run
    python scripts/fuzz_inputs.py --report --out fuzz_out      # every outcome recorded there

Case ``i`` of seed ``s`` is the same on every run (``numpy.random.default_rng([s, i])``),
so ``--only i`` reruns one input in this process with its traceback shown.
"""

from __future__ import annotations

import argparse
import json
import os
import select
import signal
import subprocess
import sys
import time
import traceback
import warnings
from collections import Counter
from pathlib import Path

import numpy as np

#: CPU seconds above which a finished input is listed as slow in the report (it is not a crash).
SLOW_CPU = 30.0
#: Trial periods a fuzzed search may have (keeps each search well under a second).
GRID_BUDGET = 5_000
#: Options of the fit, all to save time: the limb-darkening plausibility check is skipped, the
#: fit windows are used (same model, fewer points), and the errors come from the covariance
#: (the least squares, its restarts, refinement and third-light check all run).
FIT_OPTIONS = {"progress": False, "check_limb_darkening": False, "window": True, "errors": "covariance"}
#: Every MCMC_EVERY-th input takes the default errors instead ("auto": the MCMC, with its profile
#: starts, whenever the covariance cannot be trusted), the chain stopped after 2 s.  The default
#: errors on every input (MCMC stopped after 5 s) doubled the run: 2.9 s of CPU per input, not 1.4 s.
MCMC_EVERY = 10
MCMC_OPTIONS = {"errors": "auto", "mcmc_seconds": 2.0}


# ---------------------------------------------------------------------------------------
# inputs
# ---------------------------------------------------------------------------------------
def base_light_curve(rng: np.random.Generator) -> dict:
    """A detached-binary-like light curve: trapezoid primary and secondary eclipses, noise."""
    n = int(rng.integers(150, 500))
    span = float(rng.uniform(6.0, 20.0))
    period = float(rng.uniform(0.6, 3.0))
    t = np.sort(rng.uniform(0.0, span, n)) + float(rng.choice([0.0, 2450000.0, 58000.0]))
    phase = ((t - t[0] - rng.uniform(0, period)) / period + 0.5) % 1.0 - 0.5
    half = rng.uniform(0.02, 0.06)
    flux = (1.0 - rng.uniform(0.05, 0.5) * np.clip((half - np.abs(phase)) / (0.3 * half), 0.0, 1.0)
            - rng.uniform(0.0, 0.3) * np.clip((half - np.abs(np.abs(phase) - 0.5)) / (0.3 * half), 0.0, 1.0))
    sigma = float(rng.uniform(5e-4, 5e-3))
    flux = flux + rng.normal(0.0, sigma, n)
    return {"time": t, "flux": flux, "err": np.full(n, sigma), "period": period, "kind": "flux"}


def _rows(rng, n, most=10):
    return rng.choice(n, size=int(rng.integers(1, max(1, min(most, n)) + 1)), replace=False)


_EXTREME = [0.0, -0.0, 5e-324, 1e-300, 1e-200, 1e-60, 1e-12, 1e12, 1e60, 1e200, 1e300, 1.7e308, -1e-300,
            -1.0, -1e300, np.inf, -np.inf, np.nan]


def _err_extreme(rng, c):
    if c["err"] is None:  # after err_drop
        return
    c["err"][_rows(rng, c["err"].size)] = rng.choice(_EXTREME)


def _err_many_extreme(rng, c):
    if c["err"] is None:  # after err_drop
        return
    n = c["err"].size
    c["err"][rng.choice(n, size=int(rng.integers(n // 20, n // 2 + 1)), replace=False)] = rng.choice(
        [1e-200, 1e-20, 1e20, 1e308])


def _err_scale_all(rng, c):
    if c["err"] is None:  # after err_drop
        return
    c["err"] *= rng.choice([1e-300, 1e-200, 1e-60, 1e-6, 1e6, 1e60, 1e200, 1e300])


def _err_spread(rng, c):
    if c["err"] is None:  # after err_drop
        return
    c["err"] *= 10.0 ** rng.uniform(-4, 4, c["err"].size)


def _err_drop(rng, c):
    c["err"] = None


def _time_extreme(rng, c):
    c["time"][_rows(rng, c["time"].size, 3)] = rng.choice(
        [-1.7e308, -1e300, -1e10, -1e6, 1e6, 1e8, 1.5e8, 1e10, 1e300, 1.7e308, np.nan, np.inf])


def _time_repeated(rng, c):
    t = c["time"]
    if rng.random() < 0.3:
        t[:] = t[0]
    else:
        t[:] = np.round(t / rng.choice([0.01, 0.1, 1.0, 5.0])) * rng.choice([0.01, 0.1, 1.0, 5.0])


def _time_unsorted(rng, c):
    order = rng.permutation(c["time"].size)
    for key in ("time", "flux", "err"):
        if c[key] is not None:
            c[key] = c[key][order]


def _time_scale(rng, c):
    t = c["time"]
    c["time"] = (t - t[0]) * rng.choice([1e-9, 1e-6, 1e-3, 0.02, 50.0, 1e3, 1e4, 1e5]) + t[0]


def _time_offset(rng, c):
    c["time"] = c["time"] + rng.choice([1e7, 9.9e7, -5e7, 2.4e6, -2.4e6])


def _time_spread(rng, c):
    t = c["time"]
    k = _rows(rng, t.size, t.size // 3)
    t[k] += rng.choice([1e3, 3e4, 9.9e4, 1e5, 2e5]) * rng.random(k.size)


def _flux_extreme(rng, c):
    c["flux"][_rows(rng, c["flux"].size)] = rng.choice(_EXTREME + [1e3, 1e4, -1e4, 1e50, 1e51])


def _flux_constant(rng, c):
    value = rng.choice([1.0, 0.0, -3.0, 1e-300, 1e300])
    c["flux"] = np.full(c["flux"].size, value) + rng.choice([0.0, 1e-15, 1e-9]) * rng.standard_normal(c["flux"].size)


def _flux_inverted(rng, c):
    c["flux"] = (2.0 - c["flux"]) if rng.random() < 0.5 else -c["flux"]


def _flux_scale(rng, c):
    factor = rng.choice([1e-300, 1e-100, 1e-30, 1e-6, 1e6, 1e30, 1e100, 1e300])
    c["flux"] = c["flux"] * factor
    if c["err"] is not None:
        c["err"] = c["err"] * factor


def _flux_missing(rng, c):
    n = c["flux"].size
    c["flux"][rng.choice(n, size=int(rng.integers(1, n + 1)), replace=False)] = np.nan


def _few_rows(rng, c):
    keep = np.sort(rng.choice(c["time"].size, size=int(rng.integers(1, 40)), replace=False))
    for key in ("time", "flux", "err"):
        if c[key] is not None:
            c[key] = c[key][keep]


def _magnitudes(rng, c):
    c["kind"] = "mag"
    f = np.where(c["flux"] > 0, c["flux"], np.nan)
    with np.errstate(all="ignore"):
        c["flux"] = 12.0 - 2.5 * np.log10(f)
        if c["err"] is not None:
            c["err"] = 1.0857 * c["err"] / f
    c["flux"][_rows(rng, f.size, 3)] = rng.choice([99.99, -99.0, 1e3, -1e3, 1e300])


MUTATIONS = {
    "err_extreme": _err_extreme, "err_many_extreme": _err_many_extreme, "err_scale_all": _err_scale_all,
    "err_spread": _err_spread, "err_drop": _err_drop, "time_extreme": _time_extreme,
    "time_repeated": _time_repeated, "time_unsorted": _time_unsorted, "time_scale": _time_scale,
    "time_offset": _time_offset, "time_spread": _time_spread, "flux_extreme": _flux_extreme,
    "flux_constant": _flux_constant, "flux_inverted": _flux_inverted, "flux_scale": _flux_scale,
    "flux_missing": _flux_missing, "few_rows": _few_rows, "magnitudes": _magnitudes,
}


def make_case(seed: int, index: int) -> dict:
    """Input ``index`` of run ``seed``: the mutated columns, the mutation names and the CSV text."""
    rng = np.random.default_rng([seed, index])
    case = base_light_curve(rng)
    names = list(rng.choice(sorted(MUTATIONS), size=int(rng.choice([1, 1, 2, 3])), replace=False))
    with np.errstate(all="ignore"):  # mutations overflow on purpose
        for name in names:
            MUTATIONS[name](rng, case)
    case["mutations"] = names
    case["text"] = to_csv(case)
    return case


def to_csv(case: dict) -> str:
    """CSV text of a case (17 significant digits: the numbers are read back exactly)."""
    value = "mag" if case["kind"] == "mag" else "flux"
    cols = [("time", case["time"]), (value, case["flux"])]
    if case["err"] is not None:
        cols.append((value + "_err", case["err"]))
    lines = [",".join(name for name, _ in cols)]
    lines += [",".join(f"{col[i]:.17g}" for _, col in cols) for i in range(case["time"].size)]
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------------------
# one input through the package
# ---------------------------------------------------------------------------------------
def search_options(lc, period: float) -> dict:
    """find_period options that keep the grid within GRID_BUDGET trial periods.

    The default range when its grid is small enough; else a range narrowed around
    the base period (or around 1 d when that is outside the data), always at least
    as wide as the grid step allows.
    """
    from eclipsekit._grid import grid_size
    from eclipsekit.period import DEFAULT_MIN_PERIOD

    baseline = lc.baseline
    if 0.5 * baseline > DEFAULT_MIN_PERIOD and grid_size(DEFAULT_MIN_PERIOD, 0.5 * baseline, baseline, 2.0) \
            <= GRID_BUDGET:
        return {"oversample": 2.0}
    centre = period if 2 * period < baseline else max(min(1.0, 0.4 * baseline), 1e-6)
    lo, hi = centre / 1.8, min(centre * 2.2, baseline)
    while grid_size(lo, hi, baseline, 1.0) > GRID_BUDGET and hi / lo > 1.0001:
        lo, hi = centre * (lo / centre) ** 0.5, centre * (hi / centre) ** 0.5
    return {"min_period": lo, "max_period": hi, "oversample": 1.0}


def run_case(path: str, period: float, fit: bool = True, mcmc: bool = False) -> tuple[str, str, dict]:
    """(outcome, detail, options) for one file: outcome "success", "refused" or "crash".

    ``fit=False`` stops after the period search (for quick samples); ``mcmc`` fits with
    :data:`MCMC_OPTIONS` on top of :data:`FIT_OPTIONS`.
    """
    from eclipsekit import EclipsekitError
    from eclipsekit.data import read_light_curve
    from eclipsekit.fit import fit_eclipses
    from eclipsekit.period import find_period

    options: dict = {}
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            with np.errstate(all="ignore"):  # numpy warnings are not outcomes
                lc = read_light_curve(path)
                options = search_options(lc, period)
                search = find_period(lc, n_jobs=1, progress=False, **options)
                if fit:
                    fit_eclipses(lc, search, **{**FIT_OPTIONS, **(MCMC_OPTIONS if mcmc else {})})
    except EclipsekitError as exc:
        return "refused", type(exc).__name__, options
    except Exception as exc:  # noqa: BLE001 - everything else is what we are looking for
        frame = traceback.extract_tb(exc.__traceback__)[-1]
        where = f"{Path(frame.filename).name}:{frame.lineno}"
        return "crash", f"{type(exc).__name__} at {where}", {**options, "traceback": traceback.format_exc()}
    return "success", "", options


def worker(seed: int, folder: str, fit: bool = True, cpu_limit: float = 30.0, kill_on: int | None = None) -> None:
    """Read case indices from stdin; for each print START and then DONE with its outcome (JSON).

    An input that uses more than ``cpu_limit`` seconds of CPU time ends the worker with
    SIGVTALRM (CPU time, not wall time: the machine may be shared).  ``kill_on``: an
    input on which the worker kills itself with SIGSEGV (to test the harness).
    """
    for line in sys.stdin:
        index = int(line)
        case = make_case(seed, index)
        path = os.path.join(folder, f"case_{os.getpid()}.csv")
        Path(path).write_text(case["text"])
        print(json.dumps({"start": index}), flush=True)
        if index == kill_on:
            os.kill(os.getpid(), signal.SIGSEGV)
        signal.setitimer(signal.ITIMER_VIRTUAL, cpu_limit)
        cpu = time.process_time()
        outcome, detail, options = run_case(path, case["period"], fit, index % MCMC_EVERY == 0)
        cpu = time.process_time() - cpu
        signal.setitimer(signal.ITIMER_VIRTUAL, 0.0)
        print(json.dumps({"done": index, "outcome": outcome, "detail": detail, "cpu": round(cpu, 3),
                          "options": {k: v for k, v in options.items() if k != "traceback"},
                          "traceback": options.get("traceback", "")}), flush=True)


# ---------------------------------------------------------------------------------------
# batches in worker processes
# ---------------------------------------------------------------------------------------
def run_batch(seed: int, indices: list[int], folder: str, timeout: float, fit: bool = True,
              kill_on: int | None = None) -> list[dict]:
    """Outcomes of ``indices`` from worker processes; a signal or a hang ends a worker and is
    recorded against the input it was working on, and a new worker takes the rest."""
    results: list[dict] = []
    todo = list(indices)
    env = {**os.environ, "MPLBACKEND": "Agg"}
    while todo:
        command = [sys.executable, __file__, "--worker", "--seed", str(seed), "--tmp", folder,
                   "--timeout", str(timeout)]
        command += ([] if fit else ["--no-fit"]) + ([] if kill_on is None else ["--kill-on", str(kill_on)])
        proc = subprocess.Popen(command,
                                stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL,
                                text=True, env=env)
        proc.stdin.write("".join(f"{i}\n" for i in todo))
        proc.stdin.close()
        current, started = None, time.monotonic()
        while True:
            # the worker stops itself after `timeout` s of CPU; wall time is a backstop on a busy machine
            limit = 10.0 * timeout + (60.0 if current is None else 0.0)
            ready, _, _ = select.select([proc.stdout], [], [], max(0.0, limit - (time.monotonic() - started)))
            if not ready:
                proc.kill()
                proc.wait()
                if current is None:  # the worker itself hung before any input
                    current = todo[0]
                results.append({"index": current, "outcome": "crash", "detail": f"hang over {limit:g} s"})
                todo = todo[todo.index(current) + 1:]
                break
            line = proc.stdout.readline()
            if not line:  # the worker ended: finished, or killed by a signal while on `current`
                code = proc.wait()
                if current is not None:
                    detail = f"signal {-code}" if code < 0 else f"worker exit {code}"
                    if code == -signal.SIGVTALRM:
                        detail = f"hang over {timeout:g} s of CPU"
                    results.append({"index": current, "outcome": "crash", "detail": detail})
                    todo = todo[todo.index(current) + 1:]
                elif code != 0:
                    results.append({"index": todo[0], "outcome": "crash", "detail": f"worker exit {code}"})
                    todo = todo[1:]
                break
            message = json.loads(line)
            if "start" in message:
                current, started = message["start"], time.monotonic()
            else:
                results.append({"index": message["done"], **{k: v for k, v in message.items() if k != "done"}})
                todo.remove(message["done"])
                current, started = None, time.monotonic()
        proc.stdout.close()
    return results


def run(n: int, seed: int, workers: int, out: Path, timeout: float, batch: int = 100,
        progress: bool = True, fit: bool = True, start: int = 0) -> list[dict]:
    """Run inputs start..n-1 of ``seed`` in ``workers`` parallel batches; save reproducers of crashes.

    Outcomes are also appended to ``out/results.jsonl`` as batches finish.
    """
    from concurrent.futures import ThreadPoolExecutor

    out.mkdir(parents=True, exist_ok=True)
    tmp = out / "tmp"
    tmp.mkdir(exist_ok=True)
    batches = [list(range(i, min(i + batch, n))) for i in range(start, n, batch)]
    results: list[dict] = []
    with ThreadPoolExecutor(max(1, workers)) as pool, open(out / "results.jsonl", "a") as log:
        for part in pool.map(lambda b: run_batch(seed, b, str(tmp), timeout, fit), batches):
            results += part
            for r in part:
                log.write(json.dumps({"seed": seed, **{k: v for k, v in r.items() if k != "traceback"}}) + "\n")
                if r["outcome"] == "crash":
                    save_reproducer(seed, r, out / "crashes")
            log.flush()
            if progress:
                print(f"  {len(results)} of {n - start} inputs, {sum(r['outcome'] == 'crash' for r in results)} "
                      "crashes", file=sys.stderr, flush=True)
    return sorted(results, key=lambda r: r["index"])


def save_reproducer(seed: int, result: dict, folder: Path) -> Path:
    """Write the crashing input and what happened to it; returns the CSV path."""
    folder.mkdir(parents=True, exist_ok=True)
    case = make_case(seed, result["index"])
    path = folder / f"seed{seed}_case{result['index']}.csv"
    path.write_text(case["text"])
    path.with_suffix(".txt").write_text(
        f"seed {seed}, case {result['index']}: {result['detail']}\nmutations: {', '.join(case['mutations'])}\n"
        f"find_period options: {result.get('options')}\n\n{result.get('traceback', '')}")
    return path


def report(results: list[dict]) -> str:
    """Counts of outcomes, and of crashes by kind."""
    outcomes = Counter(r["outcome"] for r in results)
    refused = Counter(r["detail"] for r in results if r["outcome"] == "refused")
    crashes = Counter(r["detail"] for r in results if r["outcome"] == "crash")
    lines = [f"{len(results)} inputs: {outcomes.get('success', 0)} success, {outcomes.get('refused', 0)} refused "
             f"({', '.join(f'{k} {v}' for k, v in refused.most_common())}), {outcomes.get('crash', 0)} crashes"]
    lines += [f"  crash: {count} x {kind}" for kind, count in crashes.most_common()]
    cpu = np.array([r["cpu"] for r in results if "cpu" in r])
    if cpu.size:
        slow = sorted(r["index"] for r in results if r.get("cpu", 0.0) > SLOW_CPU)
        lines.append(f"CPU per finished input: median {np.median(cpu):.2f} s, 99th percentile "
                     f"{np.percentile(cpu, 99):.1f} s, max {cpu.max():.1f} s; {len(slow)} over {SLOW_CPU:g} s"
                     + (f" (cases {', '.join(map(str, slow[:20]))}{', ...' if len(slow) > 20 else ''})" if slow else ""))
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--n", type=int, default=10_000, help="number of inputs (default 10000)")
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--workers", type=int, default=2, help="parallel worker processes (default 2)")
    parser.add_argument("--timeout", type=float, default=120.0,
                        help="seconds of CPU time per input before it counts as a hang (default 120)")
    parser.add_argument("--report", action="store_true",
                        help="only report every outcome recorded in OUT/results.jsonl (all runs and resumptions)")
    parser.add_argument("--out", type=Path, default=Path("fuzz_out"), help="folder for reproducers")
    parser.add_argument("--start", type=int, default=0, help="first input (to continue a run)")
    parser.add_argument("--no-fit", action="store_true", help="stop after the period search (quick)")
    parser.add_argument("--only", type=int, help="run this one case here, traceback shown")
    parser.add_argument("--worker", action="store_true", help=argparse.SUPPRESS)
    parser.add_argument("--tmp", help=argparse.SUPPRESS)
    parser.add_argument("--kill-on", type=int, help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.worker:
        worker(args.seed, args.tmp, not args.no_fit, args.timeout, args.kill_on)
        return 0
    if args.only is not None:
        case = make_case(args.seed, args.only)
        args.out.mkdir(parents=True, exist_ok=True)
        path = args.out / f"seed{args.seed}_case{args.only}.csv"
        path.write_text(case["text"])
        print(f"mutations: {case['mutations']}; file {path}")
        outcome, detail, options = run_case(str(path), case["period"], not args.no_fit, args.only % MCMC_EVERY == 0)
        print(outcome, detail, {k: v for k, v in options.items() if k != "traceback"})
        print(options.get("traceback", ""))
        return 0
    if args.report:
        with open(args.out / "results.jsonl") as fh:
            recorded = {(r["seed"], r["index"]): r for r in map(json.loads, fh)}  # a rerun input counts once
        print(report(list(recorded.values())))
        return 1 if any(r["outcome"] == "crash" for r in recorded.values()) else 0
    clock = time.perf_counter()
    results = run(args.n, args.seed, args.workers, args.out, args.timeout, fit=not args.no_fit, start=args.start)
    print(report(results))
    print(f"{time.perf_counter() - clock:.0f} s; reproducers in {args.out / 'crashes'}")
    return 1 if any(r["outcome"] == "crash" for r in results) else 0


if __name__ == "__main__":
    sys.exit(main())
