"""Regenerate the README's example output from a real ``eclipsekit demo`` run.

    python scripts/readme_demo_output.py           # rewrite the block in README.md
    python scripts/readme_demo_output.py --check   # exit 1 if README.md is out of date

The block between the two markers in README.md is the demo's printed table, abridged by
:func:`readme_block` (a few rows of chosen sections; the rest becomes "..."), with the
demo's default seed, so that ``eclipsekit demo`` prints exactly those numbers.
tests/test_outputs.py checks that the README agrees with what the code prints now.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import os
import re
import sys
import tempfile
from pathlib import Path

README = Path(__file__).resolve().parents[1] / "README.md"
BEGIN = "<!-- demo output: made by scripts/readme_demo_output.py from a real `eclipsekit demo` run; do not edit -->"
END = "<!-- end of demo output -->"

#: The rows shown in the README, by section (section title -> row labels); other rows become "...".
SHOWN = {
    "Ephemeris": ["Period", "Epoch of primary minimum"],
    "Geometry": ["r1 + r2", "k = r2/r1", "Inclination", "e cos(omega)", "e sin(omega)"],
    "Absolute dimensions": ["M1", "M2", "R1", "R2", "Where the uncertainty comes from:", "M1:"],
}
#: file names listed on the last line before "..."
N_FILES = 3


def run_demo() -> str:
    """What ``eclipsekit demo --seed DEMO_SEED`` prints on standard output (run in a temporary folder)."""
    from eclipsekit.cli import DEMO_SEED, main

    text = io.StringIO()
    here = os.getcwd()
    with tempfile.TemporaryDirectory() as tmp:
        os.chdir(tmp)
        try:
            with contextlib.redirect_stdout(text):
                code = main(["demo", "--seed", str(DEMO_SEED), "--quiet"])
        finally:
            os.chdir(here)
    if code != 0:
        raise RuntimeError(f"eclipsekit demo exited with {code}")
    return text.getvalue()


def readme_block(printed: str) -> str:
    """The README's abridged form of the demo's printed output (without the markers)."""
    lines = printed.rstrip("\n").splitlines()
    out = [lines[0], re.sub(r"(light curve )\S*/([^/\s]+:)", r"\1.../\2", lines[1]), ""]
    for title, labels in SHOWN.items():
        start = lines.index(title)
        stop = lines.index("", start) if "" in lines[start:] else len(lines)
        section = lines[start + 1:stop]
        rows = [_row(section, label, title) for label in labels]
        out += [title, *rows]
        out += ["..."] if len(rows) < len(section) else [""]
    written = next(line for line in lines if line.startswith("Results written to "))
    head, _, names = written.partition(": ")
    out.append(f"{head}: {', '.join(names.split(', ')[:N_FILES])}, ...")
    return "```\n" + "\n".join(out) + "\n```"


def _row(section: list[str], label: str, title: str) -> str:
    for line in section:  # the label, then the end of the line or a gap of two spaces before the value
        if re.fullmatch(rf"\s*{re.escape(label)}(\s{{2,}}.*)?", line):
            return line
    raise ValueError(f"no row {label!r} in the demo's {title!r} section: update SHOWN in {Path(__file__).name}")


def with_block(readme: str, block: str) -> str:
    """``readme`` with the text between the markers replaced by ``block``."""
    before, sep1, rest = readme.partition(BEGIN)
    _, sep2, after = rest.partition(END)
    if not (sep1 and sep2):
        raise ValueError(f"README.md lacks the markers {BEGIN!r} ... {END!r}")
    return f"{before}{BEGIN}\n{block}\n{END}{after}"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="only check; exit 1 if README.md is out of date")
    args = parser.parse_args()
    current = README.read_text(encoding="utf-8")
    updated = with_block(current, readme_block(run_demo()))
    if args.check:
        print("README.md is up to date" if updated == current else "README.md is out of date")
        return 0 if updated == current else 1
    README.write_text(updated, encoding="utf-8")
    print(f"wrote {README}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
