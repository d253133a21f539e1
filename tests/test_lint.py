"""The code base stays ruff-clean (lint and format), as DEVELOPERS.md asks."""

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
TARGETS = ["viscometry", "tests", "scripts", "benchmarks"]


def _ruff() -> list[str]:
    exe = Path(sys.executable).with_name("ruff")
    if exe.exists():
        return [str(exe)]
    found = shutil.which("ruff")
    if found is None:
        pytest.skip("ruff is not installed")
    return [found]


@pytest.mark.parametrize("args", [["check", "--no-cache"], ["format", "--check", "--no-cache"]])
def test_ruff(args):
    proc = subprocess.run(
        [*_ruff(), *args, *TARGETS], cwd=ROOT, capture_output=True, text=True, timeout=120
    )
    assert proc.returncode == 0, proc.stdout + proc.stderr
