"""Coarse period search on segments of a long baseline, summed incoherently.

Pure numerical helpers: arrays in, arrays out; no I/O, no printing.

Why
---
The trial step of a coherent search is ``q_min / (oversample * T)`` (see :mod:`eclipsekit._grid`),
so the work grows as ``T²`` at a fixed cadence: a four-year, 30-minute light curve needs ~8e5
trial periods over 65,000 points.  Cutting the baseline into ``k`` segments of length ``T/k``
makes each segment's grid ``k`` times coarser, and summing the segments' box-least-squares
Δlog-likelihoods at common trial periods keeps all the data in the statistic: the total work
falls by ``k``.  The price is phase coherence between segments (each segment fits its own
epoch), which only the refinement on the full data restores: the sum is used to propose
candidates, never to measure the period.  Each segment spans at least
:data:`SEGMENT_CYCLES` periods of its band, so long periods keep their repeated eclipses.
This is the semi-coherent search of gravitational-wave and pulsar astronomy (Brady &
Creighton 2000, Phys. Rev. D 61, 082001) applied to box least squares.
"""

from __future__ import annotations

import math
from concurrent.futures import ThreadPoolExecutor, as_completed
from typing import Callable

import numpy as np

from ._grid import bin_in_time, frequency_grid, trial_durations

__all__ = ["PHASE_BIN_COST", "N_SEGMENTS", "SEGMENT_CYCLES", "duration_groups", "segment_length",
           "segmented_bls"]

#: Number of segments the baseline is cut into (fewer when a band's periods need longer ones).
N_SEGMENTS = 32
#: Shortest segment, in periods of the longest trial period of its band (two eclipses of each kind).
SEGMENT_CYCLES = 2.0
#: Fewest points a segment must hold to be searched.
MIN_SEGMENT_POINTS = 20
#: Cost of one phase bin of the box-least-squares kernel (a box tried at one phase) relative to one
#: data point (its phase and bin), measured with astropy's kernel on this machine's cores (~10 ns
#: against ~5.5 ns); it only sets how the trial durations are grouped (see :func:`duration_groups`).
PHASE_BIN_COST = 2.0


def segment_length(baseline: float, p_hi: float) -> float:
    """Segment length (days) for a band whose longest trial period is ``p_hi``: the baseline cut
    into at most :data:`N_SEGMENTS` equal pieces, each at least ``SEGMENT_CYCLES * p_hi`` long."""
    n = max(1, min(N_SEGMENTS, int(baseline // (SEGMENT_CYCLES * p_hi))))
    return baseline / n


def duration_groups(durations: np.ndarray, n_points, period: float, oversample: float) -> list[slice]:
    """Contiguous groups of the (increasing) trial ``durations`` that make a box search cheapest.

    A group searched together costs the kernel, per trial period, one pass over its points
    (``n_points[i]``: the data binned in time for its shortest duration ``durations[i]``) plus
    one pass over ``oversample * period / durations[i]`` phase bins per duration in it
    (:data:`PHASE_BIN_COST` times dearer than a point).  The cheapest partition is found by dynamic
    programming over the group boundaries (at most ~15 durations).

    Returns slices into ``durations``.
    """
    n = len(durations)
    best = [0.0] + [math.inf] * n  # best[j]: cheapest cost of durations[:j]
    start = [0] * (n + 1)
    for j in range(1, n + 1):
        for i in range(j):
            cost = best[i] + n_points[i] + PHASE_BIN_COST * (j - i) * oversample * period / durations[i]
            if cost < best[j]:
                best[j], start[j] = cost, i
    groups, j = [], n
    while j > 0:
        groups.append(slice(start[j], j))
        j = start[j]
    return groups[::-1]


def segmented_bls(t, y, dy, pmin: float, pmax: float, baseline: float, oversample: float,
                  bls_chunk: Callable, *, bins_per_eclipse: int = 2, n_jobs: int = 1):
    """Box-least-squares power summed over segments, on per-band grids sized for the segments.

    Parameters
    ----------
    t, y, dy : ndarray
        Times (days from the first point, increasing), fluxes and errors.
    pmin, pmax : float
        Search range (days).
    baseline, oversample : float
        Data span (days) and grid density (see :func:`eclipsekit._grid.frequency_grid`).
    bls_chunk : callable
        ``bls_chunk(t, y, dy, periods, durations) -> (power, duration)`` with power the
        Δlog-likelihood of the best box, binned in phase to a fraction of the shortest of ``durations``.
    bins_per_eclipse : int
        Time bins per shortest duration of each group of trial durations.
    n_jobs : int
        Threads (the box-least-squares kernel releases the GIL).

    Returns
    -------
    freq : ndarray
        Trial frequencies (1/d), increasing.
    power : ndarray
        Summed Δlog-likelihood at each frequency.
    bands : list of tuple
        ``(slice into freq, p_lo, p_hi, segment length)`` per band, long periods first.

    Notes
    -----
    A box search bins the folded data in phase to a fraction of its shortest trial duration, so
    one call over a band's whole duration range (a factor ~100 at long periods) pays for the
    narrowest box at every duration.  The durations are therefore searched in groups (chosen by
    :func:`duration_groups` to minimise the work), each on data binned in time to
    ``1 / bins_per_eclipse`` of the group's shortest duration and in phase to ``1 / oversample`` of
    it: the resolution the narrowest box of the band had, relative to each group's shortest box.
    Long durations then cost little (their bins are wide), and the power of a segment is the
    largest over its groups.
    """
    edges = [pmax]
    while edges[-1] / 2.0 > pmin * 1.0001:
        edges.append(edges[-1] / 2.0)
    edges.append(pmin)
    freqs, bands, tasks = [], [], []
    start = 0
    f_done = 0.0
    for p_hi, p_lo in zip(edges[:-1], edges[1:]):
        seg = segment_length(baseline, p_hi)
        f_band = frequency_grid(p_lo, p_hi, seg, oversample)
        f_band = f_band[f_band > f_done]
        if f_band.size == 0:
            continue
        f_done = float(f_band[-1])
        sl = slice(start, start + f_band.size)
        start += f_band.size
        freqs.append(f_band)
        bands.append((sl, p_lo, p_hi, seg))
        n_seg = int(round(baseline / seg))
        index = np.minimum((t / seg).astype(int), n_seg - 1)
        durations = trial_durations(p_lo, p_hi)
        for j in range(n_seg):
            sel = index == j
            if sel.sum() < MIN_SEGMENT_POINTS:
                continue
            binned = [bin_in_time(t[sel], y[sel], dy[sel], float(d) / bins_per_eclipse) for d in durations]
            for g in duration_groups(durations, [b[0].size for b in binned], p_hi, oversample):
                tb, yb, eb = binned[g.start]
                # ~0.1 s per task at ~5 ns per point or phase bin and trial period
                work = tb.size + PHASE_BIN_COST * (g.stop - g.start) * oversample * p_hi / durations[g.start]
                k = int(np.clip(2e7 / work, 50, 20000))
                for i in range(sl.start, sl.stop, k):
                    tasks.append((j, tb, yb, eb, durations[g], np.arange(i, min(i + k, sl.stop))))
    freq = np.concatenate(freqs)
    # best power of each segment over its duration groups (bands are disjoint slices of freq)
    best = np.zeros((N_SEGMENTS, freq.size))
    tasks.sort(key=lambda task: -task[1].size * task[5].size)  # long tasks first keeps the workers busy
    with ThreadPoolExecutor(max(1, n_jobs)) as ex:
        futures = {ex.submit(bls_chunk, tb, yb, eb, 1.0 / freq[ii], d): (j, ii) for j, tb, yb, eb, d, ii in tasks}
        for fut in as_completed(futures):
            j, ii = futures[fut]
            # a group with no box at all (too few binned points) has power -inf, whose square is inf
            power = fut.result()[0]
            best[j, ii] = np.maximum(best[j, ii], np.where(np.isfinite(power), power, 0.0))
    return freq, best.sum(axis=0), bands
