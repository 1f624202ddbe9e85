"""The residual problem of one fit: eclipse model times a per-segment polynomial baseline.

Numerical notes
---------------
* The baseline is normalisation times a polynomial of ``baseline_degree`` in time for
  each data segment (segments split at gaps).  Its coefficients enter linearly, so they
  are solved exactly inside every residual evaluation ("variable projection", Golub &
  Pereyra 1973, SIAM J. Numer. Anal. 10, 413).  The optimiser only sees the eclipse
  parameters; the Jacobian of the projected residuals gives their covariance already
  marginalised over the baseline coefficients.  For MCMC the log-posterior includes
  the Gaussian integral over the coefficients (flat priors), ``-0.5 chi2_min - 0.5
  log det(A^T W A)``, i.e. the baseline is marginalised, not just profiled.
* Only data near the eclipses (flanks of half an eclipse duration on each side) are
  fitted point by point when they are under 60% of the light curve; the points
  elsewhere, where the model is exactly 1, are averaged in bins of 10 consecutive
  points (weighted means), which keeps their information on the baseline at a tenth
  of the cost.  The statistics, residuals and outlier rejection always use the whole
  light curve.
"""

from __future__ import annotations

import math
from typing import Any, Mapping

import lmfit
import numpy as np

from .. import eclipse, orbit
from ..data import LightCurve
from .parameters import LD_LAWS, ParameterMap, ld_coefficients

__all__ = ["Problem", "OutOfWindowBins", "build_problem", "segment_starts", "window_mask", "BIN"]

BIN = 10  # out-of-window points averaged per bin when fitting near the eclipses only


def segment_starts(time: np.ndarray, gap: float, min_points: int) -> np.ndarray:
    """Start index of each data segment (time sorted); segments split at gaps > ``gap``."""
    starts = np.concatenate([[0], np.nonzero(np.diff(time) > gap)[0] + 1])
    # merge segments too short to pin their own polynomial into the previous one
    keep = [0]
    for i in range(1, starts.size):
        end = starts[i + 1] if i + 1 < starts.size else time.size
        if end - starts[i] >= min_points and starts[i] - keep[-1] >= min_points:
            keep.append(int(starts[i]))
    return np.asarray(keep, dtype=int)


def window_mask(time: np.ndarray, v: Mapping[str, float], w1: float, w2: float, flank: float) -> np.ndarray:
    """Points within (1/2 + flank) eclipse durations of either mid-eclipse."""
    P, t0 = v["period"], v["t0"]
    _, t2 = orbit.conjunction_times(period=P, t0=t0, ecosw=v["ecosw"], esinw=v["esinw"],
                                    inclination=v["inclination"])
    out = np.zeros(time.size, bool)
    for tc, w in ((t0, w1), (float(t2), w2)):
        if not (w > 0):
            continue
        ph = (time - tc) / P
        ph -= np.round(ph)
        out |= np.abs(ph) * P < (0.5 + flank) * w
    return out


class Problem:
    """Data, fixed settings and the (projected) objective of one fit.

    Parameters
    ----------
    time, flux, flux_err, seg_id : ndarray
        The points fitted (possibly binned away from the eclipses) and the segment of each.
    seg_mid, seg_half : ndarray
        Middle and half length of each segment: the baseline polynomial is in
        ``(time - mid) / half``.
    degree : int
        Degree of the baseline polynomial.
    mapping : ParameterMap
        The fitted vector and its link to physical values.
    ld_law, exposure_time, supersample :
        Settings of :func:`eclipsekit.eclipse.model_flux`.
    """

    def __init__(self, time, flux, flux_err, seg_id, seg_mid, seg_half, degree, *, mapping: ParameterMap,
                 ld_law: str, exposure_time: float, supersample: int, err_scale: float = 1.0):
        self.time = time
        self.flux = flux
        self.flux_err = flux_err
        self.seg_starts = np.concatenate([[0], np.nonzero(np.diff(seg_id))[0] + 1])
        self.n_seg = self.seg_starts.size
        self.seg_index = seg_id  # segment id per point (0 .. n_seg-1), contiguous
        self.degree = degree
        x = (time - seg_mid[seg_id]) / seg_half[seg_id]
        self.xp = np.vander(x, 2 * degree + 1, increasing=True)  # x^0 .. x^(2d)
        self.hankel = np.add.outer(np.arange(degree + 1), np.arange(degree + 1))
        self.mapping = mapping
        self.ld_law = ld_law
        self.exposure_time = exposure_time
        self.supersample = supersample
        self.set_err_scale(err_scale)
        self.nfev = 0
        self.segments: list[tuple[float, float]] = []
        self.bins: OutOfWindowBins | None = None

    def set_err_scale(self, s: float) -> None:
        """Scale the flux errors by ``s`` (e.g. sqrt of a reduced chi-square)."""
        self.err_scale = s
        self.sig = self.flux_err * s
        self.w = 1.0 / (self.sig * self.sig)
        self.wf = self.w * self.flux
        self._sums = self._flux_sums(self.flux)

    def _flux_sums(self, flux: np.ndarray):
        """Per-segment sums that do not depend on the model (it is exactly 1 out of eclipse)."""
        d = self.degree
        wf = self.w * flux
        sum_w = np.add.reduceat(self.w[:, None] * self.xp, self.seg_starts, axis=0)  # (S, 2d+1)
        sum_wf = np.add.reduceat(wf[:, None] * self.xp[:, : d + 1], self.seg_starts, axis=0)  # (S, d+1)
        return wf, sum_w, sum_wf, float(wf @ flux)

    @property
    def n_linear(self) -> int:
        """Number of baseline coefficients."""
        return self.n_seg * (self.degree + 1)

    def select(self, full_flux: np.ndarray) -> np.ndarray:
        """The fluxes this problem fits from fluxes at every point of its light curve."""
        return full_flux if self.bins is None else self.bins.reduce(full_flux)

    def model(self, v: Mapping[str, float], time: np.ndarray | None = None) -> np.ndarray:
        """Eclipse model (no baseline) at physical values ``v``."""
        self.nfev += 1
        law = self.ld_law
        ld1, ld2 = ld_coefficients(v, law)
        return eclipse.model_flux(self.time if time is None else time, period=v["period"], t0=v["t0"],
                                  radius_sum=v["radius_sum"], radius_ratio=v["radius_ratio"],
                                  inclination=v["inclination"], surface_brightness_ratio=v["surface_brightness_ratio"],
                                  ecosw=v["ecosw"], esinw=v["esinw"], third_light=v["third_light"], ld_law=law,
                                  ld_primary=ld1, ld_secondary=ld2, exposure_time=self.exposure_time,
                                  supersample=self.supersample)

    def normal_solution(self, m: np.ndarray, flux: np.ndarray | None = None):
        """Baseline coefficients for model ``m``: (coefficients, sum of log det of the normal matrices, chi2_min).

        The normal equations of each segment, sum w m^2 x^(j+k) c_k = sum w f m x^j, are the
        model-independent sums (m = 1) plus corrections from the in-eclipse points only, where
        m != 1; so the cost scales with the points in eclipse, not with the light curve.
        """
        wf, sum_w, sum_wf, sum_wff = self._sums if flux is None else self._flux_sums(flux)
        d = self.degree
        S = self.n_seg
        mom = sum_w.copy()
        rhs = sum_wf.copy()
        idx = np.flatnonzero(m != 1.0)
        if idx.size:
            dm = m[idx] - 1.0
            seg = self.seg_index[idx]
            xp = self.xp[idx]
            a = self.w[idx] * dm * (2.0 + dm)  # w (m^2 - 1)
            b = wf[idx] * dm  # w f (m - 1)
            for j in range(2 * d + 1):
                mom[:, j] += np.bincount(seg, a * xp[:, j], minlength=S)
            for j in range(d + 1):
                rhs[:, j] += np.bincount(seg, b * xp[:, j], minlength=S)
        G = mom[:, self.hankel]
        if d == 0:
            coef = rhs / G[:, :, 0]
            logdet = np.log(G[:, 0, 0])
        else:
            G = G + np.eye(d + 1) * (1e-15 * G[:, :1, :1])  # guard against an exactly singular segment
            coef = np.linalg.solve(G, rhs[..., None])[..., 0]
            logdet = np.linalg.slogdet(G)[1]
        # at the linear optimum the residual is orthogonal to the baseline columns: chi2 = f'Wf - rhs.c
        chi2 = sum_wff - float(np.sum(rhs * coef))
        return coef, float(np.sum(logdet)), chi2

    def project(self, m: np.ndarray, flux: np.ndarray | None = None):
        """Best baseline for model ``m``: (baseline at every point, coefficients, sum of log det)."""
        coef, logdet, _ = self.normal_solution(m, flux)
        d = self.degree
        base = np.einsum("ij,ij->i", self.xp[:, : d + 1], coef[self.seg_index])
        return base, coef, logdet

    def evaluate(self, v: Mapping[str, float], flux: np.ndarray | None = None):
        """(model, baseline, normalised residuals, log det) at physical values ``v``."""
        m = self.model(v)
        base, coef, logdet = self.project(m, flux)
        f = self.flux if flux is None else flux
        return m, base, (f - m * base) / self.sig, logdet

    def chi2(self, v: Mapping[str, float]) -> float:
        """Chi-square at physical values ``v`` (baseline at its optimum), prior terms included."""
        r = self.evaluate(v)[2]
        p = self.mapping.prior_residuals(v)
        return float(r @ r + p @ p)

    # -- objectives for lmfit ---------------------------------------------------------
    def residual(self, params: lmfit.Parameters, flux: np.ndarray | None = None) -> np.ndarray:
        """Normalised residuals for lmfit Parameters of the fitted vector (1e3 where the model fails)."""
        n = self.time.size + len(self.mapping.priors)
        try:
            r = self.residual_from(params.valuesdict(), flux)
        except (ValueError, ArithmeticError):  # invalid geometry (e.g. stars touching): push back
            return np.full(n, 1e3)
        if not np.all(np.isfinite(r)):
            return np.full(n, 1e3)
        return r

    def residual_from(self, internal: Mapping[str, float], flux: np.ndarray | None = None) -> np.ndarray:
        """Normalised residuals, then the prior terms, for fitted values keyed by their internal names."""
        v = self.mapping.physical(internal)
        r = self.evaluate(v, flux)[2]
        return np.concatenate([r, self.mapping.prior_residuals(v)]) if self.mapping.priors else r

    def log_posterior(self, params: lmfit.Parameters) -> float:
        """Log-posterior with the baseline marginalised (flat priors inside the bounds)."""
        try:
            v = self.mapping.physical(params.valuesdict())
            coef, logdet, chi2 = self.normal_solution(self.model(v))
            p = self.mapping.prior_residuals(v)
        except (ValueError, ArithmeticError):
            return -np.inf
        lp = -0.5 * (chi2 + p @ p) - 0.5 * logdet
        return lp if math.isfinite(lp) else -np.inf


    # -- many parameter sets at once (ensemble samplers) --------------------------------
    def model_rows(self, v: Mapping[str, np.ndarray]) -> np.ndarray:
        """Eclipse model for rows of physical values (arrays of length M): shape (M, points); NaN rows fail."""
        n = len(v["period"])
        self.nfev += n
        law = self.ld_law
        ld = [np.column_stack([v[f"ld{s}_{j + 1}"] for j in range(len(LD_LAWS[law][0]))]) if LD_LAWS[law][0]
              else np.zeros((n, 0)) for s in (1, 2)]
        kw = {k: v[k] for k in ("period", "t0", "radius_sum", "radius_ratio", "inclination",
                                "surface_brightness_ratio", "ecosw", "esinw", "third_light")}
        try:
            return eclipse.model_flux_batch(self.time, **kw, ld_law=law, ld_primary=ld[0], ld_secondary=ld[1],
                                            exposure_time=self.exposure_time, supersample=self.supersample)
        except (ValueError, ArithmeticError):  # one set is invalid: evaluate them one by one
            out = np.full((n, self.time.size), np.nan)
            for i in range(n):
                try:
                    out[i] = self.model({k: a[i] for k, a in v.items()})
                except (ValueError, ArithmeticError):
                    pass
            return out

    def log_posterior_rows(self, x: np.ndarray) -> np.ndarray:
        """Log-posterior of each row of fitted vectors ``x`` (baseline marginalised, priors, -inf outside bounds).

        The vectorised form of :meth:`log_posterior` for emcee's ``vectorize=True``.
        """
        pm = self.mapping
        lp = np.full(x.shape[0], -np.inf)
        ok = np.all((x >= pm.lower) & (x <= pm.upper), axis=1)
        if not ok.any():
            return lp
        v = pm.physical_rows(x[ok])
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):  # failing rows become -inf below
            m = self.model_rows(v)
        good = np.all(np.isfinite(m), axis=1)
        chi2, logdet = self.normal_solution_rows(np.where(good[:, None], m, 1.0))
        prior = np.zeros(good.size)
        for name, (mu, sd) in pm.priors.items():
            val = v["surface_brightness_ratio"] * v["radius_ratio"] ** 2 if name == "light_ratio" else v[name]
            prior += ((val - mu) / sd) ** 2
        out = -0.5 * (chi2 + prior) - 0.5 * logdet
        lp[ok] = np.where(good & np.isfinite(out), out, -np.inf)
        return lp

    def normal_solution_rows(self, m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Chi-square at the best baseline and sum of log det of the normal matrices, for each row of models ``m``.

        :meth:`normal_solution` for M models at once: the corrections to the model-independent
        sums come from the points where any row differs from 1.
        """
        wf, sum_w, sum_wf, sum_wff = self._sums
        d, S, M = self.degree, self.n_seg, m.shape[0]
        mom = np.repeat(sum_w[None], M, axis=0)
        rhs = np.repeat(sum_wf[None], M, axis=0)
        idx = np.flatnonzero(np.any(m != 1.0, axis=0))
        if idx.size:
            dm = m[:, idx] - 1.0
            key = (np.arange(M)[:, None] * S + self.seg_index[idx][None, :]).ravel()
            xp = self.xp[idx]
            a = self.w[idx] * dm * (2.0 + dm)  # w (m^2 - 1)
            b = wf[idx] * dm  # w f (m - 1)
            for j in range(2 * d + 1):
                mom[:, :, j] += np.bincount(key, (a * xp[:, j]).ravel(), minlength=M * S).reshape(M, S)
            for j in range(d + 1):
                rhs[:, :, j] += np.bincount(key, (b * xp[:, j]).ravel(), minlength=M * S).reshape(M, S)
        G = mom[:, :, self.hankel]
        if d == 0:
            coef = rhs / G[..., 0]
            logdet = np.log(G[..., 0, 0])
        else:
            G = G + np.eye(d + 1) * (1e-15 * G[..., :1, :1])
            coef = np.linalg.solve(G, rhs[..., None])[..., 0]
            logdet = np.linalg.slogdet(G)[1]
        chi2 = sum_wff - np.sum(rhs * coef, axis=(1, 2))
        return chi2, np.sum(logdet, axis=1)


class OutOfWindowBins:
    """Points outside the windows (model exactly 1 there) averaged in runs of up to :data:`BIN` points.

    The runs stay within a segment; the weighted mean keeps all their information on a
    baseline that is linear over a bin, at a tenth of the cost.
    """

    def __init__(self, lc: LightCurve, mask: np.ndarray, seg_id: np.ndarray):
        self.inside = np.flatnonzero(mask)
        out = np.flatnonzero(~mask)
        self.out = out
        brk = np.ones(out.size, bool)
        if out.size:
            brk[1:] = (np.diff(out) != 1) | (np.diff(seg_id[out]) != 0)
        run_id = np.cumsum(brk) - 1
        run_start = np.flatnonzero(brk)
        pos_in_run = np.arange(out.size) - run_start[run_id]
        bin_key = np.zeros(out.size, int)
        if out.size:
            newbin = brk | (pos_in_run % BIN == 0)
            bin_key = np.cumsum(newbin) - 1
        nb = int(bin_key[-1] + 1) if out.size else 0
        self.bin_key, self.n_bins = bin_key, nb
        self.w_out = 1.0 / lc.flux_err[out] ** 2
        self.wsum = np.bincount(bin_key, self.w_out, minlength=nb)
        tb = np.bincount(bin_key, self.w_out * lc.time[out], minlength=nb) / self.wsum
        eb = 1.0 / np.sqrt(self.wsum)
        sb = seg_id[out][run_start[run_id]][np.searchsorted(bin_key, np.arange(nb))] if nb else np.zeros(0, int)
        t_all = np.concatenate([lc.time[self.inside], tb])
        self.order = np.argsort(t_all, kind="stable")
        self.time = t_all[self.order]
        self.flux_err = np.concatenate([lc.flux_err[self.inside], eb])[self.order]
        self.seg_id = np.concatenate([seg_id[self.inside], sb])[self.order]

    def reduce(self, full_flux: np.ndarray) -> np.ndarray:
        """Fluxes at the fitted points (in-window points, then bin means, in time order)."""
        fb = np.bincount(self.bin_key, self.w_out * full_flux[self.out], minlength=self.n_bins) / self.wsum
        return np.concatenate([full_flux[self.inside], fb])[self.order]


def build_problem(lc: LightCurve, mask: np.ndarray | None, *, mapping: ParameterMap, gap: float, degree: int,
                  ld_law: str, exposure_time: float, supersample: int, cls: type = Problem, **extra: Any) -> Problem:
    """The residual problem of ``lc``: every point (``mask`` None) or the points in ``mask`` plus bins of the rest.

    ``cls`` (a :class:`Problem` subclass, e.g. one with a variability baseline) is built
    with the keywords ``extra``.
    """
    seg_starts = segment_starts(lc.time, gap, min_points=max(5, 2 * (degree + 1)))
    seg_id_full = np.zeros(len(lc), int)
    seg_id_full[seg_starts[1:]] = 1
    seg_id_full = np.cumsum(seg_id_full)
    ends = np.concatenate([seg_starts[1:], [len(lc)]]) - 1
    mid = 0.5 * (lc.time[seg_starts] + lc.time[ends])
    half = np.maximum(0.5 * (lc.time[ends] - lc.time[seg_starts]), 1e-3)
    bins = None
    if mask is None:
        t_, f_, e_, sid = lc.time, lc.flux, lc.flux_err, seg_id_full
    else:
        bins = OutOfWindowBins(lc, mask, seg_id_full)
        t_, e_, sid = bins.time, bins.flux_err, bins.seg_id
        f_ = bins.reduce(lc.flux)
    # renumber the segments present in the selection
    present, sid = np.unique(sid, return_inverse=True)
    pr = cls(t_, f_, e_, sid, mid[present], half[present], degree, mapping=mapping, ld_law=ld_law,
             exposure_time=exposure_time, supersample=supersample, **extra)
    pr.segments = [(float(lc.time[a]), float(lc.time[b])) for a, b in zip(seg_starts, ends)]
    pr.bins = bins
    return pr
