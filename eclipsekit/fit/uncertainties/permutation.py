"""Uncertainties from residual permutation ("prayer bead").

The best-fit model plus the residuals shifted cyclically, refitted for each shift; the
scatter of the refitted parameters includes correlated noise (Bouma et al. 2009, AJ
137, 4691, sect. 4.2; Southworth 2008, MNRAS 386, 1644).
"""

from __future__ import annotations

import time as _time

import numpy as np

from ...errors import FitError, InputError
from .base import UncertaintyContext, UncertaintyEstimate

__all__ = ["PermutationMethod"]


class PermutationMethod:
    """One least-squares refit per cyclic shift of the residuals (the unshifted data first)."""

    name = "permutation"
    point_estimate = "best"
    interval = "std"

    def estimate(self, context: UncertaintyContext) -> UncertaintyEstimate:
        ctx, st = context, context.settings
        n_pts = ctx.residuals_full.size
        nsh = min(n_pts - 1, 100 if st.n_shifts is None else int(st.n_shifts))
        if nsh < 2:
            raise InputError(f"`n_shifts` must be >= 2, got {st.n_shifts}")
        shifts = np.unique(np.round(np.linspace(0, n_pts, nsh + 1)[1:-1]).astype(int))
        shifts = np.concatenate([[0], shifts])
        rows = []
        from ..._progress import progress_bar

        it = progress_bar(shifts, progress=st.progress, desc="residual permutation", unit="fit")
        t_pb = _time.perf_counter()
        for sft in it:
            fake = ctx.model_full + np.roll(ctx.residuals_full, int(sft))
            try:
                v_ = ctx.refit(ctx.problem.select(fake), 50 * (len(ctx.mapping.free) + 1))
            except (ValueError, ArithmeticError, np.linalg.LinAlgError):
                continue
            rows.append([ctx.mapping.internal_value(n, v_[n]) for n in ctx.mapping.free])
        seconds = _time.perf_counter() - t_pb
        x = np.asarray(rows, float)
        if x.shape[0] < 2:
            raise FitError("residual permutation failed: fewer than two shifted fits converged")
        return UncertaintyEstimate(draws=ctx.mapping.fold(x), diagnostics={
            "permutation_seconds": seconds, "permutation": {"n_shifts": int(x.shape[0])}})
