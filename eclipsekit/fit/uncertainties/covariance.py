"""Uncertainties from the least-squares covariance matrix (Laplace approximation).

The covariance of the fitted vector is (J^T J)^-1 scaled by the reduced chi-square
(J from central differences, see :mod:`eclipsekit.fit.driver`); samples are draws from
that normal distribution truncated to the bounds, and the reported standard deviations
of the fitted parameters come from the matrix itself.
"""

from __future__ import annotations

from typing import Callable

import numpy as np

from .base import UncertaintyContext, UncertaintyEstimate

__all__ = ["CovarianceMethod", "truncated_normal_draws"]


def truncated_normal_draws(rng: np.random.Generator, mean: np.ndarray, cov: np.ndarray, n: int,
                           lo: np.ndarray, hi: np.ndarray,
                           fold: Callable[[np.ndarray], np.ndarray]) -> np.ndarray:
    """``n`` draws from N(mean, cov) truncated to the bounds [lo, hi] by redrawing (then clipped).

    ``fold`` maps each draw to its equivalent geometry (e.g. i > 90 deg seen from the other side).
    """
    x = fold(rng.multivariate_normal(mean, cov, size=int(n), method="eigh"))
    for _ in range(20):
        out = np.any((x < lo) | (x > hi), axis=1)
        if not out.any():
            break
        x[out] = fold(rng.multivariate_normal(mean, cov, size=int(out.sum()), method="eigh"))
    return np.clip(x, lo, hi)


class CovarianceMethod:
    """Draws from the covariance matrix; standard deviations from its diagonal."""

    name = "covariance"
    point_estimate = "best"
    interval = "std"

    def estimate(self, context: UncertaintyContext) -> UncertaintyEstimate:
        ctx, pm = context, context.mapping
        n = ctx.settings.n_samples
        if ctx.covariance is None:  # nothing to draw from: every sample is the best fit
            return UncertaintyEstimate(draws=np.repeat(ctx.x_best[None, :], n, axis=0))
        x = truncated_normal_draws(ctx.rng, ctx.x_best, ctx.covariance, n, pm.lower, pm.upper, pm.fold)
        # exact from the matrix (the samples are truncated at the bounds)
        sigma = dict(zip(pm.free, np.sqrt(np.diag(ctx.covariance))))
        return UncertaintyEstimate(draws=x, sigma=sigma)
