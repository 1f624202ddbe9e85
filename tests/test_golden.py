"""Regression test: the demo analysis gives the saved numbers.

A consistency check of the code with an earlier version of itself, not a check against an
outside reference: it guards restructurings that must not change any number.  When a change
of the numbers is intended, regenerate the copy with ``python scripts/save_golden_result.py``
and say why in the commit.

Numbers are compared to 1e-5 relative, words exactly.  Run alone, the analysis repeats to
the last digit; once, under heavy machine load, the absolute dimensions came out 1.5e-6
(relative) away, most likely from the period search's two threads calling BLAS at the same
time (the reduction order of a threaded BLAS call depends on what else is running).  A
restructuring mistake moves numbers by far more than that.
"""

import json
import math
import warnings

from _golden import GOLDEN, golden_quantities

RTOL = 1e-5


def _same(now, saved, where=""):
    if isinstance(saved, dict):
        assert isinstance(now, dict) and set(now) == set(saved), f"{where}: keys differ"
        for k in saved:
            _same(now[k], saved[k], f"{where}.{k}")
    elif isinstance(saved, list):
        assert isinstance(now, list) and len(now) == len(saved), f"{where}: lengths differ"
        for i, (a, b) in enumerate(zip(now, saved)):
            _same(a, b, f"{where}[{i}]")
    elif isinstance(saved, float) and isinstance(now, (int, float)):
        assert math.isclose(now, saved, rel_tol=RTOL, abs_tol=0.0), f"{where}: {now} != {saved}"
    else:
        assert now == saved, f"{where}: {now!r} != {saved!r}"


def test_demo_quantities_match_golden_copy():
    saved = json.loads(GOLDEN.read_text())
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        now = json.loads(json.dumps(golden_quantities()))  # the same float -> text round trip as the copy
    _same(now, saved)
