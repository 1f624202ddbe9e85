"""Tests of the fitted parameter vector (eclipsekit.fit.parameters.ParameterMap).

Consistency tests of the package with itself (round trips between the fitted vector and
physical values), not checks against an outside reference: the map is the one place the
uncertainty methods and the fits go through, so both directions must agree.
"""

import numpy as np
import pytest

from eclipsekit.fit.parameters import ParameterMap

T_REF = 2460001.0  # a realistic BJD: t0 ~ 2.46e6 d is why the epoch is fitted as an offset
ULP_T = np.spacing(T_REF)  # one unit in the last place of a time near T_REF (IEEE 754 double)


def _map() -> ParameterMap:
    return ParameterMap(free=["period", "t0", "radius_sum", "inclination"],
                        fixed={"radius_ratio": 0.55, "surface_brightness_ratio": 0.45},
                        t_ref=T_REF, p_ref=2.7, n_cycles=3.5,
                        limits=[(-0.1, 0.1), (-0.2, 0.2), (1e-3, 0.8), (30.0, 90.0)])


def test_vector_round_trip():
    pm = _map()
    v = dict(period=2.7003, t0=T_REF + 0.0012, radius_sum=0.2, inclination=88.0)
    back = pm.physical(dict(zip(pm.internal, pm.vector(v))))
    # t0 - t_ref + t_ref: at most one rounding of a time near T_REF
    assert abs(back["t0"] - v["t0"]) <= ULP_T
    # (P - P_ref) * n + P_ref over n: a few roundings of numbers near 2.7
    assert back["period"] == pytest.approx(v["period"], rel=4 * np.finfo(float).eps)
    assert back["radius_sum"] == v["radius_sum"] and back["inclination"] == v["inclination"]
    assert back["radius_ratio"] == 0.55  # fixed values pass through


def test_samples_match_physical_row_by_row():
    pm = _map()
    rng = np.random.default_rng(1)
    x = np.column_stack([rng.normal(0, 1e-3, 5), rng.normal(0, 1e-3, 5), rng.uniform(0.1, 0.3, 5),
                         rng.uniform(80, 90, 5)])
    best = {"period": 2.7, "t0": T_REF, "radius_sum": 0.2, "inclination": 88.0, "radius_ratio": 0.55,
            "surface_brightness_ratio": 0.45}
    s = pm.samples(x, best, list(best))
    for j in range(x.shape[0]):
        row = pm.physical(dict(zip(pm.internal, x[j])))
        for name in best:
            assert s[name][j] == row[name], name


def test_fold_and_period_sigma():
    pm = _map()
    x = np.array([[0.0, 0.0, 0.2, 92.0], [0.0, 0.0, 0.2, 87.0]])
    # i and 180 - i give the same projected separations (sky geometry; common practice): folded below 90 deg
    assert list(pm.fold(x)[:, 3]) == [88.0, 87.0]
    # the period is fitted as (P - P_ref) * n_cycles, so its sigma is the offset's over n_cycles
    assert pm.sigma("period", 0.007) == pytest.approx(0.002, rel=np.finfo(float).eps)
    assert pm.sigma("radius_sum", 0.003) == 0.003
