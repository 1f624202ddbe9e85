"""The command line's files, progress bars, pipes and repeatability (issue 13, items 2-5, 18, 20, 21).

The light curve is the "total" system of tests/_systems.py (independent brute-force model),
the velocities come from the textbook Keplerian curve (tests/_textbook.py).
"""

import contextlib
import errno
import io
import json
import os
import re
import select
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import eclipsekit
from eclipsekit.cli import DEMO_SEED, main
from eclipsekit.results import MANIFEST

from _systems import SYSTEMS, light_curve_arrays
from _textbook import textbook_velocity

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "scripts"))
import readme_demo_output  # noqa: E402


@contextlib.contextmanager
def _inside(folder, umask=None):
    """Run in ``folder`` (so that relative --out and the recorded command line repeat), with ``umask``."""
    here = os.getcwd()
    folder.mkdir(parents=True, exist_ok=True)
    os.chdir(folder)
    old = os.umask(umask) if umask is not None else None
    try:
        yield
    finally:
        os.chdir(here)
        if old is not None:
            os.umask(old)


def _cli(folder, argv, umask=None):
    """``main(argv)`` run in ``folder``: (exit code, standard output)."""
    out = io.StringIO()
    with _inside(folder, umask), contextlib.redirect_stdout(out):
        code = main(argv)
    return code, out.getvalue()


def _one_line_error(capsys):
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1, err
    assert "Traceback" not in err[0]
    return err[0]


@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    """lc.csv (two orbits of the "total" system) and rv.csv (both stars, 20 epochs), absolute paths."""
    folder = tmp_path_factory.mktemp("inputs")
    t, f, e = light_curve_arrays("total", 11, n_orbits=2)
    np.savetxt(folder / "lc.csv", np.column_stack([t, f, e]), delimiter=",", header="time,flux,flux_err",
               comments="")
    s = SYSTEMS["total"]
    tv = np.linspace(0.2, 5.8, 20)
    rng = np.random.default_rng(4)
    rv = [textbook_velocity(tv, period=s["period"], t0=s["t0"], k=k, gamma=-8.0, e=0.0, omega_deg=90.0, sign=sign)
          + rng.normal(0.0, 1.0, tv.size) for k, sign in ((80.0, 1.0), (110.0, -1.0))]
    np.savetxt(folder / "rv.csv", np.column_stack([tv, rv[0], np.ones(tv.size), rv[1], np.ones(tv.size)]),
               delimiter=",", header="time,rv1,rv1_err,rv2,rv2_err", comments="")
    return folder / "lc.csv", folder / "rv.csv"


def _env(**extra):
    """The environment of a subprocess running this package (the worktree's, not an installed copy)."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(Path(eclipsekit.__file__).resolve().parents[1])
    env.update(extra)
    return env


def _twice(where, argv, umask=None):
    """``argv`` run in ``where/1`` by this process and in ``where/2`` by a new one (its own hash seed, as
    two commands typed one after the other): (exit code, standard output) of each."""
    first = _cli(where / "1", argv, umask)
    (where / "2").mkdir()
    with _inside(where / "2", umask):
        proc = subprocess.run([sys.executable, "-m", "eclipsekit.cli", *argv], capture_output=True, text=True,
                              env=_env(PYTHONHASHSEED="12345"))
    return first, (proc.returncode, proc.stdout)


@pytest.fixture(scope="module")
def rv_runs(inputs, tmp_path_factory):
    """`run` with velocities and --seed 7, twice, umask 022: the two `res` folders."""
    lc, rv = inputs
    where = tmp_path_factory.mktemp("rv_runs")
    runs = _twice(where, ["run", str(lc), "--rv", str(rv), "--seed", "7", "--out", "res", "--quiet"], umask=0o022)
    assert [code for code, _ in runs] == [0, 0]
    return [where / "1" / "res", where / "2" / "res"]


@pytest.fixture(scope="module")
def demo_runs(tmp_path_factory):
    """The whole `demo`, twice with the same --seed: (printed output, result folder) of each."""
    where = tmp_path_factory.mktemp("demo_runs")
    runs = _twice(where, ["demo", "--seed", str(DEMO_SEED), "--quiet"])
    assert [code for code, _ in runs] == [0, 0]
    return [(printed, where / n / "eclipsekit-demo") for (_, printed), n in zip(runs, "12")]


# -- repeatability (issue 13's check) ----------------------------------------------------------
# Checks of the code against itself, not against an outside reference: the same input and seed must give
# the same result.json byte for byte (the README's promise), from two processes with different hash seeds.
def test_demo_repeats_exactly(demo_runs):
    (printed_a, a), (printed_b, b) = demo_runs
    assert (a / "result.json").read_bytes() == (b / "result.json").read_bytes()
    assert printed_a == printed_b


def test_run_with_velocities_repeats_exactly(rv_runs):
    a, b = rv_runs
    assert "spectroscopy" in json.loads((a / "result.json").read_text())
    assert (a / "result.json").read_bytes() == (b / "result.json").read_bytes()


# -- item 2: permissions follow the umask --------------------------------------------------------
def test_files_follow_umask(rv_runs):
    # umask 022: files rw-r--r--, folders rwxr-xr-x (POSIX open(2)/mkdir(2): mode & ~umask)
    folder = rv_runs[0]
    assert folder.stat().st_mode & 0o777 == 0o755
    modes = {p.name: p.stat().st_mode & 0o777 for p in folder.iterdir()}
    assert "result.json" in modes and "velocities.png" in modes
    assert set(modes.values()) == {0o644}, modes


def test_plot_file_follows_another_umask(inputs, tmp_path):
    # umask 027: rw-r----- (a second umask, so the mode is not a fixed 0644)
    code, _ = _cli(tmp_path, ["period", str(inputs[0]), "--plot", "p.png", "--quiet"], umask=0o027)
    assert code == 0
    assert (tmp_path / "p.png").stat().st_mode & 0o777 == 0o640


# -- item 3: --overwrite removes eclipsekit's stale files, never the user's ----------------------
def test_overwrite_removes_stale_files_only(rv_runs, inputs, tmp_path):
    folder = tmp_path / "res"
    shutil.copytree(rv_runs[0], folder)
    (folder / "notes.txt").write_text("my own notes")
    assert list(folder.glob("velocities.*")) and list(folder.glob("mass_radius.*"))
    code, _ = _cli(tmp_path, ["fit", str(inputs[0]), "--seed", "7", "--out", "res", "--overwrite", "--quiet"])
    assert code == 0
    assert not list(folder.glob("velocities.*")) and not list(folder.glob("mass_radius.*"))
    assert (folder / "notes.txt").read_text() == "my own notes"
    manifest = json.loads((folder / MANIFEST).read_text())
    assert {p.name for p in folder.iterdir()} == set(manifest["files"]) | {MANIFEST, "notes.txt"}
    assert "spectroscopy" not in json.loads((folder / "result.json").read_text())


# -- item 4: a failure while writing leaves the previous result ----------------------------------
def test_failed_write_keeps_previous_result(rv_runs, inputs, tmp_path, monkeypatch, capsys):
    import eclipsekit.results as results

    folder = tmp_path / "res"
    shutil.copytree(rv_runs[0], folder)
    before = {p.name: p.read_bytes() for p in folder.iterdir()}
    real, calls = results.write_table, []

    def disk_full_on_second_table(path, table):
        calls.append(path)
        if len(calls) == 2:   # parameters.ecsv written, then the light curve's table fails
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(path))
        return real(path, table)

    monkeypatch.setattr(results, "write_table", disk_full_on_second_table)
    code, _ = _cli(tmp_path, ["fit", str(inputs[0]), "--out", "res", "--overwrite", "--quiet"])
    assert code == 2 and len(calls) == 2
    msg = _one_line_error(capsys)
    assert "No space left" in msg and "'res'" in msg and ".eclipsekit-" not in msg   # names the folder
    assert {p.name: p.read_bytes() for p in folder.iterdir()} == before   # the old result, complete
    assert sorted(p.name for p in tmp_path.iterdir()) == ["res"]            # no staging folder beside it


# -- item 5: an unwritable folder is refused before computing, by name ---------------------------
def _no_computing(*args, **kwargs):
    raise AssertionError("the analysis ran although the output folder cannot be written")


def test_output_under_a_regular_file_refused_first(inputs, tmp_path, monkeypatch, capsys):
    # the tests may run as root, for whom a read-only folder is writable: a path whose parent is a
    # regular file cannot be written by anyone (mkdir gives ENOTDIR)
    import eclipsekit.pipeline as pipeline

    monkeypatch.setattr(pipeline, "analyse", _no_computing)
    (tmp_path / "afile").write_text("")
    out = tmp_path / "afile" / "res"
    assert main(["run", str(inputs[0]), "--out", str(out), "--quiet"]) == 2
    msg = _one_line_error(capsys)
    assert repr(str(out)) in msg and "--out" in msg and ".eclipsekit-" not in msg


def test_read_only_folder_refused_first(inputs, tmp_path, monkeypatch, capsys):
    import eclipsekit.pipeline as pipeline

    monkeypatch.setattr(pipeline, "analyse", _no_computing)
    folder = tmp_path / "res"
    folder.mkdir()
    folder.chmod(0o555)
    if os.access(folder, os.W_OK):
        # running as root: permissions are not enforced, so make mkdir inside the folder fail as the
        # kernel would for anyone else (EACCES)
        real_mkdir = os.mkdir

        def mkdir(path, *args, **kwargs):
            if Path(path).parent == folder:
                raise PermissionError(errno.EACCES, os.strerror(errno.EACCES), str(path))
            return real_mkdir(path, *args, **kwargs)

        monkeypatch.setattr(os, "mkdir", mkdir)
    try:
        assert main(["run", str(inputs[0]), "--out", str(folder), "--quiet"]) == 2
    finally:
        folder.chmod(0o755)
    msg = _one_line_error(capsys)
    assert repr(str(folder)) in msg and "Permission denied" in msg and ".eclipsekit-" not in msg


# -- item 18: the README's example output is what the demo prints --------------------------------
_NUMBER = re.compile(r"(?<![A-Za-z_\d.])-?\d+(?:\.\d+)?")
_PAIR = re.compile(r"(-?\d+(?:\.\d+)?) ± (\d+(?:\.\d+)?)")


def _last_digit(text: str) -> float:
    """One unit of the last printed digit of a number written as ``text``."""
    return 10.0 ** -len(text.split(".")[1]) if "." in text else 1.0


def _same_output_line(now: str, saved: str) -> bool:
    """Same words and layout; "v ± e" within a quarter of e; other numbers within 2 of their last digit.

    Not to the last digit: the fit stops at slightly different points of the flat limb-darkening
    valley on different processors (see tests/test_golden.py), e.g. an uncertainty share of 86% vs 85%.
    """
    if _NUMBER.sub("#", now) != _NUMBER.sub("#", saved):
        return False
    for (v1, e1), (v2, e2) in zip(_PAIR.findall(now), _PAIR.findall(saved)):
        if abs(float(v1) - float(v2)) > 0.25 * float(e2) or abs(float(e1) - float(e2)) > 2 * _last_digit(e2):
            return False
    rest_now, rest_saved = _NUMBER.findall(_PAIR.sub("", now)), _NUMBER.findall(_PAIR.sub("", saved))
    return all(abs(float(a) - float(b)) <= 2 * _last_digit(b) for a, b in zip(rest_now, rest_saved))


def test_readme_example_is_a_real_demo_run(demo_runs):
    # a consistency check of the documentation with the code's output now (no outside reference)
    printed, _ = demo_runs[0]
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    expected = readme_demo_output.with_block(readme, readme_demo_output.readme_block(printed))
    now_lines, saved_lines = expected.splitlines(), readme.splitlines()
    assert len(now_lines) == len(saved_lines), "README.md's demo output is stale: run python scripts/readme_demo_output.py"
    stale = [(a, b) for a, b in zip(now_lines, saved_lines) if a != b and not _same_output_line(a, b)]
    assert not stale, f"README.md's demo output is stale (run python scripts/readme_demo_output.py): {stale[:3]}"


def test_readme_comparison_can_fail():
    # the tolerant comparison above still catches a moved value and a changed word
    assert _same_output_line("  R1   1.5910 ± 0.0037 R_sun", "  R1   1.5909 ± 0.0037 R_sun")
    assert not _same_output_line("  R1   1.5930 ± 0.0037 R_sun", "  R1   1.5910 ± 0.0037 R_sun")
    assert not _same_output_line("  R2   1.5910 ± 0.0037 R_sun", "  R1   1.5910 ± 0.0037 R_sun")
    assert _same_output_line("    M1:      85% from K2, 15% from K1", "    M1:      86% from K2, 14% from K1")
    assert not _same_output_line("    M1:      80% from K2, 20% from K1", "    M1:      86% from K2, 14% from K1")


def test_demo_default_seed_is_the_readmes():
    from eclipsekit.cli import build_parser

    assert build_parser().parse_args(["demo"]).seed == DEMO_SEED


# -- item 20: progress bars only on a terminal ---------------------------------------------------
def _period_command(path):
    return [sys.executable, "-m", "eclipsekit.cli", "period", str(path)]


def test_no_progress_bar_into_a_file(inputs, tmp_path):
    log = tmp_path / "stderr.log"
    with open(log, "wb") as fh:
        proc = subprocess.run(_period_command(inputs[0]), stdout=subprocess.DEVNULL, stderr=fh, env=_env())
    assert proc.returncode == 0
    text = log.read_bytes()
    # tqdm redraws with carriage returns and names the bar ("period search", see eclipsekit/period.py)
    assert b"\r" not in text and b"period search" not in text and b"chunk" not in text


def test_progress_bar_on_a_terminal(inputs):
    # the other side of the rule: on a terminal (a pseudo-terminal here) the bar is drawn
    import fcntl
    import pty
    import struct
    import termios

    master, slave = pty.openpty()
    # a terminal of 24 rows by 80 columns (a new pseudo-terminal has 0 columns: tqdm would draw an empty bar)
    fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", 24, 80, 0, 0))
    proc = subprocess.Popen(_period_command(inputs[0]), stdout=subprocess.DEVNULL, stderr=slave, env=_env())
    os.close(slave)
    seen = b""
    while True:
        ready, _, _ = select.select([master], [], [], 60)
        try:
            chunk = os.read(master, 4096) if ready else b""
        except OSError:   # EIO: the child closed the terminal
            chunk = b""
        if not chunk:
            break
        seen += chunk
    os.close(master)
    assert proc.wait(60) == 0
    assert b"period search" in seen


def test_tqdm_only_through_the_progress_helper():
    # one place decides (eclipsekit/_progress.py): no other module of the package uses tqdm
    users = [p.relative_to(ROOT).as_posix() for p in (ROOT / "eclipsekit").rglob("*.py")
             if re.search(r"^\s*(from|import) tqdm", p.read_text(encoding="utf-8"), re.M)
             and p.name != "_progress.py"]
    assert users == []


# -- item 21: a closed pipe ends the command quietly ---------------------------------------------
def test_closed_pipe_exits_quietly(inputs):
    read_end, write_end = os.pipe()
    os.close(read_end)  # the reader is gone before eclipsekit writes (like `| head` that has read enough)
    proc = subprocess.run([sys.executable, "-m", "eclipsekit.cli", "inspect", str(inputs[0])], stdout=write_end,
                          stderr=subprocess.PIPE, env=_env())
    os.close(write_end)
    assert proc.stderr == b""
    assert proc.returncode == 1   # the Python documentation's recommendation (signal module, "Note on SIGPIPE")
