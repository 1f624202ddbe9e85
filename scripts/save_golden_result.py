"""Save the demo analysis' quantities as the golden copy used by tests/test_golden.py.

Run only when a change of the numbers is intended (and say so in the commit):

    python scripts/save_golden_result.py

The golden copy pins every quantity of the demo's result to the last digit, so a
restructuring that must not change the numbers is checked by the test suite.
"""

from __future__ import annotations

import json
import sys
import warnings
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
from _golden import GOLDEN, golden_quantities  # noqa: E402


def main() -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        content = golden_quantities()
    GOLDEN.write_text(json.dumps(content, indent=1, sort_keys=True) + "\n")
    print(f"wrote {GOLDEN}")


if __name__ == "__main__":
    main()
