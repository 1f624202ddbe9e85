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
                                            ("7550 +/- 150", (7550.0, 150.0)), ("7550", 7550.0)])
def test_value_error_parsing(text, expected):
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
