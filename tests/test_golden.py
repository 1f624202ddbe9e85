"""Regression test: the demo analysis gives the saved numbers.

A consistency check of the code with an earlier version of itself, not a check against an
outside reference: it guards restructurings that must not change any number.  When a change
of the numbers is intended, regenerate the copy with ``python scripts/save_golden_result.py``
and say why in the commit.

On one machine the analysis repeats to the last digit (BLAS runs on one thread,
eclipsekit/_threads.py), but not across processors: the least-squares fit stops somewhere
along the flat limb-darkening valley, and where depends on the last bits of the floating-point
sums (seen: e sin(omega) moved by 0.14 sigma, chi-square by 0.035, between two machines of
this project with the same package versions).  So a fitted quantity must agree within a
quarter of its own uncertainty, an uncertainty within 3%, a statistic without uncertainty
within 1e-3 relative (the velocity rms moved by 5e-4 with that e sin(omega)); texts must agree
exactly once their numbers are masked, and integers
and flags exactly.  Anything a restructuring breaks moves far more than that.
"""

import json
import math
import re
import warnings

from _golden import GOLDEN, golden_quantities

VALUE_SIGMA = 0.25   # |now - saved| / saved uncertainty
UNCERTAINTY_REL = 0.03
OTHER_REL = 1e-3
NUMBER = re.compile(r"[-+]?\d+(\.\d+)?(e[-+]?\d+)?")


def _close_float(now, saved, where, rel):
    assert isinstance(now, (int, float)), f"{where}: {now!r} is not a number"
    if math.isnan(saved):
        assert math.isnan(now), f"{where}: {now!r} != nan"
    else:
        assert math.isclose(now, saved, rel_tol=rel, abs_tol=0.0), f"{where}: {now!r} != {saved!r}"


def _same(now, saved, where=""):
    if isinstance(saved, dict) and "value" in saved and "uncertainty" in saved:
        assert isinstance(now, dict) and set(now) == set(saved), f"{where}: keys differ"
        sigma = saved["uncertainty"]
        if isinstance(sigma, (int, float)) and sigma > 0 and isinstance(saved["value"], float):
            assert abs(now["value"] - saved["value"]) <= VALUE_SIGMA * sigma, \
                f"{where}: {now['value']!r} is {abs(now['value'] - saved['value']) / sigma:.2f} sigma from {saved['value']!r}"
            _close_float(now["uncertainty"], sigma, f"{where}.uncertainty", UNCERTAINTY_REL)
            _same(now["unit"], saved["unit"], f"{where}.unit")
            return
    if isinstance(saved, dict):
        assert isinstance(now, dict) and set(now) == set(saved), f"{where}: keys differ"
        for k in saved:
            _same(now[k], saved[k], f"{where}.{k}")
    elif isinstance(saved, list):
        assert isinstance(now, list) and len(now) == len(saved), f"{where}: lengths differ"
        for i, (a, b) in enumerate(zip(now, saved)):
            _same(a, b, f"{where}[{i}]")
    elif isinstance(saved, str):
        assert isinstance(now, str) and NUMBER.sub("#", now) == NUMBER.sub("#", saved), f"{where}: {now!r} != {saved!r}"
    elif isinstance(saved, float):
        _close_float(now, saved, where, OTHER_REL)
    else:  # integers, flags, None
        assert now == saved, f"{where}: {now!r} != {saved!r}"


def test_demo_quantities_match_golden_copy():
    saved = json.loads(GOLDEN.read_text())
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        now = json.loads(json.dumps(golden_quantities()))  # the same float -> text round trip as the copy
    _same(now, saved)
