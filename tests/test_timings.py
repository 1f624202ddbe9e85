"""Eclipse timings: times of minimum, their uncertainties, and the O−C analysis (eclipsekit.timings, .ocdiagram).

Truth light curves come from the independent brute-force reference (tests/_timing_data.py over
tests/_brute_force.py), never from eclipsekit's model; known shifts are applied to the eclipse times.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u
from astropy.table import Table

from _timing_data import SYSTEM, T0, continuous_light_curve, light_curve, model_parameters, shapes
from eclipsekit import EclipsekitWarning, InputError, eclipse_times
from eclipsekit.cli import main
from eclipsekit.data import LightCurve
from eclipsekit.ocdiagram import analyse_o_minus_c
from eclipsekit.timings import _folded_duration

P = SYSTEM["period"]
CADENCE = 10.0 / 1440
NOISE = 1e-3


def _lc(t, f, e, system="BJD_TDB"):
    return LightCurve(t, f, e, meta={"time_system": system})


def _z(result, truth):
    true = {(k, c): tt for k, c, tt in truth}
    t = result.table
    return np.array([(r["time"] - true[(r["eclipse"], r["cycle"])]) / r["time_uncertainty"] for r in t])


@pytest.fixture(scope="module")
def light_time_run():
    # a circular third-body orbit: 4.32-min semi-amplitude, 150-d period (invented)
    amplitude, period3, phase = 0.003, 150.0, 0.7
    t, f, e, truth = light_curve(lambda c, tc: amplitude * math.sin(2 * math.pi * (tc - T0) / period3 + phase),
                                 110, CADENCE, NOISE, seed=11)
    return eclipse_times(_lc(t, f, e), model_parameters(), progress=False), truth, (amplitude, period3)


def test_times_match_injected_light_time_within_errors(light_time_run):
    result, truth, _ = light_time_run
    z = _z(result, truth)
    assert z.size >= 200
    # Gaussian errors: 68.3% of |z| < 1 (common practice); ±10 points as the acceptance band
    assert 0.58 <= np.mean(np.abs(z) < 1) <= 0.78
    assert set(result.table["method"]) == {"model"}


def test_light_time_amplitude_period_and_mass_function(light_time_run):
    result, _, (amplitude, period3) = light_time_run
    ltt = result.oc.light_travel_time
    (a, a_err), (p3, p3_err) = ltt["semi_amplitude"], ltt["period"]
    assert abs(a - amplitude) < 3 * a_err
    assert abs(p3 - period3) < 3 * p3_err
    assert ltt["detected"]
    # light time only: no period change or apsidal trend reported beside it (test of issue 14's
    # follow-up: the apsidal trend was reported when each term was tested alone)
    assert not result.oc.period_change["detected"] and not result.oc.apsidal_motion["detected"]
    assert result.oc.selected_terms == ("light_travel_time",)
    # mass function f(m3) = 4 pi^2 (a12 sin i)^3 / (G P3^2), a12 sin i = c A (Irwin 1952, ApJ 116, 211;
    # the formula from memory, Kepler's third law)
    expected = (4 * math.pi ** 2 * (const.c * a * u.day) ** 3 / (const.G * (p3 * u.day) ** 2)).to(u.M_sun)
    assert ltt["mass_function"][0] == pytest.approx(expected.value, rel=1e-10)


def test_period_change_recovered():
    # T(E) = T0 + P E + Q E^2 with E continuous (secondaries at half cycles): dP/dE = 2 Q (common practice)
    q = 1.5e-6
    t, f, e, truth = light_curve(lambda c, tc: q * ((tc - T0) / P) ** 2, 80, CADENCE, NOISE, seed=12)
    result = eclipse_times(_lc(t, f, e), model_parameters(), progress=False)
    dp_de, err = result.oc.period_change["dp_de"]
    assert abs(dp_de - 2 * q) < 3 * err
    assert result.oc.period_change["detected"]


@pytest.fixture(scope="module")
def symmetric_runs():
    t, f, e, truth = light_curve(lambda c, tc: 0.0, 100, CADENCE, NOISE, seed=13)
    lc = _lc(t, f, e)
    model = eclipse_times(lc, model_parameters(), progress=False)
    kvw = eclipse_times(lc, {"period": P, "t0": T0, "duration": 0.19}, progress=False)
    return model, kvw, truth


def test_kvw_and_model_times_agree_for_symmetric_eclipses(symmetric_runs):
    model, kvw, _ = symmetric_runs
    assert set(kvw.table["method"]) == {"kvw"}
    a = {(r["eclipse"], r["cycle"]): (r["time"], r["time_uncertainty"]) for r in model.table}
    b = {(r["eclipse"], r["cycle"]): (r["time"], r["time_uncertainty"]) for r in kvw.table}
    common = sorted(set(a) & set(b))
    assert len(common) >= 190
    # two estimators on the same data differ by less than either's error: within 1 sigma (the
    # combined one) in practically every eclipse; 95% allows for the tail of the difference's scatter
    diff = np.array([abs(a[k][0] - b[k][0]) / math.hypot(a[k][1], b[k][1]) for k in common])
    assert np.mean(diff < 1) >= 0.95


def test_kvw_uncertainty_matches_scatter(symmetric_runs):
    _, kvw, truth = symmetric_runs
    z = _z(kvw, truth)
    # the reported (propagated) uncertainty: sd(z) = 1 within 3 standard errors, 1/sqrt(2n) each
    # (standard error of a sample standard deviation, common practice)
    assert abs(np.std(z) - 1) < 3 / math.sqrt(2 * z.size)
    # KvW's own formula (kept in a column) is off at this cadence, which is why it is replaced
    z_formula = z * kvw.table["time_uncertainty"] / kvw.table["time_uncertainty_kvw_formula"]
    assert abs(np.std(z_formula) - 1) > 3 / math.sqrt(2 * z.size)


def test_model_uncertainty_holds_with_correlated_noise():
    # white noise plus an equal AR(1) component of 60-min correlation time (seeded), on the
    # brute-force light curves of 100 orbits: 200 eclipses of a constant period
    from scipy.signal import lfilter

    t, f, e, truth = light_curve(lambda c, tc: 0.0, 100, CADENCE, NOISE, seed=20)
    phi = math.exp(-CADENCE / (60.0 / 1440))
    rng = np.random.default_rng(120)
    red = NOISE * math.sqrt(1 - phi ** 2) * lfilter([1.0], [1.0, -phi], rng.standard_normal(t.size))
    result = eclipse_times(_lc(t, f + red, e), model_parameters(), progress=False)
    dt = _z(result, truth) * result.table["time_uncertainty"]
    n = dt.size
    assert n >= 190
    # |z| < 1 for 68.27% of Gaussian deviates (common practice); the fraction over n eclipses has
    # the binomial standard error sqrt(p (1 - p) / n): within 3 of them
    p, band = 0.6827, 3 * math.sqrt(0.6827 * 0.3173 / n)

    def inside(column):
        return np.mean(np.abs(dt / result.table[column]) < 1)

    assert abs(inside("time_uncertainty") - p) < band
    # the curvature error alone under-covers (so this check can fail), and so does the larger of
    # curvature and permutation from the light curve alone, before the O-C scatter scales it
    assert inside("time_uncertainty_curvature") < p - band
    assert inside("time_uncertainty_light_curve") < p - band


def test_constant_period_gives_no_detection():
    # cheap realisations: times simulated directly with Gaussian errors (no light curves), 100
    # orbits, both eclipses, sigma 1e-4 d; each of the three terms must stay undetected in >= 95%
    rng = np.random.default_rng(14)
    cycle = np.repeat(np.arange(100), 2)
    secondary = np.tile([False, True], 100)
    sigma = np.full(cycle.size, 1e-4)
    detections = {"period_change": 0, "light_travel_time": 0, "apsidal_motion": 0}
    n = 200
    for _ in range(n):
        time = T0 + P * cycle + 0.5 * P * secondary + sigma * rng.standard_normal(cycle.size)
        oc = analyse_o_minus_c(cycle, time, sigma, secondary, period=P, t0=T0)
        for name in detections:
            detections[name] += getattr(oc, name)["detected"]
    assert all(count <= 0.05 * n for count in detections.values()), detections


def _simulated_detections(shift, n_realisations, seed):
    """Detected terms and selected models over realisations of times simulated directly.

    Cheap realisations, as in the constant-period test: 100 orbits, both eclipses, Gaussian
    errors of 1e-4 d, each time delayed by ``shift(tc)`` (days); no light curves.
    """
    rng = np.random.default_rng(seed)
    cycle = np.repeat(np.arange(100), 2)
    secondary = np.tile([False, True], 100)
    sigma = np.full(cycle.size, 1e-4)
    tc = T0 + P * cycle + 0.5 * P * secondary
    found = []
    for _ in range(n_realisations):
        time = tc + shift(tc) + sigma * rng.standard_normal(cycle.size)
        oc = analyse_o_minus_c(cycle, time, sigma, secondary, period=P, t0=T0)
        found.append({name for name in ("period_change", "apsidal_motion", "light_travel_time")
                      if getattr(oc, name)["detected"]})
    return found


def test_light_time_alone_is_not_taken_for_a_period_change_or_apsidal_trend():
    # a strong circular light-time orbit (3e-3 d = 30 sigma, 150 d: two of its cycles in the 300-d
    # span) and nothing else: over a few cycles it has a quadratic part and a trend difference
    # between the eclipses half an orbit apart, which a test of each term alone against the linear
    # ephemeris reported as detected; tested against the selected model, only the light time is
    found = _simulated_detections(lambda tc: 3e-3 * np.sin(2 * np.pi * (tc - T0) / 150.0 + 0.7), 100, seed=21)
    assert sum(f == {"light_travel_time"} for f in found) >= 95, found


def test_period_change_alone_is_not_taken_for_a_light_time_orbit():
    # a pure period change, Q E^2 with Q = 2e-7 d (2e-3 d = 20 sigma at the last cycle): the period
    # change is found, and a light-time orbit (whose longest periods mimic a parabola) is reported
    # as detected in no more than 5% of realisations
    found = _simulated_detections(lambda tc: 2e-7 * ((tc - T0) / P) ** 2, 100, seed=22)
    assert sum("light_travel_time" in f for f in found) <= 5, found
    assert sum("period_change" in f for f in found) >= 95, found
    assert sum("apsidal_motion" in f for f in found) <= 5, found


def test_ephemeris_recovered_from_times():
    # the linear ephemeris of exact times is the one they were made with (weighted least squares)
    cycle = np.arange(50)
    time = 2459000.5 + 1.2345678 * cycle
    oc = analyse_o_minus_c(cycle, time, np.full(50, 1e-4), np.zeros(50, bool), period=1.2345, t0=2459000.5)
    assert oc.ephemeris["period"][0] == pytest.approx(1.2345678, abs=1e-12)
    assert oc.ephemeris["t0"][0] == pytest.approx(2459000.5, abs=1e-9)
    # sigma of the slope of a straight line through N equally weighted points:
    # sigma / sqrt(sum (E - mean E)^2) (textbook least squares, e.g. Bevington & Robinson eq. 6.22; from memory)
    assert oc.ephemeris["period"][1] == pytest.approx(1e-4 / np.sqrt(np.sum((cycle - cycle.mean()) ** 2)), rel=1e-9)


@pytest.mark.parametrize("kind", ["primary", "secondary"])
def test_folded_duration_matches_the_geometry(kind):
    # the eclipse duration of the ephemeris-only (Kwee-van Woerden) path, from the folded data
    t, f, e, _ = light_curve(lambda c, tc: 0.0, 100, CADENCE, NOISE, seed=18)
    tc = T0 + (0.5 * P if kind == "secondary" else 0.0)
    found = _folded_duration(_lc(t, f, e), P, tc)
    # first to last contact of a circular orbit, T = (P / pi) asin(sqrt((r1 + r2)^2 - cos^2 i) / sin i)
    # (Winn 2010, "Transits and Occultations", eq. 14, with R*/a (1 + k) = r1 + r2; from memory)
    inc = math.radians(SYSTEM["inclination"])
    true = P / math.pi * math.asin(math.sqrt(SYSTEM["radius_sum"] ** 2 - math.cos(inc) ** 2) / math.sin(inc))
    # the estimate is the run of folded bins (width w = 2 cadences) whose mean is 4 noise-sigma low, plus
    # one bin: bins that merely touch the eclipse can be low, so at most D/w + 2 bins (+1: <= D + 3w);
    # when every bin wholly inside the eclipse is detected, at least D/w - 2 bins (+1: >= D - w)
    width = 2 * CADENCE
    n_bin = 100 * width / CADENCE                      # points per bin: 100 orbits
    shape = shapes()[kind == "secondary"]
    edge = np.linspace(0.5 * true - width, 0.5 * true, 101)
    # precondition: the shallowest bin wholly inside (next to a contact) is below the threshold, 4 sigma
    # of a bin's mean with sigma the robust scatter of all points, eclipses included (1.4826 MAD, common practice)
    noise = 1.4826 * np.median(np.abs(f - np.median(f)))
    assert np.mean(1 - shape(edge)) > 4 * noise / math.sqrt(n_bin)
    assert true - width <= found <= true + 3 * width


def test_non_barycentric_times_warn_and_bad_method_refused():
    t, f, e, _ = light_curve(lambda c, tc: 0.0, 4, CADENCE, NOISE, seed=15)
    with pytest.warns(EclipsekitWarning, match="not barycentric"):
        eclipse_times(_lc(t, f, e, system="JD"), model_parameters(), progress=False)
    with pytest.raises(InputError, match="`method`"):
        eclipse_times(_lc(t, f, e), model_parameters(), method="fast")
    with pytest.raises(InputError, match="`fit_or_ephemeris`"):
        eclipse_times(_lc(t, f, e), {"period": P})


def _result_json(path):
    params = model_parameters()
    q = lambda v: {"value": v, "uncertainty": None, "unit": ""}  # noqa: E731
    content = {"ephemeris": {"period": q(params["period"]), "t0": q(params["t0"])},
               "geometry": {k: q(params[k]) for k in ("radius_sum", "radius_ratio", "inclination")}
               | {"ecosw": q(0.0), "esinw": q(0.0)},
               "photometry": {"surface_brightness_ratio": q(params["surface_brightness_ratio"]),
                              "third_light": q(0.0), "ld1_1": q(0.45), "ld1_2": q(0.2), "ld2_1": q(0.5),
                              "ld2_2": q(0.18), "ld_law": "quadratic"},
               "fit": {"exposure_time": {"value": 0.0, "uncertainty": None, "unit": "s"}, "supersample": 1}}
    path.write_text(json.dumps(content))
    return path


def test_cli_writes_the_contract_files(tmp_path, capsys):
    t, f, e, _ = light_curve(lambda c, tc: 0.0, 6, CADENCE, NOISE, seed=16)
    csv = tmp_path / "lc.csv"
    np.savetxt(csv, np.column_stack([t, f, e]), delimiter=",", header="bjd_tdb,flux,flux_err", comments="",
               fmt="%.8f")
    before = csv.read_bytes()
    out = tmp_path / "out"
    assert main(["timings", str(csv), "--from", str(_result_json(tmp_path / "result.json")), "--out", str(out),
                 "--quiet"]) == 0
    assert csv.read_bytes() == before                      # input files are never modified
    table = Table.read(out / "eclipse_times.ecsv")
    for column in ("eclipse", "cycle", "time", "time_uncertainty", "o_minus_c", "method", "n_points"):
        assert column in table.colnames
    assert table.meta["time_system"] == "BJD_TDB"
    assert len(table) == 12
    content = json.loads((out / "timings.json").read_text())
    for key in ("period", "t0"):
        assert set(content["ephemeris"][key]) >= {"value", "uncertainty", "unit"}
    for key in ("semi_amplitude", "period"):
        assert content["light_travel_time"][key]["unit"] == "d"
    assert "delta_bic" in content["light_travel_time"] and "period_change" in content
    assert "apsidal_motion" in content
    for name in ("o_minus_c.png", "o_minus_c.pdf", "timings.txt"):
        assert (out / name).stat().st_size > 0
    assert "Eclipse timings" in capsys.readouterr().out
    # an existing folder is refused without --overwrite, with a one-line error naming the option
    assert main(["timings", str(csv), "--from", str(tmp_path / "result.json"), "--out", str(out), "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--overwrite" in err[0]


def test_cli_refuses_from_with_period(tmp_path, capsys):
    t, f, e, _ = light_curve(lambda c, tc: 0.0, 2, CADENCE, NOISE, seed=17)
    csv = tmp_path / "lc.csv"
    np.savetxt(csv, np.column_stack([t, f, e]), delimiter=",", header="bjd_tdb,flux,flux_err", comments="")
    code = main(["timings", str(csv), "--from", "r.json", "--period", "3", "--t0", "100", "--out",
                 str(tmp_path / "o"), "--quiet"])
    assert code == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--from" in err[0] and "--period" in err[0]


@pytest.fixture(scope="module")
def continuous_csv(tmp_path_factory):
    """Five orbits without gaps at 2-minute cadence, every eclipse delayed by its own known shift."""
    t, f, e, truth = continuous_light_curve(lambda c, tc: 0.002 * math.sin(1.7 * c + 0.4 * (tc - T0)), 5,
                                            2.0 / 1440, 5e-4, seed=19)
    csv = tmp_path_factory.mktemp("continuous") / "lc.csv"
    np.savetxt(csv, np.column_stack([t, f, e]), delimiter=",", header="bjd_tdb,flux,flux_err", comments="",
               fmt="%.8f")
    return csv, truth


def _check_timing_files(out, truth):
    """The contract files exist and the times match the injected ones within their errors."""
    for name in ("eclipse_times.ecsv", "timings.json", "timings.txt", "o_minus_c.png", "o_minus_c.pdf"):
        assert (out / name).stat().st_size > 0
    table = Table.read(out / "eclipse_times.ecsv")
    assert set(table["method"]) == {"model"}
    # the cycles are counted from the fit's own t0: match each time to the nearest injected one
    true = np.array([tt for _, _, tt in truth])
    shift = true - np.array([T0 + cycle * P + (0.5 * P if kind == "secondary" else 0.0) for kind, cycle, _ in truth])
    match = np.argmin(np.abs(np.asarray(table["time"])[:, None] - true[None, :]), axis=1)
    sigma = np.asarray(table["time_uncertainty"])
    z = (np.asarray(table["time"]) - true[match]) / sigma
    assert len(table) == len(truth) == 10 and len(set(match)) == 10
    # every eclipse within 3 sigma: a Gaussian deviate exceeds it with probability 0.27%, one of ten
    # with 2.7% (common practice)
    assert np.all(np.abs(z) < 3), z
    # the noise is white, so the light-curve uncertainty (before the O-C scatter scales it: shifts this
    # irregular are not in the O-C model and widen the reported errors) must hold too; the injected
    # shifts are many of those sigma, so times that ignored them would fail
    sigma_lc = np.asarray(table["time_uncertainty_light_curve"])
    assert np.all(np.abs(z * sigma / sigma_lc) < 3), z * sigma / sigma_lc
    assert np.sum(np.abs(shift[match]) > 3 * sigma_lc) >= 5
    content = json.loads((out / "timings.json").read_text())
    assert set(content["light_travel_time"]) >= {"semi_amplitude", "period", "delta_bic", "detected"}


def test_cli_timings_searches_and_fits_first(continuous_csv, tmp_path, capsys):
    # neither --from nor --period: the period search and the eclipse fit run first, as in `run`
    csv, truth = continuous_csv
    out = tmp_path / "t"
    assert main(["timings", str(csv), "--out", str(out), "--quiet"]) == 0
    _check_timing_files(out, truth)
    assert not (out / "result.json").exists()       # the timing files only
    assert "Eclipse timings" in capsys.readouterr().out


def test_cli_run_with_timings(continuous_csv, tmp_path, capsys):
    csv, truth = continuous_csv
    out = tmp_path / "r"
    assert main(["run", str(csv), "--timings", "--out", str(out), "--quiet"]) == 0
    assert (out / "result.json").stat().st_size > 0          # the whole run's results beside the timings
    _check_timing_files(out, truth)
    printed = capsys.readouterr().out
    assert "Eclipse timings" in printed and "eclipse_times.ecsv" in printed
