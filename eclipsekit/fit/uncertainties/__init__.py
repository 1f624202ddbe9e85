"""Uncertainty plug-ins of the eclipse fit, by their ``errors=`` name.

Each method is one module implementing :class:`~.base.UncertaintyMethod`; adding one
means a new module and a line in :data:`METHODS` (``errors=`` accepts its keys).
"""

from __future__ import annotations

from .base import UncertaintyContext, UncertaintyEstimate, UncertaintyMethod, UncertaintyOptions
from .covariance import CovarianceMethod, truncated_normal_draws
from .mcmc import McmcMethod
from .permutation import PermutationMethod

__all__ = ["METHODS", "UncertaintyContext", "UncertaintyEstimate", "UncertaintyMethod", "UncertaintyOptions",
           "truncated_normal_draws"]

#: ``errors=`` name -> plug-in
METHODS: dict[str, UncertaintyMethod] = {m.name: m for m in (CovarianceMethod(), McmcMethod(), PermutationMethod())}
