"""Budget files: loading, every validation error with its message, saving, round trips.

Expected values here are exact analytic cases (y = a + b, y = 2x) or recomputations with
the engine's own constructors; no external check values are used.

A :class:`~viscometry.io.BudgetFile` is only ``(budget, recorded, source)``: the title,
rounding, model, check context, warnings and evaluation all come from its
:class:`~viscometry.gum.Budget`. Loading emits no Python warning (pytest runs with warnings
as errors); the budget's findings are strings in ``result.warnings``.
"""

from __future__ import annotations

import dataclasses
import math
import os
import tomllib

import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import viscometry.methods as methods_pkg
from viscometry.errors import BudgetFileError
from viscometry.gum import Budget, Constant, Correlation, InputQuantity
from viscometry.io import (
    MAX_FILE_BYTES,
    BudgetFile,
    budget_to_document,
    dumps_budget,
    load_budget,
    loads_budget,
    save_budget,
)
from viscometry.io import atomic as atomic_mod
from viscometry.methods import Method
from viscometry.methods.base import symbols
from viscometry.text import statement

BASE = """
format = "viscometry-budget/1"
title = "test"
[measurand]
name = "y"
unit = "mm"
model = "a + b"
[inputs.a]
value = 1.0
unit = "mm"
standard_uncertainty = 0.3
[inputs.b]
value = 2.0
unit = "mm"
standard_uncertainty = 0.4
"""


def with_input(extra: str, base: str = BASE) -> str:
    return base + "\n" + extra


def test_minimal_budget_exact():
    # Exact: y = a + b, u = sqrt(0.3² + 0.4²) = 0.5 (common practice, no source)
    bf = loads_budget(BASE, "base.toml")
    r = bf.budget.evaluate()
    assert r.value == 3.0
    assert r.standard_uncertainty == pytest.approx(0.5, rel=1e-15)
    assert bf.budget.title == "test"
    assert bf.source == "base.toml"
    assert bf.fingerprint.startswith("sha256:") and len(bf.fingerprint) == 7 + 64
    assert bf.fingerprint == bf.budget.fingerprint == r.fingerprint
    assert bf.recorded is None
    assert bf.budget.rounding == "nearest" and r.rounding == "nearest"
    assert bf.budget.method is None and bf.budget.checks == ()
    assert r.warnings == ()


def _single(spec: str, unit: str = "mm") -> InputQuantity:
    text = f"""
format = "viscometry-budget/1"
[measurand]
name = "y"
unit = "{unit}"
model = "2 * x"
[inputs.x]
unit = "{unit}"
{spec}
"""
    return loads_budget(text, "one.toml").budget.input("x")


def test_each_uncertainty_form_matches_the_engine_constructors():
    q = _single("value = 1.0\nexpanded_uncertainty = 0.2\ncoverage_factor = 2")
    assert q == InputQuantity.from_expanded("x", 1.0, 0.2, "mm", coverage_factor=2)
    q = _single("value = 1.0\nexpanded_uncertainty = 0.2\ncoverage_probability = 0.95\ndof = 10")
    assert q == InputQuantity.from_expanded("x", 1.0, 0.2, "mm", coverage_probability=0.95, dof=10)
    q = _single('value = 1.0\nhalf_width = 0.3\ndistribution = "triangular"')
    assert q == InputQuantity.triangular("x", 1.0, 0.3, "mm")
    q = _single('lower = 1.0\nupper = 2.0\ndistribution = "rectangular"')
    assert q == InputQuantity.rectangular("x", lower=1.0, upper=2.0, unit="mm")
    q = _single('value = 0.0\nhalf_width = 1.0\ndistribution = "trapezoidal"\nbeta = 0.5')
    assert q == InputQuantity.trapezoidal("x", 0.0, 1.0, "mm", beta=0.5)
    q = _single("readings = [1.0, 1.2, 1.1, 1.3]")
    assert q == InputQuantity.from_readings("x", [1.0, 1.2, 1.1, 1.3], "mm")
    q = _single("readings = [1.0, 1.2]\npooled_standard_deviation = 0.1\npooled_dof = 20")
    assert q == InputQuantity.from_pooled("x", [1.0, 1.2], 0.1, 20, "mm")
    q = _single(
        "value = 1.0\nstandard_uncertainty = 0.1\nrelative_uncertainty_of_uncertainty = 0.25"
    )
    assert q.dof == 8.0  # JCGM 100:2008, G.4.2, eq. (G.3): ½ (0.25)⁻² = 8
    q = _single(
        'value = 1.0\nstandard_uncertainty = 0.1\ndistribution = "student_t"\ndof = 4\nevaluation = "A"'
    )
    assert (q.distribution, q.dof, q.evaluation) == ("student_t", 4.0, "A")
    q = _single("value = 1.0\nstandard_uncertainty = 0.1\ndof = inf")
    assert math.isinf(q.dof)


def test_degC_value_is_an_offset_but_its_uncertainty_a_difference():
    # y = T in K: 20 degC -> 293.15 K; u = 0.1 K (exact unit conversion, pint)
    text = """
format = "viscometry-budget/1"
[measurand]
name = "y"
unit = "K"
model = "T"
[inputs.T]
value = 20.0
unit = "degC"
standard_uncertainty = 0.1
"""
    r = loads_budget(text).budget.evaluate()
    assert r.value == pytest.approx(293.15, abs=1e-12)
    assert r.standard_uncertainty == pytest.approx(0.1, rel=1e-12)


def test_recorded_table_is_read():
    bf = loads_budget(
        with_input(
            "[recorded]\nvalue = 3.0\nexpanded_uncertainty = 1.0\ncoverage_factor = 2.0\n"
            'fingerprint = "sha256:00"\ndate = 2024-05-01\nunit = "mm"'
        )
    )
    rec = bf.recorded
    assert (rec.value, rec.expanded_uncertainty, rec.coverage_factor) == (3.0, 1.0, 2.0)
    assert rec.fingerprint == "sha256:00" and rec.date == "2024-05-01"
    assert rec.propagation is None


def test_recorded_propagation_is_read():
    # [recorded] method was renamed propagation (like BudgetResult.propagation)
    for value in ("first-order", "higher-order"):
        bf = loads_budget(
            with_input(
                f'[recorded]\nvalue = 3.0\nexpanded_uncertainty = 1.0\npropagation = "{value}"'
            )
        )
        assert bf.recorded.propagation == value


def test_settings_are_used():
    text = BASE.replace('model = "a + b"', 'model = "a + b"\ncoverage_factor = 3\nrounding = "up"')
    bf = loads_budget(text)
    r = bf.budget.evaluate()
    assert bf.budget.coverage_factor == 3.0 and bf.budget.rounding == "up"
    assert r.coverage_factor == 3.0 and r.rounding == "up"
    assert r.expanded_uncertainty == pytest.approx(1.5)


# ----------------------------------------------------------------------------- errors
ERRORS = [
    (
        "unknown top key",
        BASE.replace('title = "test"', 'title = "test"\ncolour = 1'),
        ["top level", "colour"],
    ),
    (
        "unknown measurand key",
        BASE.replace('title = "test"', 'title = "test"\n[measurand.x]'),
        ["[measurand]"],
    ),
    (
        "unknown input key",
        BASE.replace("standard_uncertainty = 0.4", "standard_uncertainty = 0.4\nwobble = 2"),
        ["[inputs.b]", "wobble"],
    ),
    (
        "two forms",
        BASE.replace(
            "standard_uncertainty = 0.4",
            "standard_uncertainty = 0.4\nexpanded_uncertainty = 0.8\ncoverage_factor = 2",
        ),
        [
            "[inputs.b]",
            "exactly one uncertainty form",
            "standard_uncertainty and expanded_uncertainty",
        ],
    ),
    ("no form", BASE.replace("standard_uncertainty = 0.4", ""), ["[inputs.b]", "got none"]),
    (
        "missing unit",
        BASE.replace('value = 2.0\nunit = "mm"', "value = 2.0"),
        ["[inputs.b]", "missing key unit"],
    ),
    (
        "unknown unit",
        BASE.replace('value = 2.0\nunit = "mm"', 'value = 2.0\nunit = "furlongs_per_glass"'),
        ["[inputs.b] unit", "furlongs_per_glass"],
    ),
    (
        "unknown name in model",
        BASE.replace('model = "a + b"', 'model = "a + b + c"'),
        ["[measurand] model", "'c'"],
    ),
    (
        "model and method",
        BASE.replace('model = "a + b"', 'model = "a + b"\nmethod = "x"'),
        ["[measurand]", "exactly one of model or method", "both"],
    ),
    ("no model", BASE.replace('model = "a + b"', ""), ["[measurand]", "neither"]),
    ("missing format", BASE.replace('format = "viscometry-budget/1"', ""), ["missing key format"]),
    (
        "wrong format",
        BASE.replace("viscometry-budget/1", "viscometry-budget/9"),
        ["viscometry-budget/9"],
    ),
    (
        "both coverage settings",
        BASE.replace(
            'model = "a + b"', 'model = "a + b"\ncoverage_factor = 2\ncoverage_probability = 0.95'
        ),
        ["[measurand]", "not both"],
    ),
    (
        "bad rounding",
        BASE.replace('model = "a + b"', 'model = "a + b"\nrounding = "down"'),
        ["rounding", "'down'"],
    ),
    (
        "dimension mismatch",
        BASE.replace('unit = "mm"\nmodel', 'unit = "s"\nmodel'),
        ["[measurand] model", "[length]", "'s'"],
    ),
    (
        "correlation unknown input",
        BASE + '\n[[correlations]]\nbetween = ["a", "zz"]\ncoefficient = 0.5\n',
        ["correlations[0].between", "'zz'"],
    ),
    (
        "correlation out of range",
        BASE + '\n[[correlations]]\nbetween = ["a", "b"]\ncoefficient = 1.5\n',
        ["correlations[0]", "1.5"],
    ),
    (
        "unknown correlation key",
        BASE + '\n[[correlations]]\nbetween = ["a", "b"]\ncoefficient = 0.5\nsign = 1\n',
        ["correlations[0]", "sign"],
    ),
    (
        "recorded method renamed",
        BASE + '\n[recorded]\nvalue = 3.0\nexpanded_uncertainty = 1.0\nmethod = "first-order"\n',
        ["[recorded]", "key 'method' is now called 'propagation'"],
    ),
    (
        "recorded propagation unknown",
        BASE + '\n[recorded]\nvalue = 3.0\nexpanded_uncertainty = 1.0\npropagation = "mc"\n',
        ["[recorded]", "propagation must be 'first-order' or 'higher-order'", "'mc'"],
    ),
    (
        "checks with a formula model",
        BASE + '\n[checks]\nflow_volume = { value = 4.0, unit = "mL" }\n',
        ["[checks]", "a formula model has no validity checks to run"],
    ),
    (
        "unknown recorded key",
        BASE + "\n[recorded]\nvalue = 3.0\nexpanded_uncertainty = 1.0\nmood = 1\n",
        ["[recorded]", "mood"],
    ),
    (
        "negative half width",
        BASE.replace(
            "standard_uncertainty = 0.4", 'half_width = -0.4\ndistribution = "rectangular"'
        ),
        ["[inputs.b]", "half_width", "-0.4"],
    ),
    (
        "one reading",
        BASE.replace(
            'value = 2.0\nunit = "mm"\nstandard_uncertainty = 0.4', 'unit = "mm"\nreadings = [2.0]'
        ),
        ["[inputs.b]", "at least 2 readings"],
    ),
    (
        "string for number",
        BASE.replace("value = 2.0", 'value = "2.0"'),
        ["[inputs.b]", "value must be a number", "'2.0'"],
    ),
    (
        "distribution with readings",
        BASE.replace(
            'value = 2.0\nunit = "mm"\nstandard_uncertainty = 0.4',
            'unit = "mm"\nreadings = [2.0, 2.1]\ndistribution = "normal"',
        ),
        ["[inputs.b]", "'distribution' cannot be used with readings"],
    ),
    (
        "unknown constant key",
        BASE + '\n[constants]\nk0 = { value = 1.0, unit = "1", colour = "red" }\n',
        ["[constants] k0", "colour"],
    ),
    ("empty inputs", BASE.split("[inputs.a]")[0] + "[inputs]\n", ["[inputs] is empty"]),
    (
        "unknown method",
        BASE.replace('model = "a + b"', 'method = "no_such_method_xyz"'),
        ["[measurand] method", "unknown method 'no_such_method_xyz'"],
    ),
]


@pytest.mark.parametrize(("case", "text", "fragments"), ERRORS, ids=[e[0] for e in ERRORS])
def test_errors_name_table_key_and_value(case, text, fragments):
    with pytest.raises(BudgetFileError) as info:
        loads_budget(text, "bad.toml")
    message = str(info.value)
    assert message.startswith("bad.toml: "), message
    for fragment in fragments:
        assert fragment in message, (fragment, message)


def test_toml_syntax_error_gives_the_line():
    text = BASE.replace("value = 2.0", "value = = 2.0")
    line = text.splitlines().index("value = = 2.0") + 1
    with pytest.raises(BudgetFileError, match=rf"bad.toml: not valid TOML: .*line {line}"):
        loads_budget(text, "bad.toml")


def test_non_utf8_and_oversized_and_missing_files(tmp_path):
    p = tmp_path / "latin1.toml"
    p.write_bytes(BASE.replace("test", "caf\xe9").encode("latin-1"))
    with pytest.raises(BudgetFileError, match="not UTF-8"):
        load_budget(p)
    big = tmp_path / "big.toml"
    big.write_bytes(BASE.encode() + b"#" * (MAX_FILE_BYTES + 1))
    with pytest.raises(BudgetFileError, match="at most 1000000 bytes"):
        load_budget(big)
    with pytest.raises(BudgetFileError, match="cannot read the file"):
        load_budget(tmp_path / "absent.toml")
    with pytest.raises(BudgetFileError, match="is a directory"):
        load_budget(tmp_path)


def test_unused_input_is_a_note_of_the_evaluation_not_a_load_warning():
    # Loading no longer warns (pytest runs with warnings as errors, so a warning here would
    # fail the test); the note comes with the evaluation, for every path alike.
    text = BASE + '\n[inputs.c]\nvalue = 1.0\nunit = "mm"\nstandard_uncertainty = 0.1\n'
    bf = loads_budget(text, "unused.toml")
    note = "input c is not used by the model; its sensitivity coefficient is zero"
    assert bf.budget.estimate_warnings == (note,)
    r = bf.budget.evaluate()
    assert r.warnings == (note,)
    assert r.contribution("c").sensitivity == 0.0


# ----------------------------------------------------------------------------- methods
def _fake_method() -> Method:
    """A test-only built-in model nu = C t whose check flags a flow time below 200 s."""
    c, t = symbols("C t")

    def checker(method: Method, values: dict[str, float]) -> list[str]:
        return [f"flow time {values['t']:.0f} s is short"] if values["t"] < 200 else []

    return Method(
        name="fake",
        title="test only",
        expression=c * t,
        input_names=("C", "t"),
        input_units={"C": "m^2/s^2", "t": "s"},
        input_descriptions={"C": "viscometer_constant", "t": "flow_time"},
        output_name="nu",
        output_unit="m^2/s",
        references=("none (test only)",),
        validity="test only",
        checker=checker,
    )


def test_method_from_the_methods_layer(monkeypatch):
    """A built-in method supplies the expression; its check() warnings are passed on to the
    evaluation (not emitted while loading)."""
    fake = _fake_method()
    original = methods_pkg.get_method
    monkeypatch.setattr(
        methods_pkg, "get_method", lambda name: fake if name == "fake" else original(name)
    )
    text = """
format = "viscometry-budget/1"
[measurand]
name = "nu"
unit = "mm^2/s"
method = "fake"
[inputs.C]
value = 0.1
unit = "mm^2/s^2"
standard_uncertainty = 0.0001
[inputs.t]
value = 150.0
unit = "s"
standard_uncertainty = 0.1
"""
    bf = loads_budget(text, "m.toml")  # no warning while loading
    r = bf.budget.evaluate()
    assert r.value == pytest.approx(15.0)  # exact: 0.1 mm²/s² × 150 s
    assert bf.budget.method is fake and bf.budget.method.name == "fake"
    assert r.warnings == ("flow time 150 s is short",)
    assert bf.budget.estimate_warnings == ("flow time 150 s is short",)
    with pytest.raises(BudgetFileError, match=r"\[inputs.t\] unit 'mm'.*method 'fake'"):
        loads_budget(
            text.replace('value = 150.0\nunit = "s"', 'value = 150.0\nunit = "mm"'), "m.toml"
        )
    with pytest.raises(BudgetFileError, match="needs input"):
        loads_budget(text.split("[inputs.t]")[0], "m.toml")
    with pytest.raises(BudgetFileError, match="unknown method 'other'"):
        loads_budget(text.replace('"fake"', '"other"'), "m.toml")


# ----------------------------------------------------------------------------- saving
def _results_equal(r1, r2):
    assert r1.value == r2.value
    assert r1.standard_uncertainty == r2.standard_uncertainty
    assert r1.effective_dof == r2.effective_dof or (
        math.isnan(r1.effective_dof) and math.isnan(r2.effective_dof)
    )
    assert r1.expanded_uncertainty == r2.expanded_uncertainty
    assert r1.rounding == r2.rounding and r1.fingerprint == r2.fingerprint
    assert statement(r1) == statement(r2)
    assert r1.warnings == r2.warnings
    for a, b in zip(r1.contributions, r2.contributions, strict=True):
        assert (a.name, a.value, a.standard_uncertainty, a.dof, a.distribution, a.evaluation) == (
            b.name,
            b.value,
            b.standard_uncertainty,
            b.dof,
            b.distribution,
            b.evaluation,
        )
        assert a.sensitivity == b.sensitivity


def _round_trip(budget: Budget, folder) -> BudgetFile:
    """file → Budget → file: the budget written, read, written again. The second write
    gives identical text and the same fingerprint (the round-trip promise of io.writer)."""
    first = save_budget(budget, folder / "first.toml")
    again = load_budget(first)
    second = save_budget(again, folder / "second.toml")
    assert second.read_text(encoding="utf-8") == first.read_text(encoding="utf-8")
    assert again.fingerprint == budget.fingerprint == load_budget(second).fingerprint
    return again


def test_save_budget_file_round_trip_keeps_document_and_fingerprint(tmp_path):
    text = BASE + '\n[[correlations]]\nbetween = ["a", "b"]\ncoefficient = 0.25\n'
    bf = loads_budget(text)
    p = save_budget(bf, tmp_path / "out.toml")
    again = load_budget(p)
    assert again.fingerprint == bf.fingerprint
    # the written file states the same tables as the one read (the title too)
    written, read = tomllib.loads(p.read_text(encoding="utf-8")), tomllib.loads(text)
    assert written["inputs"] == read["inputs"]
    assert written["measurand"] == read["measurand"]
    assert written["correlations"] == read["correlations"] and written["title"] == "test"
    assert budget_to_document(again.budget) == budget_to_document(bf.budget)
    _results_equal(bf.budget.evaluate(), again.budget.evaluate())
    _round_trip(bf.budget, tmp_path)


def test_save_writes_the_recorded_table_of_a_budget_file(tmp_path):
    text = with_input(
        "[recorded]\nvalue = 3.0\nexpanded_uncertainty = 1.0\ncoverage_factor = 2.0\n"
        'propagation = "higher-order"\nfingerprint = "sha256:00"'
    )
    bf = loads_budget(text)
    again = load_budget(save_budget(bf, tmp_path / "rec.toml"))
    assert again.recorded == bf.recorded and again.recorded.propagation == "higher-order"
    assert "method" not in tomllib.loads((tmp_path / "rec.toml").read_text())["recorded"]


def test_save_plain_budget_with_every_input_kind(tmp_path):
    inputs = [
        InputQuantity.from_readings(
            "t", [412.31, 412.45, 412.28, 412.40], "s", description='quote " and \\ back'
        ),
        InputQuantity.from_pooled("t2", [1.0, 1.1], 0.07, 12, "s"),
        InputQuantity.from_expanded(
            "C", 0.10012, 0.0003, "mm^2/s^2", coverage_probability=0.95, dof=30
        ),
        InputQuantity.rectangular("E", 0.0, 2.0, "mm^2*s"),
        InputQuantity.trapezoidal("z", 0.0, 1.0, "s", beta=0.3, dof=40),
        InputQuantity.arcsine("T", 20.0, 0.02, "degC"),
        InputQuantity("w", 1.0, 0.01, "s", distribution="rectangular"),
    ]
    b = Budget.from_formula(
        "nu",
        "C * t - E / t**2 + k0 * (t2 + z + w) * 1e-6 * (T - T0)",
        inputs,
        "mm^2/s",
        constants=[Constant("k0", 1.0, "mm^2/s^2/K"), Constant("T0", 20.0, "degC")],
        correlations=[Correlation("C", "E", 0.3)],
        coverage_factor=2.0,
        title="all kinds",
    )
    b = b.with_settings(rounding="ea-4/02")  # the rounding belongs to the budget
    p = save_budget(b, tmp_path / "all.toml")
    again = load_budget(p)
    assert again.budget.rounding == "ea-4/02" and again.budget.title == "all kinds"
    assert again.budget.inputs == b.inputs
    assert again.budget.constants == b.constants
    assert again.budget.correlations == b.correlations
    _results_equal(b.evaluate(), again.budget.evaluate())
    assert again.budget.input("t2").evaluation == "A"
    # each input is written in the form its uncertainty was stated in
    written = tomllib.loads(p.read_text(encoding="utf-8"))["inputs"]
    assert written["C"]["expanded_uncertainty"] == 0.0003
    assert written["C"]["coverage_probability"] == 0.95 and written["C"]["dof"] == 30
    assert written["t"]["readings"] == [412.31, 412.45, 412.28, 412.40]
    assert written["t2"]["pooled_standard_deviation"] == 0.07
    assert (written["E"]["distribution"], written["E"]["half_width"]) == ("rectangular", 2.0)
    assert written["z"]["beta"] == 0.3 and written["T"]["distribution"] == "arcsine"
    assert written["t"]["description"] == 'quote " and \\ back'
    _round_trip(b, tmp_path)


def test_save_model_without_formula_text(tmp_path):
    from viscometry.gum import MeasurementModel

    x = sp.Symbol("x", real=True)
    model = MeasurementModel(sp.exp(x) + sp.Abs(x) * sp.pi + sp.Float(0.1) * x, ("x",), (), "y")
    b = Budget(model, (InputQuantity.normal("x", 0.5, 0.01),), "")
    again = load_budget(save_budget(b, tmp_path / "m.toml"))
    assert again.budget.evaluate().value == b.evaluate().value
    assert sp.simplify(again.budget.model.expression - model.expression) == 0


def test_model_without_formula_text_keeps_its_fingerprint_through_a_file(tmp_path):
    # The same budget built in code or read from a file has the same fingerprint, also when
    # the code builds the sympy expression itself: sp.Float(0.1) (53-bit precision) and the
    # parser's "0.1" (sp.Float(0.1, 17), 60-bit) are the same double, so the same number.
    from viscometry.gum import MeasurementModel

    x = sp.Symbol("x", real=True)
    model = MeasurementModel(sp.exp(x) + sp.Abs(x) * sp.pi + sp.Float(0.1) * x, ("x",), (), "y")
    b = Budget(model, (InputQuantity.normal("x", 0.5, 0.01),), "")
    again = load_budget(save_budget(b, tmp_path / "m.toml"))
    assert again.fingerprint == b.fingerprint


def test_atomic_write_keeps_old_file_on_failure(tmp_path, monkeypatch):
    target = tmp_path / "keep.toml"
    target.write_text(BASE)
    bf = loads_budget(BASE.replace("0.3", "0.35"))

    def broken(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(atomic_mod.os, "replace", broken)
    with pytest.raises(BudgetFileError, match="keep.toml: cannot write the file: No space left"):
        save_budget(bf, target)
    assert target.read_text() == BASE
    assert sorted(os.listdir(tmp_path)) == ["keep.toml"]  # no temporary file left behind


def test_save_into_missing_folder_is_a_clear_error(tmp_path):
    with pytest.raises(BudgetFileError, match="cannot write the file"):
        save_budget(loads_budget(BASE), tmp_path / "no" / "such" / "dir.toml")


def test_dumps_escapes_and_special_floats():
    doc = budget_to_document(
        Budget.from_formula(
            "y",
            "x",
            [InputQuantity.normal("x", 1.0, 0.1, "m", dof=7)],
            "m",
            title='tab\there "q" \\ é',
        )
    )
    text = dumps_budget(doc)
    assert loads_budget(text).budget.title == 'tab\there "q" \\ é'


def test_budget_file_is_frozen():
    bf = loads_budget(BASE)
    assert isinstance(bf, BudgetFile)
    # a BudgetFile is only (budget, recorded, source); everything else comes from the budget
    assert [f.name for f in dataclasses.fields(BudgetFile)] == ["budget", "recorded", "source"]
    with pytest.raises(AttributeError):
        bf.budget = bf.budget  # type: ignore[misc]
    with pytest.raises(AttributeError):
        bf.budget.title = "x"  # type: ignore[misc]
    with pytest.raises(AttributeError):
        bf.budget.inputs[0].value = 5.0  # type: ignore[misc]
    # the document of a budget is a fresh copy: editing it changes nothing in the budget
    doc = budget_to_document(bf.budget)
    doc["inputs"]["a"]["value"] = 5.0
    assert bf.budget.input("a").value == 1.0
    assert budget_to_document(bf.budget)["inputs"]["a"]["value"] == 1.0


# ----------------------------------------------------------------------------- property test
_names = st.sampled_from(["a", "b", "c", "d"])
_finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)
_positive = st.floats(min_value=1e-6, max_value=1e3, allow_nan=False, allow_infinity=False)


@st.composite
def _inputs(draw):
    names = draw(st.lists(_names, min_size=1, max_size=4, unique=True))
    out = []
    for n in names:
        kind = draw(st.sampled_from(["normal", "expanded", "rect", "readings", "tri"]))
        if kind == "normal":
            dof = draw(st.one_of(st.none(), st.floats(min_value=1, max_value=200)))
            out.append(InputQuantity.normal(n, draw(_finite), draw(_positive), "m", dof=dof))
        elif kind == "expanded":
            out.append(
                InputQuantity.from_expanded(
                    n,
                    draw(_finite),
                    draw(_positive),
                    "m",
                    coverage_factor=draw(st.floats(1.0, 3.0)),
                )
            )
        elif kind == "rect":
            out.append(InputQuantity.rectangular(n, draw(_finite), draw(_positive), "m"))
        elif kind == "tri":
            out.append(InputQuantity.triangular(n, draw(_finite), draw(_positive), "m"))
        else:
            readings = draw(st.lists(_finite, min_size=2, max_size=6))
            if len(set(readings)) < 2:
                readings = [readings[0], readings[0] + 1.0]
            out.append(InputQuantity.from_readings(n, readings, "m"))
    return out


@settings(
    max_examples=25,
    deadline=None,
    derandomize=True,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)
@given(inputs=_inputs(), p=st.floats(min_value=0.5, max_value=0.999))
def test_round_trip_generated_budgets(tmp_path, inputs, p):
    """Write → load → identical results, same fingerprint, identical text on a second write,
    for generated linear budgets."""
    formula = " + ".join(q.name for q in inputs)
    b = Budget.from_formula("y", formula, inputs, "m", coverage_probability=p)
    again = _round_trip(b, tmp_path)
    assert again.budget.inputs == b.inputs
    assert again.budget.coverage_probability == b.coverage_probability
    _results_equal(b.evaluate(), again.budget.evaluate())
