"""Eclipse or smooth modulation?  Two models of the folded light curve compared by BIC.

Pure numerical helpers: arrays in, numbers out; no I/O, no printing.

Spot waves, reflection and ellipsoidal variation are smooth in phase: a few harmonics of the
period describe them.  An eclipse is a dip confined to a window around its centre (at most a
fifth of the orbit for a detached pair), with sharp contacts that a few harmonics cannot follow.
So the folded light curve is fitted twice, by weighted linear least squares:

* smooth model ``S``: a Fourier series of :data:`N_HARM_SMOOTH` harmonics at the period;
* eclipse model ``E``: a Fourier series of :data:`N_HARM_WAVE` harmonics (the spot or
  ellipsoidal wave under the eclipses) plus a free level in each of :data:`BINS_PER_WINDOW`
  phase bins inside each eclipse window (so the eclipse's shape is not assumed: box, trapezoid
  and V-shaped dips are all fitted).  Outside the windows only the wave describes the data.

Fitting the wave *together* with the eclipse (rather than the wave first and the eclipse on its
residuals) keeps a wide eclipse from being absorbed by the wave.  The models are compared by the
Bayesian information criterion (Schwarz 1978, Ann. Stat. 6, 461), with χ² scaled to the
residual scatter out of eclipse and for correlated noise by the time-averaging factor β (Pont, Zucker & Queloz
2006, MNRAS 373, 231), so that neither underestimated errors nor red noise decide.
"""

from __future__ import annotations

import math

import numpy as np

from .orbit import phase_harmonics

__all__ = ["N_HARM_SMOOTH", "N_HARM_WAVE", "BINS_PER_WINDOW", "MAX_WINDOW_HALF", "BIC_MARGIN",
           "eclipse_versus_smooth"]

#: Harmonics of the smooth (no-eclipse) model.  The light curve of a spotted star is a sum of
#: spot-visibility profiles, each about half a rotation wide, whose harmonics fall off fast
#: (common practice: spot and ellipsoidal waves are described by 2-4 harmonics); 4 also covers
#: sharpened minima from limb darkening and two spots.
N_HARM_SMOOTH = 4
#: Harmonics of the out-of-eclipse wave in the eclipse model: reflection and ellipsoidal
#: variation are cos φ and cos 2φ, a stable spot wave mostly the fundamental and its first
#: harmonic (common practice).
N_HARM_WAVE = 2
#: Free phase bins across each eclipse window of the eclipse model.
BINS_PER_WINDOW = 6
#: Largest half-width of an eclipse window (phase): first-to-last contact of a detached pair
#: with (R1 + R2) / a up to ~0.6 (common practice: detached systems have r1 + r2 below ~0.5).
MAX_WINDOW_HALF = 0.1
#: ΔBIC above which the eclipse model is preferred: "very strong" evidence (Kass & Raftery
#: 1995, JASA 90, 773, §3.2).
BIC_MARGIN = 10.0


def _fourier_columns(phase: np.ndarray, n_harm: int) -> list[np.ndarray]:
    """A constant and the first ``n_harm`` orbital harmonics, as a list of columns."""
    return [np.ones_like(phase)] + list(phase_harmonics(phase, n_harm).T)


def _weighted_fit(columns: list[np.ndarray], y: np.ndarray, sw: np.ndarray) -> tuple[float, np.ndarray]:
    """χ² and residuals of a weighted linear least-squares fit (``sw`` = sqrt of the weights)."""
    a = np.column_stack(columns)
    coef, *_ = np.linalg.lstsq(a * sw[:, None], y * sw, rcond=None)
    resid = y - a @ coef
    return float(np.sum((resid * sw) ** 2)), resid


def _window_columns(dphase: np.ndarray, half: float) -> list[np.ndarray]:
    """Indicator columns of the non-empty phase bins across ``|dphase| < half``."""
    inside = np.abs(dphase) < half
    index = np.minimum(((dphase + half) / (2.0 * half) * BINS_PER_WINDOW).astype(int), BINS_PER_WINDOW - 1)
    return [(inside & (index == j)).astype(float) for j in range(BINS_PER_WINDOW)
            if np.any(inside & (index == j))]


def red_noise_factor(t: np.ndarray, resid: np.ndarray, w: np.ndarray, timescale: float) -> float:
    """β >= 1: scatter of residuals averaged over ``timescale`` relative to white noise.

    Pont, Zucker & Queloz 2006, MNRAS 373, 231, §3: with ``σ₁`` the scatter of single
    points and ``σ_n`` that of means over ``n`` points, white noise gives
    ``σ_n = σ₁ / sqrt(n) * sqrt(M / (M - 1))`` (``M`` bins); β is the ratio of the measured
    to that value.  Fewer than 10 bins give no estimate (β = 1).
    """
    if not timescale > 0:
        return 1.0
    index = np.floor((t - t[0]) / timescale).astype(np.int64)
    _, k = np.unique(index, return_inverse=True)
    m = int(k.max()) + 1
    if m < 10:
        return 1.0
    sw = np.bincount(k, weights=w)
    mean = np.bincount(k, weights=w * resid) / sw
    counts = np.bincount(k)
    n = float(np.mean(counts))
    sigma1 = math.sqrt(float(np.dot(w, resid ** 2) / w.sum()))
    sigma_n = float(np.std(mean))
    expected = sigma1 / math.sqrt(n) * math.sqrt(m / (m - 1.0))
    return max(1.0, sigma_n / expected) if expected > 0 else 1.0


def eclipse_versus_smooth(t, y, w, period: float, t0: float, half1: float, *, phase2: float = math.nan,
                          half2: float = math.nan, duration: float = math.nan) -> dict[str, float]:
    """Compare the eclipse model ``E`` with the smooth model ``S`` by BIC (see module notes).

    Parameters
    ----------
    t, y, w : ndarray
        Times (days), fluxes and weights ``1/σ²``.
    period, t0 : float
        Trial period and mid-primary time (days).
    half1 : float
        Half-width of the primary eclipse window (phase), capped at :data:`MAX_WINDOW_HALF`.
    phase2, half2 : float, optional
        Centre and half-width (phase) of the secondary eclipse window; NaN without a secondary.
    duration : float, optional
        Eclipse duration (days): the averaging time of the red-noise factor.

    Returns
    -------
    dict
        ``delta_bic`` (BIC of S minus BIC of E; positive favours the eclipse), ``chi2_eclipse``,
        ``chi2_smooth``, ``n_eclipse``, ``n_smooth`` (parameters), ``scale`` (reduced χ² outside the
        eclipse windows) and ``beta``.

    Notes
    -----
    ``BIC = χ²/(s² β²) + k ln N`` (Schwarz 1978, Ann. Stat. 6, 461) with ``s²`` the reduced
    χ² and β the red-noise factor of the eclipse model's residuals outside the windows (the
    wave and the noise only).  The eclipse
    model counts its window centres and widths as parameters too (two per window).
    """
    t = np.asarray(t, float)
    ph = np.mod((t - t0) / period + 0.5, 1.0) - 0.5
    sw = np.sqrt(w)
    half1 = min(half1, MAX_WINDOW_HALF)
    outside = np.abs(ph) >= half1
    cols_e = _fourier_columns(ph, N_HARM_WAVE) + _window_columns(ph, half1)
    n_windows = 1
    if math.isfinite(phase2) and math.isfinite(half2):
        d2 = np.mod(ph - phase2 + 0.5, 1.0) - 0.5
        half2 = min(half2, MAX_WINDOW_HALF)
        outside &= np.abs(d2) >= half2
        cols_e += _window_columns(d2, half2)
        n_windows = 2
    chi_e, res_e = _weighted_fit(cols_e, y, sw)
    chi_s, _ = _weighted_fit(_fourier_columns(ph, N_HARM_SMOOTH), y, sw)
    k_e = len(cols_e) + 2 * n_windows
    k_s = 1 + 2 * N_HARM_SMOOTH
    n = t.size
    # the noise (scatter and correlation) from the eclipse model's residuals outside the windows: the
    # wave and the noise alone there, so that neither model's misfit of the eclipses inflates it
    n_out = int(outside.sum())
    k_wave = 1 + 2 * N_HARM_WAVE
    if n_out > 2 * k_wave:
        scale = max(1.0, float(np.sum((res_e[outside] * sw[outside]) ** 2)) / (n_out - k_wave))
        beta = red_noise_factor(t[outside], res_e[outside], w[outside], duration)
    else:
        scale, beta = max(1.0, min(chi_e, chi_s) / max(n - k_s, 1)), 1.0
    delta = (chi_s - chi_e) / (scale * beta ** 2) - (k_e - k_s) * math.log(n)
    return dict(delta_bic=float(delta), chi2_eclipse=chi_e, chi2_smooth=chi_s, n_eclipse=k_e, n_smooth=k_s,
                scale=float(scale), beta=float(beta))
