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

from concurrent.futures import ThreadPoolExecutor, as_completed
from typing import Callable

import numpy as np

from ._grid import bin_in_time, frequency_grid, min_duty_cycle, trial_durations

__all__ = ["N_SEGMENTS", "SEGMENT_CYCLES", "segment_length", "segmented_bls"]

#: Number of segments the baseline is cut into (fewer when a band's periods need longer ones).
N_SEGMENTS = 32
#: Shortest segment, in periods of the longest trial period of its band (two eclipses of each kind).
SEGMENT_CYCLES = 2.0
#: Fewest points a segment must hold to be searched.
MIN_SEGMENT_POINTS = 20


def segment_length(baseline: float, p_hi: float) -> float:
    """Segment length (days) for a band whose longest trial period is ``p_hi``: the baseline cut
    into at most :data:`N_SEGMENTS` equal pieces, each at least ``SEGMENT_CYCLES * p_hi`` long."""
    n = max(1, min(N_SEGMENTS, int(baseline // (SEGMENT_CYCLES * p_hi))))
    return baseline / n


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
        Δlog-likelihood of the best box.
    bins_per_eclipse : int
        Time bins per narrowest eclipse of a band (binning as in the coherent search).
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
        durations = trial_durations(p_lo, p_hi)
        width = float(min_duty_cycle(p_lo) * p_lo) / bins_per_eclipse
        n_seg = int(round(baseline / seg))
        index = np.minimum((t / seg).astype(int), n_seg - 1)
        for j in range(n_seg):
            sel = index == j
            if sel.sum() < MIN_SEGMENT_POINTS:
                continue
            tb, yb, eb = bin_in_time(t[sel], y[sel], dy[sel], width)
            k = int(np.clip(3e7 / max(tb.size * (1 + 0.2 * durations.size), 1), 50, 20000))
            for i in range(sl.start, sl.stop, k):
                tasks.append((tb, yb, eb, durations, np.arange(i, min(i + k, sl.stop))))
    freq = np.concatenate(freqs)
    power = np.zeros(freq.size)
    with ThreadPoolExecutor(max(1, n_jobs)) as ex:
        futures = {ex.submit(bls_chunk, tb, yb, eb, 1.0 / freq[ii], d): ii for tb, yb, eb, d, ii in tasks}
        for fut in as_completed(futures):
            power[futures[fut]] += fut.result()[0]
    return freq, power, bands
