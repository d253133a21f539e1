"""Run every benchmark script in this folder, one after another (``make bench``).

Each script measures its goals as ratios against a baseline run in the same process, so
the numbers are meaningful on a noisy machine. Nothing here is part of the test suite.
Every goal line ends in PASS or MISS; they are repeated in a summary at the end. The exit
status is non-zero only when a script fails to run (a missed goal is reported, not raised).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main() -> int:
    status = 0
    verdicts: list[str] = []
    for script in sorted(HERE.glob("bench_*.py")):
        print(f"=== {script.name} ===", flush=True)
        with subprocess.Popen(
            [sys.executable, str(script)], cwd=HERE.parent, stdout=subprocess.PIPE, text=True
        ) as proc:
            assert proc.stdout is not None
            for line in proc.stdout:
                print(line, end="", flush=True)
                if "PASS" in line or "MISS" in line:
                    verdicts.append(f"{script.stem}: {line.strip()}")
        if proc.returncode:
            verdicts.append(f"{script.stem}: FAILED TO RUN (exit status {proc.returncode})")
        status |= proc.returncode
    print("=== summary ===")
    for v in verdicts:
        print(v)
    return status


if __name__ == "__main__":
    raise SystemExit(main())
