"""The command line: exit codes and one-line errors for bad input, no-eclipse status, period and dimensions."""

import json
import math
import re

import numpy as np
import pytest

from eclipsekit.cli import _value_error, main
from eclipsekit.data import sample_paths


def _one_line_error(capsys):
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err
    assert "Traceback" not in err[0]
    return err[0]


def _write_csv(path, header, rows):
    path.write_text(header + "\n" + "\n".join(",".join(f"{v:.8f}" for v in row) for row in rows) + "\n")
    return path


@pytest.fixture
def noise_lc(tmp_path):
    # pure white noise: there is no eclipse to find
    rng = np.random.default_rng(5)
    t = np.arange(0, 20, 0.01)
    return _write_csv(tmp_path / "noise.csv", "time,flux,flux_err",
                      np.column_stack([t, 1 + 1e-3 * rng.standard_normal(t.size), np.full(t.size, 1e-3)]))


def test_missing_file(tmp_path, capsys):
    assert main(["run", str(tmp_path / "nope.csv"), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    assert "nope.csv" in _one_line_error(capsys)


def test_wrong_columns(tmp_path, capsys):
    path = _write_csv(tmp_path / "lc.csv", "a,b,c", np.ones((30, 3)))
    assert main(["run", str(path), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    msg = _one_line_error(capsys)
    assert "lc.csv" in msg and "--time-col" in msg


def test_velocity_file_wrong_columns(tmp_path, capsys):
    lc, _ = sample_paths()
    rv = _write_csv(tmp_path / "rv.csv", "time,speed,speed_err", np.ones((10, 3)))
    assert main(["run", str(lc), "--rv", str(rv), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    assert "rv.csv" in _one_line_error(capsys)


def test_output_folder_is_a_file(tmp_path, capsys):
    lc, _ = sample_paths()
    afile = tmp_path / "taken"
    afile.write_text("")
    assert main(["run", str(lc), "--out", str(afile), "--quiet"]) == 2
    assert "is a file" in _one_line_error(capsys)


def test_bad_amplitude_syntax(tmp_path, capsys):
    lc, _ = sample_paths()
    assert main(["run", str(lc), "--k1", "ninety", "--out", str(tmp_path / "o")]) == 2
    assert "VALUE±ERROR" in capsys.readouterr().err


@pytest.mark.parametrize("text, expected", [("85.2±0.4", (85.2, 0.4)), ("85.2+-0.4", (85.2, 0.4)),
                                            ("7550 +/- 150", (7550.0, 150.0))])
def test_value_error_parsing(text, expected):  # a bare "7550" is refused: tests/test_cli_output.py
    assert _value_error(text) == expected


def test_no_eclipse_found_exit_1_with_status(noise_lc, tmp_path, capsys):
    out = tmp_path / "o"
    assert main(["run", str(noise_lc), "--out", str(out), "--quiet"]) == 1
    result = json.loads((out / "result.json").read_text())
    assert result["status"] == "no_eclipse_found"
    assert result["message"]


def test_period_command_no_eclipse(noise_lc, capsys):
    assert main(["period", str(noise_lc), "--quiet"]) == 1
    assert "eclipse" in _one_line_error(capsys).lower()


def test_period_command_json_and_plot(tmp_path, capsys):
    # consistency check: the demo sample is made with the package's own model (the period search
    # against independent trapezoid eclipses is in tests/test_period.py)
    lc, _ = sample_paths()
    truth = json.loads((lc.parent / "truth.json").read_text())
    png = tmp_path / "p.png"
    assert main(["period", str(lc), "--json", "--plot", str(png), "--quiet", "--max-period", "10"]) == 0
    out = json.loads(capsys.readouterr().out)
    # sample made with P = 3.2418127 d (samples/truth.json); within 3 reported sigma
    assert abs(out["period"]["value"] - truth["period"]) < 3 * out["period"]["uncertainty"]
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification, ISO/IEC 15948)


def _mass_formula(fit_result, k1, k2):
    # M1 sin^3 i = 1.036149e-7 (1 - e^2)^(3/2) (K1 + K2)^2 K2 P  [M_sun, km/s, d] (standard numerical form
    # from the IAU 2015 Resolution B3 nominal constants; e.g. Prša et al. 2016, AJ 152, 41)
    p = fit_result["ephemeris"]["period"]["value"]
    e = fit_result["geometry"]["eccentricity"]["value"]
    sin3i = math.sin(math.radians(fit_result["geometry"]["inclination"]["value"])) ** 3
    return 1.036149e-7 * (1 - e * e) ** 1.5 * (k1 + k2) ** 2 * k2 * p / sin3i


def test_dimensions_command(tmp_path, capsys):
    lc, rv = sample_paths()
    truth = json.loads((lc.parent / "truth.json").read_text())
    fit_dir = tmp_path / "fit"
    assert main(["fit", str(lc), "--out", str(fit_dir), "--quiet"]) == 0
    capsys.readouterr()
    fit_result = json.loads((fit_dir / "result.json").read_text())
    assert main(["dimensions", str(fit_dir / "result.json"), "--rv", str(rv), "--out", str(tmp_path / "dims"),
                 "--quiet", "--seed", "2"]) == 0
    result = json.loads((tmp_path / "dims" / "result.json").read_text())
    # consistency check (the demo's velocities are made by the package): the sample's K's through the
    # standard formula, within 3 reported sigma
    mass = result["absolute"]["mass_primary"]
    assert abs(mass["value"] - _mass_formula(fit_result, truth["k_primary"], truth["k_secondary"])) \
        < 3 * mass["uncertainty"]
    # with amplitudes given by hand: the value is the median of 20000 samples (the package's default), whose
    # standard error is sqrt(pi/2) sigma / sqrt(N) (common practice); 4 of those, plus the second-order
    # shift of the median of a product, ~ (sigma/M)^2 M (first-order propagation's next term)
    assert main(["dimensions", str(fit_dir / "result.json"), "--k1", "91.8±0.3", "--k2", "118.4±0.4",
                 "--quiet", "--seed", "3", "--out", str(tmp_path / "hand")]) == 0
    assert "M1" in capsys.readouterr().out
    hand = json.loads((tmp_path / "hand" / "result.json").read_text())["absolute"]["mass_primary"]
    tol = 4 * math.sqrt(math.pi / 2) * hand["uncertainty"] / math.sqrt(20000) + hand["uncertainty"] ** 2 / hand["value"]
    assert abs(hand["value"] - _mass_formula(fit_result, 91.8, 118.4)) < tol
    # neither velocities nor amplitudes: usage error
    assert main(["dimensions", str(fit_dir / "result.json"), "--quiet"]) == 2


def test_joint_fit_needs_velocities(tmp_path, capsys):
    lc, _ = sample_paths()
    assert main(["run", str(lc), "--joint", "--out", str(tmp_path / "o"), "--quiet"]) == 2
    assert "--rv" in _one_line_error(capsys)


# ---- crafted light curves that once crashed `eclipsekit period` (regressions) ---------------
def _crafted(tmp_path, name, edit):
    """2,000 rows at time 0.01 i with trapezoid eclipses every 2.3 d (made here), then one defect."""
    rng = np.random.default_rng(11)
    t = 0.01 * np.arange(2000)
    phase = ((t - 0.3) / 2.3 + 0.5) % 1.0 - 0.5
    flux = (1 - 0.3 * np.clip((0.03 - np.abs(phase)) / 0.01, 0, 1)
            - 0.1 * np.clip((0.03 - np.abs(np.abs(phase) - 0.5)) / 0.01, 0, 1) + rng.normal(0, 0.002, t.size))
    err = np.full(t.size, 0.002)
    edit(t, flux, err)
    path = tmp_path / f"{name}.csv"
    path.write_text("time,flux,flux_err\n" + "\n".join(f"{a:.17g},{b:.17g},{c:.17g}" for a, b, c in zip(t, flux, err))
                    + "\n")
    return path


def _set(array, index, value):
    array[index] = value


@pytest.mark.parametrize("name,edit,code,words", [
    # constant flux: no eclipse to find (exit 1), not an IndexError
    ("constant", lambda t, f, e: _set(f, slice(None), 1.0), 1, "constant"),
    # one fill-value time: the row is rejected ("time out of range") and the eclipses are found
    ("time_minus_1e308", lambda t, f, e: _set(t, 5, -1e308), 0, None),
    ("time_1e300", lambda t, f, e: _set(t, 5, 1e300), 0, None),
    # errors whose squares under- or overflow: rejected rows ("flux error out of range"), period found
    ("err_1e-200", lambda t, f, e: _set(e, 5, 1e-200), 0, None),
    ("err_100x1e308", lambda t, f, e: _set(e, slice(0, 100), 1e308), 0, None),
    # the same numbers for the whole file cannot be rescued: bad input, exit 2
    ("all_err_1e-200", lambda t, f, e: _set(e, slice(None), 1e-200), 2, "flux_err"),
    # a date far outside the others: span over MAX_TIME_SPAN, exit 2 naming the row
    ("time_1e6", lambda t, f, e: _set(t, 5, 1e6), 2, "data row 6"),
])
def test_crafted_inputs_exit_codes(tmp_path, capsys, name, edit, code, words):
    path = _crafted(tmp_path, name, edit)
    assert main(["period", str(path), "--quiet"]) == code
    if code == 0:
        value, sigma = (float(x) for x in re.search(r"period +([\d.]+) ± ([\d.]+) d", capsys.readouterr().out).groups())
        assert abs(value - 2.3) < 5 * sigma  # injected period 2.3 d, within 5 of the stated sigma
        assert main(["inspect", str(path)]) == 0
        assert "out of range: " in capsys.readouterr().out  # the rejection is reported
    else:
        line = _one_line_error(capsys)
        assert words in line and line.startswith("eclipsekit: error: ")


# -- eclipse-fit options: --fix, --free, --prior, --errors, --mcmc-seconds, statuses -------------------
from astropy.table import Table  # noqa: E402

from eclipsekit.cli import _ERROR_CHOICES, _prior, _recover_file, build_parser  # noqa: E402
from eclipsekit.fit.parameters import ALIASES  # noqa: E402
from eclipsekit.fit.settings import ERROR_METHODS  # noqa: E402

from _systems import SYSTEMS, light_curve_arrays  # noqa: E402


@pytest.fixture(scope="module")
def total_csv(tmp_path_factory):
    # two orbits of the "total" system from the independent brute-force reference (tests/_systems.py)
    t, f, e = light_curve_arrays("total", 11, n_orbits=2)
    return _write_csv(tmp_path_factory.mktemp("lc") / "total.csv", "time,flux,flux_err", np.column_stack([t, f, e]))


@pytest.fixture(scope="module")
def held_run(total_csv, tmp_path_factory):
    """`fit` with a held inclination, a held period (bare name), a light-ratio prior; FILE written last."""
    out = tmp_path_factory.mktemp("held") / "o"
    s = SYSTEMS["total"]
    argv = ["fit", "--period", repr(s["period"]), "--t0", repr(s["t0"]), "--out", str(out), "--quiet",
            "--seed", "1", "--fix", "inclination=89.5", "period", "--prior", "light_ratio=0.19±0.01", str(total_csv)]
    return out, argv


def _run(argv, capsys):
    code = main(argv)
    return code, capsys.readouterr().out


def test_fix_and_prior_reach_result_files(held_run, capsys):
    out, argv = held_run
    code, printed = _run(argv, capsys)   # FILE after the list options: not swallowed
    assert code == 0
    result = json.loads((out / "result.json").read_text())
    # --fix NAME=VALUE holds exactly the value given on the command line
    assert result["geometry"]["inclination"] == {"value": 89.5, "uncertainty": None, "unit": "deg", "fixed": True}
    # bare --fix NAME holds the start value: here the --period given
    assert result["ephemeris"]["period"]["value"] == SYSTEMS["total"]["period"]
    assert result["ephemeris"]["period"]["fixed"] is True
    assert {"inclination", "period"} <= set(result["fit"]["fixed_parameters"])
    assert "fixed" not in result["geometry"]["radius_sum"]
    # the prior given on the command line, listed under fit
    assert result["fit"]["priors"]["light_ratio"] == {"value": 0.19, "sigma": 0.01}
    assert result["fit"]["uncertainties"] in ("covariance", "mcmc")   # "auto" resolved
    # the summary: status word on the first line, held values marked with the value held, the priors
    summary = (out / "summary.txt").read_text()
    first = summary.splitlines()[0]
    assert f"status: {result['status']}" in first and printed.splitlines()[0] == first
    rows = {line.split("  ")[1].strip(): line for line in summary.splitlines() if line.startswith("  ") and "  " in line[2:]}
    assert "89.5 deg (fixed)" in rows["Inclination"]
    assert "3 d (fixed)" in rows["Period"]   # 2160 cadences of 2 min = 3 d exactly (tests/_systems.py)
    assert "(fixed)" not in rows["r1 + r2"]
    assert "Priors" in summary and "0.190 ± 0.010" in summary
    table = Table.read(out / "parameters.ecsv", format="ascii.ecsv")
    fixed = dict(zip(table["name"], table["fixed"]))
    assert fixed["inclination"] and fixed["period"] and not fixed["radius_sum"]


@pytest.mark.parametrize("argv, file, free, fix, prior", [
    (["--free", "ld1_1", "ld2_1", "lc.csv"], "lc.csv", ["ld1_1", "ld2_1"], [], []),
    (["--free", "ld1_1", "ld2_1", "--out", "x", "lc.csv"], "lc.csv", ["ld1_1", "ld2_1"], [], []),
    (["--free", "third_light", "--free", "eccentricity", "lc.csv"], "lc.csv", ["third_light", "eccentricity"], [], []),
    (["--fix", "inclination=89.5", "t0", "data/lc"], "data/lc", [], ["inclination=89.5", "t0"], []),
    (["--prior", "light_ratio=0.2±0.01", "lc.csv", "--fix", "ecosw"], "lc.csv", [], ["ecosw"],
     ["light_ratio=0.2±0.01"]),
    (["lc.csv", "--free", "ld1_1", "ld2_1"], "lc.csv", ["ld1_1", "ld2_1"], [], []),
    (["--ld1", "0.4", "0.2", "lc.csv"], "lc.csv", [], [], []),
])
def test_list_options_do_not_swallow_file(argv, file, free, fix, prior):
    args = build_parser().parse_args(["fit", *argv])
    _recover_file(args)
    assert (args.file, args.free, args.fix, args.prior) == (file, free, fix, prior)


def test_missing_file_is_one_line_error(capsys):
    assert main(["fit", "--free", "ld1_1", "ld2_1"]) == 2
    assert "FILE" in _one_line_error(capsys)


@pytest.mark.parametrize("text", ["light_ratio=0.19", "light_ratio=0.19±0", "light_ratio=0.19+--0.01",
                                  "light_ratio=", "light_ratio=0.19±x"])
def test_prior_without_positive_sigma_refused(total_csv, tmp_path, capsys, text):
    assert main(["fit", str(total_csv), "--prior", text, "--out", str(tmp_path / "o"), "--quiet"]) == 2
    msg = _one_line_error(capsys)
    assert "--prior" in msg and "SIGMA" in msg
    assert not (tmp_path / "o").exists()   # refused before any work


@pytest.mark.parametrize("text, expected", [("light_ratio=0.19±0.01", (0.19, 0.01)),
                                            ("light_ratio=0.19+-0.01", (0.19, 0.01)),
                                            ("light_ratio = 0.19 +/- 0.01", (0.19, 0.01)),
                                            ("inclination=89.1±0.2", (89.1, 0.2))])
def test_prior_forms(text, expected):
    assert _prior(text, ["inclination"]) == (text.split("=")[0].strip(), expected)


@pytest.mark.parametrize("option, value, words", [
    ("--free", "k", ["--free", "unknown parameter 'k'"]),        # single-letter aliases are gone
    ("--fix", "l3", ["--fix", "unknown parameter 'l3'"]),
    ("--fix", "J=0.6", ["--fix", "unknown parameter 'J'"]),
    ("--fix", "inclination=high", ["--fix", "inclination=high", "number"]),
    ("--prior", "mass=1±0.1", ["--prior", "unknown parameter 'mass'"]),
])
def test_bad_fit_option_is_one_line_error(total_csv, tmp_path, capsys, option, value, words):
    assert main(["fit", str(total_csv), option, value, "--out", str(tmp_path / "o"), "--quiet"]) == 2
    msg = _one_line_error(capsys)
    assert all(w in msg for w in words), msg


def test_package_messages_name_options(total_csv, tmp_path, capsys):
    # refused by the fit package's checks (in Python terms), before any work: the message names the option
    assert main(["fit", str(total_csv), "--mcmc-walkers", "0", "--out", str(tmp_path / "o"), "--quiet"]) == 2
    msg = _one_line_error(capsys)
    assert "--mcmc-walkers" in msg and "`" not in msg
    assert not list((tmp_path / "o").glob("*"))   # no result file written


def test_fixed_value_outside_bounds(total_csv, tmp_path, capsys):
    # an inclination above 90 deg is the same orbit seen from the other side (common practice)
    assert main(["fit", str(total_csv), "--fix", "inclination=95", "--out", str(tmp_path / "o"), "--quiet"]) == 2
    msg = _one_line_error(capsys)
    assert "--fix inclination=95" in msg and "90" in msg


def test_aliases_are_result_table_groups():
    assert not {"e", "J", "k", "l3", "ld"} & set(ALIASES)
    assert {"eccentricity", "limb_darkening", "ld1", "ld2"} <= set(ALIASES)


def test_error_choices_match_the_fit():
    assert _ERROR_CHOICES == ERROR_METHODS
    assert build_parser().parse_args(["fit", "x.csv"]).errors == "auto"


def test_errors_mcmc_with_time_budget(total_csv, tmp_path, capsys):
    out = tmp_path / "o"
    s = SYSTEMS["total"]
    assert main(["fit", str(total_csv), "--period", repr(s["period"]), "--t0", repr(s["t0"]), "--errors", "mcmc",
                 "--mcmc-seconds", "3", "--mcmc-steps", "300", "--seed", "2", "--out", str(out), "--quiet"]) == 0
    result = json.loads((out / "result.json").read_text())
    assert result["fit"]["uncertainties"] == "mcmc"
    assert "uncertainties from mcmc" in capsys.readouterr().out


@pytest.mark.parametrize("status", ["poor_fit", "caution"])
def test_caveat_statuses_exit_0_with_reason_first(total_csv, tmp_path, capsys, monkeypatch, status):
    import eclipsekit.pipeline as pipeline
    from eclipsekit.data import read_light_curve

    reason = "the stars are too large for spherical shapes"
    monkeypatch.setattr(pipeline, "analyse", lambda lc, *a, **k: pipeline.Analysis(
        lc=read_light_curve(total_csv), status=status, message=reason))
    assert main(["fit", str(total_csv), "--out", str(tmp_path / "o"), "--quiet"]) == 0
    first = capsys.readouterr().out.splitlines()[0]
    assert first.endswith(f"status: {status}: {reason}")
    assert json.loads((tmp_path / "o" / "result.json").read_text())["status"] == status


# --- velocity files: columns, labels, time systems (issue 12, issue 13 items 7 and 10) --------------
from astropy import units as u  # noqa: E402
from astropy.coordinates import EarthLocation, SkyCoord  # noqa: E402
from astropy.time import Time  # noqa: E402

from _textbook import textbook_velocity  # noqa: E402

BJD0 = 2459000.0   # the invented light curve's times are BJD_TDB - BJD0 in tests/_systems.py


def _options(parser):
    out = set()
    for action in parser._actions:
        out.update(action.option_strings)
        if isinstance(action.choices, dict):   # the sub-commands
            for sub in action.choices.values():
                out |= _options(sub)
    return out


def test_velocity_file_without_velocity_columns_suggests_existing_options(tmp_path, capsys):
    rv = _write_csv(tmp_path / "rv.csv", "time,speed,speed_err", np.ones((10, 3)))
    assert main(["inspect", str(rv), "--rv1-col", "nope"]) == 2
    assert "--rv1-col" in _one_line_error(capsys)
    lc, _ = sample_paths()
    assert main(["run", str(lc), "--rv", str(rv), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    msg = _one_line_error(capsys)
    suggested = set(re.findall(r"--[a-z0-9-]+", msg))
    assert {"--rv1-col", "--rv2-col"} <= suggested
    assert suggested <= _options(build_parser())       # every option named exists


def test_inspect_describes_a_secondary_only_velocity_file(tmp_path, capsys):
    rows = [(BJD0 + i, 20.0 * math.sin(i), 1.0) for i in range(6)]
    rv = _write_csv(tmp_path / "rv2.csv", "bjd_tdb,rv2,rv2_err", rows)
    assert main(["inspect", str(rv)]) == 0
    out = capsys.readouterr().out
    assert out.startswith("Velocities:") and "secondary (rv2): 6 velocities" in out
    assert "primary (rv1): none" in out and "time system: BJD_TDB" in out
    # columns named by hand, JSON form
    odd = _write_csv(tmp_path / "odd.csv", "epoch,v_b,v_b_unc", rows)
    assert main(["inspect", str(odd), "--rv-time-col", "epoch", "--rv2-col", "v_b", "--rv2-err-col", "v_b_unc",
                 "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["kind"] == "velocities" and d["n_secondary"] == 6 and d["n_primary"] == 0


@pytest.fixture(scope="module")
def labelled_run(tmp_path_factory):
    """`run` on a BJD_TDB light curve with HJD velocities whose file labels star 2 as the first column."""
    folder = tmp_path_factory.mktemp("labels")
    s = SYSTEMS["total"]
    t, f, e = light_curve_arrays("total", 11, n_orbits=2)
    lc = _write_csv(folder / "lc.csv", "bjd_tdb,flux,flux_err", np.column_stack([t + BJD0, f, e]))
    # invented velocities (Hilditch 2001 textbook model, tests/_textbook.py), circular orbit, K1 60, K2 80 km/s
    bjd = BJD0 + s["t0"] + np.linspace(0.1, 9.3, 16) * s["period"] / 3.7
    common = dict(period=s["period"], t0=BJD0 + s["t0"], gamma=5.0, e=0.0, omega_deg=90.0)
    rng = np.random.default_rng(3)
    v1 = textbook_velocity(bjd, k=60.0, **common) + rng.normal(0, 1.0, bjd.size)
    v2 = textbook_velocity(bjd, k=80.0, sign=-1.0, **common) + rng.normal(0, 1.0, bjd.size)
    # the file's times in HJD, converted with astropy directly (from BJD_TDB at the geocentre)
    target = SkyCoord(150.1 * u.deg, -20.5 * u.deg)
    geo = Time(bjd, format="jd", scale="tdb", location=EarthLocation.from_geocentric(0, 0, 0, unit=u.m))
    for _ in range(3):
        geo = Time(bjd, format="jd", scale="tdb", location=geo.location) - geo.light_travel_time(target)
    hjd = (geo.utc + geo.light_travel_time(target, kind="heliocentric")).utc.jd
    rows = np.column_stack([hjd, v2, np.ones(bjd.size), v1, np.ones(bjd.size)])
    rv = folder / "rv.csv"
    rv.write_text("epoch,vel_a,vel_a_err,vel_b,vel_b_err\n"
                  + "\n".join(f"{r[0]:.6f},{r[1]:.3f},{r[2]:.2f},{r[3]:.3f},{r[4]:.2f}" for r in rows) + "\n")
    argv = ["run", str(lc), "--rv", str(rv), "--period", repr(s["period"]), "--t0", repr(BJD0 + s["t0"]),
            "--rv-time-col", "epoch", "--rv-time-system", "HJD", "--rv1-col", "vel_a", "--rv1-err-col", "vel_a_err",
            "--rv2-col", "vel_b", "--rv2-err-col", "vel_b_err", "--coordinates", "10:00:24 -20:30:00",
            "--errors", "covariance", "--seed", "2", "--quiet", "--out", str(folder / "o")]
    return folder / "o", argv


def test_run_swaps_labels_and_converts_times(labelled_run, capsys):
    out, argv = labelled_run
    code, printed = _run(argv, capsys)
    assert code == 0
    result = json.loads((out / "result.json").read_text())
    vel = result["input"]["velocities"]
    assert vel["labels"] == "swapped" and vel["time_converted_from"] == "HJD" and vel["time_system"] == "BJD_TDB"
    assert any(n.startswith("velocity columns swapped: 'vel_a'") for n in result["fit"]["notes"])
    assert "note: velocity columns swapped" in printed and "converted from HJD to BJD_TDB" in printed
    assert not any("time systems differ" in w for w in result["fit"]["warnings"])
    spec = result["spectroscopy"]
    # the invented K's, within 4 sigma
    assert abs(spec["k_primary"]["value"] - 60.0) < 4 * spec["k_primary"]["uncertainty"]
    assert abs(spec["k_secondary"]["value"] - 80.0) < 4 * spec["k_secondary"]["uncertainty"]
    assert result["status"] != "no_orbit_found"


def test_run_with_labels_kept_wrong_is_not_ok(labelled_run, capsys, tmp_path):
    # regression test for issue 12 (K1 = K2 = 0, masses of 0.009 M_sun, status "ok"): forced to keep the
    # wrong labels, the run says no orbit was found, computes no masses and exits 1
    _, argv = labelled_run
    argv = argv[:-1] + [str(tmp_path / "o")] + ["--rv-labels", "given"]
    code, printed = _run(argv, capsys)
    assert code == 1
    result = json.loads((tmp_path / "o" / "result.json").read_text())
    assert result["status"] == "no_orbit_found" and "consistent with zero" in result["message"]
    assert "absolute" not in result


def test_bad_coordinates_are_a_one_line_error(total_csv, tmp_path, capsys):
    _, rv = sample_paths()
    assert main(["run", str(total_csv), "--rv", str(rv), "--coordinates", "north", "--quiet",
                 "--out", str(tmp_path / "o")]) == 2
    assert "--coordinates" in _one_line_error(capsys)
