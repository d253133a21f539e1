"""``viscometry plan`` prints the same text and JSON as before its sets became columns.

Regression values: the expected outputs in ``tests/data/plan_regression/`` were captured
from this package's own earlier run (the planner that built one row object per set, before
the sets were kept as arrays); they are not check values from any other source. The
candidates files there are invented. Text is compared character for character; JSON too,
except that a float may differ in its last bits (rel. 1e-12), so that a change of the
last digit of a sensitivity elsewhere in the engine does not hide behind this test.
"""

from __future__ import annotations

import json
import math
import os
import sys
from pathlib import Path
from typing import Any

import pytest

from viscometry.cli import main

ROOT = Path(__file__).resolve().parent.parent
DATA = Path("tests") / "data" / "plan_regression"
PRIMARY = "examples/primary_capillary_poiseuille.toml"
METHOD = "examples/methods/pressure_capillary.toml"

#: (name of the expected output, arguments of ``viscometry plan``)
CASES = [
    ("example_target", [PRIMARY, "examples/upgrades/pressure_capillary_upgrades.toml",
                        "--target", "0.3%"]),
    ("example_all", [PRIMARY, "examples/upgrades/pressure_capillary_upgrades.toml", "--all",
                     "--top", "0"]),
    ("twelve_target", [PRIMARY, str(DATA / "candidates_12.toml"), "--target", "0.2%"]),
    ("twelve_all_top", [PRIMARY, str(DATA / "candidates_12.toml"), "--all", "--top", "25",
                        "--target", "0.25%"]),
    ("twelve_unreachable", [PRIMARY, str(DATA / "candidates_12.toml"), "--target", "0.0001%"]),
    ("fourteen_greedy", [PRIMARY, str(DATA / "candidates_14.toml"), "--target", "0.2%"]),
    ("fourteen_greedy_all", [PRIMARY, str(DATA / "candidates_14.toml"), "--all", "--top", "0"]),
    ("checks_all", [METHOD, str(DATA / "candidates_checks.toml"), "--all", "--top", "0",
                    "--target", "0.5%"]),
    ("checks_greedy", [METHOD, str(DATA / "candidates_checks.toml"), "--max-exhaustive", "2",
                       "--all", "--top", "0", "--target", "0.5%"]),
    ("six_json", [PRIMARY, str(DATA / "candidates_6.toml"), "--target", "0.2%", "--json"]),
    ("fourteen_greedy_json", [PRIMARY, str(DATA / "candidates_14.toml"), "--max-exhaustive",
                              "4", "--target", "0.2%", "--json"]),
    ("checks_json", [METHOD, str(DATA / "candidates_checks.toml"), "--target", "0.5%",
                     "--json"]),
]  # fmt: skip


def render(args: list[str], capsys: Any) -> str:
    """The output of ``viscometry plan ARGS`` run from the project folder."""
    assert main(["plan", *args]) == 0
    return capsys.readouterr().out


def expected_path(name: str, args: list[str]) -> Path:
    return ROOT / DATA / f"{name}.{'json' if '--json' in args else 'txt'}"


def same_json(got: Any, want: Any, where: str = "") -> None:
    """Equal JSON documents; floats equal to rel. 1e-12 (infinities and NaN exactly)."""
    if isinstance(want, float) and isinstance(got, float):
        if math.isfinite(want):
            assert got == pytest.approx(want, rel=1e-12, abs=0.0), where
        else:
            assert got == want or (math.isnan(got) and math.isnan(want)), where
        return
    assert type(got) is type(want), where
    if isinstance(want, dict):
        assert list(got) == list(want), where
        for key in want:
            same_json(got[key], want[key], f"{where}.{key}")
    elif isinstance(want, list):
        assert len(got) == len(want), where
        for i, (g, w) in enumerate(zip(got, want, strict=True)):
            same_json(g, w, f"{where}[{i}]")
    else:
        assert got == want, where


@pytest.mark.parametrize(("name", "args"), CASES, ids=[c[0] for c in CASES])
def test_plan_output_is_unchanged(name: str, args: list[str], capsys, monkeypatch) -> None:
    monkeypatch.chdir(ROOT)
    got = render(args, capsys)
    want = expected_path(name, args).read_text(encoding="utf-8")
    if "--json" in args:
        same_json(json.loads(got), json.loads(want))
    else:
        assert got == want


def regenerate() -> None:  # pragma: no cover - run by hand after an intended change
    """Write the expected outputs again: ``python tests/test_plan_output.py``."""

    class Capture:
        def readouterr(self) -> Any:
            out = sys.stdout.getvalue()  # type: ignore[attr-defined]
            sys.stdout.seek(0)
            sys.stdout.truncate()
            return type("Out", (), {"out": out})

    import io

    os.chdir(ROOT)
    for name, args in CASES:
        real, sys.stdout = sys.stdout, io.StringIO()
        try:
            text = render(args, Capture())
        finally:
            sys.stdout = real
        expected_path(name, args).write_text(text, encoding="utf-8")
        print(f"wrote {expected_path(name, args).relative_to(ROOT)}")


if __name__ == "__main__":  # pragma: no cover
    regenerate()
