"""The command line: JSON keys, exit codes, error lines, audit verdicts, demo, help.

Exact analytic budgets only (y = a + b with u = 0.5); no external check values.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from viscometry import __version__
from viscometry.cli import main
from viscometry.io.budget_file import load_budget
from viscometry.io.json_out import INPUT_KEYS, RESULT_KEYS, dumps

REPO = Path(__file__).resolve().parents[1]

BUDGET = """format = "viscometry-budget/1"
title = "cli test"
[measurand]
name = "y"
unit = "mm"
model = "a + b"
[inputs.a]
value = 1.0
unit = "mm"
standard_uncertainty = 0.3
[inputs.b]
unit = "mm"
readings = [1.9, 2.1, 2.0, 2.0]
"""


@pytest.fixture
def budget(tmp_path: Path) -> Path:
    p = tmp_path / "y.toml"
    p.write_text(BUDGET)
    return p


def _recorded(path: Path) -> Path:
    """Append a [recorded] table computed now (a regression value by construction)."""
    bf = load_budget(path)
    r = bf.evaluate().rounded()
    path.write_text(
        path.read_text()
        + f"\n[recorded]\nvalue = {r.value}\nexpanded_uncertainty = {r.uncertainty}\n"
        f'coverage_factor = {bf.evaluate().coverage_factor:.2f}\nfingerprint = "{bf.fingerprint}"\n'
    )
    return path


def test_evaluate_text(budget, capsys):
    assert main(["evaluate", str(budget)]) == 0
    out = capsys.readouterr().out
    assert "cli test" in out and "result: y = (" in out
    assert f"fingerprint: {load_budget(budget).fingerprint}" in out
    assert f"version: viscometry {__version__}" in out


def test_evaluate_json_has_exactly_the_documented_keys(budget, capsys):
    assert main(["evaluate", "--json", str(budget)]) == 0
    d = json.loads(capsys.readouterr().out)
    assert tuple(d) == RESULT_KEYS
    assert set(RESULT_KEYS) == {
        "measurand", "unit", "value", "standard_uncertainty", "effective_dof",
        "coverage_probability", "coverage_factor", "expanded_uncertainty",
        "relative_expanded_uncertainty", "statement", "method", "inputs", "warnings",
        "fingerprint", "version",
    }  # fmt: skip
    for row in d["inputs"]:
        assert tuple(row) == INPUT_KEYS
    rows = {r["name"]: r for r in d["inputs"]}
    assert rows["a"]["evaluation"] == "B" and rows["a"]["dof"] == "inf"
    assert rows["b"]["evaluation"] == "A" and rows["b"]["dof"] == 3
    assert d["measurand"] == "y" and d["unit"] == "mm" and d["method"] == "first-order"
    assert d["value"] == pytest.approx(3.0)
    assert isinstance(d["effective_dof"], float)
    assert d["fingerprint"] == load_budget(budget).fingerprint
    assert d["version"] == __version__
    assert d["warnings"] == []


def test_evaluate_json_infinite_dof_and_warnings(tmp_path, capsys):
    p = tmp_path / "w.toml"
    p.write_text(
        BUDGET.replace("readings = [1.9, 2.1, 2.0, 2.0]", "value = 2.0\nstandard_uncertainty = 0.4")
        + '[inputs.c]\nvalue = 1.0\nunit = "mm"\nstandard_uncertainty = 0.1\n'
    )
    assert main(["evaluate", "--json", str(p)]) == 0
    captured = capsys.readouterr()
    d = json.loads(captured.out)
    assert d["effective_dof"] == "inf"
    assert d["standard_uncertainty"] == pytest.approx(0.5)  # exact: sqrt(0.3² + 0.4²)
    assert any("[inputs.c] is not used" in w for w in d["warnings"])
    assert "viscometry: warning:" in captured.err and "[inputs.c]" in captured.err


def test_evaluate_higher_order_flag(budget, capsys):
    assert main(["evaluate", "--json", "--higher-order", str(budget)]) == 0
    assert json.loads(capsys.readouterr().out)["method"] == "higher-order"


def test_error_is_one_line_exit_2_and_debug_shows_traceback(tmp_path, capsys):
    p = tmp_path / "bad.toml"
    p.write_text(
        BUDGET.replace("standard_uncertainty = 0.3", "standard_uncertainty = 0.3\nwobble = 1")
    )
    assert main(["evaluate", str(p)]) == 2
    err = capsys.readouterr().err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err
    assert lines[0].startswith("viscometry: error: ")
    assert str(p) in lines[0] and "[inputs.a]" in lines[0] and "'wobble'" in lines[0]
    for argv in (["--debug", "evaluate", str(p)], ["evaluate", "--debug", str(p)]):
        assert main(argv) == 2
        err = capsys.readouterr().err
        assert "Traceback" in err and err.strip().splitlines()[-1].startswith("viscometry: error: ")


def test_missing_file_and_bad_option(tmp_path, capsys):
    assert main(["evaluate", str(tmp_path / "absent.toml")]) == 2
    assert "cannot read the file" in capsys.readouterr().err
    assert main(["evaluate", "--no-such-option", "x"]) == 2
    assert main([]) == 2
    capsys.readouterr()


def test_version_and_help(capsys):
    assert main(["--version"]) == 0
    assert capsys.readouterr().out.strip() == f"viscometry {__version__}"
    assert main(["--help"]) == 0
    out = capsys.readouterr().out
    for name in ("evaluate", "audit", "demo", "--debug", "--version"):
        assert name in out
    for sub, options in {
        "evaluate": ["--json", "--higher-order"],
        "audit": ["--json", "--strict"],
        "demo": ["FOLDER"],
    }.items():
        assert main([sub, "--help"]) == 0
        text = capsys.readouterr().out
        for option in options:
            assert option in text


# ----------------------------------------------------------------------------- audit
def test_audit_match(budget, capsys):
    _recorded(budget)
    assert main(["audit", str(budget)]) == 0
    out = capsys.readouterr().out
    assert out.startswith("MATCH") and "1 match" in out


def test_audit_detects_changed_input_by_value_and_fingerprint(budget, capsys):
    _recorded(budget)
    budget.write_text(budget.read_text().replace("value = 1.0\n", "value = 1.5\n", 1))
    assert main(["audit", str(budget)]) == 1
    out = capsys.readouterr().out
    assert out.startswith("DIFFERS")
    assert "value recorded" in out and "fingerprint recorded" in out


def test_audit_detects_changed_input_that_rounds_away(budget, capsys):
    # a change far below the rounding: the numbers still agree, the fingerprint does not
    _recorded(budget)
    budget.write_text(budget.read_text().replace("value = 1.0\n", "value = 1.0000001\n", 1))
    assert main(["audit", str(budget)]) == 1
    out = capsys.readouterr().out
    assert "value recorded" not in out and "no longer matches the inputs" in out


def test_audit_detects_changed_recorded_value(budget, capsys):
    _recorded(budget)
    text = budget.read_text()
    head, rec = text.split("[recorded]")
    rec_lines = rec.splitlines()
    rec_lines = [("value = 3.5" if line.startswith("value =") else line) for line in rec_lines]
    budget.write_text(head + "[recorded]" + "\n".join(rec_lines) + "\n")
    assert main(["audit", "--json", str(budget)]) == 1
    d = json.loads(capsys.readouterr().out)
    (v,) = d["verdicts"]
    assert v["status"] == "differs" and d["exit_code"] == 1
    assert any(m.startswith("value recorded 3.5") for m in v["messages"])
    assert v["recorded"]["value"] == 3.5


def test_audit_unreadable_and_unrecorded_and_folder(tmp_path, budget, capsys):
    bad = tmp_path / "broken.toml"
    bad.write_text("format = \n")
    assert main(["audit", str(bad)]) == 2
    out = capsys.readouterr().out
    assert out.startswith("ERROR") and "line 1" in out
    # unrecorded: reported, exit 0 unless --strict
    assert main(["audit", str(budget)]) == 0
    assert "UNRECORDED" in capsys.readouterr().out
    assert main(["audit", "--strict", str(budget)]) == 1
    capsys.readouterr()
    # folder: recursive, non-budget TOML skipped, worst verdict wins
    sub = tmp_path / "sub"
    sub.mkdir()
    (sub / "other.toml").write_text('title = "not a budget"\n')
    _recorded(budget)
    assert main(["audit", "--json", str(tmp_path)]) == 2
    d = json.loads(capsys.readouterr().out)
    statuses = {Path(v["path"]).name: v["status"] for v in d["verdicts"]}
    assert statuses == {"broken.toml": "error", "y.toml": "match"}
    empty = tmp_path / "empty"
    empty.mkdir()
    assert main(["audit", str(empty)]) == 2
    assert "no budget files" in capsys.readouterr().out


# ----------------------------------------------------------------------------- demo
def test_demo_missing_folder_says_so(tmp_path, capsys):
    assert main(["demo", str(tmp_path / "nowhere")]) == 2
    err = capsys.readouterr().err
    assert "does not exist" in err and "viscometry demo FOLDER" in err


def test_demo_folder_with_a_broken_file_continues(tmp_path, budget, capsys):
    (tmp_path / "a_broken.toml").write_text('format = "viscometry-budget/1"\n')
    assert main(["demo", str(tmp_path)]) == 2
    out = capsys.readouterr().out
    assert "a_broken.toml: error" in out and "y.toml: y = (" in out and "Caution:" in out


def test_dumps_strict_json():
    text = dumps({"a": float("inf"), "b": float("-inf"), "c": float("nan"), "d": (1, 2)})
    assert json.loads(text) == {"a": "inf", "b": "-inf", "c": None, "d": [1, 2]}


def test_python_dash_m_help_subprocess():
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    proc = subprocess.run(
        [sys.executable, "-m", "viscometry", "--help"],
        capture_output=True,
        text=True,
        cwd=REPO,
        env=env,
        timeout=120,
        check=False,
    )
    assert proc.returncode == 0, proc.stderr
    assert "usage: viscometry" in proc.stdout and "evaluate" in proc.stdout
