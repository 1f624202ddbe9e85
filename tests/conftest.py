"""Shared pytest fixtures."""

from __future__ import annotations

import numpy as np
import pytest


@pytest.fixture
def detached_arrays() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """An invented detached light curve: (time, flux, flux_err), flux level 1.

    1000 points at 0.01 d cadence, period 2.5 d (250 points), a box-shaped primary
    eclipse (depth 0.3, 13 points) and secondary (depth 0.1, 12 points): 10% of the
    points are in eclipse.
    Gaussian noise of 1e-3, fixed seed.
    """
    rng = np.random.default_rng(20261202)
    time = np.arange(1000) * 0.01
    step = np.arange(time.size) % 250  # position within the cycle, in points
    flux = 1.0 + 1e-3 * rng.standard_normal(time.size)
    flux[step < 13] -= 0.3
    flux[(step >= 125) & (step < 137)] -= 0.1
    return time, flux, np.full(time.size, 1e-3)
