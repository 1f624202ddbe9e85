"""Regression test: the demo analysis gives the saved numbers.

A consistency check of the code with an earlier version of itself, not a check against an
outside reference: it guards restructurings that must not change any number.  When a change
of the numbers is intended, regenerate the copy with ``python scripts/save_golden_result.py``
and say why in the commit.

Every number is compared to the last digit: the analysis runs BLAS on one thread
(eclipsekit/_threads.py) precisely so that it repeats exactly, whatever else the machine runs.
"""

import json
import warnings

from _golden import GOLDEN, golden_quantities



def _same(now, saved, where=""):
    if isinstance(saved, dict):
        assert isinstance(now, dict) and set(now) == set(saved), f"{where}: keys differ"
        for k in saved:
            _same(now[k], saved[k], f"{where}.{k}")
    elif isinstance(saved, list):
        assert isinstance(now, list) and len(now) == len(saved), f"{where}: lengths differ"
        for i, (a, b) in enumerate(zip(now, saved)):
            _same(a, b, f"{where}[{i}]")
    else:
        assert now == saved, f"{where}: {now!r} != {saved!r}"


def test_demo_quantities_match_golden_copy():
    saved = json.loads(GOLDEN.read_text())
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        now = json.loads(json.dumps(golden_quantities()))  # the same float -> text round trip as the copy
    _same(now, saved)
