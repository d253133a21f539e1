"""Run every benchmark script in this folder, one after another (``make bench``).

Each script measures its goals as ratios against a baseline run in the same process, so
the numbers are meaningful on a noisy machine. Nothing here is part of the test suite.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main() -> int:
    status = 0
    for script in sorted(HERE.glob("bench_*.py")):
        print(f"=== {script.name} ===", flush=True)
        status |= subprocess.call([sys.executable, str(script)], cwd=HERE.parent)
    return status


if __name__ == "__main__":
    raise SystemExit(main())
