"""Speed of eclipse_times: 400 eclipses of a four-year long-cadence light curve.

The light curve is the invented binary of tests/_timing_data.py (brute-force eclipse shapes,
independent of eclipsekit's model) with a 7.3-d period, sampled every 30 minutes for 1461 days
(70,000 points, 200 orbits, 400 eclipses), white noise 5e-4.  The target is at most 30 s on two
cores.  Prints the median of a few repeats, for the model and the Kwee-van Woerden methods.

    python scripts/bench_timings.py [--repeats 3]
"""

from __future__ import annotations

import argparse
import os
import sys
import time

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))

from _timing_data import SYSTEM, shapes  # noqa: E402

from eclipsekit import eclipse_times  # noqa: E402
from eclipsekit.data import LightCurve  # noqa: E402

PERIOD = 7.305   # days: 200 orbits in four years
T0 = 2458000.3
CADENCE = 30.0 / 1440


def light_curve(seed: int = 1) -> LightCurve:
    """Continuous 30-min sampling; the 3-d binary's eclipse shapes stretched to the 7.3-d period."""
    primary, secondary = shapes()
    stretch = SYSTEM["period"] / PERIOD       # same phase profile, so durations scale with the period
    t = np.arange(T0 - 1.0, T0 - 1.0 + 1461.0, CADENCE)
    phase_time = ((t - T0) / PERIOD + 0.25) % 1.0 - 0.25      # in [-0.25, 0.75) periods
    dt_primary = phase_time * PERIOD * stretch
    dt_secondary = (phase_time - 0.5) * PERIOD * stretch
    limit = 0.29
    flux = np.ones(t.size)
    near = np.abs(dt_primary) < limit
    flux[near] = primary(dt_primary[near])
    near = np.abs(dt_secondary) < limit
    flux[near] = secondary(dt_secondary[near])
    rng = np.random.default_rng(seed)
    return LightCurve(t, flux + 5e-4 * rng.standard_normal(t.size), np.full(t.size, 5e-4),
                      meta={"time_system": "BJD_TDB", "exposure_time": CADENCE})


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=3)
    args = ap.parse_args()
    lc = light_curve()
    params = dict(SYSTEM, period=PERIOD, t0=T0)
    params["radius_sum"] = SYSTEM["radius_sum"] * SYSTEM["period"] / PERIOD   # same durations in days
    params.update(exposure_time=CADENCE, supersample=7)
    print(f"{len(lc)} points over {lc.baseline:.0f} d, cadence {lc.cadence * 1440:.0f} min")
    for method, source in (("model", params), ("kvw", {"period": PERIOD, "t0": T0})):
        seconds = []
        for _ in range(args.repeats):
            start = time.perf_counter()
            res = eclipse_times(lc, source, method=method, progress=False)
            seconds.append(time.perf_counter() - start)
        print(f"{method:>5}: {len(res.table)} eclipses timed, median {np.median(seconds):.2f} s "
              f"(runs: {', '.join(f'{s:.2f}' for s in seconds)}); skipped {res.skipped}")


if __name__ == "__main__":
    main()
