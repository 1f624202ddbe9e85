"""What the command line says (issue 13, items 6, 8, 12-17): input columns, messages, numbers, figures.

Each check runs the command line (``main([...])``) and reads what it prints or writes.
"""

import contextlib
import inspect
import io
import json
import re
from types import SimpleNamespace

import numpy as np
import pytest

import eclipsekit as ek
from eclipsekit import cli
from eclipsekit.cli import main
from eclipsekit.data import read_light_curve, sample_paths
from eclipsekit.errors import EclipsekitWarning, InputError
from eclipsekit.pipeline import Analysis
from eclipsekit.results import NO_VELOCITIES, load_result

#: a printed "value ± uncertainty"
_PM = re.compile(r"(-?\d+(?:\.(\d+))?) ± (\d+(?:\.(\d+))?)")


def _one_line_error(capsys):
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err
    assert "Traceback" not in err[0]
    return err[0]


def _assert_rounded_to_uncertainty(text):
    """Every "v ± e": e to two significant figures, v to the same decimal place (common practice)."""
    found = _PM.findall(text)
    assert found, text
    for value, value_decimals, error, error_decimals in found:
        assert len(value_decimals) == len(error_decimals), (value, error)
        digits = error.replace(".", "").lstrip("0")
        assert len(digits) == 2 or (len(digits) < 2 and not error_decimals), error
        assert float(error) > 0, error       # never a zero error


@pytest.fixture
def scatter_csv(tmp_path, detached_arrays):
    """A light curve with injected noise 1e-3 (tests/conftest.py) and the given error column."""
    def write(name, errors):
        t, f, _ = detached_arrays
        lines = ["time,flux,flux_err"] + [f"{a:.6f},{b:.8f},{c}" for a, b, c in zip(t, f, errors)]
        path = tmp_path / name
        path.write_text("\n".join(lines) + "\n")
        return path
    return write


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    """The whole job on the bundled sample: its folder, with what it printed in printed.txt."""
    out = tmp_path_factory.mktemp("demo") / "o"
    printed = io.StringIO()
    with contextlib.redirect_stdout(printed):
        assert main(["demo", "--out", str(out), "--quiet"]) == 0
    (out.parent / "printed.txt").write_text(printed.getvalue())
    return out


# ---- 6. an empty error column, and --err-col none -------------------------------------------
def test_all_nan_error_column_is_estimated_with_one_warning(scatter_csv, capsys):
    path = scatter_csv("lc.csv", ["nan"] * 1000)
    assert main(["inspect", str(path), "--json"]) == 0
    captured = capsys.readouterr()
    warned = [line for line in captured.err.splitlines() if "warning" in line]
    assert len(warned) == 1 and "'flux_err'" in warned[0] and "point-to-point scatter" in warned[0]
    summary = json.loads(captured.out)
    assert summary["n_points"] == 1000 and summary["flux_err_estimated"] is True
    # injected sigma 1e-3; the MAD-based estimate from 999 differences has ~3% scatter: 10%
    assert summary["median_flux_err"] == pytest.approx(1e-3, rel=0.1)


def test_err_col_none_ignores_the_error_column(scatter_csv, capsys):
    path = scatter_csv("lc.csv", ["0.05"] * 1000)      # errors 50x the real scatter
    assert main(["inspect", str(path), "--json", "--err-col", "none"]) == 0
    captured = capsys.readouterr()
    assert "not used, as asked" in captured.err
    assert json.loads(captured.out)["median_flux_err"] == pytest.approx(1e-3, rel=0.1)
    # the Python spelling of --err-col none (err_col=None detects the column)
    with pytest.warns(EclipsekitWarning, match="point-to-point scatter"):
        lc = read_light_curve(path, err_col=False)
    assert lc.flux_err[0] == pytest.approx(1e-3, rel=0.1)
    # the file's errors divided by the normalisation level (1 to ~1e-4 here)
    assert read_light_curve(path).flux_err[0] == pytest.approx(0.05, rel=1e-3)


# ---- 8. command-line messages name command-line options -------------------------------------
def test_cli_error_names_the_option_python_error_the_argument(tmp_path, capsys):
    path = tmp_path / "lc.csv"
    path.write_text("epoch,flux\n" + "\n".join(f"{i},1.0" for i in range(30)) + "\n")
    assert main(["inspect", str(path)]) == 2
    message = _one_line_error(capsys)
    assert "--time-col" in message and "time_col" not in message
    with pytest.raises(InputError, match=r"`time_col`$"):
        read_light_curve(path)


def test_joint_without_velocities_names_options(capsys):
    lc, _ = sample_paths()
    assert main(["run", str(lc), "--joint", "--quiet", "--out", "unused"]) == 2
    message = _one_line_error(capsys)
    assert "--rv" in message and "--joint" in message and "velocities" in message
    assert "`" not in message
    with pytest.raises(InputError, match="give `velocities`"):
        ek.analyse(str(lc), joint=True)


def test_translation_names_only_options_of_the_command():
    parser = cli.build_parser()
    commands = parser._subparsers._group_actions[0].choices
    every_option = {o for p in commands.values() for a in p._actions for o in a.option_strings}
    every_option |= {a.metavar for p in commands.values() for a in p._actions if not a.option_strings and a.metavar}
    # every option a message may name exists (no suggestion of a missing option)
    assert set(cli._OPTION_OF.values()) <= every_option
    # every Python name translated is an argument of the public API (the survey function itself: once its
    # module is imported, ``ek.survey`` is the callable module, whose signature is *args, **kwargs)
    from eclipsekit.survey import survey as survey_function

    arguments = set()
    for function in (ek.read_light_curve, ek.read_velocities, ek.find_period, ek.fit_eclipses, ek.fit_velocities,
                     ek.absolute_dimensions, ek.analyse, Analysis.write, ek.eclipse_times, survey_function):
        arguments |= set(inspect.signature(function).parameters)
    assert set(cli._OPTION_OF) <= arguments
    fit_args = parser.parse_args(["fit", "lc.csv"])
    names = cli._option_names(fit_args)
    assert cli._in_option_terms("give `k_secondary`", names) == "give `k_secondary`"   # `fit` has no --k2
    assert cli._in_option_terms("use `err_col=False`", names) == "use --err-col none"
    assert cli._in_option_terms("`priors['light_ratio']`", names) == "--prior light_ratio"
    assert cli._in_option_terms("free it with `free=['third_light']`", names) == "free it with --free third_light"
    run_names = cli._option_names(parser.parse_args(["run", "lc.csv"]))
    assert cli._in_option_terms("give `k_secondary`", run_names) == "give --k2"


def test_demo_summary_names_options(demo):
    # the third-light note, written in Python terms, names the option on the command line
    printed = (demo.parent / "printed.txt").read_text()
    assert "(free it with --free third_light)" in printed and "free=" not in printed
    notes = load_result(demo / "result.json").content["fit"]["notes"]
    assert any("(free it with `free=['third_light']`)" in note for note in notes)


# ---- 12. values without an uncertainty -------------------------------------------------------
def test_bare_amplitudes_are_refused(demo, capsys):
    code = main(["dimensions", str(demo / "result.json"), "--k1", "68.3", "--k2", "79.2"])
    assert code == 2
    err = capsys.readouterr().err
    assert "'68.3' has no uncertainty" in err and "68.3±E" in err
    assert main(["dimensions", str(demo / "result.json"), "--k1", "68.3±0", "--k2", "79.2±0.5"]) == 2
    assert "uncertainty must be positive" in capsys.readouterr().err


def test_exact_amplitudes_in_python_print_no_zero_error(demo):
    light = load_result(demo / "result.json")
    with pytest.warns(EclipsekitWarning) as caught:
        dims = ek.absolute_dimensions(light, k_primary=68.3, k_secondary=79.2, seed=1)
    messages = [str(w.message) for w in caught]
    assert "`k_primary` has no uncertainty; it is treated as exact" in messages
    assert "`k_secondary` has no uncertainty; it is treated as exact" in messages
    # q = K1/K2 from exact amplitudes is exact: no uncertainty, not a rounding-noise "± 0.000000000000"
    assert dims.uncertainties["mass_ratio"] is None
    assert dims.values["mass_ratio"] == pytest.approx(68.3 / 79.2, rel=1e-12)
    text = dims.summary()
    assert re.search(r"mass_ratio\s+0\.8624 +\(no uncertainty\)", text)
    assert not re.search(r"± 0(\.0*)?(\s|$)", text)


# ---- 13. dimensions after a fit without velocities -------------------------------------------
def test_dimensions_drops_the_stale_no_velocities_message(demo, tmp_path, capsys):
    content = json.loads((demo / "result.json").read_text())
    for section in ("spectroscopy", "absolute"):
        content.pop(section, None)
    content["status"], content["message"] = "ok", NO_VELOCITIES   # as `eclipsekit fit` writes it
    light = tmp_path / "result.json"
    light.write_text(json.dumps(content))
    assert main(["dimensions", str(light), "--k1", "91.7±0.3", "--k2", "118.5±0.4", "--out", str(tmp_path / "o"),
                 "--quiet"]) == 0
    printed = capsys.readouterr().out
    assert "no velocities given" not in printed and "M1" in printed
    assert json.loads((tmp_path / "o" / "result.json").read_text())["message"] == ""


# ---- 14. numbers rounded to their precision ---------------------------------------------------
def test_demo_numbers_rounded_to_their_uncertainty(demo):
    text = (demo / "summary.txt").read_text()
    _assert_rounded_to_uncertainty(text)
    # statistics without an uncertainty: 4 significant figures (summary.DIGITS)
    rms = re.search(r"rms primary\s+(\S+) km / s", text).group(1)
    assert len(rms.replace(".", "").lstrip("0")) <= 4


def test_period_command_numbers_rounded(capsys):
    lc, _ = sample_paths()
    assert main(["period", str(lc), "--quiet"]) == 0
    printed = capsys.readouterr().out
    _assert_rounded_to_uncertainty(printed.split("reasoning")[0])
    duration = re.search(r"duration (\S+) d", printed).group(1)
    assert len(duration.replace(".", "").lstrip("0")) == 4


# ---- 15. figures --------------------------------------------------------------------------------
def test_periodogram_title_gives_the_fitted_period():
    from eclipsekit.plots import plot_periodograms

    search = SimpleNamespace(bls_periods=np.geomspace(1, 10, 50), bls_power=np.ones(50),
                             pdm_periods=np.geomspace(1, 10, 50), pdm_theta=np.ones(50), period=3.2418162,
                             period_err=9.0e-6, t0=0.0, found=True, alternative_period=None)
    fit = SimpleNamespace(values={"period": 3.2418126, "t0": 0.0}, uncertainties={"period": 1.4e-6})
    assert plot_periodograms(search, fit=fit).axes[0].get_title("left") == "P = 3.2418126 ± 0.0000014 d (eclipse fit)"
    assert plot_periodograms(search).axes[0].get_title("left") == "P = 3.2418162 ± 0.0000090 d (period search)"


def test_mass_radius_axes_carry_enough_labelled_ticks(demo):
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from eclipsekit.plots import plot_mass_radius_luminosity

    result = json.loads((demo / "result.json").read_text())["absolute"]
    dims = SimpleNamespace(values={k: q["value"] for k, q in result.items() if isinstance(q, dict) and "value" in q},
                           uncertainties={k: q["uncertainty"] for k, q in result.items()
                                          if isinstance(q, dict) and "value" in q})
    fig = plot_mass_radius_luminosity(dims)
    FigureCanvasAgg(fig).draw()
    for ax in fig.axes:
        for axis, (lo, hi) in ((ax.xaxis, ax.get_xlim()), (ax.yaxis, ax.get_ylim())):
            labelled = [t for t in axis.get_major_ticks() if lo <= t.get_loc() <= hi and t.label1.get_text()]
            assert len(labelled) >= 4, [t.label1.get_text() for t in labelled]
    assert (demo / "mass_radius.png").stat().st_size > 0 and (demo / "periodograms.png").stat().st_size > 0


# ---- 16. no uncited main-sequence check -----------------------------------------------------------
def test_no_main_sequence_verdict(demo, tmp_path, capsys):
    # a 15000 K primary of 1.76 M_sun would have been "far from the main sequence" by the dropped relation
    assert main(["dimensions", str(demo / "result.json"), "--k1", "91.7±0.3", "--k2", "118.5±0.4",
                 "--teff1", "15000±200", "--teff2", "6600±150"]) == 0
    captured = capsys.readouterr()
    assert "main-sequence" not in captured.out + captured.err and "L1" in captured.out
    assert not hasattr(ek.dimensions, "main_sequence_luminosity")


# ---- 17. the uncertainty budget by table labels -------------------------------------------------
def test_budget_lines_use_table_labels(demo):
    text = (demo / "summary.txt").read_text()
    budget = text.split("Where the uncertainty comes from:")[1].split("\n\n")[0]
    assert re.search(r"M1:\s+\d+% from K2, \d+% from K1", budget)
    assert re.search(r"R1:.*from r1", budget)
    assert not re.search(r"k_secondary|k_primary|frac_radius", budget)


def test_rounding_that_carries_into_the_next_decade_keeps_two_figures():
    # regression test: 0.0996 rounds to 0.10 (two significant figures, common practice), not 0.100
    from eclipsekit.summary import format_value

    assert format_value(0.26, 0.0996) == "0.26 ± 0.10"
    assert format_value(1.0, 0.00996) == "1.000 ± 0.010"
    _assert_rounded_to_uncertainty(format_value(0.26, 0.0996))
