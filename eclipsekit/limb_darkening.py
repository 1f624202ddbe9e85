"""Limb-darkening laws: typical coefficients, and the parameters the fit varies.

The coefficients the user sees are those of the law itself (``ld{i}_1``, ``ld{i}_2`` for
star *i*): :math:`u_1, u_2` of the quadratic law, :math:`c, \\alpha` of the power-2 law.
The eclipse fit varies other combinations of them, chosen because a light curve
constrains them nearly independently (their errors are far less correlated):

* quadratic law, :math:`I(\\mu)/I(1) = 1 - u_1(1-\\mu) - u_2(1-\\mu)^2`: the sum
  :math:`u_1 + u_2` (the limb-to-centre intensity drop, :math:`1 - I(0)/I(1)`) and the
  difference :math:`u_1 - u_2`;
* power-2 law, :math:`I(\\mu)/I(1) = 1 - c(1-\\mu^\\alpha)` (Hestroffer 1997, A&A 327,
  199): :math:`h_1 = 1 - c(1 - 2^{-\\alpha})` and :math:`h_2 = c\\,2^{-\\alpha}`, the
  intensity at :math:`\\mu = 1/2` and its drop to the limb (Maxted 2018, A&A 616, A39,
  eq. 1-2; inverse :math:`c = 1 - h_1 + h_2`, :math:`\\alpha = \\log_2(c/h_2)`);
* linear law: the coefficient itself.

Each fitted combination carries a weak Gaussian prior around the value it takes at the
law's typical coefficients (:data:`TYPICAL`), wide enough (:data:`PRIOR_SIGMA`) that
well-sampled eclipses override it, narrow enough to keep a combination the data cannot
see at a sensible value while its uncertainty still propagates into the geometry.

The typical coefficients are one set for every law, used by the model's defaults and
by the fit: a main-sequence star of 6000-7000 K seen in a broad optical band has
quadratic coefficients near (0.4, 0.25) and power-2 near (0.6, 0.6) (common practice,
from memory; they are starting points and prior centres, not measurements).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

__all__ = ["LAWS", "TYPICAL", "PRIOR_SIGMA", "LawParameterisation", "parameterisation", "n_coefficients"]

#: law -> typical coefficients (the one default used by the model and the fit)
TYPICAL: dict[str, tuple[float, ...]] = {
    "uniform": (),
    "linear": (0.6,),
    "quadratic": (0.4, 0.25),
    "power-2": (0.6, 0.6),
}

LAWS = tuple(TYPICAL)

#: law -> bounds of each coefficient of the law itself (physically meaningful intensity profiles)
COEFFICIENT_BOUNDS: dict[str, tuple[tuple[float, float], ...]] = {
    "uniform": (),
    "linear": ((0.0, 1.0),),
    "quadratic": ((0.0, 1.0), (-0.5, 1.0)),
    "power-2": ((0.0, 1.0), (0.01, 3.0)),
}


def n_coefficients(law: str) -> int:
    """Number of coefficients of a limb-darkening law."""
    return len(TYPICAL[law])


@dataclass(frozen=True)
class LawParameterisation:
    """The fitted combinations of one law's coefficients.

    Attributes
    ----------
    names : tuple of str
        Suffixes of the fitted combinations (parameter ``ld{i}_{suffix}`` for star *i*).
    bounds : tuple of (float, float)
        Box bounds of each combination.  For the quadratic law ``sum`` in [0, 1] and
        ``diff`` in [-1, 1] keep the intensity positive over the whole disc
        (:math:`I(0) = 1 - u_1 - u_2 \\ge 0`, and :math:`u_2 \\ge -1/2` so that no
        interior minimum dips below zero).
    prior_sigma : tuple of float
        Width of the weak Gaussian prior on each combination.
    to_fit, from_fit : callable
        Law coefficients -> combinations, and back.
    """

    names: tuple[str, ...]
    bounds: tuple[tuple[float, float], ...]
    prior_sigma: tuple[float, ...]
    to_fit: Callable[[tuple[float, ...]], tuple[float, ...]]
    from_fit: Callable[[tuple[float, ...]], tuple[float, ...]]


def _quad_to(c: tuple[float, ...]) -> tuple[float, ...]:
    u1, u2 = c
    return (u1 + u2, u1 - u2)


def _quad_from(p: tuple[float, ...]) -> tuple[float, ...]:
    s, d = p
    return (0.5 * (s + d), 0.5 * (s - d))


def _power2_to(c: tuple[float, ...]) -> tuple[float, ...]:
    # Maxted 2018, A&A 616, A39, eq. 1-2
    cc, alpha = c
    return (1.0 - cc * (1.0 - 2.0 ** -alpha), cc * 2.0 ** -alpha)


def _power2_from(p: tuple[float, ...]) -> tuple[float, ...]:
    h1, h2 = p
    cc = 1.0 - h1 + h2
    if not (h2 > 0 and cc > h2):  # alpha = log2(c / h2) must be real and positive
        return (cc, float("nan"))
    return (cc, math.log2(cc / h2))


def _identity(c: tuple[float, ...]) -> tuple[float, ...]:
    return tuple(c)


#: law -> its fitted combinations; prior widths are about twice the typical difference
#: between tabulated and measured coefficients (Maxted 2018 found h1 within ~0.01-0.02 and
#: h2 within ~0.05-0.1 of the tables; from memory), so they are weak
_PARAMETERISATIONS: dict[str, LawParameterisation] = {
    "uniform": LawParameterisation((), (), (), _identity, _identity),
    "linear": LawParameterisation(("1",), ((0.0, 1.0),), (0.2,), _identity, _identity),
    "quadratic": LawParameterisation(("sum", "diff"), ((0.0, 1.0), (-1.0, 1.0)), (0.2, 0.3), _quad_to, _quad_from),
    "power-2": LawParameterisation(("h1", "h2"), ((0.01, 0.999), (0.001, 0.999)), (0.1, 0.2), _power2_to,
                                   _power2_from),
}

PRIOR_SIGMA = {law: p.prior_sigma for law, p in _PARAMETERISATIONS.items()}


def parameterisation(law: str) -> LawParameterisation:
    """The fitted combinations of a law's coefficients (see the module docstring)."""
    try:
        return _PARAMETERISATIONS[law]
    except KeyError:
        raise ValueError(f"unknown limb-darkening law {law!r}; known: {', '.join(LAWS)}") from None
