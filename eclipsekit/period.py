"""Period search for detached eclipsing binaries: box least squares plus phase dispersion minimisation.

:func:`find_period` runs two periodograms over a grid sized for eclipse
durations (see :mod:`eclipsekit._grid`), then reasons about the strongest peaks
as an eclipsing-binary astronomer would: harmonics and one-day aliases are
folded and compared, odd and even eclipses are checked for equal depth, a
secondary eclipse is searched at any phase, and the chosen period and epoch are
refined by a fit of trapezoid-shaped eclipses.

Stages
------
1. Grid: trial frequencies uniform in ``f^(1/3)`` (narrowest detached eclipse
   ∝ ``P^(1/3)``), split into bands a factor 2 wide in period.
2. Coarse periodograms per band on data binned to a quarter of the narrowest
   eclipse in that band: box least squares (astropy ``BoxLeastSquares``, trial
   durations per band) and PDM θ (:func:`eclipsekit._pdm.pdm_theta`, bins half
   as wide as the narrowest eclipse, 2 covers).  Chunks of the grid run on a
   thread pool: astropy's C kernel releases the GIL, numpy's element-wise
   operations mostly do too.
3. Candidates: strongest peaks of each method, P/2, 2P, 3P of the best ones,
   and one-day aliases when the sampling has a daily window.
4. Each candidate is refined by box least squares at full resolution on a
   local grid seven times finer, then folded: primary box, secondary box at
   any phase, odd/even depths, PDM θ at P and 2P, total Δχ² of the two-box model.
5. Decision (see :func:`_choose`), significance and a sinusoid-versus-eclipse
   test, then a trapezoid fit of both eclipses for P, t0 and their errors.
"""

from __future__ import annotations

import functools
import math
import os
import time as _time
import warnings
from concurrent.futures import ThreadPoolExecutor, as_completed
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from astropy import units as u
from astropy.table import Table
from astropy.timeseries import BoxLeastSquares
from scipy.optimize import least_squares

from ._eclipse_shape import BIC_MARGIN, N_HARM_SMOOTH, N_HARM_WAVE, eclipse_versus_smooth
from ._grid import Q_MAX, bin_in_time, frequency_grid, grid_size, min_duty_cycle, period_bands, trial_durations
from ._pdm import pdm_theta
from ._segments import segment_length, segmented_bls
from ._validate import as_float
from ._threads import one_blas_thread
from .errors import EclipsekitWarning, InputError, NoEclipseFound
from .orbit import orbital_phase

__all__ = ["PeriodSearch", "find_period", "measure_eclipses", "SDE_THRESHOLD", "PDM_SDE_THRESHOLD"]

_METHODS = {"both", "bls", "pdm"}

#: Detection threshold on the signal detection efficiency of the coarse box-least-squares
#: periodogram (power = Δ log-likelihood), in the robust form (peak - median) /
#: (1.4826 MAD) (Kovács, Zucker & Mazeh 2002, A&A 391, 369, §3, with robust moments;
#: see :func:`_sde`).  Calibrated on white-noise light curves with
#: ``python scripts/bench_period.py --calibrate 100 --seed S`` (1,000-20,000 points over
#: 10-100 d, 30% with nightly ground-based windows; grid 0.25 d to half the baseline,
#: oversample 5): seeds 1 and 2, 200 simulations, gave a largest SDE of 10.6,
#: 99th percentiles 9.4 and 9.3, medians 5.6 and 6.0.  Hence 12.
SDE_THRESHOLD = 12.0
#: Threshold for ``method="pdm"``: deepest θ minimum in robust σ of its band
#: (:func:`_pdm_z`).  Same calibration (200 simulations): largest 7.8, 99th
#: percentiles 6.5 and 6.7, medians 4.8 and 4.9.  Hence 9.
PDM_SDE_THRESHOLD = 9.0
#: Minimum signal-to-noise of the primary eclipse depth (common practice for
#: box searches: 7σ keeps the false-alarm rate low over ~10^4-10^5 trials).
SNR_MIN = 7.0
#: A secondary eclipse is "present" above this signal-to-noise; the phase scan
#: tries ~10^3 boxes, whose largest noise excursion is ~3.5-4σ.
SECONDARY_SNR = 5.0
#: Odd and even primary depths differing by more than this many σ mean the
#: trial period is half the true one.
ODD_EVEN_SIGMA = 4.0
#: Two candidates whose two-box Δχ² differ by less than max(TIE_ABS, TIE_REL * best)
#: fit the data equally well (the difference is within the noise of the box
#: positions and durations); the eclipsing-binary rules then decide.
TIE_REL = 0.05
TIE_ABS = 25.0
#: Time bins per narrowest eclipse in the coarse pass.
BINS_PER_ECLIPSE = 4
#: Number of peaks taken from each periodogram.
N_PEAKS_BLS = 5
N_PEAKS_PDM = 3
#: Default shortest period (d): detached binaries shorter than this are very rare
#: and the eclipses of contact systems are not boxes (common practice).
DEFAULT_MIN_PERIOD = 0.25
#: Fewest points a period search works with (as :data:`eclipsekit.data.MIN_POINTS`).
MIN_SEARCH_POINTS = 20
#: Above this many (point x trial period) pairs of the coherent grid (a search of minutes), the coarse
#: box-least-squares search runs on segments of the baseline (:mod:`eclipsekit._segments`) and proposes
#: candidates that are refined on the full data; PDM is then evaluated at the candidates only.
SEGMENT_WORK = 1e10
#: Grid density and box-least-squares phase oversampling of that coarse pass (the refinement restores
#: the full ``oversample``).
SEGMENT_OVERSAMPLE = 2.0
#: Peaks per band of the segmented periodogram (its sums are not comparable across bands, whose
#: segments differ in length), and how many refined candidates are folded in full.
SEGMENT_PEAKS_PER_BAND = 2
SEGMENT_FOLDS = 8
#: Trial periods of the coherent reference sample behind the significance of a segmented search.
SDE_SAMPLE = 1000
#: Largest trial grid: 1e7 periods (a default search over a 10-year, 3,650 d baseline has
#: ~2e6).  Beyond it a search takes hours; the caller is asked to narrow the range.
MAX_TRIAL_PERIODS = 1e7
#: Grid density behind a given ephemeris's trapezoid fit (its period window, see :func:`_fit_trapezoids`):
#: the default ``oversample`` of :func:`find_period`.
GIVEN_OVERSAMPLE = 5.0


# ----------------------------------------------------------------------------------------
# result object
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True, eq=False)
class PeriodSearch:
    """Outcome of :func:`find_period`, or of :func:`measure_eclipses` at a given ephemeris.

    Attributes
    ----------
    period, period_err : float
        Orbital period and its 1σ uncertainty (days).
    t0, t0_err : float
        Time of mid-primary eclipse near the middle of the data and its 1σ
        uncertainty (days, same time system as the light curve).
    depth_primary, depth_secondary : float
        Eclipse depths as fractions of the out-of-eclipse flux (trapezoid fit);
        ``depth_secondary`` is 0 when no secondary eclipse was detected.
    duration_primary, duration_secondary : float
        Eclipse durations, first to last contact of the fitted trapezoid (days);
        ``duration_secondary`` is NaN without a secondary.
    phase_secondary, phase_secondary_err : float
        Phase of mid-secondary eclipse in [0, 1) and its 1σ uncertainty (NaN without a
        secondary; from the trapezoid fit, or one step of the box scan when that fit fails).
    significance : float
        Signal detection efficiency of the periodogram peak (``SDE``), compare with
        ``sde_threshold``.
    reasoning : str
        Why this period was chosen, in words.
    candidates : astropy.table.Table
        Every candidate period tried with its diagnostics.
    bls_periods, bls_power : ndarray
        Coarse box-least-squares periodogram (periods in days, increasing;
        power = Δ log-likelihood (S/N)²/2 of the best box at each period, both
        levels fitted).
    pdm_periods, pdm_theta : ndarray
        Coarse PDM periodogram (θ, lower is better).
    method : {'both', 'bls', 'pdm', 'given'}
        Periodograms used, or "given" when the ephemeris was given and only the eclipses
        were measured at it (:func:`measure_eclipses`: no periodograms, no uncertainty
        on what was given).
    """

    period: float
    period_err: float
    t0: float
    t0_err: float
    depth_primary: float
    depth_secondary: float
    duration_primary: float
    duration_secondary: float
    phase_secondary: float
    significance: float
    reasoning: str
    candidates: Table
    bls_periods: np.ndarray
    bls_power: np.ndarray
    pdm_periods: np.ndarray
    pdm_theta: np.ndarray
    depth_primary_err: float = math.nan
    depth_secondary_err: float = math.nan
    phase_secondary_err: float = math.nan
    secondary_detected: bool = False
    secondary_snr: float = math.nan
    odd_even_sigma: float = math.nan
    alternative_period: float = math.nan
    ambiguous: bool = False
    sde_threshold: float = SDE_THRESHOLD
    pdm_significance: float = math.nan
    n_eclipses_primary: int = 0
    n_eclipses_secondary: int = 0
    method: str = "both"
    min_period: float = math.nan
    max_period: float = math.nan
    oversample: float = math.nan
    n_periods: int = 0
    daily_window: bool = False
    timings: dict = field(default_factory=dict)
    found: bool = True

    @property
    def values(self) -> dict[str, float]:
        """``period`` and ``t0`` (days) for code that reads an ephemeris, plus first-order start
        values of ``ecosw`` and ``esinw`` when a secondary eclipse was found.

        ``ecosw ≈ (π/2)(φ2 - 1/2)`` from the secondary's phase and ``esinw ≈ (D2 - D1)/(D2 + D1)``
        from the durations (Sterne 1939, PNAS 25, 297; first order in e, i = 90°).
        """
        out = {"period": self.period, "t0": self.t0}
        if self.secondary_detected and math.isfinite(self.phase_secondary):
            out["ecosw"] = 0.5 * math.pi * (self.phase_secondary - 0.5)
            d1, d2 = self.duration_primary, self.duration_secondary
            if math.isfinite(d2) and d1 + d2 > 0:
                out["esinw"] = (d2 - d1) / (d2 + d1)
        return out

    def phase(self, time) -> np.ndarray:
        """Orbital phase of ``time`` (days) in [-0.5, 0.5), primary eclipse at 0."""
        return orbital_phase(getattr(time, "value", time), self.period, self.t0, -0.5)

    def summary(self) -> str:
        """A readable multi-line report."""
        from .summary import format_value

        given = self.method == "given"
        lines = ["Eclipses at the given ephemeris (no period search)" if given else
                 "Period search (box least squares + phase dispersion minimisation)"]
        if not self.found:
            lines.append("  no significant periodic eclipse found")
        else:
            lines += [
                f"  period            {format_value(self.period, self.period_err)} d",
                f"  t0 (mid-primary)  {format_value(self.t0, self.t0_err)} d",
                f"  primary           depth {format_value(self.depth_primary, self.depth_primary_err)}, "
                f"duration {format_value(self.duration_primary)} d, {self.n_eclipses_primary} eclipses observed",
            ]
            if self.secondary_detected:
                lines.append(
                    f"  secondary         depth {format_value(self.depth_secondary, self.depth_secondary_err)}, "
                    f"duration {format_value(self.duration_secondary)} d, "
                    f"phase {format_value(self.phase_secondary, self.phase_secondary_err)}, "
                    f"{self.n_eclipses_secondary} eclipses observed")
            else:
                lines.append("  secondary         not detected")
            if self.ambiguous and np.isfinite(self.alternative_period):
                lines.append(f"  ambiguous with    {format_value(self.alternative_period, digits=9)} d")
        if not given:
            lines.append(f"  significance      SDE {self.significance:.1f} (threshold {self.sde_threshold:.1f})")
            lines.append(f"  grid              {self.n_periods} periods, {self.min_period:.4g}-{self.max_period:.4g} d, "
                         f"oversample {self.oversample:g}, method {self.method}"
                         + (", daily sampling window" if self.daily_window else ""))
        lines.append("  reasoning: " + self.reasoning)
        return "\n".join(lines)

    def __repr__(self) -> str:
        if not self.found:
            return f"<PeriodSearch: no eclipse found, {self.n_periods} periods>"
        return (f"<PeriodSearch: P = {self.period:.6f} ± {self.period_err:.2g} d, t0 = {self.t0:.5f}, "
                f"SDE {self.significance:.1f}>")

    def to_dict(self, include_periodograms: bool = False) -> dict[str, Any]:
        """JSON-able dictionary (NaN becomes None); periodograms only on request."""
        def num(x):
            x = float(x)
            return x if math.isfinite(x) else None

        def q(value, err, unit):
            return {"value": num(value), "uncertainty": None if err is None else num(err), "unit": unit}

        out = {
            "status": ("ambiguous" if self.ambiguous else "ok") if self.found else "no_eclipse_found",
            "period": q(self.period, self.period_err, "d"),
            "t0": q(self.t0, self.t0_err, "d"),
            "depth_primary": q(self.depth_primary, self.depth_primary_err, ""),
            "depth_secondary": q(self.depth_secondary, self.depth_secondary_err, ""),
            "duration_primary": q(self.duration_primary, None, "d"),
            "duration_secondary": q(self.duration_secondary, None, "d"),
            "phase_secondary": q(self.phase_secondary, self.phase_secondary_err, ""),
            "secondary_detected": bool(self.secondary_detected),
            "secondary_snr": num(self.secondary_snr),
            "odd_even_sigma": num(self.odd_even_sigma),
            "significance": num(self.significance),
            "sde_threshold": num(self.sde_threshold),
            "pdm_significance": num(self.pdm_significance),
            "ambiguous": bool(self.ambiguous),
            "alternative_period": num(self.alternative_period),
            "n_eclipses_primary": int(self.n_eclipses_primary),
            "n_eclipses_secondary": int(self.n_eclipses_secondary),
            "reasoning": self.reasoning,
            "method": self.method,
            "ephemeris_given": self.method == "given",
            "grid": {"min_period": num(self.min_period), "max_period": num(self.max_period),
                     "oversample": num(self.oversample), "n_periods": int(self.n_periods),
                     "daily_window": bool(self.daily_window)},
            "timings": {k: num(v) for k, v in self.timings.items()},
            "candidates": [
                {name: (row[name].item() if hasattr(row[name], "item") else row[name]) for name in self.candidates.colnames}
                for row in self.candidates
            ],
        }
        for cand in out["candidates"]:
            for k, v in cand.items():
                if isinstance(v, float) and not math.isfinite(v):
                    cand[k] = None
        if include_periodograms:
            out["bls_periodogram"] = {"period": self.bls_periods.tolist(), "power": self.bls_power.tolist()}
            out["pdm_periodogram"] = {"period": self.pdm_periods.tolist(), "theta": self.pdm_theta.tolist()}
        return out


# ----------------------------------------------------------------------------------------
# coarse periodograms
# ----------------------------------------------------------------------------------------
def _check_finite_for_bls(t, y, dy) -> None:
    """Refuse non-finite values or weights before astropy's compiled box-least-squares engine.

    That engine does not check its inputs and can crash the interpreter on NaN times;
    the light-curve ranges (:mod:`eclipsekit._validate`) keep the values and their
    weights finite, so this only fires when a light curve bypassed them.
    """
    with np.errstate(over="ignore", divide="ignore"):
        ok = np.isfinite(t) & np.isfinite(y) & np.isfinite(dy) & np.isfinite(1.0 / dy ** 2) & (dy > 0)
    if not ok.all():
        raise InputError(f"{int((~ok).sum())} of {ok.size} (binned) points have a non-finite time, flux or weight "
                         "before the box-least-squares search; check the light curve with `eclipsekit inspect`")


def _bls_chunk(t, y, dy, periods, durations, oversample=4):
    """astropy BoxLeastSquares (fast method, depth signal-to-noise objective) on one chunk of periods.

    The S/N objective uses the errors of both the in-box and out-of-box levels; astropy's
    "likelihood" objective treats the out-of-box level as exact and over-rates boxes that
    cover most of the folded data (this happens at P ≈ 1 d with nightly sampling).
    Returns ``(power, duration)`` with power = (S/N)² / 2, the Δ log-likelihood of the
    box with both levels fitted.
    """
    _check_finite_for_bls(t, y, dy)
    res = BoxLeastSquares(t, y, dy).power(periods, durations, objective="snr",
                                           method="fast", oversample=oversample)
    # report Δ log-likelihood = (S/N)²/2: the S/N alone compresses the dynamic range
    # (deep eclipses give every period a high S/N through single events), which
    # defeats the SDE
    return 0.5 * np.asarray(res.power, float) ** 2, np.asarray(res.duration, float)


def _bls_power_threaded(t, y, dy, periods, durations, *, n_jobs=1, chunk=2000, oversample=4):
    """BLS power over ``periods`` split in chunks on a thread pool (the C kernel releases the GIL)."""
    periods = np.asarray(periods, float)
    power = np.empty(periods.size)
    dur = np.empty(periods.size)
    slices = [slice(i, i + chunk) for i in range(0, periods.size, chunk)]
    with ThreadPoolExecutor(max(1, n_jobs)) as ex:
        futs = {ex.submit(_bls_chunk, t, y, dy, periods[s], durations, oversample): s for s in slices}
        for fut in as_completed(futs):
            s = futs[fut]
            power[s], dur[s] = fut.result()
    return power, dur


@dataclass
class _Band:
    sl: slice
    p_lo: float
    p_hi: float
    t: np.ndarray
    y: np.ndarray
    dy: np.ndarray
    durations: np.ndarray
    n_bins: int


def _make_bands(t, y, dy, freq, *, binned=True) -> list[_Band]:
    bands = []
    for sl in period_bands(freq):
        p_hi = 1.0 / freq[sl.start]
        p_lo = 1.0 / freq[sl.stop - 1]
        if binned:
            width = float(min_duty_cycle(p_lo) * p_lo) / BINS_PER_ECLIPSE
            tb, yb, eb = bin_in_time(t, y, dy, width)
        else:
            tb, yb, eb = t, y, dy
        # PDM bins half as wide as the narrowest eclipse in the band (so the eclipse
        # spans >= 2 bins of every cover), at least 10 and at most n/5 (>= 5 points per bin)
        nb = int(np.clip(np.ceil(2.0 / float(min_duty_cycle(p_hi))), 10, max(10, tb.size // 5)))
        bands.append(_Band(sl, p_lo, p_hi, tb, yb, eb, trial_durations(p_lo, p_hi), nb))
    return bands


def _periodograms(bands, freq, *, do_bls, do_pdm, n_jobs, progress):
    """Run both coarse periodograms over all bands on a thread pool; returns (power, duration, theta).

    ``progress`` is accepted for compatibility; progress is shown per stage by :func:`find_period`.
    """
    power = np.full(freq.size, np.nan)
    dur = np.full(freq.size, np.nan)
    theta = np.full(freq.size, np.nan)
    tasks = []
    for b in bands:
        n = b.t.size
        idx = np.arange(b.sl.start, b.sl.stop)
        if do_bls:
            # ~0.1 s per task at ~3 ns per point per period
            k = int(np.clip(3e7 / max(n * (1 + 0.2 * b.durations.size), 1), 50, 5000))
            for i in range(0, idx.size, k):
                tasks.append(("bls", b, idx[i:i + k]))
        if do_pdm:
            k = int(np.clip(2e7 / max(n, 1), 20, 5000))
            for i in range(0, idx.size, k):
                tasks.append(("pdm", b, idx[i:i + k]))
    # long tasks first keeps both workers busy to the end
    tasks.sort(key=lambda x: -x[1].t.size * x[2].size)

    def run(task):
        kind, b, ii = task
        if kind == "bls":
            return _bls_chunk(b.t, b.y, b.dy, 1.0 / freq[ii], b.durations)
        return pdm_theta(b.t - b.t[0], b.y, freq[ii], n_bins=b.n_bins, n_covers=2)

    with ThreadPoolExecutor(max(1, n_jobs)) as ex:
        futs = {ex.submit(run, task): task for task in tasks}
        for fut in as_completed(futs):
            kind, b, ii = futs[fut]
            if kind == "bls":
                power[ii], dur[ii] = fut.result()
            else:
                theta[ii] = fut.result()
    return power, dur, theta


def _sde(values: np.ndarray, best: float) -> float:
    """Signal detection efficiency of a periodogram peak, robust form.

    Kovács, Zucker & Mazeh (2002) define SDE = (peak - mean) / std.  Here the mean and
    standard deviation are replaced by the median and 1.4826 × the median absolute
    deviation: the many strong harmonic and alias peaks of a deep eclipsing binary
    inflate the standard deviation and would make the plain SDE of an obvious binary
    small.  The threshold is calibrated for this form (see ``SDE_THRESHOLD``).
    """
    v = values[np.isfinite(values)]
    med = float(np.median(v))
    mad = 1.4826 * float(np.median(np.abs(v - med)))
    return float(abs(best - med) / mad) if mad > 0 else 0.0


def _pdm_z(theta: np.ndarray, bands) -> np.ndarray:
    """PDM depth in robust σ per band: (median θ - θ) / (1.4826 MAD θ), band by band."""
    z = np.zeros_like(theta)
    n = theta.size
    for b in bands:
        # a scale from fewer than ~1000 (correlated) trial periods is itself noisy:
        # widen the window symmetrically into the neighbouring bands
        lo, hi = b.sl.start, b.sl.stop
        while hi - lo < 1000 and (lo > 0 or hi < n):
            lo, hi = max(0, lo - 100), min(n, hi + 100)
        v = theta[lo:hi]
        med = np.median(v)
        mad = 1.4826 * np.median(np.abs(v - med))
        z[b.sl] = (med - theta[b.sl]) / mad if mad > 0 else 0.0
    return z


def _top_peaks(freq, score, n, sep=0.01) -> list[int]:
    """Indices of the ``n`` highest values of ``score`` at least ``sep`` apart in relative frequency."""
    s = np.where(np.isfinite(score), score, -np.inf).copy()
    out = []
    for _ in range(n):
        i = int(np.argmax(s))
        if not np.isfinite(s[i]):
            break
        out.append(i)
        s[np.abs(freq - freq[i]) < sep * freq[i]] = -np.inf
    return out


# ----------------------------------------------------------------------------------------
# fold diagnostics at one trial period
# ----------------------------------------------------------------------------------------
def _box_depth(y, w, inbox, ref):
    """Weighted depth (mean of ``ref`` minus mean in box), its error, and point count."""
    sw_in, sw_ref = w[inbox].sum(), w[ref].sum()
    if sw_in <= 0 or sw_ref <= 0:
        return math.nan, math.nan
    d = np.dot(w[ref], y[ref]) / sw_ref - np.dot(w[inbox], y[inbox]) / sw_in
    return float(d), float(math.sqrt(1.0 / sw_in + 1.0 / sw_ref))


def _dip_extent(ph, y, w, q1, n_side=16, nsig=3.0):
    """Half-width (phase) of the primary dip: contiguous bins around phase 0 significantly below the level.

    Bins of width ``q1 / 8`` out to ``|phase| < 2 q1``; the level is the weighted mean outside.
    Returns a value in ``[q1 / 2, 2 q1]``.
    """
    span = 2.0 * q1
    near = np.abs(ph) < span
    far = ~near
    if far.sum() < 3 or near.sum() < 3:
        return 0.75 * q1
    level = np.dot(w[far], y[far]) / w[far].sum()
    width = span / n_side
    idx = np.minimum(((ph[near] + span) / width).astype(int), 2 * n_side - 1)
    sw = np.bincount(idx, weights=w[near], minlength=2 * n_side)
    sy = np.bincount(idx, weights=w[near] * y[near], minlength=2 * n_side)
    with np.errstate(invalid="ignore", divide="ignore"):
        signif = np.where(sw > 0, (level - sy / np.where(sw > 0, sw, 1)) * np.sqrt(sw), np.inf)
    # walk outwards from the centre while bins are significantly low (empty bins do not stop the walk)
    half = q1 / 2
    for direction in (1, -1):
        k = n_side if direction == 1 else n_side - 1
        while 0 <= k < 2 * n_side and signif[k] > nsig:
            edge = (k + 1) * width - span if direction == 1 else span - k * width
            half = max(half, edge)
            k += direction
    return float(min(half, span))


def _secondary_scan(ph, y, w, q1, exclude_half):
    """Best box dip at any phase, avoiding the primary window ``|phase| < exclude_half``.

    ``ph`` in [0, 1).  Boxes of widths ``q1 * (0.5 ... 2)`` are slid on a grid of a quarter
    of the narrowest width, using cumulative sums over the phase-sorted data.
    Returns (snr, centre phase, width, depth, depth_err).
    """
    order = np.argsort(ph, kind="stable")
    p = ph[order]
    ww = w[order]
    wy = ww * y[order]
    pe = np.concatenate([p, p + 1.0])
    cw = np.concatenate([[0.0], np.cumsum(np.concatenate([ww, ww]))])
    cy = np.concatenate([[0.0], np.cumsum(np.concatenate([wy, wy]))])
    cn = np.arange(pe.size + 1, dtype=float)
    prim = (ph < exclude_half) | (ph > 1.0 - exclude_half)
    sw_tot = w.sum() - w[prim].sum()
    sy_tot = np.dot(w, y) - np.dot(w[prim], y[prim])
    widths = np.clip(q1 * np.array([0.5, 0.7, 1.0, 1.4, 2.0]), 1e-4, Q_MAX)
    best = (0.0, math.nan, math.nan, math.nan, math.nan)
    step = widths.min() / 4
    centres = np.arange(0.0, 1.0, step)
    for q in widths:
        lo = centres - q / 2
        hi = centres + q / 2
        ok = (lo >= exclude_half - 1e-12) & (hi <= 1.0 - exclude_half + 1e-12)
        if not ok.any():
            continue
        lo, hi, c = lo[ok], hi[ok], centres[ok]
        a = np.searchsorted(pe, lo, side="left")
        b = np.searchsorted(pe, hi, side="left")
        swi = cw[b] - cw[a]
        syi = cy[b] - cy[a]
        ni = cn[b] - cn[a]
        swo = sw_tot - swi
        good = (ni >= 3) & (swo > 0) & (swi > 0)
        with np.errstate(invalid="ignore", divide="ignore"):
            depth = (sy_tot - syi) / swo - syi / swi
            err = np.sqrt(1.0 / swi + 1.0 / swo)
            snr = np.where(good & (depth > 0), depth / err, 0.0)
        j = int(np.argmax(snr))
        if snr[j] > best[0]:
            best = (float(snr[j]), float(c[j]), float(q), float(depth[j]), float(err[j]))
    return best


def _odd_even(ph, y, w, epoch, half, ref, n_template=24):
    """Odd and even primary-eclipse amplitudes relative to a shared template, and |odd - even| / σ.

    The template is the folded dip profile (weighted means in ``n_template`` phase bins
    across ``|phase| < half``, linearly interpolated).  Each parity's amplitude is
    the weighted least-squares scale of the template; errors are inflated by the
    square root of the reduced χ² of the template fit when it exceeds 1.
    """
    win = np.abs(ph) < half
    sw_ref = w[ref].sum()
    if sw_ref <= 0 or win.sum() < 2 * n_template:
        return math.nan, math.nan, math.nan
    level = np.dot(w[ref], y[ref]) / sw_ref
    pw, yw, ww, ew = ph[win], level - y[win], w[win], epoch[win]
    idx = np.minimum(((pw + half) / (2 * half) * n_template).astype(int), n_template - 1)
    swb = np.bincount(idx, weights=ww, minlength=n_template)
    syb = np.bincount(idx, weights=ww * yw, minlength=n_template)
    spb = np.bincount(idx, weights=ww * pw, minlength=n_template)
    ok = swb > 0
    if ok.sum() < 3:
        return math.nan, math.nan, math.nan
    prof = syb[ok] / swb[ok]
    cen = spb[ok] / swb[ok]
    m = np.interp(pw, cen, prof)
    amps, errs = [], []
    chi2 = 0.0
    for parity in (1, 0):
        s = (ew % 2) == parity
        a_den = np.dot(ww[s], m[s] ** 2)
        if s.sum() < 2 or a_den <= 0:
            return math.nan, math.nan, math.nan
        a = np.dot(ww[s], yw[s] * m[s]) / a_den
        chi2 += float(np.dot(ww[s], (yw[s] - a * m[s]) ** 2))
        amps.append(a)
        errs.append(1.0 / math.sqrt(a_den))
    dof = max(yw.size - ok.sum() - 2, 1)
    inflate = math.sqrt(max(1.0, chi2 / dof))
    depth = float(prof.max())
    do, de = amps[0] * depth, amps[1] * depth
    sig = abs(amps[0] - amps[1]) / (inflate * math.hypot(*errs))
    return float(do), float(de), float(sig)


def _evaluate(t, y, w, period, t0, duration, *, pdm_n=None):
    """Fold at ``period`` and measure everything the decision needs (see module notes)."""
    ph = orbital_phase(t, period, t0, -0.5)
    q1 = duration / period
    in1 = np.abs(ph) < q1 / 2
    # the box is shorter than a limb-darkened or V-shaped eclipse: measure how far the dip
    # really extends before excluding it from the secondary scan and the reference level
    excl = _dip_extent(ph, y, w, q1) + q1 / 8
    ph01 = np.mod(ph, 1.0)
    snr2, c2, q2, d2, e2 = _secondary_scan(ph01, y, w, q1, excl)
    sec = snr2 >= SECONDARY_SNR
    if sec:
        dphi = np.mod(ph01 - c2 + 0.5, 1.0) - 0.5
        in2 = np.abs(dphi) < q2 / 2
    else:
        in2 = np.zeros_like(in1)
    ref = ~(np.abs(ph) < excl) & ~in2
    d1, e1 = _box_depth(y, w, in1, ref)
    snr1 = d1 / e1 if e1 > 0 else 0.0
    # odd/even primary depths: amplitudes of a common eclipse template fitted separately to
    # odd and even epochs (a plain box mean would depend on how each parity samples ingress)
    epoch = np.floor((t - t0) / period + 0.5).astype(np.int64)
    do, de, oe = _odd_even(ph, y, w, epoch, excl, ref)
    n_ev1 = int(np.unique(epoch[in1]).size)
    n_ev2 = int(np.unique(np.floor((t - t0) / period - c2 + 0.5)[in2]).size) if sec else 0
    # two-box model Δχ² by the weighted ANOVA decomposition: Σ_g W_g (mean_g - mean_all)^2
    groups = [in1, in2 & ~in1, ~in1 & ~in2]
    sw_all = w.sum()
    mean_all = np.dot(w, y) / sw_all
    dchi2 = 0.0
    for g in groups:
        swg = w[g].sum()
        if swg > 0:
            dchi2 += swg * (np.dot(w[g], y[g]) / swg - mean_all) ** 2
    # PDM θ at P and 2P, full resolution, bins half the eclipse width
    n_pdm = pdm_n if pdm_n is not None else int(np.clip(np.ceil(2.0 / q1), 10, max(10, t.size // 10)))
    th = pdm_theta(t - t[0], y, np.array([1.0 / period, 0.5 / period]), n_bins=n_pdm, n_covers=2)
    th2 = pdm_theta(t - t[0], y, np.array([0.5 / period]), n_bins=2 * n_pdm, n_covers=2)[0]
    return dict(period=period, t0=t0, duration=duration, extent1=2 * (excl - q1 / 8) * period, depth1=d1, depth1_err=e1, snr1=snr1,
                secondary=bool(sec), snr2=snr2, phase2=c2 if sec else math.nan, width2=q2 * period if sec else math.nan,
                depth2=d2 if sec else 0.0, depth2_err=e2 if sec else math.nan,
                depth_odd=do, depth_even=de, odd_even_sigma=oe, n_events1=n_ev1, n_events2=n_ev2,
                dchi2=float(dchi2), pdm_theta=float(th[0]), pdm_theta_2p=float(th2))


def _local_bls(t, y, dy, period, *, oversample, baseline, n_jobs=1, fixed_period=False):
    """Box least squares at full resolution on a local grid ±3 coarse steps wide, 10× finer.

    With ``fixed_period`` only ``period`` itself is tried (best epoch and duration at a given period).
    """
    f0 = 1.0 / period
    df = float(min_duty_cycle(period)) / (oversample * baseline)  # coarse step near f0
    freqs = np.array([f0]) if fixed_period else f0 + df * np.linspace(-3, 3, 61)
    freqs = freqs[freqs > 0]
    periods = 1.0 / freqs
    pmin = periods.min()
    d_lo = 0.6 * float(min_duty_cycle(period)) * period
    d_hi = min(Q_MAX * pmin, 0.5 * pmin)
    durations = np.geomspace(d_lo, max(d_hi, d_lo * 1.01), max(2, int(np.ceil(np.log(d_hi / d_lo) / np.log(1.2))) + 1))
    _check_finite_for_bls(t, y, dy)
    res = BoxLeastSquares(t, y, dy).power(periods, durations, objective="snr", method="fast", oversample=10)
    i = int(np.argmax(res.power))
    return float(res.period[i]), float(res.transit_time[i]), float(res.duration[i]), float(res.power[i]), df


# ----------------------------------------------------------------------------------------
# trapezoid fit for the final period, epoch, depths and durations
# ----------------------------------------------------------------------------------------
def _trap(x, half, ingress):
    """Trapezoid profile: 1 inside ``half - ingress``, 0 beyond ``half``, linear between."""
    return np.clip((half - np.abs(x)) / ingress, 0.0, 1.0)


def _fit_trapezoids(t, y, dy, ev, df_local):
    """Least-squares fit of trapezoid primary (and secondary) eclipses with shared P and t0.

    Parameters: P, t0, level, d1, D1, s1 [, phi2, d2, D2, s2] with D the first-to-last
    contact duration and s the ingress fraction of the half-duration.  Returns a dict of
    values and 1σ errors (covariance scaled by the reduced χ² when above 1).
    """
    P0, T0 = ev["period"], ev["t0"]
    D10 = max(ev["duration"], ev["extent1"] / 1.15)  # full dip width, not the box
    sec = ev["secondary"]
    x1 = orbital_phase(t, P0, T0, -0.5) * P0
    sel = np.abs(x1) < 1.5 * D10
    if sec:
        D20 = ev["width2"]
        x2 = orbital_phase(t, P0, T0 + ev["phase2"] * P0, -0.5) * P0
        sel |= np.abs(x2) < 1.5 * D20
    tt, yy, ee = t[sel], y[sel], dy[sel]
    dP = 4 * df_local * P0 ** 2  # period window: about the local BLS span
    p0 = [P0, T0, 1.0, max(ev["depth1"], 1e-5) * 1.2, 1.15 * D10, 0.5]
    lo = [P0 - dP, T0 - 0.5 * D10, 0.5, 0.0, 0.3 * D10, 0.02]
    hi = [P0 + dP, T0 + 0.5 * D10, 1.5, 1.0, min(3.0 * D10, 0.45 * P0), 1.0]
    if sec:
        p0 += [ev["phase2"], max(ev["depth2"], 1e-5) * 1.2, 1.15 * D20, 0.5]
        lo += [ev["phase2"] - 0.5 * D20 / P0, 0.0, 0.3 * D20, 0.02]
        hi += [ev["phase2"] + 0.5 * D20 / P0, 1.0, min(3.0 * D20, 0.45 * P0), 1.0]
    p0 = np.clip(p0, np.array(lo) + 1e-12 * np.abs(lo), np.array(hi) - 1e-12 * np.abs(hi))

    def model(p, tt):
        P, T, c, d1, D1, s1 = p[:6]
        m = 1.0 - d1 * _trap(orbital_phase(tt, P, T, -0.5) * P, D1 / 2, max(s1 * D1 / 2, 1e-9))
        if sec:
            phi2, d2, D2, s2 = p[6:]
            m = m - d2 * _trap(orbital_phase(tt, P, T + phi2 * P, -0.5) * P, D2 / 2, max(s2 * D2 / 2, 1e-9))
        return c * m

    def resid(p):
        return (yy - model(p, tt)) / ee

    fit = least_squares(resid, p0, bounds=(lo, hi), x_scale="jac", method="trf")
    dof = max(tt.size - len(p0), 1)
    redchi = float(2 * fit.cost / dof)
    jtj = fit.jac.T @ fit.jac
    try:
        cov = np.linalg.inv(jtj) * max(redchi, 1.0)
        err = np.sqrt(np.clip(np.diag(cov), 0, None))
    except np.linalg.LinAlgError:
        err = np.full(len(p0), np.nan)
    names = ["period", "t0", "level", "depth1", "duration1", "ingress1"]
    if sec:
        names += ["phase2", "depth2", "duration2", "ingress2"]
    out = {n: float(v) for n, v in zip(names, fit.x)}
    out.update({n + "_err": float(e) for n, e in zip(names, err)})
    out["success"] = bool(fit.success)
    out["redchi"] = redchi
    return out


# ----------------------------------------------------------------------------------------
# decision
# ----------------------------------------------------------------------------------------
def _ratio_close(a, b, r, tol=0.01):
    return abs(a / b - r) < tol * r


def _twin_signature(e: dict) -> bool:
    """Secondary at phase ~0.5 with the primary's depth, and equal odd/even depths."""
    return bool(e["secondary"] and abs(e["phase2"] - 0.5) < max(0.02, e["width2"] / e["period"])
                and (not np.isfinite(e["odd_even_sigma"]) or e["odd_even_sigma"] <= ODD_EVEN_SIGMA)
                and abs(e["depth2"] - e["depth1"]) <= 3 * math.hypot(e["depth1_err"], e["depth2_err"])
                + 0.1 * e["depth1"])


def _choose(evals: list[dict]) -> tuple[int, list[str], float]:
    """Pick the candidate that is the true orbital period; return (index, reasons, alternative).

    Rules (eclipsing-binary practice):
    1. Rank by the Δχ² of the two-box model (primary + secondary at any phase).
    2. If odd and even primary depths differ by more than ODD_EVEN_SIGMA, the
       trial period is half the true one: move to 2P.
    3. If no secondary is seen at P but 2P fits as well (tie) with a secondary
       at phase ~0.5 of equal depth and equal odd/even depths, the eclipses are
       twins and 2P is the orbital period (a single eclipse per cycle would need
       a companion too faint to eclipse; the ambiguity is reported).
    4. Otherwise keep the best; report a tie with P/2 or 2P as an ambiguity.
    """
    reasons: list[str] = []
    order = sorted(range(len(evals)), key=lambda i: -evals[i]["dchi2"])
    best = order[0]
    top = evals[best]["dchi2"]
    tol = max(TIE_ABS, TIE_REL * top)
    reasons.append(f"strongest two-box fit at P = {evals[best]['period']:.6f} d (Δχ² = {top:.1f})")
    best, alternative = _follow_doublings(evals, best, tol, reasons)
    alternative = _explain_choice(evals, best, tol, alternative, reasons)
    return best, reasons, alternative


def _find_ratio(evals: list[dict], ratio: float, ref: int) -> int | None:
    """Index of the best-folding candidate at ``ratio`` times the period of candidate ``ref``, or None."""
    p = evals[ref]["period"]
    js = [j for j in range(len(evals)) if _ratio_close(evals[j]["period"], p, ratio)]
    return max(js, key=lambda j: evals[j]["dchi2"]) if js else None


def _follow_doublings(evals: list[dict], best: int, tol: float, reasons: list[str]) -> tuple[int, float]:
    """Rules 2 and 3 of :func:`_choose`: move to 2P on unequal odd/even depths or twin eclipses.

    Returns the chosen index and the alternative period (NaN when none).
    """
    alternative = math.nan
    seen = {best}
    for _ in range(4):  # follow doublings at most a few times
        ev = evals[best]
        oe = ev["odd_even_sigma"]
        j = _find_ratio(evals, 2.0, best)
        if np.isfinite(oe) and oe > ODD_EVEN_SIGMA:
            # a true period 2P always folds at least as well as P (its two boxes can take
            # both parities), so doubling must not lose Δχ²
            if j is not None and j not in seen and evals[j]["dchi2"] >= ev["dchi2"] - tol:
                reasons.append(f"odd/even depths at {ev['period']:.6f} d differ by {oe:.1f}σ: doubled to "
                               f"{evals[j]['period']:.6f} d")
                best = j
                seen.add(j)
                continue
            if j is None:
                # the period at which the two depths are consistent is 2P: say so and flag the answer
                alternative = 2.0 * ev["period"]
                reasons.append(f"odd/even depths differ by {oe:.1f}σ but 2P = {alternative:.6f} d is outside the "
                               f"search range: ambiguous, the true period is probably 2P (search longer periods)")
            else:
                reasons.append(f"odd/even depths differ by {oe:.1f}σ but 2P folds worse "
                               f"(Δχ² {evals[j]['dchi2']:.1f} vs {ev['dchi2']:.1f}): kept")
            break
        if not ev["secondary"] and j is not None and j not in seen:
            e2 = evals[j]
            tie = e2["dchi2"] >= ev["dchi2"] - tol
            if tie and _twin_signature(e2):
                reasons.append(
                    f"no secondary at {ev['period']:.6f} d, but at 2P = {e2['period']:.6f} d the fold is as "
                    f"good (Δχ² {e2['dchi2']:.1f} vs {ev['dchi2']:.1f}) with equal eclipses at phases 0 and "
                    f"{e2['phase2']:.3f} and odd/even depths agreeing ({e2['odd_even_sigma']:.1f}σ): "
                    f"twin eclipses, period doubled (P/2 with an undetected secondary cannot be excluded "
                    f"from photometry alone)")
                alternative = ev["period"]
                best = j
                seen.add(j)
                continue
        break
    return best, alternative


def _explain_choice(evals: list[dict], best: int, tol: float, alternative: float, reasons: list[str]) -> float:
    """Rule 4 of :func:`_choose`: odd/even, secondary and P/2-or-2P ties in words; returns the alternative."""
    ev = evals[best]
    if np.isfinite(ev["odd_even_sigma"]) and ev["odd_even_sigma"] <= ODD_EVEN_SIGMA:
        reasons.append(f"odd/even depths agree within {ev['odd_even_sigma']:.1f}σ")
    elif np.isfinite(ev["odd_even_sigma"]):
        pass  # already explained above
    else:
        reasons.append("odd/even test not possible (eclipses of one parity only)")
    if ev["secondary"]:
        reasons.append(f"secondary eclipse at phase {ev['phase2']:.4f} ({ev['snr2']:.1f}σ)")
    else:
        reasons.append(f"no secondary eclipse at any phase (best dip {ev['snr2']:.1f}σ < {SECONDARY_SNR:g}σ)")
        if not np.isfinite(alternative):
            j = _find_ratio(evals, 2.0, best)
            if j is not None and evals[j]["dchi2"] >= ev["dchi2"] - tol:
                alternative = evals[j]["period"]
                reasons.append(f"2P = {alternative:.6f} d fits as well without a clear twin signature")
    half = _find_ratio(evals, 0.5, best)
    if (not np.isfinite(alternative) and half is not None and _twin_signature(ev)
            and evals[half]["dchi2"] >= ev["dchi2"] - tol):
        alternative = evals[half]["period"]
        reasons.append(f"equal eclipses at phases 0 and {ev['phase2']:.3f}: P/2 = {alternative:.6f} d folds as "
                       f"well with one eclipse per cycle; the two-eclipse period is preferred (a single eclipse "
                       f"per cycle would need an undetected secondary)")
    if half is not None:
        e = evals[half]
        reasons.append(f"P/2 gives Δχ² {e['dchi2']:.1f} (vs {ev['dchi2']:.1f})"
                       + (f", odd/even there {e['odd_even_sigma']:.1f}σ" if np.isfinite(e["odd_even_sigma"]) else ""))
    if np.isfinite(ev["pdm_theta"]):
        reasons.append(f"PDM θ {ev['pdm_theta']:.3f} at P, {ev['pdm_theta_2p']:.3f} at 2P")
    return alternative


# ----------------------------------------------------------------------------------------
# public function
# ----------------------------------------------------------------------------------------
@one_blas_thread
def find_period(lc, *, min_period=None, max_period=None, oversample: float = 5.0, method: str = "both",
                n_jobs: int | None = None, progress: bool = True) -> PeriodSearch:
    """Find the orbital period of a detached eclipsing binary.

    Parameters
    ----------
    lc : LightCurve
        Normalised light curve (``time`` in days, ``flux`` ~1 out of eclipse, ``flux_err``).
    min_period, max_period : float or Quantity, optional
        Search range in days.  Defaults: 0.25 d and half the baseline (so that
        at least two primary eclipses can fall in the data).  A ``max_period``
        beyond the baseline is allowed: an answer resting on one primary and one
        secondary eclipse then comes with a warning and is flagged ambiguous.
    oversample : float, optional
        Grid density: the phase drift over the baseline between neighbouring trial
        periods is ``1/oversample`` of the narrowest eclipse considered.
    method : {"both", "bls", "pdm"}, optional
        Periodograms used to propose candidates.
    n_jobs : int, optional
        Threads for the periodograms (default: all CPU cores).
    progress : bool, optional
        Show a tqdm progress bar over the stages (coarse search, refinement, candidates), on a
        terminal only.

    Returns
    -------
    PeriodSearch

    Raises
    ------
    InputError
        Bad arguments, or a trial grid over :data:`MAX_TRIAL_PERIODS` periods.
    NoEclipseFound
        No significant periodic eclipse (``exc.search`` holds the partial search
        when the periodograms were computed); also, before any search, fewer than
        :data:`MIN_SEARCH_POINTS` points, a baseline too short for two eclipses of
        the default shortest period, or a flux too nearly constant for any box to
        reach :data:`SNR_MIN` (``exc.search`` is None then).

    Notes
    -----
    Box least squares: Kovács, Zucker & Mazeh 2002, A&A 391, 369, through
    astropy's ``BoxLeastSquares``.  Phase dispersion minimisation: Stellingwerf
    1978, ApJ 224, 953.  Significance: signal detection efficiency of the BLS
    periodogram (Kovács et al. 2002, §3) with a threshold calibrated on noise-only
    simulations; for PDM alone, the deepest θ minimum in robust σ of its band.

    References
    ----------
    .. [1] Kovács, G., Zucker, S., Mazeh, T. 2002, A&A, 391, 369
    .. [2] Stellingwerf, R. F. 1978, ApJ, 224, 953
    """
    if method not in _METHODS:
        raise InputError(f"`method` must be one of {sorted(_METHODS)}, got {method!r}")
    s = _setup(lc, min_period, max_period, oversample, method, n_jobs)
    timings: dict[str, float] = {}
    with _Stages(progress, 3 if s.segmented else 2) as stages:
        stages.next("coarse search (segments)" if s.segmented else "coarse search")
        freq, bands, power, theta = _coarse_periodograms(s, timings)
        clock = _time.perf_counter()
        proposed, sde_bls, sde_pdm, daily = _propose_candidates(s, freq, power, theta, bands)
        if s.segmented:
            stages.next("refine on the full data")
            proposed, sde_bls = _refine_segmented(s, proposed, bands)
            timings["refine"] = _time.perf_counter() - clock
            clock = _time.perf_counter()
        stages.next("evaluate candidates")
        evals = _evaluate_candidates(s, proposed)
        timings["candidates"] = _time.perf_counter() - clock
    significance = sde_bls if s.do_bls else sde_pdm
    common = _search_fields(s, freq, power, theta, significance, sde_pdm, daily, timings)
    if not evals:
        raise _no_eclipse("no candidate period inside the search range", _table([], -1, s.t_ref),
                          significance, common)

    clock = _time.perf_counter()
    best, reasons, alternative = _choose(evals)
    ev = evals[best]
    table = _table(evals, best, s.t_ref)
    in1 = _check_detection(s, ev, significance, common["sde_threshold"], table, common, reasons)
    values = _refine_ephemeris(s, ev, in1, reasons)
    alternative = _few_eclipses(s, ev, alternative, reasons)
    if s.segmented:
        reasons.insert(0, f"long data set: candidates from box least squares summed over segments of "
                          f"{segment_length(s.baseline, s.pmin):.4g}-{segment_length(s.baseline, s.pmax):.4g} d, "
                          f"refined on the full data (PDM at the candidates only)")
    timings["refinement"] = _time.perf_counter() - clock
    return PeriodSearch(
        **values, significance=float(significance), reasoning="; ".join(reasons) + ".", candidates=table,
        secondary_detected=bool(ev["secondary"]), secondary_snr=float(ev["snr2"]),
        odd_even_sigma=float(ev["odd_even_sigma"]), alternative_period=float(alternative),
        ambiguous=bool(np.isfinite(alternative)), n_eclipses_primary=int(ev["n_events1"]),
        n_eclipses_secondary=int(ev["n_events2"]), **common)


@one_blas_thread
def measure_eclipses(lc: Any, period: float | u.Quantity, t0: float | u.Quantity | None = None) -> PeriodSearch:
    """Both eclipses at a given ephemeris: the secondary at any phase, depths and widths, no period search.

    The eclipsing-binary logic of :func:`find_period` at one period: the best box there (its
    duration, and the epoch when ``t0`` is not given), the primary dip's extent, the secondary
    eclipse searched at any phase, odd and even depths, then a trapezoid fit of both eclipses
    for their depths, durations and the secondary's phase, from which the eclipse fit's start
    recognises an eccentric orbit (:func:`~eclipsekit.fit.estimate_start`).

    Parameters
    ----------
    lc : LightCurve
        Normalised light curve.
    period : float or Quantity
        Orbital period (days).  Kept as given: it is a start value of the eclipse fit.
    t0 : float or Quantity, optional
        Time of mid-primary eclipse (days), kept as given.  Default: measured (centre of the
        best box at ``period``, refined by the trapezoid fit).

    Returns
    -------
    PeriodSearch
        ``method`` "given"; ``period`` (and ``t0`` when given) as given, without uncertainty;
        no periodograms (``significance`` NaN).  ``reasoning`` also says what the eclipses
        alone give for the period.

    Raises
    ------
    InputError
        ``lc`` not a light curve, or a bad ``period`` or ``t0``.

    Warns
    -----
    EclipsekitWarning
        No significant dip at ``t0``; a secondary deeper than the primary (``t0`` is then the
        shallower eclipse); odd and even eclipses of unequal depth (the period may be twice
        that given; the answer is then flagged ambiguous).

    References
    ----------
    .. [1] Kovács, G., Zucker, S., Mazeh, T. 2002, A&A, 391, 369 (box least squares)
    """
    for attr in ("time", "flux", "flux_err"):
        if not hasattr(lc, attr):
            raise InputError("`lc` must be a LightCurve (use eclipsekit.read_light_curve)")
    P = as_float(period, "period", u.day, positive=True)
    given_t0 = as_float(t0, "t0", u.day, allow_none=True)
    t_abs, y, dy = (np.asarray(getattr(lc, a), float) for a in ("time", "flux", "flux_err"))
    t_ref = float(t_abs[0])
    s = _Setup(t_abs=t_abs, t=t_abs - t_ref, y=y, dy=dy, w=1.0 / dy ** 2, t_ref=t_ref,
               baseline=max(float(t_abs[-1] - t_ref), P), pmin=P, pmax=P, oversample=GIVEN_OVERSAMPLE, n_jobs=1,
               method="given")
    clock = _time.perf_counter()
    _, epoch, duration, power, _ = _local_bls(s.t, y, dy, P, oversample=s.oversample, baseline=s.baseline,
                                              fixed_period=True)
    ev = _evaluate(s.t, y, s.w, P, epoch if given_t0 is None else given_t0 - t_ref, duration)
    ev.update(source="given ephemeris", bls_power=power)
    reasons = [f"ephemeris given (P = {P:.7g} d" + ("" if given_t0 is None else f", t0 = {given_t0:.7f}")
               + "): no period search; eclipses measured at it"]
    alternative = _check_given_ephemeris(ev, reasons)
    in1 = np.abs(orbital_phase(s.t, P, ev["t0"], -0.5)) < 0.5 * duration / P
    eclipse = ev["snr1"] >= SNR_MIN  # without one, a trapezoid fit would only fit noise: box values
    values = _refine_ephemeris(s, ev, in1, reasons, trapezoids=eclipse)
    if eclipse and values["period_err"] > 0:
        off = abs(values["period"] - P) / values["period_err"]
        reasons.append(f"the eclipses alone give P = {values['period']:.7f} ± {values['period_err']:.2g} d "
                       f"({off:.1f}σ from the given value, which is kept)")
    values.update(period=P, period_err=math.nan)
    if given_t0 is not None:
        values.update(t0=given_t0, t0_err=math.nan)
    return PeriodSearch(
        **values, significance=math.nan, reasoning="; ".join(reasons) + ".", candidates=_table([ev], 0, t_ref),
        bls_periods=np.empty(0), bls_power=np.empty(0), pdm_periods=np.empty(0), pdm_theta=np.empty(0),
        secondary_detected=bool(ev["secondary"]), secondary_snr=float(ev["snr2"]),
        odd_even_sigma=float(ev["odd_even_sigma"]), alternative_period=alternative,
        ambiguous=bool(np.isfinite(alternative)), sde_threshold=math.nan, n_eclipses_primary=int(ev["n_events1"]),
        n_eclipses_secondary=int(ev["n_events2"]), method="given", min_period=P, max_period=P,
        oversample=s.oversample, n_periods=1, timings={"eclipses": _time.perf_counter() - clock})


def _check_given_ephemeris(ev: dict, reasons: list[str]) -> float:
    """Warn when the data disagree with a given ephemeris; returns the alternative period (2P or NaN)."""
    def note(message: str) -> None:
        warnings.warn(message, EclipsekitWarning, stacklevel=3)
        reasons.append(message)

    P = ev["period"]
    if not ev["snr1"] >= SNR_MIN:
        note(f"no significant eclipse at the given `t0` and `period` (primary box depth {ev['snr1']:.1f}σ "
             f"< {SNR_MIN:g}σ): check them, or omit them to search the period")
    elif ev["secondary"] and ev["depth2"] - ev["depth1"] > 3 * math.hypot(ev["depth1_err"], ev["depth2_err"]):
        note(f"the eclipse at phase {ev['phase2']:.4f} is deeper than the one at the given `t0`: t0 should be "
             "the time of the deeper (primary) eclipse")
    if ev["secondary"]:
        reasons.append(f"secondary eclipse at phase {ev['phase2']:.4f} ({ev['snr2']:.1f}σ)")
    else:
        reasons.append(f"no secondary eclipse at any phase (best dip {ev['snr2']:.1f}σ < {SECONDARY_SNR:g}σ)")
    if np.isfinite(ev["odd_even_sigma"]) and ev["odd_even_sigma"] > ODD_EVEN_SIGMA:
        note(f"odd and even eclipses at the given `period` differ in depth by {ev['odd_even_sigma']:.1f}σ: "
             f"the period is probably twice that given ({2 * P:.7g} d)")
        return 2.0 * P
    return math.nan


class _Stages:
    """A progress bar over the search's stages (not its chunks), shown only on a terminal."""

    def __init__(self, progress: bool, n_stages: int):
        self.progress = progress
        self.n_stages = n_stages
        self.bar = None

    def __enter__(self) -> "_Stages":
        from ._progress import progress_bar, show_progress

        if show_progress(self.progress):
            self.bar = progress_bar(total=self.n_stages, progress=True, desc="period search", unit="stage",
                                    leave=False)
        return self

    def next(self, name: str) -> None:
        if self.bar is not None:
            self.bar.set_description(f"period search: {name}")
            self.bar.update(1)

    def __exit__(self, *exc: Any) -> None:
        if self.bar is not None:
            self.bar.close()


@dataclass(frozen=True, eq=False)
class _Setup:
    """Validated arguments and the data of one period search (times relative to ``t_ref``)."""

    t_abs: np.ndarray
    t: np.ndarray
    y: np.ndarray
    dy: np.ndarray
    w: np.ndarray
    t_ref: float
    baseline: float
    pmin: float
    pmax: float
    oversample: float
    n_jobs: int
    method: str
    segmented: bool = False

    @property
    def do_bls(self) -> bool:
        return self.method in ("both", "bls")

    @property
    def do_pdm(self) -> bool:
        return self.method in ("both", "pdm")


def _setup(lc, min_period, max_period, oversample, method, n_jobs) -> _Setup:
    """Check the arguments (InputError) and the data (NoEclipseFound when no eclipse can be found)."""
    for attr in ("time", "flux", "flux_err"):
        if not hasattr(lc, attr):
            raise InputError("`lc` must be a LightCurve (use eclipsekit.read_light_curve)")
    t_abs = np.asarray(lc.time, float)
    y = np.asarray(lc.flux, float)
    dy = np.asarray(lc.flux_err, float)
    try:
        oversample = float(oversample)
    except (TypeError, ValueError):
        raise InputError(f"`oversample` must be a number >= 1, got {oversample!r}") from None
    if not (1 <= oversample < math.inf):
        raise InputError(f"`oversample` must be a finite number >= 1, got {oversample}")
    if n_jobs is None:
        n_jobs = os.cpu_count() or 1
    if int(n_jobs) < 1:
        raise InputError(f"`n_jobs` must be a positive integer, got {n_jobs}")
    baseline = float(t_abs[-1] - t_abs[0]) if t_abs.size else 0.0
    pmin, pmax = _period_range(min_period, max_period, baseline, t_abs.size)
    n_grid = grid_size(pmin, pmax, baseline, oversample)
    if n_grid > MAX_TRIAL_PERIODS:
        raise InputError(f"the trial grid would have {n_grid:.3g} periods (over {MAX_TRIAL_PERIODS:.0e}) for a "
                         f"{baseline:.6g} d baseline and {pmin:g}-{pmax:g} d; raise `min_period`, lower "
                         "`max_period` or `oversample`")
    _check_variation(y, dy)
    t_ref = float(t_abs[0])
    # a long data set is searched on segments first (see SEGMENT_WORK); PDM alone keeps the coherent grid
    segmented = method != "pdm" and n_grid * t_abs.size > SEGMENT_WORK
    return _Setup(t_abs=t_abs, t=t_abs - t_ref, y=y, dy=dy, w=1.0 / dy ** 2, t_ref=t_ref, baseline=baseline,
                  pmin=pmin, pmax=pmax, oversample=oversample, n_jobs=int(n_jobs), method=method,
                  segmented=segmented)


def _period_range(min_period, max_period, baseline: float, n_points: int) -> tuple[float, float]:
    """The search range in days; NoEclipseFound when the data are too few or too short for any period."""
    pmin = as_float(min_period, "min_period", u.day, positive=True, allow_none=True)
    pmax = as_float(max_period, "max_period", u.day, positive=True, allow_none=True)
    if n_points < MIN_SEARCH_POINTS:
        raise NoEclipseFound(f"only {n_points} points: a period search needs at least {MIN_SEARCH_POINTS}")
    if pmax is None and min_period is None and 0.5 * baseline <= DEFAULT_MIN_PERIOD:
        raise NoEclipseFound(f"the light curve spans only {baseline:.6g} d: two eclipses of a period of at least "
                             f"{DEFAULT_MIN_PERIOD:g} d need {2 * DEFAULT_MIN_PERIOD:g} d")
    pmin = DEFAULT_MIN_PERIOD if pmin is None else pmin
    pmax = 0.5 * baseline if pmax is None else pmax
    if pmin >= pmax:
        raise InputError(f"`min_period` ({pmin:g} d) must be shorter than `max_period` ({pmax:g} d; "
                         f"default half the {baseline:.3f} d baseline)")
    return pmin, pmax


def _check_variation(y: np.ndarray, dy: np.ndarray) -> None:
    """NoEclipseFound when the flux varies too little for any eclipse to reach ``SNR_MIN``.

    A box depth is a difference of two weighted means, at most the flux range, with
    error ``sqrt(1/W_in + 1/W_out) >= 2 / sqrt(W)`` (``W`` the sum of all weights, the
    bound reached for two equal halves), so no box can exceed ``range * sqrt(W) / 2``.
    """
    spread = float(np.ptp(y))
    if spread == 0.0:
        raise NoEclipseFound(f"the flux is constant (all {y.size} points equal {y[0]:.10g}): no eclipse")
    best = spread * math.sqrt(float(np.sum(1.0 / dy ** 2))) / 2.0
    if best < SNR_MIN:
        raise NoEclipseFound(f"the flux is nearly constant: its full range {spread:.3g} could give a box depth "
                             f"of at most {best:.2g}σ (< {SNR_MIN:g}σ needed)")


def _coarse_periodograms(s: _Setup, timings: dict[str, float]):
    """Stages 1-2: the grid, the binned data per band, and both periodograms over the grid.

    A segmented search (``s.segmented``) returns the per-band segments in place of ``bands``
    and no PDM periodogram (θ NaN).
    """
    clock = _time.perf_counter()
    if s.segmented:
        freq, power, bands = segmented_bls(s.t, s.y, s.dy, s.pmin, s.pmax, s.baseline, SEGMENT_OVERSAMPLE,
                                           functools.partial(_bls_chunk, oversample=int(SEGMENT_OVERSAMPLE)),
                                           n_jobs=s.n_jobs)
        timings["periodograms"] = _time.perf_counter() - clock
        return freq, bands, power, np.full(freq.size, np.nan)
    freq = frequency_grid(s.pmin, s.pmax, s.baseline, s.oversample)
    bands = _make_bands(s.t, s.y, s.dy, freq)
    timings["grid"] = _time.perf_counter() - clock
    clock = _time.perf_counter()
    power, _, theta = _periodograms(bands, freq, do_bls=s.do_bls, do_pdm=s.do_pdm, n_jobs=s.n_jobs,
                                    progress=False)
    timings["periodograms"] = _time.perf_counter() - clock
    return freq, bands, power, theta


def _segment_peaks(freq, power, bands) -> list[tuple[float, str]]:
    """Candidates of a segmented search: the strongest peaks overall and in each band."""
    out = [(1.0 / freq[i], f"BLS peak {k + 1}") for k, i in enumerate(_top_peaks(freq, power, N_PEAKS_BLS))]
    for sl, p_lo, p_hi, _ in bands:
        for k, i in enumerate(_top_peaks(freq[sl], power[sl], SEGMENT_PEAKS_PER_BAND)):
            out.append((1.0 / freq[sl][i], f"BLS peak {k + 1} of {p_lo:.3g}-{p_hi:.3g} d"))
    return out


def _coherent_bls(s: _Setup, periods: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Box-least-squares power of the full data (binned per period band as the coherent search) at ``periods``."""
    power = np.full(periods.size, np.nan)
    dur = np.full(periods.size, np.nan)
    edges = [s.pmax]
    while edges[-1] / 2.0 > s.pmin * 1.0001:
        edges.append(edges[-1] / 2.0)
    edges.append(s.pmin)
    for p_hi, p_lo in zip(edges[:-1], edges[1:]):
        sel = (periods >= p_lo * 0.999) & (periods <= p_hi * 1.001) & np.isnan(power)
        if not sel.any():
            continue
        width = float(min_duty_cycle(p_lo) * p_lo) / BINS_PER_ECLIPSE
        tb, yb, eb = bin_in_time(s.t, s.y, s.dy, width)
        power[sel], dur[sel] = _bls_power_threaded(tb, yb, eb, periods[sel], trial_durations(p_lo, p_hi),
                                                   n_jobs=s.n_jobs, chunk=max(1, int(sel.sum()) // s.n_jobs + 1))
    return power, dur


def _coherent_peak(s: _Setup, period: float, seg: float, max_steps: int = 8) -> tuple[float, float, bool]:
    """Largest coherent box-least-squares power near a segmented-search peak at ``period``, its period,
    and whether it lies on the edge of the searched range.

    The coherent grid (the full baseline's step) is searched over ±1.5 steps of the segment grid
    (segment length ``seg``); while the largest power lies on an edge of the searched window, the
    window is moved on by its width in that direction (at most ``max_steps`` times, inside the
    search range): a segment peak measured with wide phase bins (long trial durations, see
    :func:`eclipsekit._segments.segmented_bls`) can lie a few of its own steps from the coherent one.
    """
    q = float(min_duty_cycle(period))
    half = 1.5 * q / (SEGMENT_OVERSAMPLE * seg)
    step = q / (s.oversample * s.baseline)
    f_lo, f_hi = 1.0 / s.pmax, 1.0 / s.pmin
    f = np.arange(max(1.0 / period - half, f_lo), min(1.0 / period + half, f_hi), step)
    best, on_edge = (-math.inf, period), False
    for _ in range(max_steps + 1):
        if f.size == 0:
            on_edge = False  # the search range ends here
            break
        pw, _ = _coherent_bls(s, 1.0 / f)
        i = int(np.nanargmax(pw))
        if pw[i] <= best[0]:
            on_edge = False  # the power falls beyond the previous window's edge: that edge is the peak
            break
        best, on_edge = (float(pw[i]), float(1.0 / f[i])), not 0 < i < f.size - 1
        if not on_edge:
            break
        # the maximum is on an edge: search the next window beyond it
        f = f[-1] + step * np.arange(1, f.size + 1) if i else f[0] - step * np.arange(f.size, 0, -1)
        f = f[(f >= f_lo) & (f <= f_hi)]
    return best[0], best[1], on_edge


def _refine_segmented(s: _Setup, proposed: list[tuple[float, str]], bands) -> tuple[list[tuple[float, str]], float]:
    """Bring the candidates of a segmented search to the coherent grid; returns the strongest
    :data:`SEGMENT_FOLDS` of them and the significance (SDE) of the best.

    Each candidate is searched on the coherent grid (the full baseline's step) over ±1.5 steps of
    its segment grid; the strongest :data:`SEGMENT_FOLDS` whose maximum lies on that window's edge
    are followed beyond it (:func:`_coherent_peak`; the others are not folded, so not followed, to
    save time).  The SDE compares the best coherent power with the median and spread of the
    coherent power at :data:`SDE_SAMPLE` random trial periods (the statistic calibrated for the
    coherent search; the maximum is taken over the candidates only, so it can only be lower).
    """
    refined = []
    for p, label in proposed:
        seg = next((b[3] for b in bands if b[1] * 0.999 <= p <= b[2] * 1.001), s.baseline)
        refined.append((*_coherent_peak(s, p, seg, max_steps=0), seg, label))
    refined.sort(key=lambda r: -r[0])
    for k, (_, p, on_edge, seg, label) in enumerate(refined[:SEGMENT_FOLDS]):
        if on_edge:
            refined[k] = (*_coherent_peak(s, p, seg), seg, label)
    # a proposal just beyond the search range has no coherent trial period left: drop it
    refined = sorted((r for r in refined if math.isfinite(r[0])), key=lambda r: -r[0])
    if not refined:
        return [], math.nan
    rng = np.random.default_rng(0)  # a fixed sample: repeated searches give the same answer
    sample = 1.0 / rng.uniform(1.0 / s.pmax, 1.0 / s.pmin, SDE_SAMPLE)
    ref, _ = _coherent_bls(s, sample)
    best = refined[0][0]
    sde = _sde(np.append(ref, best), best)
    return [(p, label) for _, p, _, _, label in refined[:SEGMENT_FOLDS]], sde


def _propose_candidates(s: _Setup, freq, power, theta, bands):
    """Stage 3: periodogram peaks, their P/2, 2P and 3P, and daily aliases, unique and in range.

    Returns ``(candidates, sde_bls, sde_pdm, daily)`` with candidates ``(period, label)`` pairs.
    """
    window = abs(np.mean(np.exp(2j * np.pi * s.t_abs)))  # spectral window at 1 c/d
    daily = bool(window > 0.5)
    base: list[tuple[float, str]] = []
    sde_bls = sde_pdm = math.nan
    if s.segmented:
        base = _segment_peaks(freq, power, bands)
    elif s.do_bls:
        peaks = _top_peaks(freq, power, N_PEAKS_BLS)
        if not peaks:
            raise NoEclipseFound("the box-least-squares periodogram has no finite value: no eclipse")
        sde_bls = _sde(power, power[peaks[0]])
        base += [(1.0 / freq[i], f"BLS peak {k + 1}") for k, i in enumerate(peaks)]
    if s.do_pdm and not s.segmented:
        # θ's noise scatter depends on points per bin, which changes from band to band:
        # standardise per band (robustly) before comparing minima across the grid
        # candidates from the deepest θ; significance in robust σ of θ's band at that minimum
        z = _pdm_z(theta, bands)
        minima = _top_peaks(freq, -theta, N_PEAKS_PDM)
        if not minima:
            raise NoEclipseFound("the phase-dispersion periodogram has no finite value: no eclipse")
        sde_pdm = float(z[minima[0]])
        base += [(1.0 / freq[i], f"PDM minimum {k + 1}") for k, i in enumerate(minima)]
    cands: list[tuple[float, str]] = list(base)
    parents = [b for b in base if b[1] in ("BLS peak 1", "BLS peak 2", "PDM minimum 1")]
    for p, lab in parents:
        for r, name in ((0.5, "P/2"), (2.0, "2P"), (3.0, "3P")):
            cands.append((p * r, f"{name} of {lab}"))
        if daily:
            for nday in (-2, -1, 1, 2):
                fa = 1.0 / p + nday
                if fa > 0:
                    cands.append((1.0 / fa, f"alias {nday:+d}/d of {lab}"))
    uniq: list[tuple[float, str]] = []
    for p, lab in cands:
        if not (s.pmin * 0.999 <= p <= s.pmax * 1.001):
            continue
        if any(abs(p / q - 1) < 0.002 for q, _ in uniq):
            continue
        uniq.append((p, lab))
    return uniq, sde_bls, sde_pdm, daily


def _evaluate_candidates(s: _Setup, proposed: list[tuple[float, str]]) -> list[dict]:
    """Stage 4: refine and fold every candidate, then the P/2 and 2P of the three strongest folds."""
    def evaluate_all(items):
        # the BLS C kernel releases the GIL, so candidates are refined on the thread pool too
        with ThreadPoolExecutor(max(1, s.n_jobs)) as ex:
            return list(ex.map(lambda it: _candidate(s.t, s.y, s.dy, s.w, it[0], it[1], s.oversample, s.baseline),
                               items))

    evals: list[dict] = evaluate_all(proposed)
    # make sure the strongest folds can be compared with their P/2 and 2P
    extra: list[tuple[float, str]] = []
    for e in sorted(evals, key=lambda e: -e["dchi2"])[:3]:
        for r, name in ((0.5, "P/2"), (2.0, "2P")):
            p = e["period"] * r
            if s.pmin * 0.999 <= p <= s.pmax * 1.001 and not any(abs(p / q["period"] - 1) < 0.005 for q in evals) \
                    and not any(abs(p / q - 1) < 0.005 for q, _ in extra):
                extra.append((p, f"{name} of {e['source']}"))
    if extra:
        evals += evaluate_all(extra)
    return evals


def _search_fields(s: _Setup, freq, power, theta, significance, sde_pdm, daily, timings) -> dict[str, Any]:
    """The :class:`PeriodSearch` fields shared by a found and a failed search (periodograms increasing)."""
    periods_sorted = (1.0 / freq)[::-1]
    return dict(bls_periods=periods_sorted if s.do_bls else np.empty(0),
                bls_power=power[::-1] if s.do_bls else np.empty(0),
                pdm_periods=periods_sorted if s.do_pdm and not s.segmented else np.empty(0),
                pdm_theta=theta[::-1] if s.do_pdm and not s.segmented else np.empty(0),
                sde_threshold=SDE_THRESHOLD if s.do_bls else PDM_SDE_THRESHOLD, pdm_significance=sde_pdm,
                method=s.method, min_period=s.pmin, max_period=s.pmax, oversample=s.oversample,
                n_periods=int(freq.size), daily_window=daily, timings=timings)


def _no_eclipse(message: str, table: Table, significance: float, common: dict[str, Any]) -> NoEclipseFound:
    """NoEclipseFound carrying the partial search (periodograms and candidate table)."""
    partial = PeriodSearch(period=math.nan, period_err=math.nan, t0=math.nan, t0_err=math.nan,
                           depth_primary=math.nan, depth_secondary=math.nan, duration_primary=math.nan,
                           duration_secondary=math.nan, phase_secondary=math.nan,
                           significance=significance, reasoning=message, candidates=table,
                           found=False, **common)
    return NoEclipseFound(message, search=partial)


def _check_detection(s: _Setup, ev: dict, significance: float, threshold: float, table: Table,
                     common: dict[str, Any], reasons: list[str]) -> np.ndarray:
    """Stage 5a: significance, primary S/N, two eclipses, and eclipse rather than smooth modulation.

    Raises NoEclipseFound when a test fails; returns the in-primary-box mask of the chosen fold.
    """
    def fail(message: str) -> NoEclipseFound:
        return _no_eclipse(message, table, significance, common)

    if not significance >= threshold:
        raise fail(f"no significant periodic eclipse: periodogram SDE {significance:.1f} is below the "
                   f"{threshold:.1f} threshold calibrated on noise-only light curves")
    if not ev["snr1"] >= SNR_MIN:
        raise fail(f"no significant periodic eclipse: the best candidate ({ev['period']:.5f} d) has a primary "
                   f"depth of only {ev['snr1']:.1f}σ (< {SNR_MIN:g}σ)")
    one_each = bool(ev["secondary"] and ev["n_events1"] == 1 and ev["n_events2"] >= 1 and s.pmax > s.baseline)
    if ev["n_events1"] < 2 and not one_each:
        raise fail(f"only one primary eclipse observed at the best candidate ({ev['period']:.5f} d): "
                   "the period is not constrained")
    # eclipse or smooth modulation?  A wave plus free eclipse windows against a smooth Fourier series, by BIC
    t, w = s.t, s.w
    P = ev["period"]
    ph = orbital_phase(t, P, ev["t0"], -0.5)
    q1 = ev["duration"] / P
    in1 = np.abs(ph) < 0.5 * q1
    half1 = 0.5 * ev["extent1"] / P + q1 / 8
    phase2 = half2 = math.nan
    if ev["secondary"]:
        q2 = ev["width2"] / P
        phase2 = ev["phase2"]
        d2 = orbital_phase(t, P, ev["t0"] + phase2 * P, -0.5)
        half2 = _dip_extent(d2, s.y, w, q2) + q2 / 8
    cmp = eclipse_versus_smooth(t, s.y, w, P, ev["t0"], half1, phase2=phase2, half2=half2,
                                duration=ev["duration"])
    detail = (f"{N_HARM_WAVE}-harmonic wave + eclipse windows χ² {cmp['chi2_eclipse']:.1f} "
              f"({cmp['n_eclipse']} parameters) vs {N_HARM_SMOOTH}-harmonic series χ² {cmp['chi2_smooth']:.1f} "
              f"({cmp['n_smooth']}), scaled by {cmp['scale']:.2f} × β² ({cmp['beta']:.2f}²): ΔBIC {cmp['delta_bic']:.1f}")
    if not cmp["delta_bic"] > BIC_MARGIN:
        raise fail(f"the periodic signal at {P:.5f} d is smooth modulation (e.g. spots), not an eclipse: "
                   f"{detail} (an eclipse needs > {BIC_MARGIN:g})")
    reasons.append(f"eclipse-shaped: {detail}")
    return in1


def _few_eclipses(s: _Setup, ev: dict, alternative: float, reasons: list[str]) -> float:
    """With ``max_period`` beyond the baseline and at most two eclipses seen, warn and flag the answer ambiguous.

    Returns the alternative period (half the chosen one unless another was already named).
    """
    if not (s.pmax > s.baseline and ev["n_events1"] + ev["n_events2"] <= 2):
        return alternative
    if not math.isfinite(alternative):
        alternative = 0.5 * ev["period"]
    message = (f"`max_period` {s.pmax:g} d exceeds the {s.baseline:.4g} d baseline and only "
               f"{ev['n_events1'] + ev['n_events2']} eclipses are seen: the period {ev['period']:.6f} d is not "
               f"measured by repeated eclipses (it assumes the secondary at the phase found); ambiguous with "
               f"{alternative:.6f} d")
    warnings.warn(message, EclipsekitWarning, stacklevel=3)
    reasons.append(message)
    return alternative


def _refine_ephemeris(s: _Setup, ev: dict, in1: np.ndarray, reasons: list[str], *,
                      trapezoids: bool = True) -> dict[str, float]:
    """Stage 5b: P, t0, depths and durations from a trapezoid fit at full resolution (box values if it fails,
    or without ``trapezoids``: no eclipse to fit at a given ephemeris)."""
    t = s.t
    df_local = float(min_duty_cycle(ev["period"])) / (s.oversample * s.baseline)
    fit = None
    try:
        fit = _fit_trapezoids(t, s.y, s.dy, ev, df_local) if trapezoids else None
    except Exception as exc:  # pragma: no cover - defensive, reported not hidden
        warnings.warn(f"trapezoid refinement failed ({exc}); using the box-search values", EclipsekitWarning)
    # the fit's period is bounded to ±4 grid steps (see _fit_trapezoids): an error wider than that
    # window means the data do not constrain it there (a near-singular covariance), so fall back
    window = 4 * df_local * ev["period"] ** 2
    if fit is not None and fit["success"] and np.isfinite(fit["period_err"]) and 0 < fit["period_err"] < window:
        P, Perr = fit["period"], fit["period_err"]
        # epoch nearest the middle of the in-eclipse data: least correlated with P
        tmid = float(np.average(t[in1])) if in1.any() else 0.5 * (t[0] + t[-1])
        n_shift = round((tmid - fit["t0"]) / P)
        T0 = fit["t0"] + n_shift * P
        T0err = math.sqrt(fit["t0_err"] ** 2 + (n_shift * Perr) ** 2)  # conservative (ignores correlation)
        d1, d1e, D1 = fit["depth1"], fit["depth1_err"], fit["duration1"]
        if ev["secondary"]:
            d2, d2e, D2, ph2 = fit["depth2"], fit["depth2_err"], fit["duration2"], fit["phase2"] % 1.0
            ph2e = fit["phase2_err"]
        else:
            d2, d2e, D2, ph2, ph2e = 0.0, math.nan, math.nan, math.nan, math.nan
        reasons.append(f"refined by a trapezoid fit (reduced χ² {fit['redchi']:.2f})")
    else:
        P = ev["period"]
        Perr = df_local * P ** 2
        T0, T0err = ev["t0"], ev["duration"] / 4
        d1, d1e, D1 = ev["depth1"], ev["depth1_err"], ev["duration"]
        d2, d2e, D2 = ev["depth2"], ev["depth2_err"], ev["width2"]
        # one step of the secondary's box scan (a quarter of its narrowest box, see _secondary_scan)
        ph2, ph2e = ev["phase2"], (ev["duration"] / P / 8 if ev["secondary"] else math.nan)
        if trapezoids:
            reasons.append("trapezoid fit failed: values from the box search, errors from the grid step")
            warnings.warn("trapezoid refinement did not converge; period and t0 errors are grid-based",
                          EclipsekitWarning)
    return dict(period=float(P), period_err=float(Perr), t0=float(T0 + s.t_ref), t0_err=float(T0err),
                depth_primary=float(d1), depth_secondary=float(d2), duration_primary=float(D1),
                duration_secondary=float(D2), phase_secondary=float(ph2), phase_secondary_err=float(ph2e),
                depth_primary_err=float(d1e),
                depth_secondary_err=float(d2e))


def _candidate(t, y, dy, w, period, label, oversample, baseline) -> dict:
    """Refine one candidate at full resolution and fold it."""
    p, tt, dur, pw, _ = _local_bls(t, y, dy, period, oversample=oversample, baseline=baseline)
    ev = _evaluate(t, y, w, p, tt, dur)
    ev["source"] = label
    ev["bls_power"] = pw
    return ev


_TABLE_COLS = [
    ("period", "d", "refined trial period"), ("source", "", "where the candidate came from"),
    ("dchi2", "", "Δχ² of primary + secondary box model"), ("bls_power", "", "local BLS depth S/N"),
    ("depth1", "", "primary box depth"), ("snr1", "", "primary depth S/N"), ("duration", "d", "box duration"),
    ("t0", "d", "mid-primary time"), ("secondary", "", "secondary detected"), ("snr2", "", "best secondary dip S/N"),
    ("phase2", "", "secondary phase"), ("depth2", "", "secondary box depth"),
    ("odd_even_sigma", "", "|odd - even| primary depth / σ"), ("n_events1", "", "primary eclipses observed"),
    ("pdm_theta", "", "PDM θ at P"), ("pdm_theta_2p", "", "PDM θ at 2P"),
]


def _table(evals, best, t_ref) -> Table:
    cols = {}
    for name, unit, desc in _TABLE_COLS:
        vals = [e[name] + t_ref if name == "t0" else e[name] for e in evals]
        cols[name] = vals
    tab = Table()
    for name, unit, desc in _TABLE_COLS:
        if name == "source":
            tab[name] = np.array(cols[name], dtype=str) if evals else np.array([], dtype=str)
        elif name == "secondary":
            tab[name] = np.array(cols[name], dtype=bool)
        elif name == "n_events1":
            tab[name] = np.array(cols[name], dtype=int)
        else:
            tab[name] = np.array(cols[name], dtype=float)
        tab[name].description = desc
        if unit:
            tab[name].unit = unit
    tab["chosen"] = np.arange(len(evals)) == best
    if len(tab):
        tab.sort("dchi2", reverse=True)
    return tab
