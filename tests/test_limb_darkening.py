"""Tests of eclipsekit.limb_darkening and of the fitted limb-darkening combinations."""

import numpy as np
import pytest

from eclipsekit.limb_darkening import TYPICAL, parameterisation


def _power2_intensity(mu, c, alpha):
    # power-2 law, Hestroffer 1997, A&A 327, 199: I(mu)/I(1) = 1 - c (1 - mu^alpha)
    return 1 - c * (1 - mu ** alpha)


@pytest.mark.parametrize("c, alpha", [(0.6, 0.6), (0.72, 0.45), (0.3, 1.2)])
def test_power2_h1_h2_are_the_intensity_at_half_and_its_drop(c, alpha):
    # Maxted 2018, A&A 616, A39, eq. 1-2: h1 = I(1/2) and h2 = I(1/2) - I(0), from the law itself
    h1, h2 = parameterisation("power-2").to_fit((c, alpha))
    assert h1 == pytest.approx(_power2_intensity(0.5, c, alpha), abs=1e-15)
    assert h2 == pytest.approx(_power2_intensity(0.5, c, alpha) - _power2_intensity(0.0, c, alpha), abs=1e-15)
    assert parameterisation("power-2").from_fit((h1, h2)) == pytest.approx((c, alpha), abs=1e-12)


@pytest.mark.parametrize("u1, u2", [(0.4, 0.25), (0.52, 0.20), (0.1, -0.3)])
def test_quadratic_sum_is_the_limb_drop(u1, u2):
    # quadratic law I(mu)/I(1) = 1 - u1 (1 - mu) - u2 (1 - mu)^2: at the limb (mu = 0) the drop is u1 + u2
    s, d = parameterisation("quadratic").to_fit((u1, u2))
    assert s == pytest.approx(1 - (1 - u1 - u2), abs=1e-15)
    assert d == pytest.approx(u1 - u2, abs=1e-15)
    assert parameterisation("quadratic").from_fit((s, d)) == pytest.approx((u1, u2), abs=1e-15)


def test_quadratic_bounds_keep_intensity_positive():
    # every (sum, diff) inside the box bounds gives I(mu) >= 0 on the whole disc (checked on a fine grid)
    pz = parameterisation("quadratic")
    (s_lo, s_hi), (d_lo, d_hi) = pz.bounds
    mu = np.linspace(0, 1, 2001)
    for s in np.linspace(s_lo, s_hi, 41):
        for d in np.linspace(d_lo, d_hi, 41):
            u1, u2 = pz.from_fit((s, d))
            assert np.min(1 - u1 * (1 - mu) - u2 * (1 - mu) ** 2) >= -1e-12


def test_one_default_for_model_and_fit():
    # regression: with no coefficients the model uses the law's typical ones, the fit's defaults too
    from eclipsekit import eclipse
    from eclipsekit.fit.parameters import LD_LAWS

    t = np.linspace(-0.1, 0.1, 201)
    kw = dict(period=3.0, t0=0.0, radius_sum=0.2, radius_ratio=0.7, inclination=88.0, surface_brightness_ratio=0.8)
    for law in ("quadratic", "power-2", "linear"):
        given = eclipse.model_flux(t, **kw, ld_law=law, ld_primary=TYPICAL[law], ld_secondary=TYPICAL[law])
        assert np.array_equal(eclipse.model_flux(t, **kw, ld_law=law), given)
        assert LD_LAWS[law][0] == TYPICAL[law]
    # the uniform law needs no coefficients at all
    assert np.all(eclipse.model_flux(t, **kw, ld_law="uniform") <= 1.0)
