"""Phase dispersion minimisation (Stellingwerf 1978): a vectorised kernel and its brute-force twin.

Floats and arrays in, arrays out; no I/O, no printing.

The covers are built from ``n_bins * n_covers`` fine bins of width
``1 / (n_bins * n_covers)``: a bin of cover ``c`` is the sum of ``n_covers``
consecutive fine bins starting at fine bin ``j * n_covers + c`` (wrapping around
phase 1).  So one pair of bincounts (counts and sums of flux) per block of trial
periods gives every bin of every cover, and the sum of squares is not counted
per bin at all: summed over all bins of all covers it is ``n_covers * Σ y²`` for
every trial period.
"""

from __future__ import annotations

import numpy as np

__all__ = ["pdm_theta", "pdm_theta_direct"]


def pdm_theta(time, flux, frequencies, *, n_bins: int = 10, n_covers: int = 2,
              block_elements: int = 400_000) -> np.ndarray:
    """Stellingwerf's θ statistic for many trial frequencies at once.

    Parameters
    ----------
    time, flux : ndarray
        Times (days; any origin, phases are ``frac(time * f)``) and fluxes.
    frequencies : ndarray
        Trial frequencies (1/d).
    n_bins : int, optional
        Bins per cover; the bin width is ``1 / n_bins`` in phase.
    n_covers : int, optional
        Number of covers, each shifted by ``1 / (n_bins * n_covers)`` in phase.
    block_elements : int, optional
        About how many (period, point) pairs to process per numpy call.

    Returns
    -------
    theta : ndarray
        θ at each trial frequency (≈1 for no signal, lower is better).

    Notes
    -----
    Stellingwerf (1978), eqs. (1)-(3): with ``M`` non-empty bins (all covers),
    ``n_j`` points and sample variance ``s_j²`` in bin ``j``, the pooled variance
    is ``s² = Σ (n_j - 1) s_j² / (Σ n_j - M)`` and ``θ = s² / σ²`` with ``σ²`` the
    sample variance of all points.  Here ``Σ (n_j - 1) s_j² = n_covers Σ y² -
    Σ S_j² / n_j`` with ``S_j`` the sum of the (mean-subtracted) fluxes in bin ``j``.

    References
    ----------
    .. [1] Stellingwerf, R. F. 1978, ApJ, 224, 953
    """
    t = np.ascontiguousarray(time, dtype=float)
    y = np.asarray(flux, dtype=float)
    y = y - y.mean()  # centring makes n_c Σy² - Σ S²/n well conditioned
    freqs = np.asarray(frequencies, dtype=float)
    n = t.size
    nf = int(n_bins) * int(n_covers)  # fine bins
    syy = float(np.dot(y, y))
    var_total = syy / (n - 1)
    denom_n = n_covers * n
    k = max(1, min(freqs.size, block_elements // max(n, 1)))
    # preallocated work buffers (fresh pages each call are slow, see PERFORMANCE-NOTES)
    x = np.empty((k, n))
    idx = np.empty((k, n), dtype=np.intp)
    ytile = np.tile(y, k)
    offsets = (np.arange(k, dtype=np.intp) * nf)[:, None]
    theta = np.empty(freqs.size)
    for start in range(0, freqs.size, k):
        f = freqs[start:start + k]
        m = f.size
        xv, iv = x[:m], idx[:m]
        np.multiply(f[:, None], t[None, :], out=xv)
        xv -= np.floor(xv)  # phase in [0, 1); faster than % 1.0
        xv *= nf
        iv[...] = xv  # truncation == floor for non-negative values
        np.minimum(iv, nf - 1, out=iv)  # guard rounding up to nf
        iv += offsets[:m]
        flat = iv.reshape(-1)
        cnt = np.bincount(flat, minlength=m * nf).reshape(m, nf)
        s = np.bincount(flat, weights=ytile[:m * n], minlength=m * nf).reshape(m, nf)
        cw, sw = cnt.astype(float), s.copy()
        for c in range(1, n_covers):  # windows of n_covers consecutive fine bins
            cw += np.roll(cnt, -c, axis=1)
            sw += np.roll(s, -c, axis=1)
        nonempty = cw > 0
        ss = np.divide(sw * sw, cw, out=np.zeros_like(sw), where=nonempty).sum(axis=1)
        mbins = nonempty.sum(axis=1)
        pooled = (n_covers * syy - ss) / (denom_n - mbins)
        theta[start:start + m] = pooled / var_total
    return theta


def pdm_theta_direct(time, flux, period: float, *, n_bins: int = 10, n_covers: int = 2) -> float:
    """Brute-force θ for one trial period: loop over covers and bins (test twin of :func:`pdm_theta`).

    Uses the same bin convention: cover ``c`` has bins starting at phases
    ``(j + c / n_covers) / n_bins``.

    References
    ----------
    .. [1] Stellingwerf, R. F. 1978, ApJ, 224, 953, eqs. (1)-(3)
    """
    t = np.asarray(time, float)
    y = np.asarray(flux, float)
    phase = np.mod(t * (1.0 / period), 1.0)
    nf = n_bins * n_covers
    fine = np.minimum(np.floor(phase * nf).astype(int), nf - 1)
    num = 0.0
    npts = 0
    nb_used = 0
    for c in range(n_covers):
        # bin j of cover c holds fine bins j*nc + c ... j*nc + c + nc - 1 (mod nf)
        jbin = ((fine - c) % nf) // n_covers
        for j in range(n_bins):
            sel = y[jbin == j]
            if sel.size == 0:
                continue
            num += np.sum((sel - sel.mean()) ** 2)
            npts += sel.size
            nb_used += 1
    s2 = num / (npts - nb_used)
    return float(s2 / np.var(y, ddof=1))
