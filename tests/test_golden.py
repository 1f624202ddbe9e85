"""Regression test: the demo analysis gives the saved numbers to the last digit.

A consistency check of the code with an earlier version of itself, not a check against an
outside reference: it guards restructurings that must not change any number.  When a change
of the numbers is intended, regenerate the copy with ``python scripts/save_golden_result.py``
and say why in the commit.
"""

import json
import warnings

from _golden import GOLDEN, golden_quantities


def test_demo_quantities_match_golden_copy():
    saved = json.loads(GOLDEN.read_text())
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        now = json.loads(json.dumps(golden_quantities()))  # the same float -> text round trip as the copy
    for section, expected in saved.items():
        assert now[section] == expected, f"{section} differs from {GOLDEN.name}"
