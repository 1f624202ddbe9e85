"""Trial-frequency grids and time binning sized for detached eclipsing binaries.

Pure numerical helpers: floats and arrays in, arrays out; no I/O, no printing.

Why a special grid
------------------
A box-shaped eclipse of duty cycle ``q`` (duration / period) is lost when the
trial frequency is off by ``df`` such that the accumulated phase drift over the
baseline ``T``, ``df * T``, is comparable to ``q``.  The step therefore has to
be ``df <= q_min / (oversample * T)`` with ``q_min`` the narrowest eclipse worth
resolving at that period.  For two stars on a circular orbit seen edge-on the
duty cycle is ``q = (R1 + R2) / (pi a)`` and Kepler's third law gives
``a ∝ P^(2/3)``, so ``q ∝ P^(-2/3)`` (eclipse duration ∝ ``P^(1/3)``).  With
``q_min(P) = Q0 * P^(-2/3)`` the step ``df ∝ f^(2/3)`` and the grid is uniform in
``u = f^(1/3)``.  This is what makes the grid tens of times smaller than a
planetary-transit grid (whose step is set by the shortest trial duration at
every period).
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "Q0",
    "Q_CAP",
    "Q_MAX",
    "min_duty_cycle",
    "frequency_grid",
    "grid_size",
    "period_bands",
    "bin_in_time",
    "trial_durations",
]

#: Minimum eclipse duty cycle at P = 1 d.  Two M dwarfs of 0.3 R_sun and
#: 0.3 M_sun each at P = 1 d have (R1+R2)/(pi a) ~= 0.054 (Kepler's third law,
#: a ~= 3.5 R_sun); 0.04 leaves room for grazing and eccentric geometries.
Q0 = 0.04
#: Upper bound on the minimum duty cycle used for very short periods.
Q_CAP = 0.12
#: Widest box tried, as a fraction of the period: (R1+R2)/a ~= 0.45 is about
#: the limit of detached systems, giving (R1+R2)/(pi a) ~= 0.15.
Q_MAX = 0.15


def min_duty_cycle(period):
    """Narrowest eclipse duty cycle (duration / period) worth resolving at ``period`` (days).

    ``q_min(P) = min(Q0 * P^(-2/3), Q_CAP)``: the duty cycle of a pair of small
    stars on a circular orbit scales as ``P^(-2/3)`` (Kepler's third law).
    """
    period = np.asarray(period, dtype=float)
    return np.minimum(Q0 * period ** (-2.0 / 3.0), Q_CAP)


def frequency_grid(min_period: float, max_period: float, baseline: float, oversample: float) -> np.ndarray:
    """Trial frequencies (1/d), increasing, from ``1/max_period`` to ``1/min_period``.

    The step is ``df(f) = q_min(1/f) / (oversample * baseline)`` so that the phase
    drift over the baseline between neighbouring trials is ``1/oversample`` of the
    narrowest eclipse considered at that period.

    Notes
    -----
    With ``q_min = Q0 f^(2/3)`` the grid is uniform in ``u = f^(1/3)`` with step
    ``du = Q0 / (3 oversample T)`` (because ``df = 3 u^2 du``).  Above the
    frequency where ``q_min`` reaches ``Q_CAP`` the grid is uniform in ``f`` with
    step ``Q_CAP / (oversample T)``.
    """
    f_lo, f_hi = 1.0 / max_period, 1.0 / min_period
    f_cap = (Q_CAP / Q0) ** 1.5  # q_min(1/f) = Q_CAP above this frequency
    parts = []
    a, b = f_lo, min(f_hi, f_cap)
    if b > a:
        du = Q0 / (3.0 * oversample * baseline)
        u = np.arange(a ** (1 / 3), b ** (1 / 3), du)
        parts.append(u ** 3)
    a2 = max(f_lo, f_cap)
    if f_hi > a2:
        parts.append(np.arange(a2, f_hi, Q_CAP / (oversample * baseline)))
    freq = np.concatenate(parts) if parts else np.empty(0)
    if freq.size == 0 or freq[-1] < f_hi:
        freq = np.append(freq, f_hi)
    return freq


def grid_size(min_period: float, max_period: float, baseline: float, oversample: float) -> float:
    """Number of trial frequencies :func:`frequency_grid` would make, without making them.

    The same two pieces (uniform in ``f^(1/3)``, then uniform in ``f``) counted from
    their steps; ``inf`` when an argument makes the grid unbounded (e.g. a zero
    baseline or a vanishing ``min_period``).  Lets a caller refuse a grid too large to
    allocate before numpy is asked to.
    """
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        f_lo, f_hi = np.float64(1.0) / max_period, np.float64(1.0) / min_period
        f_cap = (Q_CAP / Q0) ** 1.5
        n = 1.0
        a, b = f_lo, min(f_hi, f_cap)
        if b > a:
            n += (b ** (1 / 3) - a ** (1 / 3)) * 3.0 * oversample * baseline / Q0
        a2 = max(f_lo, f_cap)
        if f_hi > a2:
            n += (f_hi - a2) * oversample * baseline / Q_CAP
    return float(n) if np.isfinite(n) else float("inf")


def period_bands(freq: np.ndarray, ratio: float = 2.0) -> list[slice]:
    """Split an increasing frequency grid into bands spanning a factor ``ratio`` in period.

    Each band gets its own time binning and set of trial durations.
    Returns slices into ``freq`` (long periods first).
    """
    slices = []
    start = 0
    n = freq.size
    while start < n:
        f_end = freq[start] * ratio
        stop = int(np.searchsorted(freq, f_end, side="left"))
        stop = max(stop, start + 1)
        if n - stop < 50:  # do not leave a tiny last band
            stop = n
        slices.append(slice(start, stop))
        start = stop
    return slices


def bin_in_time(time, flux, flux_err, width: float):
    """Inverse-variance weighted means in consecutive time bins of ``width`` days.

    Empty bins are dropped.  Returns ``(time, flux, flux_err)`` of the bins, with
    the bin time the weighted mean time of its points.  When ``width`` is smaller
    than the smallest spacing, the data come back unchanged.
    """
    time = np.asarray(time, float)
    if time.size < 2 or width <= 0:
        return time, np.asarray(flux, float), np.asarray(flux_err, float)
    if width <= np.min(np.diff(time)):
        return time, np.asarray(flux, float), np.asarray(flux_err, float)
    w = 1.0 / np.asarray(flux_err, float) ** 2
    idx = np.floor((time - time[0]) / width).astype(np.intp)
    # compress the (sorted) bin indices to 0..m-1 so bincount stays small
    new = np.empty(idx.size, bool)
    new[0] = True
    np.not_equal(idx[1:], idx[:-1], out=new[1:])
    k = np.cumsum(new) - 1
    sw = np.bincount(k, weights=w)
    st = np.bincount(k, weights=w * time) / sw
    sf = np.bincount(k, weights=w * flux) / sw
    return st, sf, 1.0 / np.sqrt(sw)


def trial_durations(period_lo: float, period_hi: float, step: float = 1.5) -> np.ndarray:
    """Box durations (days) for periods in ``[period_lo, period_hi]``.

    Geometric from the narrowest eclipse worth resolving at ``period_lo``
    (``q_min * period_lo``) to ``Q_MAX * period_hi``, kept below half the shortest
    period; successive durations differ by the factor ``step``.
    """
    d_lo = float(min_duty_cycle(period_lo) * period_lo)
    d_hi = min(Q_MAX * period_hi, 0.5 * period_lo)
    if d_hi <= d_lo:
        return np.array([d_lo])
    n = int(np.ceil(np.log(d_hi / d_lo) / np.log(step))) + 1
    return np.geomspace(d_lo, d_hi, n)
