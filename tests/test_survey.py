"""Survey: many invented light curves on dask.distributed, the Parquet catalogue, resuming.

The eclipsing binaries' light curves come from the independent brute-force reference
(tests/_brute_force.py), never from eclipsekit's model: the flux of a circular or
eccentric detached pair depends on the orbital phase alone, so it is computed once per
geometry on a fine phase grid and interpolated at each target's phases.
"""

from __future__ import annotations

import json
import math
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pyarrow.parquet as pq
import pytest

from _brute_force import brute_force_flux

from eclipsekit import catalogue
from eclipsekit.cli import main
from eclipsekit.errors import InputError
from eclipsekit.survey import SurveySettings, collect_targets, run_target, summarise, survey

CADENCE = 15.0 / 1440  # days
N_POINTS = 2400        # 25 d of 15-minute photometry
NOISE = 1e-3
GEOMETRIES = {
    "partial": dict(radius_sum=0.20, radius_ratio=0.80, inclination=86.0, surface_brightness_ratio=0.70,
                    ld_primary=(0.50, 0.20), ld_secondary=(0.52, 0.20)),
    "total": dict(radius_sum=0.18, radius_ratio=0.55, inclination=89.5, surface_brightness_ratio=0.60,
                  ld_primary=(0.30, 0.30), ld_secondary=(0.50, 0.20)),
    "eccentric": dict(radius_sum=0.14, radius_ratio=0.85, inclination=88.5, surface_brightness_ratio=0.85,
                      eccentricity=0.15, omega=60.0, ld_primary=(0.50, 0.22), ld_secondary=(0.52, 0.20)),
}
PERIODS = [0.71, 0.93, 1.17, 1.38, 1.62, 1.85, 2.07, 2.33, 2.58, 2.81, 3.06, 3.32, 3.57, 3.84, 4.12,
           4.39, 4.63, 4.91, 5.18, 5.47]
N_FLAT = 10
PHASE = np.linspace(-0.5, 0.5, 4001)  # eclipses >= 0.03 in phase: >= 120 grid points


def _write(path: Path, t: np.ndarray, flux: np.ndarray) -> None:
    np.savetxt(path, np.c_[t, flux, np.full(t.size, NOISE)], delimiter=",", header="time,flux,flux_err",
               comments="", fmt="%.8f")


@pytest.fixture(scope="module")
def inputs(tmp_path_factory) -> dict:
    """32 invented targets: 20 eclipsing binaries, 10 constant stars, one corrupt file, one empty file."""
    folder = tmp_path_factory.mktemp("survey_inputs")
    profiles = {name: brute_force_flux(PHASE, period=1.0, t0=0.0, ld_law="quadratic", n_r=100, n_theta=200, **g)
                for name, g in GEOMETRIES.items()}
    rng = np.random.default_rng(15)
    t = np.arange(N_POINTS) * CADENCE
    truth = {}
    for i, period in enumerate(PERIODS):
        geometry = list(GEOMETRIES)[i % len(GEOMETRIES)]
        t0 = rng.uniform(0.0, period)
        phase = (t - t0) / period
        flux = np.interp(phase - np.round(phase), PHASE, profiles[geometry]) + rng.normal(0, NOISE, t.size)
        name = folder / "binaries" / f"eb{i:02d}.csv"
        name.parent.mkdir(exist_ok=True)
        _write(name, t, flux)
        truth[str(name)] = period
    for i in range(N_FLAT):
        name = folder / "constant" / f"star{i:02d}.csv"
        name.parent.mkdir(exist_ok=True)
        _write(name, t, 1.0 + rng.normal(0, NOISE, t.size))
    (folder / "bad").mkdir()
    (folder / "bad" / "corrupt.csv").write_bytes(b"time,flux,flux_err\n0.0,1.0,0.001\n\x00\x8f\x02\xff binary junk")
    (folder / "bad" / "empty.csv").write_bytes(b"")
    return {"folder": folder, "truth": truth, "duration": _durations(profiles)}


def _durations(profiles: dict) -> float:
    """Shortest primary-eclipse duration, in phase, of the invented geometries."""
    widths = []
    for flux in profiles.values():
        near = np.abs(PHASE) < 0.25
        dimmed = PHASE[near][flux[near] < 1.0 - 1e-9]
        widths.append(dimmed.max() - dimmed.min())
    return min(widths)


@pytest.fixture(scope="module")
def two_workers(inputs, tmp_path_factory) -> dict:
    """The whole test survey, period search stage, on a local cluster of 2 workers."""
    out = tmp_path_factory.mktemp("survey_2w")
    table = survey([inputs["folder"]], out, workers=2, stages="search", progress=False)
    return {"table": table, "out": out}


def _rows(table) -> dict:
    return {str(row["source"]): row for row in table}


def test_every_target_has_a_row_with_the_right_status(inputs, two_workers):
    rows = _rows(two_workers["table"])
    assert len(rows) == len(PERIODS) + N_FLAT + 2
    for source, row in rows.items():
        if "binaries" in source:
            assert row["status"] == "ok", (source, row["message"])
            assert row["message"] == ""
        elif "constant" in source:
            assert row["status"] == "no_eclipse_found", (source, row["message"])
            assert math.isnan(row["period"])
    corrupt = rows[str(inputs["folder"] / "bad" / "corrupt.csv")]
    assert corrupt["status"] == "unreadable"
    assert "corrupt.csv" in corrupt["message"] and "binary file" in corrupt["message"]
    empty = rows[str(inputs["folder"] / "bad" / "empty.csv")]
    assert empty["status"] == "unreadable" and "empty" in empty["message"]
    text = summarise(two_workers["table"])
    assert f"eclipsing binaries found: {len(PERIODS)}" in text and "unreadable 2" in text


def test_eclipsing_binaries_have_the_right_periods(inputs, two_workers):
    rows = _rows(two_workers["table"])
    baseline = (N_POINTS - 1) * CADENCE
    for source, period in inputs["truth"].items():
        row = rows[source]
        error = abs(row["period"] - period)
        # Over the baseline, a period error dP moves the last eclipse by (baseline / P) dP; a usable
        # ephemeris keeps that under a tenth of the shortest eclipse (common practice for follow-up)
        assert error * baseline / period < 0.1 * inputs["duration"] * period, (source, row["period"], period)
        # and the stated uncertainty is honest: within 5 sigma (20 targets; 5 sigma is a 6e-7 chance each)
        assert error < 5 * row["period_uncertainty"], (source, row["period"], row["period_uncertainty"], period)
        assert 0 < row["depth_primary"] < 1


def test_catalogue_file_units_parts_and_figures(inputs, two_workers):
    out = two_workers["out"]
    table = pq.read_table(out / "catalogue.parquet")
    assert table.num_rows == len(PERIODS) + N_FLAT + 2
    for column in ("source", "status", "message", "period", "period_uncertainty", "t0", "depth_primary",
                   "depth_secondary", "secondary_phase", "radius_sum", "radius_sum_uncertainty", "inclination",
                   "inclination_uncertainty", "surface_brightness_ratio", "ecosw", "esinw"):
        assert column in table.column_names, column
    assert table.schema.field("period").metadata[b"unit"] == b"d"
    assert json.loads(table.schema.metadata[b"units"])["inclination"] == "deg"
    assert two_workers["table"]["period"].unit == "d"
    # each target computed exactly once (the journal has one record per computation)
    sources = [r["source"] for r in catalogue.read_journal(out)]
    assert sorted(sources) == sorted(str(s) for s in two_workers["table"]["source"])
    for name in ("catalogue_periods", "catalogue_depths", "catalogue_status"):
        assert (out / "figures" / f"{name}.png").stat().st_size > 0
    ok = next(r for r in two_workers["table"] if r["status"] == "ok")
    assert json.loads((out / ok["result_dir"] / "result.json").read_text())["status"] == "ok"


def test_scheduler_with_one_worker_gives_the_same_catalogue(inputs, two_workers, tmp_path):
    """--scheduler against a cluster started here, with 1 worker: the rows of the 2-worker run."""
    from distributed import LocalCluster

    subset = sorted(inputs["truth"])[:4] + [str(inputs["folder"] / "constant" / "star00.csv"),
                                            str(inputs["folder"] / "bad")]
    with LocalCluster(n_workers=1, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        table = survey(subset, tmp_path / "out", scheduler=cluster.scheduler_address, stages="search",
                       progress=False)
    reference = _rows(two_workers["table"])
    assert len(table) == 7
    for row in table:
        other = reference[str(row["source"])]
        for column in table.colnames:
            if column in ("seconds",):  # wall-clock time: differs run to run
                continue
            a, b = row[column], other[column]
            if isinstance(a, float) and math.isnan(a):
                assert math.isnan(b), column
            else:
                assert a == b, (row["source"], column, a, b)


def test_interrupted_run_resumes_without_recomputing(inputs, tmp_path):
    out = tmp_path / "out"
    # every binary and one worker, interrupted after the first target: the rest (~20 searches, several
    # seconds) is still to do when the signal arrives.  (With 7 targets on 2 workers, interrupted after the
    # second, a quiet CI machine finished the whole run before the signal landed.)
    files = sorted(inputs["truth"]) + [str(inputs["folder"] / "bad" / "empty.csv")]
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(Path(__file__).parents[1]),
                                                       os.environ.get("PYTHONPATH", "")]))
    command = [sys.executable, "-m", "eclipsekit.cli", "survey", *files, "--out", str(out), "--stages", "search",
               "--workers", "1", "--quiet"]
    # SIGINT's default action in the child, whatever the test runner inherited: a runner started in the
    # background by a non-interactive shell ignores SIGINT, and an ignored signal stays ignored across exec
    # (POSIX), so the survey would never see it (this made CI rehearsals under `nohup ... &` fail)
    proc = subprocess.Popen(command, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    deadline = time.monotonic() + 90
    while not catalogue.read_journal(out) and time.monotonic() < deadline and proc.poll() is None:
        time.sleep(0.1)
    assert proc.poll() is None, "the survey ended before it could be interrupted"
    proc.send_signal(signal.SIGINT)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 130, err
    assert "interrupted" in err
    first = catalogue.read_journal(out)
    assert 1 <= len(first) < len(files)
    interrupted = pq.read_table(out / "catalogue.parquet")  # written, and readable, after the interrupt
    assert sorted(interrupted["source"].to_pylist()) == sorted(r["source"] for r in first)

    table = survey(files, out, workers=2, stages="search", progress=False)
    assert len(table) == len(files)
    assert table.meta["skipped"] == len(first) and table.meta["computed"] == len(files) - len(first)
    records = catalogue.read_journal(out)
    assert sorted(r["source"] for r in records) == sorted(files)  # no target computed twice
    assert pq.read_table(out / "catalogue.parquet").num_rows == len(files)


def test_timeout_is_a_row_and_the_batch_goes_on(inputs, tmp_path):
    files = [sorted(inputs["truth"])[0], str(inputs["folder"] / "bad" / "corrupt.csv")]
    # the eclipse fit of 2,400 points takes seconds (measured 1.4 s alone), far over 0.2 s
    table = survey(files, tmp_path / "out", workers=1, stages="fit", timeout=0.2, progress=False)
    rows = _rows(table)
    assert rows[files[0]]["status"] == "timeout" and "--timeout" in rows[files[0]]["message"]
    assert rows[files[1]]["status"] == "unreadable"


def test_rerun_skips_unless_redo(inputs, tmp_path):
    """run_target alone (no cluster): an up-to-date row is reused; redo recomputes; a changed file too."""
    path = tmp_path / "lc.csv"
    path.write_bytes((inputs["folder"] / "bad" / "corrupt.csv").read_bytes())
    (target,) = collect_targets([path])
    out = str(tmp_path / "out")
    row, skipped = run_target(target, out, SurveySettings(stages="search"))
    assert not skipped and row["status"] == "unreadable"
    assert run_target(target, out, SurveySettings(stages="search"))[1]
    assert not run_target(target, out, SurveySettings(stages="search", redo=True))[1]
    assert not run_target(target, out, SurveySettings(stages="fit"))[1]  # other settings
    path.write_bytes(b"")  # other content
    row, skipped = run_target(target, out, SurveySettings(stages="fit"))
    assert not skipped and "empty" in row["message"]
    assert len(catalogue.read_journal(out)) == 4


def test_listing_table(tmp_path):
    (tmp_path / "lc").mkdir()
    (tmp_path / "listing.csv").write_text(
        "light_curve,velocities,teff_primary,teff_primary_err,period\n"
        "lc/a.csv,lc/a_rv.csv,6500,120,2.5\n"
        "lc/b.csv,,,,\n")
    a, b = collect_targets([tmp_path / "listing.csv"])
    assert (a.source, a.path) == ("lc/a.csv", str(tmp_path / "lc" / "a.csv"))
    assert a.velocities == str(tmp_path / "lc" / "a_rv.csv")
    assert a.teff_primary == (6500.0, 120.0) and a.teff_secondary is None and a.period_hint == 2.5
    assert b.velocities is None and b.teff_primary is None and b.period_hint is None
    (tmp_path / "bad.csv").write_text("file,period\nx.csv,soon\n")
    with pytest.raises(InputError, match=r"bad.csv, row 1, column 'period'"):
        collect_targets([tmp_path / "bad.csv"])


def test_command_line_errors_name_the_options(tmp_path, capsys):
    (tmp_path / "nothing").mkdir()
    assert main(["survey", str(tmp_path / "nothing"), "--out", str(tmp_path / "out")]) == 2
    assert "no light-curve files found in INPUTS" in capsys.readouterr().err
    assert main(["survey", str(tmp_path), "--out", str(tmp_path / "out"), "--workers", "0"]) == 2
    assert "--workers must be a positive whole number" in capsys.readouterr().err


def test_survey_is_callable_after_importing_its_module():
    import eclipsekit
    import eclipsekit.survey  # noqa: F401 -- sets the package attribute to the module

    assert eclipsekit.survey.survey is survey
    with pytest.raises(InputError, match="`stages`"):
        eclipsekit.survey(["x"], "y", stages="everything")


def test_worker_death_is_a_row(inputs, tmp_path):
    """A task whose worker process died (dask raises KilledWorker) becomes a 'crashed' row, written at once."""
    from distributed.scheduler import KilledWorker

    from eclipsekit.survey import _Run

    class DeadFuture:
        def result(self):
            raise KilledWorker("survey-task", None, 0)

    class Bar:
        def update(self, n):
            pass

        def set_postfix(self, **kwargs):
            pass

    (target,) = collect_targets([sorted(inputs["truth"])[0]])
    run = _Run(None, [target], tmp_path, SurveySettings(stages="search"), None, Bar())
    run._finished(DeadFuture(), target)
    row = catalogue.read_part(catalogue.part_path(tmp_path, target.ident))
    assert row["status"] == "crashed" and "worker process died" in row["message"]
    assert run.counts["crashed"] == 1
    assert [r["status"] for r in catalogue.read_journal(tmp_path)] == ["crashed"]
