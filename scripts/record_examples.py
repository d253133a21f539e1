"""Write (or refresh) the [recorded] table of example budget files from a fresh evaluation.

For the bundled, invented examples only: the recorded values are regression values
produced by this tool, so that `viscometry audit examples/` has something to compare.
Usage: .venv/bin/python scripts/record_examples.py FILE...  (not for examples/reference/,
whose [recorded] tables state the published result)
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

import viscometry
from viscometry.io.atomic import atomic_write_text
from viscometry.io.budget_file import load_budget


def recorded_table(path: Path) -> str:
    bf = load_budget(path)
    result = bf.evaluate()
    r = result.rounded()
    return (
        "[recorded]  # regression values produced by viscometry itself (invented example)\n"
        f"value = {r.value}\n"
        f"expanded_uncertainty = {r.uncertainty}\n"
        f"coverage_factor = {result.coverage_factor:.2f}\n"
        f'statement = "{result.statement()}"\n'
        f'fingerprint = "{bf.fingerprint}"\n'
        f'version = "{viscometry.__version__}"\n'
    )


def main(paths: list[str]) -> int:
    for p in map(Path, paths):
        text = p.read_text(encoding="utf-8")
        text = re.sub(r"(?ms)^\[recorded\].*?(?=^\[|\Z)", "", text).rstrip() + "\n"
        atomic_write_text(p, text + "\n" + recorded_table(p))
        print(f"recorded {p}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
