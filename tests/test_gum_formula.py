"""The whitelist formula parser: accepts plain arithmetic, refuses everything else."""

import builtins
import os

import pytest
import sympy as sp

from viscometry.errors import FormulaError
from viscometry.gum import parse_formula

NAMES = ["r", "dp", "t", "V", "L", "x"]


def test_accepts_arithmetic_and_functions():
    e = parse_formula("pi * r**4 * dp * t / (8 * V * L) - sqrt(abs(x)) + log10(x) + exp(-x)", NAMES)
    r = sp.Symbol("r", real=True)
    assert sp.diff(e, r).has(r**3)


HOSTILE = [
    "__import__('os').system('touch /tmp/pwned')",
    "x.__class__",
    "().__class__.__bases__[0].__subclasses__()",
    "x.real",
    "[x for x in (1, 2)]",
    "{x: 1 for x in (1,)}",
    "(lambda: 1)()",
    "open('/etc/passwd')",
    "eval('1')",
    "exec('1')",
    "globals()",
    "'abc'",
    "b'abc'",
    "x if x else 1",
    "x < 1",
    "x and 1",
    "f'{x}'",
    "x[0]",
    "sqrt(x=1)",
    "sqrt(*[x])",
    "sqrt(x, x)",
    "sqrt",
    "x = 1",
    "import os",
    "x; x",
    "10**10**10",
    "2**1000",
    "x**100",
    "1j * x",
    "True + x",
    "unknown_name + x",
    "__builtins__",
    "x @ x",
    "x // 2",
    "x % 2",
    "~x",
    "(" * 200 + "x" + ")" * 200,
    "x + " * 6000 + "x",  # a flat chain past MAX_OPEN_OPERATORS (2000 terms are accepted)
    "-" * 2000 + "x",  # 2000 signs nested in one another
    "x + " * 25_000 + "x",  # past MAX_FORMULA_LENGTH
    "x" * 3000,
    "",
    "   ",
    "\x00",
]


@pytest.mark.parametrize("text", HOSTILE, ids=range(len(HOSTILE)))
def test_refuses_hostile_strings_without_executing(text, tmp_path, monkeypatch):
    calls = []
    real_import = builtins.__import__

    def spy(name, *a, **k):
        calls.append(name)
        return real_import(name, *a, **k)

    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(builtins, "__import__", spy)
    with pytest.raises(FormulaError):
        parse_formula(text, NAMES)
    monkeypatch.setattr(builtins, "__import__", real_import)
    assert "os" not in calls and "subprocess" not in calls
    assert not os.path.exists("/tmp/pwned")
    assert list(tmp_path.iterdir()) == []


def test_error_names_the_piece():
    with pytest.raises(FormulaError, match=r"unknown name 'q' \(known inputs and constants"):
        parse_formula("q + x", NAMES)
    with pytest.raises(FormulaError, match="attribute access 'x.real'"):
        parse_formula("x.real", NAMES)
    with pytest.raises(FormulaError, match="function 'open' is not allowed"):
        parse_formula("open(x)", NAMES)
    with pytest.raises(FormulaError, match="exceeds the limit"):
        parse_formula("x**100", NAMES)
