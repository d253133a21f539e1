"""Property-based fuzzing of the formula parser and the budget-file loader.

Properties (no numerical check values; the oracle is the documented error contract):

* any text, any syntax tree given to :func:`viscometry.gum.parse_formula` either gives a
  sympy expression or raises :class:`~viscometry.errors.FormulaError`, and a formula that
  parses can be put into a budget and evaluated raising nothing but a
  :class:`~viscometry.errors.ViscometryError`;
* any mutation of a valid budget file given to :func:`viscometry.io.loads_budget` (and to
  ``evaluate`` when it loads) raises nothing but a ``ViscometryError``;
* no formula built from hostile fragments imports a module, calls ``eval``/``exec``/
  ``open`` or creates a file, whether given to the parser or inside a budget file.

Hypothesis runs derandomized with fixed example counts and a per-example deadline, so the
file is reproducible and bounded in time.
"""

from __future__ import annotations

import ast
import builtins
import contextlib
import datetime
import os
import sys
import warnings
from pathlib import Path

import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from viscometry.errors import FormulaError, ViscometryError
from viscometry.gum import Budget, InputQuantity, parse_formula
from viscometry.io import loads_budget

NAMES = ["x", "y", "z"]

FUZZ = settings(
    max_examples=150,
    derandomize=True,
    deadline=datetime.timedelta(seconds=5),
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
    database=None,
)


@contextlib.contextmanager
def no_warnings_emitted():
    """Any warning emitted is an error.

    Loading and evaluating a budget emit no Python warning at all: the budget's findings
    (validity checks, unused inputs, plausibility) are strings in ``result.warnings``. So,
    unlike before the one-budget refactoring, package warnings are not tolerated either.
    """
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        yield


# ----------------------------------------------------------------------------- parser
FORMULA_CHARS = st.sampled_from(
    list("xyz0123456789.+-*/()%@,[]{}:;'\"_ eE\tjJ<>=!~&|^") + ["**", "//", "\x00", "é", "𝑥"]
)


@FUZZ
@given(st.lists(FORMULA_CHARS, max_size=60).map("".join))
def test_random_text_only_formula_errors(text):
    try:
        expr = parse_formula(text, NAMES)
    except FormulaError:
        return
    assert isinstance(expr, sp.Expr)


LEAVES = st.one_of(
    st.sampled_from(NAMES + ["pi", "e", "q", "__x__", "_x", "sqrt", "True", "None"]),
    st.integers(min_value=-(10**35), max_value=10**35).map(str),
    st.sampled_from(["0", "0.0", "1e308", "1e-320", "2.5", "1j", "'s'", "b'x'", "..."]),
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
)
BINARY = ["+", "-", "*", "/", "**", "//", "%", "@", "<", "and", "if 1 else"]
FUNCTIONS = ["sqrt", "exp", "log", "log10", "sin", "cos", "tan", "asin", "acos", "atan", "abs"]


def _extend(children):
    return st.one_of(
        st.tuples(children, st.sampled_from(BINARY), children).map(
            lambda t: f"({t[0]} {t[1]} {t[2]})"
        ),
        st.tuples(st.sampled_from(["-", "+", "~", "not "]), children).map(
            lambda t: f"{t[0]}{t[1]}"
        ),
        st.tuples(st.sampled_from(FUNCTIONS + ["open", "eval", "getattr"]), children).map(
            lambda t: f"{t[0]}({t[1]})"
        ),
        st.tuples(st.sampled_from(FUNCTIONS), children, children).map(
            lambda t: f"{t[0]}({t[1]}, {t[2]})"
        ),
        children.map(lambda c: f"({c}).real"),
        children.map(lambda c: f"({c})[0]"),
        children.map(lambda c: f"(lambda: {c})()"),
        children.map(lambda c: f"[{c} for x in (1, 2)]"),
    )


TREES = st.recursive(LEAVES, _extend, max_leaves=25)


def _budget(expr_text: str) -> Budget:
    inputs = [
        InputQuantity.normal("x", 0.7, 0.01, "1"),
        InputQuantity.normal("y", 1.3, 0.02, "1"),
        InputQuantity.normal("z", -0.4, 0.03, "1"),
    ]
    return Budget.from_formula("w", expr_text, inputs, "1")


@FUZZ
@given(TREES)
def test_random_syntax_trees_only_documented_errors(text):
    try:
        expr = parse_formula(text, NAMES)
    except FormulaError:
        return
    assert isinstance(expr, sp.Expr)
    # What parses must also build and evaluate, or fail with a documented error.
    with no_warnings_emitted():
        try:
            _budget(text).evaluate()
        except ViscometryError:
            pass


# ----------------------------------------------------------------------------- loader
EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
DOCUMENTS = [
    (EXAMPLES / name).read_text(encoding="utf-8")
    for name in (
        "lubricant_lab_kinematic_viscosity.toml",
        "primary_capillary_poiseuille.toml",
        "methods/pressure_capillary.toml",
        "methods/glass_capillary_corrected.toml",
    )
]
REPLACEMENTS = [
    "nan", "inf", "-inf", "0", "-1", "1e308", "-1e-308", "99999999999999999999999", '""',
    '"x"', "[]", "[1]", "{}", "true", "1979-05-27", '"degC*m"', '"__import__(\'os\')"',
    '"a.__class__"', '"10**10**10"', '"1/0"', '"lognormal"', '"student_t"', "= =", "[[x]]",
]  # fmt: skip


@st.composite
def mutated_documents(draw):
    text = draw(st.sampled_from(DOCUMENTS))
    lines = text.splitlines()
    for _ in range(draw(st.integers(1, 3))):
        i = draw(st.integers(0, len(lines) - 1))
        kind = draw(st.sampled_from(["drop", "duplicate", "value", "key", "insert", "swap"]))
        if kind == "drop":
            del lines[i]
        elif kind == "duplicate":
            lines.insert(i, lines[i])
        elif kind == "value" and "=" in lines[i]:
            key = lines[i].split("=", 1)[0]
            lines[i] = f"{key}= {draw(st.sampled_from(REPLACEMENTS))}"
        elif kind == "key" and "=" in lines[i]:
            value = lines[i].split("=", 1)[1]
            new_key = draw(st.sampled_from(["value", "unit", "dof", "readings", "half_width",
                                            "distribution", "model", "method", "zz"]))  # fmt: skip
            lines[i] = f"{new_key} ={value}"
        elif kind == "insert":
            lines.insert(i, draw(st.text(max_size=20)))
        elif kind == "swap" and len(lines) > 1:
            j = draw(st.integers(0, len(lines) - 1))
            lines[i], lines[j] = lines[j], lines[i]
        if not lines:
            lines = [""]
    return "\n".join(lines) + "\n"


@FUZZ
@given(mutated_documents())
def test_mutated_budget_files_only_documented_errors(text):
    with no_warnings_emitted():
        try:
            bf = loads_budget(text, "fuzzed.toml")
            result = bf.budget.evaluate()
            assert all(isinstance(w, str) and w for w in result.warnings)
        except ViscometryError as exc:
            assert str(exc), "an error must say what is wrong"


# ----------------------------------------------------------------------------- no code runs
PAYLOADS = [
    "__import__('os').system('touch {m}')",
    "open('{m}', 'w').write('1')",
    "exec(\"open('{m}', 'w')\")",
    "eval(\"__import__('subprocess')\")",
    "getattr(__builtins__, 'open')('{m}', 'w')",
    "().__class__.__base__.__subclasses__()",
    "x.__globals__['os']",
    "[c for c in ().__class__.__mro__]",
    "(lambda f: f('{m}', 'w'))(open)",
    "__loader__.load_module('os')",
    "breakpoint()",
    "compile('1', '{m}', 'exec')",
    "sqrt(__import__('shutil').rmtree('.'))",
    "x if __import__('ctypes') else y",
]
FORBIDDEN_MODULES = {"os", "subprocess", "shutil", "ctypes", "socket", "pty", "pickle"}


@contextlib.contextmanager
def spies():
    """Record imports and calls of eval/exec/open/compile while the block runs.

    ``ast.parse`` calls ``compile`` with ``PyCF_ONLY_AST``, which builds a syntax tree and
    no code object; those calls are not recorded.
    """
    calls: list[str] = []
    real = {n: getattr(builtins, n) for n in ("__import__", "eval", "exec", "open", "compile")}

    def spy(name):
        def wrapper(*args, **kwargs):
            flags = args[3] if len(args) > 3 else kwargs.get("flags", 0)
            if not (name == "compile" and flags & ast.PyCF_ONLY_AST):  # ast.parse only parses
                calls.append(f"{name}:{args[0] if args else ''}")
            return real[name](*args, **kwargs)

        return wrapper

    before = set(sys.modules)
    for n in real:
        setattr(builtins, n, spy(n))
    try:
        yield calls
    finally:
        for n, f in real.items():
            setattr(builtins, n, f)
    new = set(sys.modules) - before
    calls.extend(f"new module:{m}" for m in new if m.split(".")[0] in FORBIDDEN_MODULES)


def _forbidden(calls: list[str]) -> list[str]:
    """Calls that would mean code from the formula ran (internal imports of sympy are fine)."""
    return [
        c
        for c in calls
        if c.startswith(("eval:", "exec:", "compile:", "new module:"))
        or "pwned" in c
        or (c.startswith("__import__:") and c.split(":", 1)[1].split(".")[0] in FORBIDDEN_MODULES)
    ]


@st.composite
def hostile_formulas(draw, marker: str):
    payload = draw(st.sampled_from(PAYLOADS)).format(m=marker)
    wrap = draw(
        st.sampled_from(["{p}", "x + {p}", "sqrt({p})", "({p}) * y", "-({p})", "x ** ({p})"])
    )
    return wrap.format(p=payload)


def test_hostile_formulas_create_no_file_and_import_nothing(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    marker = str(tmp_path / "pwned")

    @FUZZ
    @given(hostile_formulas(marker))
    def check(text):
        with spies() as calls:
            try:
                parse_formula(text, NAMES)
            except FormulaError:
                pass
            else:  # pragma: no cover - would be a parser hole
                raise AssertionError(f"hostile formula accepted: {text!r}")
        assert not _forbidden(calls), calls
        assert not os.path.exists(marker)
        assert list(tmp_path.iterdir()) == []

    check()


def test_hostile_formulas_in_a_budget_file_run_nothing(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    marker = str(tmp_path / "pwned")
    template = (
        'format = "viscometry-budget/1"\n[measurand]\nname = "w"\nunit = "1"\nmodel = {model}\n'
        '[inputs.x]\nvalue = 1.0\nunit = "1"\nstandard_uncertainty = 0.1\n'
        '[inputs.y]\nvalue = 2.0\nunit = "1"\nstandard_uncertainty = 0.1\n'
    )

    @FUZZ
    @given(hostile_formulas(marker))
    def check(text):
        toml_string = '"' + text.replace("\\", "\\\\").replace('"', '\\"') + '"'
        with spies() as calls, no_warnings_emitted():
            try:
                loads_budget(template.format(model=toml_string), "hostile.toml")
            except ViscometryError:
                pass
            else:  # pragma: no cover
                raise AssertionError(f"hostile formula accepted: {text!r}")
        assert not _forbidden(calls), calls
        assert not os.path.exists(marker)
        assert list(tmp_path.iterdir()) == []

    check()


# ----------------------------------------------------------------------------- source scan
ROOT = Path(__file__).resolve().parents[1]
EVALUATORS = {"eval", "exec", "compile", "__import__", "sympify", "parse_expr", "execfile"}
UNPICKLERS = {"pickle", "marshal", "shelve", "yaml", "dill", "cloudpickle"}
# Imports by a computed name, with why the name cannot come from a file.
COMPUTED_IMPORTS = {
    "viscometry/cli.py": "subcommand modules found by pkgutil in viscometry/commands",
    "viscometry/_lazy.py": "a package's public names from the literal _LAZY table of its "
    "__init__ (checked by tests/test_startup.py), or its own module files found by pkgutil",
    "viscometry/parallel.py": "a worker's warm-up, looked up by name in the literal WARM_UPS "
    "table (an unknown name is refused)",
}


def _evaluating_calls(tree: ast.AST) -> list[str]:
    found = []
    for node in ast.walk(tree):
        if isinstance(node, (ast.Import, ast.ImportFrom)):
            names = [a.name for a in node.names] + [getattr(node, "module", None) or ""]
            found += [f"import {n}" for n in names if n.split(".")[0] in UNPICKLERS]
        if not isinstance(node, ast.Call):
            continue
        f = node.func
        name = f.id if isinstance(f, ast.Name) else f.attr if isinstance(f, ast.Attribute) else ""
        if name in EVALUATORS and (isinstance(f, ast.Name) or name != "compile"):  # re.compile
            found.append(name)
        if name == "import_module" and not isinstance(node.args[0], ast.Constant):
            found.append("import_module(<computed>)")
    return found


def test_package_and_workbooks_never_evaluate_text():
    """No eval/exec/sympify/parse_expr/pickle anywhere in the package or the workbooks."""
    import json

    offenders = []
    for path in sorted((ROOT / "viscometry").rglob("*.py")):
        rel = path.relative_to(ROOT).as_posix()
        for what in _evaluating_calls(ast.parse(path.read_text(encoding="utf-8"))):
            if what == "import_module(<computed>)" and rel in COMPUTED_IMPORTS:
                continue
            offenders.append(f"{rel}: {what}")
    for nb in sorted((ROOT / "workbooks").glob("*.ipynb")):
        cells = json.loads(nb.read_text(encoding="utf-8"))["cells"]
        for cell in cells:
            if cell["cell_type"] != "code":
                continue
            source = "".join(cell["source"])
            lines = [ln for ln in source.splitlines() if not ln.lstrip().startswith(("%", "!"))]
            try:
                tree = ast.parse("\n".join(lines))
            except SyntaxError:  # pragma: no cover - notebooks are valid Python
                continue
            offenders += [f"{nb.name}: {w}" for w in _evaluating_calls(tree)]
    assert not offenders, offenders
