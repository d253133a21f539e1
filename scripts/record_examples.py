"""Write (or refresh) the [recorded] table of example budget files from a fresh evaluation.

For the bundled, invented examples only: the recorded values are regression values
produced by this tool, so that `viscometry audit examples/` has something to compare.
Usage: .venv/bin/python scripts/record_examples.py FILE...
With --fingerprint-only, only the fingerprint line of an existing [recorded] table is
refreshed (for examples/reference/, whose recorded values state the published result and
must not be replaced by our own numbers).
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

from viscometry.io import atomic_write_text, load_budget, recorded_from, recorded_table

HEADER = "[recorded]  # regression values produced by viscometry itself (invented example)"


def record(path: Path) -> str:
    bf = load_budget(path)
    text = path.read_text(encoding="utf-8")
    text = re.sub(r"(?ms)^\[recorded\].*?(?=^\[|\Z)", "", text).rstrip() + "\n"
    table = recorded_table(recorded_from(bf.budget.evaluate()))
    return text + "\n" + table.replace("[recorded]", HEADER, 1)


def refresh_fingerprint(path: Path) -> str:
    bf = load_budget(path)
    text = path.read_text(encoding="utf-8")
    new, n = re.subn(
        r'(?m)^fingerprint = "sha256:[0-9a-f]*"$', f'fingerprint = "{bf.fingerprint}"', text
    )
    if n != 1:
        raise SystemExit(f"{path}: expected one fingerprint line in [recorded], found {n}")
    return new


def main(argv: list[str]) -> int:
    only_fingerprint = "--fingerprint-only" in argv
    for p in (Path(a) for a in argv if a != "--fingerprint-only"):
        atomic_write_text(p, refresh_fingerprint(p) if only_fingerprint else record(p))
        print(f"recorded {p}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
