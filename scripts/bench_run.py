"""Benchmark the whole job on the bundled sample: `eclipsekit run` stage by stage.

Runs :func:`eclipsekit.analyse` plus writing the results (as ``eclipsekit run`` does)
several times and prints the median wall-clock time of each stage and its share of the
total, and the median time of the ``eclipsekit run`` command line as a subprocess (which
adds interpreter start-up and imports).

It also times the start-up of ``eclipsekit --version`` and ``eclipsekit --help`` against
``python -c "import numpy"``, runs interleaved so that the machine's load hits all
three alike (target: within 2.5 times the numpy import).

Usage::

    python scripts/bench_run.py [--repeats 3] [--startup-repeats 9]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import eclipsekit as ek
from eclipsekit.data import sample_paths


def _eclipsekit_command() -> list[str]:
    """The ``eclipsekit`` console script of this interpreter, else the module it runs."""
    script = Path(sys.executable).parent / "eclipsekit"
    return [str(script)] if script.is_file() else [sys.executable, "-m", "eclipsekit.cli"]


def startup_times(repeats: int) -> dict[str, float]:
    """Median wall-clock seconds of each start-up command, the runs interleaved."""
    commands = {
        'python -c "import numpy"': [sys.executable, "-c", "import numpy"],
        "eclipsekit --version": [*_eclipsekit_command(), "--version"],
        "eclipsekit --help": [*_eclipsekit_command(), "--help"],
    }
    times: dict[str, list[float]] = {name: [] for name in commands}
    for _ in range(repeats):
        for name, argv in commands.items():
            t = time.perf_counter()
            subprocess.run(argv, check=True, capture_output=True)
            times[name].append(time.perf_counter() - t)
    return {name: statistics.median(values) for name, values in times.items()}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--startup-repeats", type=int, default=9)
    args = parser.parse_args()
    lc_path, rv_path = sample_paths()

    stages: dict[str, list[float]] = {}
    totals = []
    for _ in range(args.repeats):
        t_start = time.perf_counter()
        analysis = ek.analyse(lc_path, rv_path, progress=False, seed=1)
        t_write = time.perf_counter()
        with tempfile.TemporaryDirectory() as tmp:
            analysis.write(Path(tmp) / "out")
        t_end = time.perf_counter()
        for name, seconds in analysis.timings.items():
            stages.setdefault(name, []).append(seconds)
        stages.setdefault("write files and figures", []).append(t_end - t_write)
        totals.append(t_end - t_start)

    cli = []
    for _ in range(args.repeats):
        with tempfile.TemporaryDirectory() as tmp:
            t = time.perf_counter()
            subprocess.run([sys.executable, "-m", "eclipsekit.cli", "run", str(lc_path), "--rv", str(rv_path),
                            "--out", str(Path(tmp) / "out"), "--quiet"], check=True, capture_output=True)
            cli.append(time.perf_counter() - t)

    total = statistics.median(totals)
    print(f"sample: {lc_path.name} ({len(analysis.lc)} points), {rv_path.name} ({len(analysis.rv)} epochs)")
    print(f"{'stage':<28s} {'median s':>9s} {'share':>7s}")
    for name, values in stages.items():
        med = statistics.median(values)
        print(f"{name:<28s} {med:9.2f} {100 * med / total:6.1f}%")
    print(f"{'analyse + write (API)':<28s} {total:9.2f}")
    print(f"{'eclipsekit run (CLI)':<28s} {statistics.median(cli):9.2f}   "
          f"(ratio CLI / API {statistics.median(cli) / total:.2f}; target < 60 s)")

    startup = startup_times(args.startup_repeats)
    baseline = startup['python -c "import numpy"']
    print()
    print(f"start-up, median of {args.startup_repeats} interleaved runs")
    for name, seconds in startup.items():
        print(f"{name:<28s} {seconds:9.3f}   (ratio to the numpy import {seconds / baseline:.2f}; target < 2.5)")


if __name__ == "__main__":
    main()
