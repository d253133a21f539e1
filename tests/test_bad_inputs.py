"""The bad-input catalogue: every malformed budget file or API call is refused clearly.

The cases live in ``tests/bad_inputs/cases.toml`` (one ``[[case]]`` each, with the file or the
API call, the expected error class and fragments of the expected message). Two more files
are generated here at run time instead of being committed: a file over the 1 MB limit and
a file whose formula is 100 000 characters long.

Each file case is run through the API (``load_budget``, then ``evaluate`` for the cases whose
numbers only fail at evaluation) and through the command line in-process
(``viscometry evaluate``, ``report -o`` and ``simulate``): exit code 2, exactly one line on
standard error that names the file and carries the expected fragments, no traceback, nothing
on standard output, and a pre-existing output file left byte-for-byte and time-stamp
unchanged with no stray file next to it.

Expected messages are this package's own wording (no external source); the numbers in
them are the ones written in the case files.
"""

from __future__ import annotations

import os
import tomllib
from pathlib import Path

import numpy as np
import pytest

from viscometry import errors
from viscometry.cli import main
from viscometry.gum import Budget, Correlation, InputQuantity, parse_formula, validate_correlation
from viscometry.io import MAX_FILE_BYTES, load_budget
from viscometry.methods import get_method

HERE = Path(__file__).parent / "bad_inputs"
MANIFEST = tomllib.loads((HERE / "cases.toml").read_text(encoding="utf-8"))["case"]

VALID = """format = "viscometry-budget/1"
title = "a valid budget used to build generated bad inputs"

[measurand]
name = "l"
unit = "mm"
model = "MODEL"

[inputs.a]
value = 1.0
unit = "mm"
standard_uncertainty = 0.3

[inputs.b]
value = 2.0
unit = "mm"
standard_uncertainty = 0.4
"""


def _huge_file(path: Path) -> None:
    # A valid budget padded with a comment to just over the size limit.
    text = VALID.replace("MODEL", "a + b") + "# " + "x" * (MAX_FILE_BYTES + 10) + "\n"
    path.write_text(text, encoding="utf-8")


def _long_formula(path: Path) -> None:
    path.write_text(VALID.replace("MODEL", "a+" * 50_000 + "b"), encoding="utf-8")


def _long_key(path: Path) -> None:
    # An input named by 900 000 characters: refused, and echoed cut, not whole.
    text = VALID.replace("MODEL", "a + b").replace("[inputs.b]", "[inputs." + "k" * 900_000 + "]")
    path.write_text(text, encoding="utf-8")


GENERATED = {
    "generated_huge_file": (_huge_file, "BudgetFileError", ["file is", "at most 1000000 bytes"]),
    "generated_900000_character_key": (
        _long_key,
        "BudgetFileError",
        ["[inputs.kkkkkkkkkk", "kkk…kkkk", "input name is longer than 64 characters"],
    ),
    "generated_long_formula": (
        _long_formula,
        "BudgetFileError",
        ["[measurand] model", "100001 characters long", "limit is 100000"],
    ),
}

FILE_CASES = [c for c in MANIFEST if "file" in c]
API_CASES = [c for c in MANIFEST if "call" in c]


@pytest.fixture
def case_path(request, tmp_path):
    """Path of the case's budget file (generated ones are written into tmp_path)."""
    case = request.param
    if case["id"] in GENERATED:
        path = tmp_path / "in" / f"{case['id']}.toml"
        path.parent.mkdir()
        GENERATED[case["id"]][0](path)
        return case, path
    return case, HERE / case["file"]


ALL_FILE_CASES = FILE_CASES + [
    {"id": cid, "error": err, "message": frags, "stage": "load"}
    for cid, (_make, err, frags) in GENERATED.items()
]


def test_catalogue_is_complete():
    """At least 40 cases; every listed file exists and every committed file is listed."""
    assert len(ALL_FILE_CASES) + len(API_CASES) >= 40
    listed = {c["file"] for c in FILE_CASES}
    on_disk = {p.name for p in HERE.glob("*.toml")} - {"cases.toml"}
    assert listed == on_disk
    assert len({c["id"] for c in MANIFEST}) == len(MANIFEST)
    for c in MANIFEST:
        assert hasattr(errors, c["error"]), c["error"]
        assert c["message"], c["id"]


@pytest.mark.parametrize(
    "case_path", ALL_FILE_CASES, ids=[c["id"] for c in ALL_FILE_CASES], indirect=True
)
def test_api_refuses_bad_file(case_path):
    case, path = case_path
    expected = getattr(errors, case["error"])
    with pytest.raises(errors.ViscometryError) as info:
        bf = load_budget(path)
        assert case.get("stage", "load") == "evaluate", "the file should not load"
        bf.budget.evaluate()
    assert type(info.value) is expected, (type(info.value), str(info.value))
    message = str(info.value)
    if case.get("stage", "load") == "load":
        assert message.startswith(f"{path}: "), message
    for fragment in case["message"]:
        assert fragment in message, (fragment, message)


def _snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    return {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in folder.iterdir()}


COMMANDS = {
    "evaluate": lambda path, out: ["evaluate", str(path)],
    "report": lambda path, out: ["report", str(path), "-o", str(out / "report.html")],
    "report-csv": lambda path, out: ["report", str(path), "-o", str(out / "table.csv")],
    "simulate": lambda path, out: ["simulate", str(path), "--trials", "2000", "--seed", "1"],
}


@pytest.mark.parametrize("command", list(COMMANDS))
@pytest.mark.parametrize(
    "case_path", ALL_FILE_CASES, ids=[c["id"] for c in ALL_FILE_CASES], indirect=True
)
def test_cli_one_line_exit_2_nothing_written(case_path, command, tmp_path, capsys):
    case, path = case_path
    out = tmp_path / "out"
    out.mkdir()
    for name in ("report.html", "table.csv"):
        (out / name).write_bytes(b"the previous report, which must survive\n")
        os.utime(out / name, ns=(1_000_000_000_000_000_000, 1_000_000_000_000_000_000))
    before = _snapshot(out)

    code = main(COMMANDS[command](path, out))

    captured = capsys.readouterr()
    lines = captured.err.splitlines()
    assert code == 2, captured
    assert captured.out == "", captured.out
    assert len(lines) == 1, lines
    line = lines[0]
    assert line.startswith("viscometry: error: "), line
    assert "Traceback" not in captured.err and "unexpected" not in line, line
    assert str(path) in line, line
    if case.get("stage", "load") == "load" or command != "simulate":
        for fragment in case["message"]:
            assert fragment in line, (fragment, line)
    assert _snapshot(out) == before  # same names, bytes and modification times


def _arg(value):
    """Decode the manifest's argument notation (see the comment in cases.toml)."""
    if isinstance(value, dict) and "normal" in value:
        return InputQuantity.normal(*value["normal"])
    if isinstance(value, dict) and "correlation" in value:
        return Correlation(*value["correlation"])
    if isinstance(value, list):
        return [_arg(v) for v in value]
    return value


def _call(case):
    args = _arg(case["args"])
    kwargs = {k: _arg(v) for k, v in case.get("kwargs", {}).items()}
    call = case["call"]
    if call == "validate_correlation":
        return validate_correlation(np.array(args[0]), args[1])
    if call == "method.budget":
        return get_method(args[0]).budget(args[1])
    if call == "Budget.evaluate":
        return Budget.from_formula(*args, **kwargs).evaluate()
    if call == "Budget.from_formula":
        return Budget.from_formula(*args, **kwargs)
    if call == "parse_formula":
        return parse_formula(*args, **kwargs)
    if call == "Correlation":
        return Correlation(*args, **kwargs)
    if call == "InputQuantity":
        return InputQuantity(*args, **kwargs)
    if call.startswith("InputQuantity."):
        return getattr(InputQuantity, call.split(".", 1)[1])(*args, **kwargs)
    raise AssertionError(f"unknown call {call!r} in cases.toml")


@pytest.mark.parametrize("case", API_CASES, ids=[c["id"] for c in API_CASES])
def test_api_call_refused(case):
    expected = getattr(errors, case["error"])
    with pytest.raises(errors.ViscometryError) as info:
        _call(case)
    assert type(info.value) is expected, (type(info.value), str(info.value))
    for fragment in case["message"]:
        assert fragment in str(info.value), (fragment, str(info.value))


def test_megabyte_formula_through_the_api():
    # A formula of a megabyte is refused by its length before any parsing.
    with pytest.raises(errors.FormulaError, match=r"is 1000001 characters long; the limit is"):
        parse_formula("x" * 1_000_001, ["x"])
