"""Result files: atomic writing, the output folder rules, the parameters table and formatting."""

import hashlib
import json
import os

import numpy as np
import pytest
from astropy.table import Table

from eclipsekit.errors import InputError
from eclipsekit.results import (
    SECTIONS,
    load_result,
    parameters_table,
    prepare_output_dir,
    quantity,
    write_atomic,
    write_json,
)
from eclipsekit.summary import format_value


def test_quantity_form():
    assert quantity(1.5, 0.1, "d") == {"value": 1.5, "uncertainty": 0.1, "unit": "d"}
    # non-finite numbers are not valid JSON: written as null
    assert quantity(np.nan, np.inf, "") == {"value": None, "uncertainty": None, "unit": ""}


def test_write_atomic_leaves_no_partial_file(tmp_path):
    target = tmp_path / "result.json"

    def failing_writer(tmp):
        with open(tmp, "w") as fh:
            fh.write('{"status": "o')  # half written
        raise OSError("disk full")

    with pytest.raises(OSError):
        write_atomic(target, failing_writer)
    assert not target.exists()
    assert list(tmp_path.iterdir()) == []


def test_write_atomic_keeps_old_file_on_failure(tmp_path):
    target = tmp_path / "result.json"
    write_json(target, {"status": "ok"})
    with pytest.raises(RuntimeError):
        write_atomic(target, lambda tmp: (_ for _ in ()).throw(RuntimeError("interrupted")))
    assert json.loads(target.read_text()) == {"status": "ok"}


def test_output_dir_rules(tmp_path):
    # checked, not made: the folder appears complete at the end of a run (output_folder)
    assert prepare_output_dir(tmp_path / "a" / "new") == tmp_path / "a" / "new"
    assert (tmp_path / "a").is_dir() and not (tmp_path / "a" / "new").exists()
    assert list((tmp_path / "a").iterdir()) == []   # the writability probe is gone
    full = tmp_path / "full"
    full.mkdir()
    (full / "x.txt").write_text("keep me")
    with pytest.raises(InputError, match="not empty; use `overwrite` or another `out`"):
        prepare_output_dir(full)
    assert prepare_output_dir(full, overwrite=True) == full
    assert (full / "x.txt").read_text() == "keep me"
    afile = tmp_path / "afile"
    afile.write_text("")
    with pytest.raises(InputError, match="is a file"):
        prepare_output_dir(afile)


def test_parameters_table_round_trip(tmp_path):
    result = {
        "ephemeris": {"period": quantity(2.5, 1e-5, "d"), "time_system": "BJD_TDB"},
        "geometry": {"inclination": quantity(88.0, 0.1, "deg"), "ecosw": quantity(0.0, None, "")},
    }
    table = parameters_table(result)
    path = tmp_path / "parameters.ecsv"
    table.write(path, format="ascii.ecsv")
    back = Table.read(path, format="ascii.ecsv")
    assert list(back["name"]) == ["period", "inclination", "ecosw"]
    assert back["value"][1] == 88.0
    assert np.isnan(back["uncertainty"][2])


def test_sections_match_design():
    # the quantities each section of result.json must be able to hold (our result schema)
    assert {"period", "t0"} <= set(SECTIONS["ephemeris"])
    assert {"radius_sum", "radius_ratio", "frac_radius_primary", "frac_radius_secondary", "inclination",
            "eccentricity", "omega", "ecosw", "esinw"} <= set(SECTIONS["geometry"])
    assert {"surface_brightness_ratio", "light_ratio", "third_light"} <= set(SECTIONS["photometry"])
    assert {"k_primary", "k_secondary", "gamma", "mass_ratio"} <= set(SECTIONS["spectroscopy"])
    assert {"a", "mass_primary", "mass_secondary", "radius_primary", "radius_secondary", "logg_primary",
            "logg_secondary"} <= set(SECTIONS["absolute"])


def test_load_result_errors(tmp_path):
    with pytest.raises(InputError, match="no such result file"):
        load_result(tmp_path / "missing.json")
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    with pytest.raises(InputError, match="is not a result.json"):
        load_result(bad)
    empty = tmp_path / "empty.json"
    empty.write_text(json.dumps({"status": "no_eclipse_found"}))
    with pytest.raises(InputError, match="no eclipse-fit geometry"):
        load_result(empty)


def test_load_result_samples(tmp_path):
    path = tmp_path / "result.json"
    write_json(path, {"ephemeris": {"period": quantity(3.0, 0.001, "d")},
                      "geometry": {"inclination": quantity(85.0, 0.5, "deg")}})
    res = load_result(path, n_samples=50000)
    assert res.values["period"] == 3.0
    # Gaussian draws: the sample standard deviation matches the quoted uncertainty
    # (relative standard error of a standard deviation is 1/sqrt(2N) ≈ 0.3%; allow 2%)
    assert np.std(res.samples["inclination"]) == pytest.approx(0.5, rel=0.02)
    assert os.path.exists(path)


@pytest.mark.parametrize("value, err, text", [
    (1.234567, 0.0123, "1.235 ± 0.012"),
    (85.2, 0.4, "85.20 ± 0.40"),
    (1234.5, 25.0, "1234 ± 25"),
    (0.5, None, "0.5"),
    (None, None, "—"),
])
def test_format_value(value, err, text):
    # two significant figures on the uncertainty, value rounded to match (common practice)
    assert format_value(value, err) == text


# -- fixed values, asymmetric intervals, priors, notes, statuses ------------------------------------
from eclipsekit.summary import ASYMMETRY, format_summary, is_asymmetric  # noqa: E402


def test_quantity_marks_fixed_and_interval():
    assert quantity(89.5, None, "deg", fixed=True) == {"value": 89.5, "uncertainty": None, "unit": "deg",
                                                      "fixed": True}
    assert quantity(0.3, 0.02, "", interval=(0.29, 0.34))["interval_68"] == [0.29, 0.34]
    assert "fixed" not in quantity(1.0) and "interval_68" not in quantity(1.0)


@pytest.mark.parametrize("interval, asymmetric", [
    ((0.9, 1.1), False),            # symmetric
    ((0.9, 1.1 + 0.02), False),     # sides 0.10 and 0.12: differ by 17% of the larger
    ((0.9, 1.1 + 0.03), True),      # 0.10 and 0.13: 23%
    ((0.95, 1.01), True),           # 0.05 and 0.01
    (None, False),
])
def test_is_asymmetric(interval, asymmetric):
    assert ASYMMETRY == 0.2  # the threshold these cases straddle
    assert is_asymmetric(1.0, interval) is asymmetric


@pytest.mark.parametrize("value, err, interval, text", [
    # sides 0.033 and 0.011: each to two significant figures of the smaller (common practice)
    (0.312, 0.02, (0.301, 0.345), "0.312 +0.033/-0.011"),
    # sides within 20% of each other: the symmetric form
    (85.2, 0.4, (84.8, 85.62), "85.20 ± 0.40"),
    # the value outside its interval (a best fit reported with permutation intervals): no signed sides
    (1.0, 0.1, (1.05, 1.2), "1.00 ± 0.10"),
])
def test_format_value_interval(value, err, interval, text):
    assert format_value(value, err, interval=interval) == text


def _result(status="ok", message="", **fit):
    return {
        "eclipsekit_version": "0", "status": status, "message": message,
        "geometry": {"inclination": quantity(89.5, None, "deg", fixed=True),
                     "radius_ratio": quantity(0.55, 0.02, "", interval=(0.54, 0.60)),
                     "radius_sum": quantity(0.18, 0.0005, "")},
        "fit": {"method": "least squares (lmfit)", "uncertainties": "covariance", "reduced_chi_square": 1.0,
                "n_free_parameters": 9, "warnings": [], **fit},
    }


def test_summary_status_first_line():
    assert format_summary(_result()).splitlines()[0].endswith("status: ok")
    text = format_summary(_result("caution", "stars too large for spherical shapes"))
    assert text.splitlines()[0].endswith("status: caution: stars too large for spherical shapes")
    # an "ok" message (e.g. where the analysis stopped) goes on the next line
    lines = format_summary(_result("ok", "no velocities given")).splitlines()
    assert lines[0].endswith("status: ok") and lines[1].strip() == "no velocities given"


def test_summary_rows_fixed_and_asymmetric():
    rows = {line[2:32].strip(): line for line in format_summary(_result()).splitlines() if line.startswith("  ")}
    assert rows["Inclination"].split()[-3:] == ["89.5", "deg", "(fixed)"]
    assert "0.550 +0.050/-0.010" in rows["k = r2/r1"]
    assert "0.18000 ± 0.00050" in rows["r1 + r2"] and "fixed" not in rows["r1 + r2"]


def test_summary_priors_notes_and_mcmc_reason():
    text = format_summary(_result(
        uncertainties="mcmc", errors_reasons=["radius_ratio's chi-square profile is asymmetric"],
        priors={"light_ratio": {"value": 0.19, "sigma": 0.01}, "ld1_sum": {"value": 0.65, "sigma": 0.2}},
        notes=["the data constrain ld1_sum; ld1_diff follows its prior"]))
    lines = text.splitlines()
    assert "MCMC instead of the covariance matrix: radius_ratio's chi-square profile is asymmetric" in text
    block = lines[lines.index("Priors") + 1:lines.index("Priors") + 3]
    assert "light_ratio" in block[0] and block[0].endswith("0.190 ± 0.010")
    assert "ld1_sum" in block[1] and block[1].endswith("0.65 ± 0.20")
    assert "note: the data constrain ld1_sum; ld1_diff follows its prior" in lines
    # with the covariance trusted there is no such line
    assert "MCMC instead" not in format_summary(_result(errors_reasons=[]))


def test_parameters_table_fixed_column(tmp_path):
    table = parameters_table(_result())
    path = tmp_path / "parameters.ecsv"
    table.write(path, format="ascii.ecsv")
    back = Table.read(path, format="ascii.ecsv")
    assert dict(zip(back["name"], back["fixed"].tolist())) == {"inclination": True, "radius_ratio": False,
                                                               "radius_sum": False}


# -- the output folder: staged, filled at the end, stale files of earlier runs removed ------------------
from eclipsekit.errors import EclipsekitWarning  # noqa: E402
from eclipsekit.results import MANIFEST, output_folder  # noqa: E402


def _run_writing(out, names, overwrite=False):
    with output_folder(out, overwrite=overwrite) as stage:
        for name in names:
            (stage / name).write_text(f"{name} of this run")


def test_new_folder_appears_only_when_complete(tmp_path):
    out = tmp_path / "res"
    with pytest.raises(RuntimeError):
        with output_folder(out) as stage:
            (stage / "parameters.ecsv").write_text("x")
            assert not out.exists()            # nothing visible while writing
            raise RuntimeError("plotting failed")
    assert list(tmp_path.iterdir()) == []      # neither the folder nor the staging folder
    _run_writing(out, ["result.json", "summary.txt"])
    assert sorted(p.name for p in out.iterdir()) == sorted(["result.json", "summary.txt", MANIFEST])
    assert sorted(json.loads((out / MANIFEST).read_text())["files"]) == ["result.json", "summary.txt"]


def test_stale_files_removed_unless_changed_or_not_ours(tmp_path):
    out = tmp_path / "res"
    _run_writing(out, ["result.json", "velocities.png", "velocities.ecsv"])
    (out / "notes.txt").write_text("mine")                    # the user's own file
    (out / "velocities.ecsv").write_text("edited by hand")    # ours, changed since
    with pytest.warns(EclipsekitWarning, match="kept velocities.ecsv"):
        _run_writing(out, ["result.json"], overwrite=True)
    assert sorted(p.name for p in out.iterdir()) == sorted(["result.json", "notes.txt", "velocities.ecsv", MANIFEST])
    assert (out / "velocities.ecsv").read_text() == "edited by hand"
    assert (out / "result.json").read_text() == "result.json of this run"


def test_manifest_cannot_point_outside_the_folder(tmp_path):
    out = tmp_path / "res"
    _run_writing(out, ["result.json"])
    outside = tmp_path / "precious.txt"
    outside.write_text("keep")
    manifest = json.loads((out / MANIFEST).read_text())
    # an edited manifest naming a file outside, with that file's true digest (hashlib's SHA-256)
    manifest["files"]["../precious.txt"] = hashlib.sha256(b"keep").hexdigest()
    (out / MANIFEST).write_text(json.dumps(manifest))
    _run_writing(out, ["summary.txt"], overwrite=True)
    assert outside.read_text() == "keep"
    assert not (out / "result.json").exists()   # the genuine stale entry is removed


def test_write_atomic_error_names_the_file_not_its_temporary(tmp_path):
    target = tmp_path / "missing" / "p.json"
    with pytest.raises(FileNotFoundError) as info:
        write_json(target, {"status": "ok"})
    assert info.value.filename == str(target)
