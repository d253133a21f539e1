"""The audit fingerprint of a Budget: stable under reordering, reformatting, comments, unit
spelling and the door the budget came in by (code or file); different under any change of a
number, unit, setting, the model, the correlations or the check context.

Expected behaviour is defined by the canonicalisation rules of
:mod:`viscometry.gum.canonical` (common practice, no source); SHA-256 itself is checked
against hashlib (FIPS PUB 180-4). The budgets are invented; the built-in model example is
examples/methods/glass_capillary_hagenbach.toml (invented demo).
"""

from __future__ import annotations

import copy
import hashlib
import math
import re
import tomllib
import warnings
from pathlib import Path
from typing import Any

import pytest

from viscometry.gum import Budget, Constant, Correlation, InputQuantity
from viscometry.gum.canonical import canonical_form, canonical_json, fingerprint
from viscometry.io import dumps_budget, load_budget, loads_budget
from viscometry.methods import get_method

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
HAGENBACH = EXAMPLES / "methods" / "glass_capillary_hagenbach.toml"

TEXT = """
format = "viscometry-budget/1"
title = "original"

[measurand]
name = "nu"
unit = "mm^2/s"
model = "C * t - E / t**2"

[constants]
k0 = { value = 1.0, unit = "1", description = "unused factor" }

[inputs.C]
value = 0.10012
unit = "mm^2/s^2"
expanded_uncertainty = 0.00030
coverage_factor = 2
description = "viscometer constant"

[inputs.t]
unit = "s"
readings = [412.31, 412.45, 412.28, 412.40]

[inputs.E]
value = 0.0
unit = "mm^2*s"
distribution = "rectangular"
half_width = 2.0

[[correlations]]
between = ["C", "E"]
coefficient = 0.3
"""

# The same budget: keys and tables reordered (inputs in another order too), comments and blank
# lines added, numbers typed differently (2 → 2.0, 0.0 → -0.0, 0.10012 → 1.0012e-1), formula
# and units spaced differently, correlation pair swapped, default coverage probability given
# explicitly, title, descriptions and the [recorded] table changed.
REFORMATTED = """
# a comment
[inputs.E]   # comment
half_width = 2.0
distribution = "rectangular"
unit = "mm^2 * s"
value = -0.0

[inputs.t]
readings = [412.31, 412.45, 412.28, 412.4]
unit = "s"

[inputs.C]
coverage_factor = 2.0
expanded_uncertainty = 3.0e-4
unit = " mm^2/s^2 "
value = 1.0012e-1
description = "something else entirely"

[constants]
k0 = { unit = "1", value = 1 }

[measurand]
model = "C*t-E/t**2"
coverage_probability = 0.9545
unit = "mm^2 / s"
name = "nu"

[[correlations]]
coefficient = 0.30
between = ["E", "C"]

[recorded]
value = 41.29
expanded_uncertainty = 0.12
"""

REFORMATTED = 'format = "viscometry-budget/1"\ntitle = "another title"\n' + REFORMATTED


def _load(text: str):
    """Load a budget text; loading must not emit any Python warning."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        return loads_budget(text, "fp.toml")


def _fp(text: str) -> str:
    return _load(text).fingerprint


def _fp_doc(doc: dict[str, Any]) -> str:
    """Fingerprint of a parsed (and perhaps edited) budget document."""
    return _fp(dumps_budget(doc))


# ----------------------------------------------------------------------------- what it is
def test_budget_file_carries_the_fingerprint_of_its_budget():
    bf = _load(TEXT)  # no warning while loading (the unused constant is a note of evaluation)
    assert bf.fingerprint == bf.budget.fingerprint == fingerprint(bf.budget)
    assert "constant k0 is not used by the model" in bf.budget.evaluate().warnings


def test_is_the_sha256_of_the_canonical_json():
    budget = _load(TEXT).budget
    expected = hashlib.sha256(canonical_json(budget).encode("ascii")).hexdigest()  # FIPS 180-4
    assert budget.fingerprint == "sha256:" + expected


def test_format_is_sha256_hex():
    assert re.fullmatch(r"sha256:[0-9a-f]{64}", _fp(TEXT))


def test_canonical_form_drops_prose_and_keeps_the_check_context():
    form = canonical_form(_load(TEXT).budget)
    text = canonical_json(_load(TEXT).budget)
    assert "original" not in text and "viscometer constant" not in text  # title, description
    assert "unused factor" not in text
    assert form["checks"] == {}  # a formula budget has no check context
    hagenbach = canonical_form(load_budget(HAGENBACH).budget)
    assert set(hagenbach["checks"]) == {
        "capillary_radius",
        "flow_volume",
        "g_calibration",
        "g_local",
    }
    assert "maker's drawing" not in canonical_json(load_budget(HAGENBACH).budget)  # sources


# ----------------------------------------------------------------------------- what does not change it
def test_stable_under_reordering_reformatting_and_comments():
    assert _fp(TEXT) == _fp(REFORMATTED)
    assert canonical_json(_load(TEXT).budget) == canonical_json(_load(REFORMATTED).budget)


@pytest.mark.parametrize(
    ("measurand_unit", "c_unit", "e_unit"),
    [
        ("mm²/s", "mm²/s²", "mm²·s"),
        ("cSt", "mm^2*s^-2", "mm**2*s"),
        ("centistokes", "mm**2/s**2", "s*mm^2"),
    ],
)
def test_unit_spelling_does_not_change_it(measurand_unit, c_unit, e_unit):
    # "mm^2/s" == "mm²/s" == "cSt" (1 cSt = 1 mm²/s exactly, by definition of the stokes)
    text = (
        TEXT.replace('unit = "mm^2/s"\nmodel', f'unit = "{measurand_unit}"\nmodel')
        .replace('unit = "mm^2/s^2"', f'unit = "{c_unit}"')
        .replace('unit = "mm^2*s"', f'unit = "{e_unit}"')
    )
    assert text != TEXT
    assert _fp(text) == _fp(TEXT)


def test_order_of_inputs_constants_and_correlations_in_code_does_not_change_it():
    inputs = _code_inputs()
    a = _code_budget(inputs)
    b = Budget.from_formula(
        "nu", "C * t - E / t**2", list(reversed(inputs)), "mm^2/s",
        constants=[Constant("k0", 1.0, "1")], correlations=[Correlation("E", "C", 0.3)],
    )  # fmt: skip
    assert b.input_names != a.input_names
    assert a.fingerprint == b.fingerprint


def test_title_descriptions_and_sources_do_not_change_it():
    base = _load(TEXT).budget
    other = base.with_settings(title="another", description="the kinematic viscosity")
    other = other.with_input(
        InputQuantity.from_readings(
            "t", [412.31, 412.45, 412.28, 412.40], "s", description="d", source="stopwatch 7"
        )
    )
    assert other.fingerprint == base.fingerprint


# ----------------------------------------------------------------------------- code == file
def _code_inputs() -> list[InputQuantity]:
    return [
        InputQuantity.from_expanded("C", 0.10012, 0.00030, "mm^2/s^2", coverage_factor=2),
        InputQuantity.from_readings("t", [412.31, 412.45, 412.28, 412.40], "s"),
        InputQuantity.rectangular("E", 0.0, 2.0, "mm^2*s"),
    ]


def _code_budget(inputs: list[InputQuantity]) -> Budget:
    return Budget.from_formula(
        "nu", "C * t - E / t**2", inputs, "mm^2/s",
        constants=[Constant("k0", 1.0, "1", description="unused factor")],
        correlations=[Correlation("C", "E", 0.3)], title="built in code",
    )  # fmt: skip


def test_formula_budget_built_in_code_has_the_file_fingerprint():
    assert _code_budget(_code_inputs()).fingerprint == _fp(TEXT)


def _hagenbach_inputs() -> list[InputQuantity]:
    # the inputs of examples/methods/glass_capillary_hagenbach.toml, built in code
    return [
        InputQuantity.from_expanded("C", 0.03004, 0.00006, "mm^2/s^2", coverage_factor=2),
        InputQuantity.from_readings("t", [318.44, 318.62, 318.51], "s"),
        InputQuantity.rectangular("B", 0.010, 0.010, "mm^2"),
    ]


HAGENBACH_CHECKS = [
    Constant("capillary_radius", 0.29, "mm"),
    Constant("flow_volume", 4.0, "mL"),
    Constant("g_calibration", 9.80981, "m/s^2"),
    Constant("g_local", 9.80702, "m/s^2"),
]


def test_method_budget_built_in_code_has_the_file_fingerprint():
    bf = load_budget(HAGENBACH)
    method = get_method("glass_capillary_hagenbach")
    in_code = Budget.from_method(method, _hagenbach_inputs(), "mm^2/s", checks=HAGENBACH_CHECKS)
    assert in_code.fingerprint == bf.fingerprint == bf.recorded.fingerprint
    # Method.budget is the same door
    assert method.budget(_hagenbach_inputs(), "mm^2/s", checks=HAGENBACH_CHECKS).fingerprint == (
        bf.fingerprint
    )
    # without the check context it is another budget (the [checks] table is in the fingerprint)
    assert Budget.from_method(method, _hagenbach_inputs(), "mm^2/s").fingerprint != bf.fingerprint


def test_check_context_as_si_mapping_matches_a_file_in_si_units():
    # checks={key: SI value} gives Constants in the key's SI unit; a file that writes the
    # same values in SI units describes the same budget.
    si = {"capillary_radius": 2.9e-4, "flow_volume": 4e-6, "g_calibration": 9.80981,
          "g_local": 9.80702}  # fmt: skip
    method = get_method("glass_capillary_hagenbach")
    in_code = Budget.from_method(method, _hagenbach_inputs(), "mm^2/s", checks=si)
    doc = _example_doc()
    doc["checks"] = {k: {"value": v, "unit": method.context_unit(k)} for k, v in si.items()}
    assert in_code.fingerprint == _fp_doc(doc)
    # ... but 0.29 mm is not the same statement as 2.9e-4 m: the unit is part of the fingerprint
    assert in_code.fingerprint != load_budget(HAGENBACH).fingerprint


# ----------------------------------------------------------------------------- what changes it
def _numbers(obj, path=()):
    """Paths to every numeric leaf of a TOML document."""
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _numbers(v, (*path, k))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _numbers(v, (*path, i))
    elif isinstance(obj, (int, float)) and not isinstance(obj, bool):
        yield path


DOC = tomllib.loads(TEXT)
NUMERIC_PATHS = list(_numbers(DOC))


def _nudged(doc: dict[str, Any], path: tuple) -> dict[str, Any]:
    """``doc`` with the number at ``path`` changed by the smallest representable step
    (or by +1 for an integer)."""
    changed = copy.deepcopy(doc)
    target = changed
    for key in path[:-1]:
        target = target[key]
    old = target[path[-1]]
    target[path[-1]] = math.nextafter(float(old), math.inf) if isinstance(old, float) else old + 1
    return changed


@pytest.mark.parametrize("path", NUMERIC_PATHS, ids=lambda p: ".".join(map(str, p)))
def test_any_numeric_change_changes_the_fingerprint(path):
    assert _fp_doc(_nudged(DOC, path)) != _fp_doc(DOC)


def test_every_numeric_leaf_is_covered():
    assert len(NUMERIC_PATHS) >= 10  # values, uncertainties, readings, coefficient, constant


@pytest.mark.parametrize(
    ("old", "new"),
    [
        ('model = "C * t - E / t**2"', 'model = "C * t + E / t**2"'),  # the model
        ('unit = "mm^2/s"\nmodel', 'unit = "m^2/s"\nmodel'),  # the measurand's unit
        ('unit = "mm^2/s^2"', 'unit = "cm^2/s^2"'),  # an input's unit
        ('k0 = { value = 1.0, unit = "1"', 'k0 = { value = 1.0, unit = "percent"'),  # a constant's
        ('distribution = "rectangular"', 'distribution = "triangular"'),
        ('name = "nu"', 'name = "nu2"'),
        ('model = "C * t - E / t**2"', 'model = "C * t - E / t**2"\ncoverage_factor = 2'),
        ('model = "C * t - E / t**2"', 'model = "C * t - E / t**2"\ncoverage_probability = 0.95'),
        ('model = "C * t - E / t**2"', 'model = "C * t - E / t**2"\nrounding = "up"'),
        ('model = "C * t - E / t**2"', 'model = "C * t - E / t**2"\nrounding = "ea-4/02"'),
        ("coefficient = 0.3", "coefficient = 0.31"),
        ('between = ["C", "E"]\ncoefficient = 0.3', 'between = ["t", "E"]\ncoefficient = 0.3'),
        # how the uncertainty was stated is kept (canonical.py: "how its uncertainty was
        # stated with every stated number"): U = 0.0003, k = 2 is not u = 0.00015
        (
            "expanded_uncertainty = 0.00030\ncoverage_factor = 2",
            "standard_uncertainty = 0.00015",
        ),
    ],
)
def test_other_changes_that_matter(old, new):
    assert old in TEXT
    assert _fp(TEXT.replace(old, new)) != _fp(TEXT)


def test_removing_the_correlations_changes_it():
    doc = copy.deepcopy(DOC)
    del doc["correlations"]
    assert _fp_doc(doc) != _fp_doc(DOC)


def test_the_same_equation_as_a_formula_is_another_model():
    # The model is the registry name of a built-in model, or the formula: a formula typed by
    # the user runs no validity checks, so it is another budget even with the same equation.
    doc = _example_doc(checks=False)
    as_formula = copy.deepcopy(doc)
    del as_formula["measurand"]["method"]
    as_formula["measurand"]["model"] = "C * t - B / t"
    bf = _load(dumps_budget(as_formula))
    assert bf.budget.evaluate().value == load_budget(HAGENBACH).budget.evaluate().value
    assert bf.fingerprint != _fp_doc(doc)


# ----------------------------------------------------------------------------- check context
def _example_doc(*, checks: bool = True) -> dict[str, Any]:
    doc = tomllib.loads(HAGENBACH.read_text(encoding="utf-8"))
    doc.pop("recorded")
    if not checks:
        doc.pop("checks")
    return doc


CHECK_PATHS = [("checks", key, "value") for key in _example_doc()["checks"]]


@pytest.mark.parametrize("path", CHECK_PATHS, ids=lambda p: p[1])
def test_any_check_context_number_changes_it(path):
    # [checks] is part of the fingerprint since the one-budget refactoring: the context decides
    # the budget's warnings, so a record is tied to the context it was checked with.
    doc = _example_doc()
    assert _fp_doc(_nudged(doc, path)) != _fp_doc(doc)


def test_check_context_unit_changes_it_but_its_spelling_does_not():
    doc = _example_doc()
    respelt = copy.deepcopy(doc)
    respelt["checks"]["flow_volume"]["unit"] = "milliliter"
    respelt["checks"]["g_local"]["unit"] = "m*s^-2"
    assert _fp_doc(respelt) == _fp_doc(doc)
    other_unit = copy.deepcopy(doc)
    other_unit["checks"]["capillary_radius"]["unit"] = "cm"  # 0.29 cm, not 0.29 mm
    assert _fp_doc(other_unit) != _fp_doc(doc)


def test_check_context_order_and_sources_do_not_change_it():
    doc = _example_doc()
    other = copy.deepcopy(doc)
    other["checks"] = {k: {"value": v["value"], "unit": v["unit"], "source": "elsewhere"}
                       for k, v in reversed(list(doc["checks"].items()))}  # fmt: skip
    assert list(other["checks"]) != list(doc["checks"])
    assert _fp_doc(other) == _fp_doc(doc)


def test_adding_or_removing_a_check_key_changes_it():
    doc = _example_doc()
    assert _fp_doc(_example_doc(checks=False)) != _fp_doc(doc)
    fewer = copy.deepcopy(doc)
    del fewer["checks"]["g_local"]
    assert _fp_doc(fewer) != _fp_doc(doc)
    more = copy.deepcopy(doc)
    more["checks"]["minimum_flow_time"] = {"value": 200.0, "unit": "s"}
    assert _fp_doc(more) != _fp_doc(doc)
