"""Benchmark the whole job on the bundled sample: `eclipsekit run` stage by stage.

Runs :func:`eclipsekit.analyse` plus writing the results (as ``eclipsekit run`` does)
several times and prints the median wall-clock time of each stage and its share of the
total, and the median time of the ``eclipsekit run`` command line as a subprocess (which
adds interpreter start-up and imports).

Usage::

    python scripts/bench_run.py [--repeats 3]
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


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
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


if __name__ == "__main__":
    main()
