"""Mutated light curves through the reader, the period search and the fit: nothing but a result or an
eclipsekit error may come out (no other exception, no signal, no hang).

A seeded sample through the harness of ``scripts/fuzz_inputs.py`` (loaded from there, so the
script and this test run the same code).  The script runs >= 10,000 inputs; this is the
quick sample: 320 inputs stopped after the period search, and 16 through the fit too.
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pytest

_SCRIPT = Path(__file__).resolve().parents[1] / "scripts" / "fuzz_inputs.py"


@pytest.fixture(scope="module")
def fuzz():
    spec = importlib.util.spec_from_file_location("fuzz_inputs", _SCRIPT)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _crashes(results):
    return [f"case {r['index']}: {r['detail']}" for r in results if r["outcome"] == "crash"]


def test_cases_are_reproducible(fuzz):
    a, b = fuzz.make_case(5, 17), fuzz.make_case(5, 17)
    assert a["text"] == b["text"] and a["mutations"] == b["mutations"]
    assert fuzz.make_case(5, 18)["text"] != a["text"]


def test_every_mutation_can_follow_any_other(fuzz):
    # the generator itself must not fail (e.g. a mutation on a case that `few_rows` left with 1 row)
    for index in range(3000):
        case = fuzz.make_case(7, index)
        assert case["text"].count("\n") == case["time"].size + 1


def test_sample_through_period_search(fuzz, tmp_path):
    # seed 101, inputs 0-319, two worker processes; reproducers of any crash go to tmp_path
    results = fuzz.run(320, 101, 2, tmp_path, timeout=30.0, batch=160, progress=False, fit=False)
    assert len(results) == 320
    assert not _crashes(results), fuzz.report(results)
    # the sample exercises all three outcomes, so it is not vacuous
    assert {r["outcome"] for r in results} == {"success", "refused"}
    assert {r["detail"] for r in results if r["outcome"] == "refused"} >= {"InputError", "NoEclipseFound"}


def test_sample_through_fit(fuzz, tmp_path):
    # seed 202, inputs 0-15, the whole chain
    results = fuzz.run(16, 202, 2, tmp_path, timeout=30.0, batch=8, progress=False)
    assert len(results) == 16
    assert not _crashes(results), fuzz.report(results)


def test_harness_counts_a_signal_as_a_crash(fuzz, tmp_path):
    # the harness must be able to fail: a worker killed by SIGSEGV on input 1 is a crash of
    # input 1, and a new worker carries on with input 2
    results = fuzz.run_batch(1, [0, 1, 2], str(tmp_path), timeout=30.0, fit=False, kill_on=1)
    outcomes = {r["index"]: (r["outcome"], r["detail"]) for r in results}
    assert outcomes[1] == ("crash", "signal 11")
    assert outcomes[0][0] != "crash" and outcomes[2][0] != "crash"


def test_gaussian_process_that_cannot_be_factorised_is_not_a_crash(fuzz, tmp_path):
    # regression test: case 757 of seed 1 (unsorted times, offset, all errors rescaled) made celerite2
    # fail to factorise a trial kernel while the baseline was chosen; its own LinAlgError escaped the fit
    case = fuzz.make_case(1, 757)
    path = tmp_path / "case.csv"
    path.write_text(case["text"])
    outcome, detail, options = fuzz.run_case(str(path), case["period"], True, False)
    assert outcome != "crash", options.get("traceback")
