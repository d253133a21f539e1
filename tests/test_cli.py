"""The command line: JSON keys, exit codes, error lines, audit verdicts, demo, help.

Exact analytic budgets only (y = a + b with u = 0.5); no external check values, except the
flow-time limit of the glass-viscometer budget at the end (its source is named beside it).
That last section checks "one budget, one path": the same budget file gives the same
warnings on every path that evaluates it (each command, the library, the linearised budget).
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from pathlib import Path
from typing import Any

import pytest

from viscometry import __version__
from viscometry.cli import main
from viscometry.io import load_budget, loads_budget
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
    result = bf.budget.evaluate()
    r = result.rounded()
    path.write_text(
        path.read_text()
        + f"\n[recorded]\nvalue = {r.value}\nexpanded_uncertainty = {r.uncertainty}\n"
        f'coverage_factor = {result.coverage_factor:.2f}\nfingerprint = "{bf.fingerprint}"\n'
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
    # the command line adds the file it read ("source") after the result's keys
    assert tuple(d) == (*RESULT_KEYS, "source")
    assert set(RESULT_KEYS) == {
        "schema", "measurand", "unit", "value", "standard_uncertainty", "effective_dof",
        "coverage_probability", "coverage_factor", "expanded_uncertainty",
        "relative_expanded_uncertainty", "statement", "propagation", "inputs", "warnings",
        "fingerprint", "version",
    }  # fmt: skip
    assert d["schema"] == "viscometry.evaluate/1"
    assert d["source"] == str(budget)
    for row in d["inputs"]:
        assert tuple(row) == INPUT_KEYS
    rows = {r["name"]: r for r in d["inputs"]}
    assert rows["a"]["evaluation"] == "B" and rows["a"]["dof"] == "inf"
    assert rows["b"]["evaluation"] == "A" and rows["b"]["dof"] == 3
    assert d["measurand"] == "y" and d["unit"] == "mm" and d["propagation"] == "first-order"
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
    unused = "input c is not used by the model; its sensitivity coefficient is zero"
    assert d["warnings"] == [unused]
    # warnings travel with the result (JSON list, "warning:" lines of the text), not on stderr
    assert captured.err == ""
    assert main(["evaluate", str(p)]) == 0
    captured = capsys.readouterr()
    assert f"warning: {unused}" in captured.out.splitlines()
    assert captured.err == ""


def test_evaluate_higher_order_flag(budget, capsys):
    assert main(["evaluate", "--json", "--higher-order", str(budget)]) == 0
    assert json.loads(capsys.readouterr().out)["propagation"] == "higher-order"


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
        "scope": ["--over", "--from", "--to", "--points", "--log", "--edges", "--json"],
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
    assert "value recorded" not in out
    assert "no longer matches the budget" in out and "the file changed after the result" in out


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


def test_audit_emptied_budget_file_in_a_folder_is_an_error(tmp_path, budget, capsys):
    # an emptied budget file is a lost budget: audited and reported, never skipped
    _recorded(budget)
    (tmp_path / "emptied.toml").write_text("")
    assert main(["audit", "--json", str(tmp_path)]) == 2
    d = json.loads(capsys.readouterr().out)
    statuses = {Path(v["path"]).name: v["status"] for v in d["verdicts"]}
    assert statuses == {"emptied.toml": "error", "y.toml": "match"}
    assert d["exit_code"] == 2
    assert main(["audit", str(tmp_path)]) == 2
    out = capsys.readouterr().out
    assert any(line.startswith("ERROR") and "emptied.toml" in line for line in out.splitlines())


def test_old_sweep_command_is_refused(budget, capsys):
    # "sweep" was renamed "scope"; the old name is an unknown command (usage error, exit 2)
    argv = ["sweep", str(budget), "--over", "a", "--from", "1", "--to", "2"]
    assert main(argv) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert "invalid choice: 'sweep'" in captured.err and "scope" in captured.err
    assert main(["sweep", "--help"]) == 2
    assert "invalid choice: 'sweep'" in capsys.readouterr().err


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


# ----------------------------------------------------------------------------- JSON schema
SNAKE_CASE = re.compile(r"[a-z][a-z0-9]*(?:_[a-z0-9]+)*")

#: A glass-viscometer budget (built-in model) whose flow time, 149.98 s, is below the minimum.
GLASS_BUDGET = (Path(__file__).parent / "data" / "short_flow_time_glass.toml").read_text(
    encoding="utf-8"
)
GLASS_CANDIDATES = """currency = "EUR"
[[candidate]]
name = "timer"
cost = 100
[candidate.changes]
t = 0.01
"""
#: The warning every path must give for GLASS_BUDGET. 200 s: minimum flow time of a manually
#: timed glass capillary viscometer, ISO 3104 / ASTM D445 (from memory); 150 s: the mean of
#: the readings, 599.92/4 = 149.98 s (exact arithmetic), printed to 4 significant digits.
FLOW_TIME_WARNING = (
    "flow time 150 s is below the minimum 200 s (ISO 3104 / ASTM D445, manual timing)"
)


@pytest.fixture
def glass(tmp_path: Path) -> Path:
    p = tmp_path / "glass.toml"
    p.write_text(GLASS_BUDGET, encoding="utf-8")
    return p


@pytest.fixture
def glass_candidates(tmp_path: Path) -> Path:
    p = tmp_path / "glass_upgrades.toml"
    p.write_text(GLASS_CANDIDATES, encoding="utf-8")
    return p


def _not_snake_case(obj: Any, where: str = "") -> list[str]:
    """Every key (with its path) of a JSON value, at any depth, that is not snake_case."""
    bad: list[str] = []
    if isinstance(obj, dict):
        for key, value in obj.items():
            if not SNAKE_CASE.fullmatch(key):
                bad.append(f"{where}/{key}")
            bad += _not_snake_case(value, f"{where}/{key}")
    elif isinstance(obj, list):
        for i, value in enumerate(obj):
            bad += _not_snake_case(value, f"{where}[{i}]")
    return bad


def _command_json(capsys, argv: list[str]) -> dict[str, Any]:
    code = main(argv)
    captured = capsys.readouterr()
    assert code == 0, captured.err
    return json.loads(captured.out)


def test_snake_case_walker_finds_nested_keys():
    # the checker itself: a bad key deep in a list of objects is found, data values are not
    assert _not_snake_case({"a_b": [{"ok": 1, "Not OK": {"x-y": "Value With Spaces"}}]}) == [
        "/a_b[0]/Not OK",
        "/a_b[0]/Not OK/x-y",
    ]
    assert _not_snake_case({"schema": "viscometry.x/1", "u2": 1, "d_low": None}) == []


@pytest.mark.parametrize(
    ("kind", "argv"),
    [
        ("evaluate", ["evaluate", "--json", "{glass}"]),
        ("simulate", ["simulate", "--json", "--trials", "10000", "--seed", "1", "{glass}"]),
        ("plan", ["plan", "--json", "--target", "0.028", "{glass}", "{candidates}"]),
        ("audit", ["audit", "--json", "{glass}"]),
        ("methods", ["methods", "--json"]),
        ("methods", ["methods", "glass_capillary_kinetic", "--json"]),
        ("decide", ["decide", "--budget", "{glass}", "--lower", "14.9", "--upper", "15.1",
                    "--json"]),
        ("score", ["score", "z", "--value", "12.5", "--assigned", "10", "--sigma-pt", "1",
                   "--json"]),
    ],
    ids=["evaluate", "simulate", "plan", "audit", "methods", "methods-one", "decide", "score"],
)  # fmt: skip
def test_every_json_output_has_a_schema_and_snake_case_keys(
    kind, argv, glass, glass_candidates, capsys
):
    argv = [a.format(glass=glass, candidates=glass_candidates) for a in argv]
    d = _command_json(capsys, argv)
    assert d["schema"] == f"viscometry.{kind}/1"
    assert _not_snake_case(d) == []


POINT_KEYS = [
    "input_value", "value", "standard_uncertainty", "effective_dof", "coverage_factor",
    "expanded_uncertainty", "relative_expanded_uncertainty", "dominant", "dominant_share",
]  # fmt: skip


def _scope_json(capsys, glass: Path, *extra: str) -> dict[str, Any]:
    d = _command_json(capsys, ["scope", "--json", str(glass), "--over", "t", "--from", "200",
                               "--to", "800", "--points", "4", *extra])  # fmt: skip
    assert d["schema"] == "viscometry.scope/1"
    assert d["over"] == "t" and d["measurand"] == "nu"
    # the point rows have fixed keys: no column is named after an input or the measurand
    assert [list(row) for row in d["points"]] == [POINT_KEYS] * 4
    return d


def test_the_schema_tests_cover_every_command_with_json_output():
    import argparse

    from viscometry.cli import build_parser

    parser = build_parser()
    (sub,) = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    with_json = {
        name for name, p in sub.choices.items()
        if any("--json" in a.option_strings for a in p._actions)
    }  # fmt: skip
    # the parametrised test above, the scope tests below; report writes JSON to a file
    covered = {"evaluate", "simulate", "plan", "audit", "methods", "decide", "score", "scope"}
    covered |= {"accept", "drift"}  # schema and snake_case keys: tests/test_evidence_cli.py
    covered |= {"reconcile"}  # schema and snake_case keys: tests/test_evidence_topdown.py
    covered |= {"dilute"}  # schema and snake_case keys: tests/test_polymer_series_file.py
    assert with_json == covered
    assert set(sub.choices) - with_json == {"demo", "report", "workspace"}


def test_scope_json_has_a_schema_and_snake_case_keys(glass, capsys):
    d = _scope_json(capsys, glass)
    assert d["scope"] is None
    assert _not_snake_case(d) == []


def test_scope_json_with_a_scope_table_has_snake_case_keys(glass, capsys):
    d = _scope_json(capsys, glass, "--edges", "20,80")
    assert [list(row) for row in d["scope"]] == [[
        "from", "to", "points", "largest_relative_expanded_uncertainty", "at",
        "stated_relative_expanded_uncertainty",
    ]]  # fmt: skip
    assert _not_snake_case(d) == []


def test_report_json_has_a_schema_and_snake_case_keys(glass, tmp_path, capsys):
    out = tmp_path / "r.json"
    assert main(["report", str(glass), "-o", str(out)]) == 0
    capsys.readouterr()
    d = json.loads(out.read_text(encoding="utf-8"))
    assert d["schema"] == "viscometry.report/1"
    assert _not_snake_case(d) == []


# ----------------------------------------------------------------------------- one budget, one path
def test_flow_time_warning_evaluate_text(glass, capsys):
    assert main(["evaluate", str(glass)]) == 0
    captured = capsys.readouterr()
    warnings = [line for line in captured.out.splitlines() if line.startswith("warning: ")]
    assert warnings == [f"warning: {FLOW_TIME_WARNING}"]
    assert captured.err == ""


def test_flow_time_warning_evaluate_json(glass, capsys):
    assert _command_json(capsys, ["evaluate", "--json", str(glass)])["warnings"] == [
        FLOW_TIME_WARNING
    ]


def test_flow_time_warning_simulate_json(glass, capsys):
    d = _command_json(
        capsys, ["simulate", "--json", "--trials", "10000", "--seed", "1", str(glass)]
    )
    assert d["warnings"][0] == FLOW_TIME_WARNING
    # the rest are about the Monte Carlo run itself (M < 10⁴/(1 − p), JCGM 101:2008, 7.2.2)
    assert all("JCGM 101:2008, 7.2.2" in w for w in d["warnings"][1:])


def test_flow_time_warning_plan_json(glass, glass_candidates, capsys):
    d = _command_json(capsys, ["plan", "--json", str(glass), str(glass_candidates)])
    assert d["warnings"] == [FLOW_TIME_WARNING]


def test_flow_time_warning_scope_json(glass, capsys):
    d = _command_json(capsys, ["scope", "--json", str(glass), "--over", "t", "--from", "200",
                               "--to", "800", "--points", "4"])  # fmt: skip
    assert d["warnings"] == [FLOW_TIME_WARNING]


def test_flow_time_warning_budget_evaluate():
    budget = loads_budget(GLASS_BUDGET, "glass.toml").budget
    assert budget.evaluate().warnings == (FLOW_TIME_WARNING,)


def test_flow_time_warning_linearised_budget():
    budget = loads_budget(GLASS_BUDGET, "glass.toml").budget
    assert budget.linearise().warnings == (FLOW_TIME_WARNING,)


def test_flow_time_warning_budget_built_in_code():
    from viscometry.gum import Budget, InputQuantity
    from viscometry.methods import get_method

    inputs = [
        InputQuantity.from_expanded("C", 0.10012, 0.00018, "mm^2/s^2", coverage_factor=2.0),
        InputQuantity.from_readings("t", [149.82, 150.11, 149.95, 150.04], "s"),
        InputQuantity.rectangular("E", 0.0, 2.0, "mm^2*s"),
    ]
    budget = Budget.from_method(get_method("glass_capillary_kinetic"), inputs, "mm^2/s")
    assert budget.fingerprint == loads_budget(GLASS_BUDGET, "glass.toml").fingerprint
    assert budget.evaluate().warnings == (FLOW_TIME_WARNING,)
