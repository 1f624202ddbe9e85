"""End to end: `eclipsekit run` on the bundled sample, as a user runs it, and the result files."""

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from astropy.table import Table

from eclipsekit.cli import main
from eclipsekit.data import sample_paths
from eclipsekit.results import SECTIONS

ROOT = Path(__file__).resolve().parent.parent
TRUTH = json.loads((ROOT / "samples" / "truth.json").read_text())

FIGURES = ["periodograms", "light_curve", "eclipses", "velocities", "mass_radius"]
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification, ISO/IEC 15948)


@pytest.fixture(scope="module")
def run_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("run") / "results"
    lc, rv = sample_paths()
    proc = subprocess.run(
        [sys.executable, "-m", "eclipsekit.cli", "run", str(lc), "--rv", str(rv),
         "--teff1", f"{TRUTH['teff_primary']}±150", "--teff2", f"{TRUTH['teff_secondary']}±150",
         "--free", "ld1_1", "ld2_1", "--out", str(out), "--quiet", "--seed", "3"],
        capture_output=True, text=True, timeout=600)
    assert proc.returncode == 0, proc.stderr
    return out, proc


def _q(result, section, name):
    q = result[section][name]
    return q["value"], q["uncertainty"]


def test_files_exist(run_dir):
    out, _ = run_dir
    for name in ["result.json", "parameters.ecsv", "light_curve.ecsv", "velocities.ecsv", "summary.txt"]:
        assert (out / name).is_file(), name
        assert (out / name).stat().st_size > 0
    for fig in FIGURES:
        png = out / f"{fig}.png"
        assert png.read_bytes()[:8] == PNG_MAGIC, fig
        assert (out / f"{fig}.pdf").read_bytes()[:5] == b"%PDF-"  # PDF header (ISO 32000)
        import matplotlib.image as mpimg

        image = mpimg.imread(png)
        assert image.shape[0] > 300 and image.shape[1] > 300  # legible at 300 dpi
        assert np.std(image) > 0  # not blank
    assert not list(out.glob("*.part"))  # no leftovers of the atomic writes


def test_result_schema(run_dir):
    out, _ = run_dir
    result = json.loads((out / "result.json").read_text())
    assert result["status"] == "ok"
    for section in ("input", "ephemeris", "geometry", "photometry", "spectroscopy", "absolute", "fit"):
        assert section in result, section
    for section in SECTIONS:
        for name, q in result[section].items():
            if isinstance(q, dict) and "value" in q:
                assert set(q) == {"value", "uncertainty", "unit"}, (section, name)
                assert isinstance(q["value"], float)
    assert result["input"]["light_curve"]["time_system"] == "BJD_TDB"
    assert "luminosity_primary" in result["absolute"]
    assert result["eclipsekit_version"]
    assert "run" in result["command"]


@pytest.mark.parametrize("section, name", [
    ("ephemeris", "period"), ("ephemeris", "t0"), ("geometry", "radius_sum"), ("geometry", "radius_ratio"),
    ("geometry", "inclination"), ("geometry", "ecosw"), ("geometry", "esinw"),
    ("photometry", "surface_brightness_ratio"), ("spectroscopy", "k_primary"), ("spectroscopy", "k_secondary"),
    ("spectroscopy", "gamma"),
])
def test_recovers_sample_truth(run_dir, section, name):
    out, _ = run_dir
    result = json.loads((out / "result.json").read_text())
    value, err = _q(result, section, name)
    assert err is not None and err > 0
    truth = TRUTH[name]
    if name == "t0":
        # any primary minimum is a valid epoch (the fit reports one near the middle of the data)
        truth += round((value - truth) / TRUTH["period"]) * TRUTH["period"]
    assert abs(value - truth) < 3 * err, (name, value, err, truth)


def test_masses_against_standard_formula(run_dir):
    # M sin^3 i = 1.036149e-7 (1 - e^2)^(3/2) (K1 + K2)^2 K2 P  [M_sun, km/s, d]
    # (standard numerical form from the IAU 2015 B3 nominal constants; e.g. Prša et al. 2016, AJ 152, 41)
    out, _ = run_dir
    result = json.loads((out / "result.json").read_text())
    e2 = TRUTH["ecosw"] ** 2 + TRUTH["esinw"] ** 2
    sin3i = math.sin(math.radians(TRUTH["inclination"])) ** 3
    k1, k2, p = TRUTH["k_primary"], TRUTH["k_secondary"], TRUTH["period"]
    m1 = 1.036149e-7 * (1 - e2) ** 1.5 * (k1 + k2) ** 2 * k2 * p / sin3i
    m2 = 1.036149e-7 * (1 - e2) ** 1.5 * (k1 + k2) ** 2 * k1 * p / sin3i
    for name, truth in (("mass_primary", m1), ("mass_secondary", m2)):
        value, err = _q(result, "absolute", name)
        assert abs(value - truth) < 3 * err, (name, value, err, truth)
        assert abs(value - truth) / truth < 0.01


def test_light_curve_table(run_dir):
    out, _ = run_dir
    table = Table.read(out / "light_curve.ecsv", format="ascii.ecsv")
    for col in ("time", "flux", "flux_err", "model", "residual", "phase", "rejected"):
        assert col in table.colnames
    used = ~table["rejected"]
    # residual rms close to the sample's 0.6 ppt white noise (relative to the flux level)
    rel = table["residual"][used] / table["model"][used]
    assert 0.5e-3 < np.std(rel) < 0.7e-3


def test_summary_printed(run_dir):
    out, proc = run_dir
    text = (out / "summary.txt").read_text()
    assert "Absolute dimensions" in text and "M1" in text
    assert "Absolute dimensions" in proc.stdout


def test_demo_refuses_nonempty_output(tmp_path, capsys):
    (tmp_path / "something").write_text("x")
    assert main(["demo", "--out", str(tmp_path), "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "--overwrite" in err[0]


# -- the Python API ----------------------------------------------------------------------
@pytest.fixture(scope="module")
def analysis():
    from eclipsekit.pipeline import analyse

    lc, rv = sample_paths()
    return analyse(lc, rv, free=("ld1_1", "ld2_1"), progress=False, seed=4)


def test_api_matches_design(analysis):
    import eclipsekit as ek

    # ../shared/DESIGN.md: the public names users rely on
    for name in ("read_light_curve", "find_period", "fit_eclipses", "read_velocities", "fit_velocities",
                 "absolute_dimensions", "model_flux", "analyse"):
        assert callable(getattr(ek, name)), name
    assert analysis.status == "ok"
    assert set(analysis.timings) >= {"read", "period search", "eclipse fit", "velocity fit", "absolute dimensions"}
    figures = analysis.plot()
    assert set(figures) == set(FIGURES)


def test_interrupted_write_leaves_no_result_json(analysis, tmp_path, monkeypatch):
    import eclipsekit.plots as plots

    calls = {"n": 0}
    real = plots.save_figure

    def failing_save(*args, **kwargs):
        calls["n"] += 1
        if calls["n"] == 2:
            raise KeyboardInterrupt  # the user presses Ctrl-C while figures are written
        return real(*args, **kwargs)

    monkeypatch.setattr(plots, "save_figure", failing_save)
    out = tmp_path / "out"
    with pytest.raises(KeyboardInterrupt):
        analysis.write(out)
    assert not (out / "result.json").exists()
    assert not list(out.glob("*.part")) and not list(out.glob(".*.part"))
    # what was written before the interruption is complete and readable
    Table.read(out / "parameters.ecsv", format="ascii.ecsv")


def test_long_cadence_without_exposure_warns():
    from eclipsekit.data import read_light_curve
    from eclipsekit.pipeline import analyse

    lc_path, _ = sample_paths()
    lc = read_light_curve(lc_path)
    sparse = type(lc)(lc.time[::15], lc.flux[::15], lc.flux_err[::15], meta=lc.meta)  # 30-minute cadence
    result = analyse(sparse, period=TRUTH["period"], t0=TRUTH["t0"], progress=False)
    assert any("smeared" in w for w in result.warnings)


def test_packaged_sample_matches_samples_folder():
    # eclipsekit/sample_data/ is the installed copy of samples/ (scripts/make_samples.py writes both)
    packaged = sample_paths()[0].parent
    for name in ("demo_light_curve.csv", "demo_velocities.csv", "truth.json"):
        assert (packaged / name).read_bytes() == (ROOT / "samples" / name).read_bytes(), name
