"""Vectorised occultation kernels (private).

Floats and arrays in, arrays out: no validation, no I/O.  The public layer is
:mod:`eclipsekit.eclipse`.

Geometry: the back star has radius 1 and is centred at the origin; the front star
(the occultor) has radius ``p`` and its centre is at distance ``z``.  The intensity
of the back star is written as a sum of powers of mu = sqrt(1 - r^2),

    I(mu) / I(1) = sum_j a_j mu**beta_j ,

which covers the uniform, linear, quadratic and power-2 laws exactly.  The
beta = 0 term is the circle-circle lens area (closed form); the other terms are
integrated over annuli,

    H_beta(z, p) = int_0^1 mu**beta 2 r kappa(r) dr ,
    kappa(r) = arccos((r^2 + z^2 - p^2) / (2 r z))    (half the occulted arc),

with kappa = pi where the annulus lies entirely under the occultor (done in closed
form) and 0 where it is uncovered.  The integrand has square-root kinks at
r = |z - p|, r = z + p and at the limb; the partial-arc range is integrated by
Gauss-Legendre quadrature in u with r = lo + (hi - lo) (1 - cos^4(pi u / 2)), which turns
both square-root ends into smooth behaviour, so the rule converges spectrally.

For many points in one model evaluation (p and the law fixed) the hidden fraction
is a function of z alone with kinks only at z = |1 - p| and z = 1 + p.  It is
tabulated at Chebyshev nodes in a variable that smooths those kinks and
interpolated with Clenshaw's recurrence (:class:`HiddenFractionTable`).

The model's fast path (:func:`piece_table`, :func:`piece_table_eval`) does the same for
many (p, law) at once, one row each, restricted to the separations an eclipse reaches, with
the variables u = sqrt(z - |1 - p|) - sqrt(1 + p - z) (partial phases: both contacts in one
series) and s = sqrt((|1 - p| - z) / |1 - p|) (occultor wholly on the disc), and the
degree raised per row until converged.

References
----------
.. [1] Mandel, K. & Agol, E. 2002, ApJ, 580, L171 (occultation geometry, small-planet limit)
.. [2] Trefethen, L. N. 2013, Approximation Theory and Approximation Practice, SIAM
       (Chebyshev interpolation, Clenshaw's recurrence)
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from functools import lru_cache
from typing import NamedTuple

import numpy as np

__all__ = ["intensity_terms", "disc_flux", "lens_area", "hidden_fraction_quadrature", "HiddenFractionTable",
           "hidden_fraction_table", "hidden_fraction", "lens_area_rows", "hidden_fraction_rows", "PieceTable",
           "piece_table", "piece_table_eval"]

_HALF_PI = 0.5 * np.pi


@lru_cache(maxsize=16)
def _gauss_legendre_mapped(n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """n-point Gauss-Legendre rule for int_0^1 g(s) ds in the variable u, s = 1 - cos^4(pi u / 2).

    Returns the nodes s, 1 - s (exact) and the weights times ds/du.  The map has quadratic
    contact at s = 0 (a square-root end becomes smooth) and quartic contact at s = 1, so a
    square-root end there is smooth too and the limb factor mu^alpha of the power-2 law
    (mu ~ sqrt(1 - s) near the limb) becomes (1 - u)^(2 alpha): integrable to high order.
    """
    x, w = np.polynomial.legendre.leggauss(n)
    u = 0.5 * (x + 1.0)
    c = np.cos(_HALF_PI * u)
    one_minus_s = c ** 4
    s = 1.0 - one_minus_s
    ds = 0.5 * w * 4.0 * c ** 3 * np.sin(_HALF_PI * u) * _HALF_PI
    return s, one_minus_s, ds


def intensity_terms(ld_law: str, coeffs: tuple[float, ...]) -> tuple[np.ndarray, np.ndarray]:
    """Write a limb-darkening law as I(mu)/I(1) = sum_j a_j mu**beta_j.

    Returns
    -------
    a, beta : ndarray
        Coefficients and powers; beta[0] == 0 always (the part done in closed form).
    """
    if ld_law == "uniform":
        return np.array([1.0]), np.array([0.0])
    if ld_law == "linear":
        (u1,) = coeffs
        return np.array([1.0 - u1, u1]), np.array([0.0, 1.0])
    if ld_law == "quadratic":
        u1, u2 = coeffs
        # 1 - u1 (1 - mu) - u2 (1 - mu)^2 expanded in powers of mu
        return np.array([1.0 - u1 - u2, u1 + 2.0 * u2, -u2]), np.array([0.0, 1.0, 2.0])
    if ld_law == "power-2":
        c, alpha = coeffs
        return np.array([1.0 - c, c]), np.array([0.0, float(alpha)])
    raise ValueError(f"unknown limb-darkening law {ld_law!r}")


def disc_flux(a: np.ndarray, beta: np.ndarray) -> float:
    """Total flux of the unit disc, int_0^1 I 2 pi r dr = sum_j a_j 2 pi / (beta_j + 2)."""
    return float(np.sum(a * 2.0 * np.pi / (beta + 2.0)))


def lens_area(z: np.ndarray, p: float) -> np.ndarray:
    """Area of the intersection of the unit circle and a circle of radius p at distance z.

    Standard circle-circle intersection: for |1 - p| < z < 1 + p
    A = p^2 k0 + k1 - sqrt(4 z^2 - (1 + z^2 - p^2)^2) / 2 with
    k0 = arccos((p^2 + z^2 - 1) / (2 p z)), k1 = arccos((1 - p^2 + z^2) / (2 z)).
    """
    z = np.asarray(z, dtype=float)
    area = np.zeros_like(z)
    inside = z <= abs(1.0 - p)                   # one disc wholly inside the other
    area[inside] = np.pi * min(p, 1.0) ** 2
    part = (~inside) & (z < 1.0 + p)
    if np.any(part):
        zp = z[part]
        dp = p - 1.0        # exact for p near 1, so z -/+ dp has no cancellation at internal contact
        zm = zp - dp        # = 1 - p + z
        zq = zp + dp        # = p - 1 + z
        outer = (1.0 + p) - zp
        # arccos(x) = 2 atan(sqrt((1 - x) / (1 + x))) with 1 -/+ x factorised (no cancellation at contact)
        k0 = 2.0 * np.arctan2(np.sqrt(np.maximum(zm * outer, 0.0)), np.sqrt(np.maximum(zq * (p + zp + 1.0), 0.0)))
        k1 = 2.0 * np.arctan2(np.sqrt(np.maximum(zq * outer, 0.0)), np.sqrt(np.maximum(zm * (1.0 + zp + p), 0.0)))
        q = (zp + 1.0 + p) * zm * zq * outer        # = 4 z^2 - (1 + z^2 - p^2)^2
        area[part] = p * p * k0 + k1 - 0.5 * np.sqrt(np.maximum(q, 0.0))
    return area


def hidden_fraction_quadrature(z: np.ndarray, p: float, a: np.ndarray, beta: np.ndarray,
                               n_nodes: int = 64) -> np.ndarray:
    """Fraction of the back star's flux hidden, by kink-aware quadrature (see module notes).

    Parameters
    ----------
    z : ndarray
        Centre separations in units of the back star's radius (>= 0).
    p : float
        Occultor radius in units of the back star's radius (> 0).
    a, beta : ndarray
        Intensity law from :func:`intensity_terms`.
    n_nodes : int
        Gauss-Legendre nodes on the partial-arc range.
    """
    z = np.atleast_1d(np.asarray(z, dtype=float))
    out = a[0] * lens_area(z, p)
    if len(a) > 1:
        # full-cover range r in [0, R], R = clip(p - z, 0, 1): closed form of int mu^b 2 pi r dr
        big_r = np.clip(p - z, 0.0, 1.0)
        mu_r2 = 1.0 - big_r * big_r
        lo = np.abs(z - p)
        hi = np.minimum(z + p, 1.0)
        part = (lo < hi) & (z > 0.0)
        s, one_minus_s, ds = _gauss_legendre_mapped(n_nodes)
        if np.any(part):
            zp = z[part][:, None]
            dz = zp - p
            lop = np.abs(dz)
            hip = hi[part][:, None]
            width = hip - lop
            r = lop + width * s
            # kappa = arccos(x), x = (r^2 + z^2 - p^2) / (2 r z), as 2 atan(sqrt((1 - x) / (1 + x)))
            # with 1 -/+ x factorised and each factor formed from exact differences: no cancellation
            # at the square-root ends r = |z - p| and r = z + p (large p and p near 1 especially)
            one_minus = ((zp + p - hip) + width * one_minus_s) * ((lop - dz) + width * s)
            one_plus = ((lop + dz) + width * s) * (r + zp + p)
            kappa = 2.0 * np.arctan2(np.sqrt(np.maximum(one_minus, 0.0)), np.sqrt(np.maximum(one_plus, 0.0)))
            mu = np.sqrt(np.maximum(1.0 - r * r, 0.0))
            base = 2.0 * r * kappa * ds * width
        for aj, bj in zip(a[1:], beta[1:]):
            term = 2.0 * np.pi * (1.0 - mu_r2 ** (0.5 * bj + 1.0)) / (bj + 2.0)
            if np.any(part):
                if bj == 1.0:
                    weight = mu
                elif bj == 2.0:
                    weight = mu * mu
                else:
                    weight = mu ** bj
                term[part] += np.sum(base * weight, axis=1)
            out += aj * term
    out /= disc_flux(a, beta)
    return out


@lru_cache(maxsize=16)
def _cheb_nodes(n: int) -> np.ndarray:
    """Chebyshev points of the first kind on [-1, 1] (interior: no endpoint evaluations)."""
    return np.cos(np.pi * (np.arange(n) + 0.5) / n)


@lru_cache(maxsize=16)
def _cheb_matrix(n: int) -> np.ndarray:
    """DCT-II matrix taking values at :func:`_cheb_nodes` to Chebyshev coefficients."""
    k = np.arange(n)
    mat = (2.0 / n) * np.cos(np.outer(k, np.pi * (k + 0.5) / n))
    mat[0] *= 0.5
    return mat


def _cheb_coefficients(values: np.ndarray) -> np.ndarray:
    """Chebyshev coefficients of the interpolant through values at :func:`_cheb_nodes`."""
    return _cheb_matrix(len(values)) @ values


def _clenshaw(x: np.ndarray, c: np.ndarray) -> np.ndarray:
    """Sum_k c_k T_k(x) by Clenshaw's recurrence, in place on few buffers."""
    x2 = 2.0 * x
    b1 = np.zeros_like(x)
    b2 = np.zeros_like(x)
    tmp = np.empty_like(x)
    for ck in c[:0:-1]:
        # b_k = 2x b_{k+1} - b_{k+2} + c_k
        np.multiply(x2, b1, out=tmp)
        tmp -= b2
        tmp += ck
        b2, b1, tmp = b1, tmp, b2
    np.multiply(x, b1, out=tmp)
    tmp -= b2
    tmp += c[0]
    return tmp


class HiddenFractionTable:
    """Hidden fraction as a function of z for fixed p and law, by piecewise Chebyshev interpolation.

    Pieces (kinks only at z = |1 - p| and z = 1 + p):

    * p < 1, z in [0, 1 - p] (occultor wholly on the disc): z = (1 - p) sin(pi t / 2);
      smooth and even at z = 0, square-root end at 1 - p becomes smooth in t.
    * z in [|1 - p|, 1 + p] (partial): z = lo + (hi - lo) sin^2(pi t / 2), smoothing
      both contact ends.
    * p >= 1, z <= p - 1: total eclipse, fraction 1.  z >= 1 + p: 0.

    The degree is doubled from 32 (inner piece) or 64 (partial piece) until the last
    quarter of the coefficients is below ``tol``; the measured interpolation error against
    :func:`hidden_fraction_quadrature` is then below 1e-9 for 0.01 <= p <= 50 and the four
    laws (see the tests).
    """

    def __init__(self, p: float, a: np.ndarray, beta: np.ndarray, tol: float = 2e-11,
                 max_degree: int = 256, n_nodes: int = 32):
        self.p = float(p)
        self.a1 = abs(1.0 - self.p)
        self.b = 1.0 + self.p
        self.inner = None
        if self.p < 1.0 and self.a1 > 0.0:
            self.inner = self._fit(lambda t: self.a1 * np.sin(_HALF_PI * t), a, beta, tol, max_degree, n_nodes, 32)
        self.outer = self._fit(lambda t: self.a1 + (self.b - self.a1) * np.sin(_HALF_PI * t) ** 2,
                               a, beta, tol, max_degree, n_nodes, 64)

    def _fit(self, z_of_t, a, beta, tol, max_degree, n_nodes, degree) -> np.ndarray:
        """Chebyshev coefficients, doubling the degree until the tail falls below ``tol``, then chopped."""
        while True:
            t = 0.5 * (_cheb_nodes(degree) + 1.0)
            c = _cheb_coefficients(hidden_fraction_quadrature(z_of_t(t), self.p, a, beta, n_nodes))
            # the coefficients of an interpolant decay like its error: the last quarter bounds the rest
            if np.max(np.abs(c[-degree // 4:])) < tol or degree >= max_degree:
                break
            degree *= 2
        keep = np.nonzero(np.abs(c) >= 0.1 * tol)[0]
        return c[: keep[-1] + 1] if keep.size else c[:1]

    def __call__(self, z: np.ndarray) -> np.ndarray:
        z = np.asarray(z, dtype=float)
        out = np.zeros_like(z)
        sel_in = z <= self.a1
        sel_part = (~sel_in) & (z < self.b)
        if np.any(sel_in):
            if self.p >= 1.0:
                out[sel_in] = 1.0
            elif self.inner is not None:
                zi = z[sel_in]
                x = (4.0 / np.pi) * np.arcsin(np.minimum(zi / self.a1, 1.0)) - 1.0
                out[sel_in] = _clenshaw(x, self.inner)
        if np.any(sel_part):
            zp = z[sel_part]
            s = np.sqrt(np.clip((zp - self.a1) / (self.b - self.a1), 0.0, 1.0))
            x = (4.0 / np.pi) * np.arcsin(s) - 1.0
            out[sel_part] = _clenshaw(x, self.outer)
        return out


_TABLES: OrderedDict = OrderedDict()
_TABLES_MAX = 8
_TABLES_LOCK = threading.Lock()


def hidden_fraction_table(p: float, ld_law: str, coeffs: tuple[float, ...]) -> HiddenFractionTable:
    """Cached :class:`HiddenFractionTable` (repeated evaluations with the same p and law re-use it)."""
    key = (float(p), ld_law, tuple(float(c) for c in coeffs))
    with _TABLES_LOCK:
        table = _TABLES.get(key)
        if table is not None:
            _TABLES.move_to_end(key)
            return table
    a, beta = intensity_terms(ld_law, coeffs)
    table = HiddenFractionTable(p, a, beta)
    with _TABLES_LOCK:
        _TABLES[key] = table
        while len(_TABLES) > _TABLES_MAX:
            _TABLES.popitem(last=False)
    return table


def hidden_fraction(z: np.ndarray, p: float, ld_law: str, coeffs: tuple[float, ...],
                    table_threshold: int = 160) -> np.ndarray:
    """Hidden fraction for many z: direct quadrature for few points, the Chebyshev table for many."""
    z = np.asarray(z, dtype=float)
    if ld_law == "uniform":
        return lens_area(z, p) / np.pi
    if z.size < table_threshold:
        a, beta = intensity_terms(ld_law, coeffs)
        return hidden_fraction_quadrature(z, p, a, beta)
    return hidden_fraction_table(p, ld_law, coeffs)(z)


# ----------------------------------------------------------------------------------------------
# many occultations at once (one p and law per row): the model's fast path
# ----------------------------------------------------------------------------------------------
def lens_area_rows(z: np.ndarray, p: np.ndarray) -> np.ndarray:
    """:func:`lens_area` with ``p`` broadcasting against ``z`` (same formulas, no masks)."""
    dp = p - 1.0
    zm = z - dp
    zq = z + dp
    outer = (1.0 + p) - z
    k0 = 2.0 * np.arctan2(np.sqrt(np.maximum(zm * outer, 0.0)), np.sqrt(np.maximum(zq * (p + z + 1.0), 0.0)))
    k1 = 2.0 * np.arctan2(np.sqrt(np.maximum(zq * outer, 0.0)), np.sqrt(np.maximum(zm * (1.0 + z + p), 0.0)))
    q = (z + 1.0 + p) * zm * zq * outer
    area = p * p * k0 + k1 - 0.5 * np.sqrt(np.maximum(q, 0.0))
    area = np.where(z <= np.abs(dp), np.pi * np.minimum(p, 1.0) ** 2, area)
    return np.where(z < 1.0 + p, area, 0.0)


def hidden_fraction_rows(z: np.ndarray, p: np.ndarray, a: np.ndarray, beta: np.ndarray,
                         n_nodes: int = 32) -> np.ndarray:
    """:func:`hidden_fraction_quadrature` for R occultations at once, one ``p`` and law per row.

    Parameters
    ----------
    z : ndarray, shape (R, n)
        Centre separations (> 0) in units of each row's back-star radius.
    p : ndarray, shape (R, 1)
        Occultor radius over back-star radius, per row.
    a, beta : ndarray, shape (R, J)
        Intensity laws (:func:`intensity_terms`) per row; the powers of a column must be all
        1, all 2 (fast paths) or anything positive.
    """
    out = a[:, :1] * lens_area_rows(z, p)
    norm = a[:, 0] * np.pi
    big_r = np.clip(p - z, 0.0, 1.0)
    mu_r2 = 1.0 - big_r * big_r
    s, one_minus_s, ds = _gauss_legendre_mapped(n_nodes)
    s, one_minus_s, ds = s[:, None], one_minus_s[:, None], ds[:, None]
    # the partial-arc range [|z - p|, min(z + p, 1)] as in hidden_fraction_quadrature (empty -> width 0);
    # nodes on the first axis, all separations on the second: long inner loops for NumPy
    zp = z.ravel()
    pp = np.broadcast_to(p, z.shape).ravel()
    dz = zp - pp
    lop = np.abs(dz)
    hip = np.minimum(zp + pp, 1.0)
    width = np.maximum(hip - lop, 0.0)
    ws = width * s
    r = lop + ws
    one_minus = ((zp + pp - hip) + width * one_minus_s) * ((lop - dz) + ws)
    one_plus = ((lop + dz) + ws) * (r + (zp + pp))
    np.maximum(one_minus, 0.0, out=one_minus)
    np.maximum(one_plus, 0.0, out=one_plus)
    kappa = np.arctan2(np.sqrt(one_minus, out=one_minus), np.sqrt(one_plus, out=one_plus), out=one_minus)
    mu2 = r * r
    np.subtract(1.0, mu2, out=mu2)
    np.maximum(mu2, 0.0, out=mu2)
    base = r * kappa
    base *= 4.0 * ds
    base *= width
    for j in range(1, a.shape[1]):
        aj = a[:, j:j + 1]
        bj = beta[:, j:j + 1]
        if np.all(bj == 1.0):
            weight = np.sqrt(mu2)
        elif np.all(bj == 2.0):
            weight = mu2
        else:
            weight = mu2 ** np.broadcast_to(0.5 * bj, z.shape).ravel()
        term = 2.0 * np.pi * (1.0 - mu_r2 ** (0.5 * bj + 1.0)) / (bj + 2.0)
        out += aj * (term + np.einsum("ij,ij->j", base, weight).reshape(z.shape))
        norm = norm + a[:, j] * 2.0 * np.pi / (beta[:, j] + 2.0)
    return out / norm[:, None]


class PieceTable(NamedTuple):
    """Hidden fraction of M occultations as Chebyshev series in variables that smooth the contacts.

    Two pieces per row (a1 = |1 - p|, b = 1 + p, W = b - a1):

    0. z < a1, only where p < 1 and the separations reach below a1 (occultor wholly on the
       disc): series in s = sqrt((a1 - z) / a1), on [0, s(z_min)];
    1. a1 <= z < b (partial): series in u = sqrt(z - a1) - sqrt(b - z), on [u(max(a1, z_min)), sqrt(W)];
       z(u) = a1 + A^2 with A = (u + sqrt(2 W - u^2)) / 2 is analytic on that range.

    The hidden fraction behaves like (distance to a contact)^(3/2) at z = a1 and z = b, i.e.
    like s^3 or (u - u_contact)^3 here: the series converge geometrically.  For p >= 1,
    z <= a1 is the total eclipse, fraction 1.
    """

    p: np.ndarray           # (M, 1)
    a1: np.ndarray          # (M, 1)
    b: np.ndarray           # (M, 1)
    lo: np.ndarray          # (M, 2): each piece's interval [lo, hi] in its variable
    hi: np.ndarray
    coef: np.ndarray        # (K, M, 2) Chebyshev coefficients, zero-padded to the longest series
    has_inner: bool         # any row with piece 0


_PIECE_DEGREES = (32, 48, 64, 96, 128)


def _z_of_piece_variable(piece: int, v: np.ndarray, a1: np.ndarray, b: np.ndarray) -> np.ndarray:
    if piece == 0:
        return a1 * (1.0 - v * v)
    half = 0.5 * (v + np.sqrt(np.maximum(2.0 * (b - a1) - v * v, 0.0)))
    return np.minimum(a1 + half * half, b)


def piece_table(p: np.ndarray, a: np.ndarray, beta: np.ndarray, z_min: np.ndarray, tol: float = 2e-11,
                n_nodes: int = 32) -> PieceTable:
    """Build the :class:`PieceTable` of M occultations (p, z_min of shape (M,); a, beta of shape (M, J)).

    ``z_min`` is the least separation that will be asked for (mid-eclipse).  Each piece is
    interpolated at Chebyshev points of the first kind (values from :func:`hidden_fraction_rows`);
    its degree is raised through 32, 48, 64, 96, 128 until the last quarter of its
    coefficients is below ``tol`` (they decay like the interpolation error [2]_).  A row's
    series depend on that row alone, so a row gives the same numbers whatever the other rows are.
    """
    n_sets = p.shape[0]
    a1 = np.abs(1.0 - p)
    b = 1.0 + p
    zlo = np.maximum(a1, z_min)
    inner = (p < 1.0) & (z_min < a1)
    lo = np.zeros((n_sets, 2))
    hi = np.zeros((n_sets, 2))
    hi[:, 0] = np.where(inner, np.sqrt(np.maximum(a1 - z_min, 0.0) / np.where(a1 > 0.0, a1, 1.0)), 0.0)
    lo[:, 1] = np.sqrt(zlo - a1) - np.sqrt(b - zlo)
    hi[:, 1] = np.sqrt(b - a1)
    coef = np.zeros((_PIECE_DEGREES[-1], n_sets, 2))
    coef[0, :, 0] = np.where(p >= 1.0, 1.0, 0.0)              # total eclipse: the constant 1
    has_inner = bool(np.any(inner))
    # (rows, piece) still to do; a piece's rows all take the same degree steps
    todo = [(np.arange(n_sets), 1)] + ([(np.nonzero(inner)[0], 0)] if has_inner else [])
    k_max = 1
    for degree in _PIECE_DEGREES:
        if not todo:
            break
        x = 0.5 * (_cheb_nodes(degree) + 1.0)
        last = degree == _PIECE_DEGREES[-1]
        remaining = []
        for rows, j in todo:
            v = lo[rows, j, None] + (hi[rows, j] - lo[rows, j])[:, None] * x
            z = _z_of_piece_variable(j, v, a1[rows, None], b[rows, None])
            c = hidden_fraction_rows(z, p[rows, None], a[rows], beta[rows], n_nodes) @ _cheb_matrix(degree).T
            done = (np.max(np.abs(c[:, -degree // 4:]), axis=1) < tol) | last
            if np.all(done):
                c = _chop(c, 0.1 * tol)
                coef[:c.shape[1], rows, j] = c.T
            else:
                c = _chop(c[done], 0.1 * tol)
                coef[:c.shape[1], rows[done], j] = c.T
                remaining.append((rows[~done], j))
            k_max = max(k_max, c.shape[1])
        todo = remaining
    return PieceTable(p[:, None], a1[:, None], b[:, None], lo, hi, coef[:k_max], has_inner)


def _chop(c: np.ndarray, threshold: float) -> np.ndarray:
    """Rows of Chebyshev coefficients with each row's trailing terms below ``threshold`` set to 0,
    and the columns that are then 0 in every row dropped (fewer Clenshaw steps; row by row, so a
    row's series does not depend on the other rows)."""
    big = np.abs(c) >= threshold
    last = np.where(big.any(axis=1), c.shape[1] - 1 - np.argmax(big[:, ::-1], axis=1), 0)
    c = np.where(np.arange(c.shape[1]) <= last[:, None], c, 0.0)
    return c[:, :int(last.max(initial=0)) + 1]


def piece_table_eval(table: PieceTable, z: np.ndarray) -> np.ndarray:
    """Hidden fraction at separations ``z`` of shape (M, n), row i from occultation i; 0 for z >= b."""
    t = table
    a1, b = t.a1, t.b
    # the partial piece's variable for every point (clipped: points beyond a contact are overwritten)
    u = np.sqrt(np.maximum(z - a1, 0.0))
    u -= np.sqrt(np.maximum(b - z, 0.0))
    lo1, hi1 = t.lo[:, 1:], t.hi[:, 1:]
    u -= 0.5 * (lo1 + hi1)
    u *= 2.0 / np.where(hi1 > lo1, hi1 - lo1, 1.0)
    coef = t.coef
    if t.has_inner:
        in0 = z < a1
        lo0, hi0 = t.lo[:, :1], t.hi[:, :1]
        s = np.sqrt(np.maximum(a1 - z, 0.0) / np.where(a1 > 0.0, a1, 1.0))
        s = (2.0 * s - (lo0 + hi0)) / np.where(hi0 > lo0, hi0 - lo0, 1.0)
        u = np.where(in0, s, u)
    x = np.clip(u, -1.0, 1.0, out=u)
    # Clenshaw's recurrence, each point with its row's (and piece's) coefficients
    x2 = 2.0 * x
    b1 = np.zeros_like(x)
    b2 = np.zeros_like(x)
    tmp = np.empty_like(x)
    for k in range(coef.shape[0] - 1, -1, -1):
        if k == 0:
            x2 = x
        np.multiply(x2, b1, out=tmp)
        tmp -= b2
        tmp += np.where(in0, coef[k, :, :1], coef[k, :, 1:]) if t.has_inner else coef[k, :, 1:]
        b2, b1, tmp = b1, tmp, b2
    out = b1
    if t.has_inner or np.any(t.p >= 1.0):
        out = np.where((z <= a1) & (t.p >= 1.0), 1.0, out)      # total eclipse
    out *= z < b
    return out
