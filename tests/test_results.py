"""Result files: atomic writing, the output folder rules, the parameters table and formatting."""

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
    assert prepare_output_dir(tmp_path / "new").is_dir()
    full = tmp_path / "full"
    full.mkdir()
    (full / "x.txt").write_text("keep me")
    with pytest.raises(InputError, match="not empty; use --overwrite"):
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
