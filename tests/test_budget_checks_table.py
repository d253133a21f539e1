"""The ``[checks]`` table of budget files: the optional context of a built-in method's
validity checks (viscometry/io/reader.py, Budget.checks / Budget.check_context in
viscometry/gum/budget.py, Method.context_unit in viscometry/methods/base.py).

Thresholds are those of viscometry/methods/flow_checks.py, with the sources those constants
cite; the budgets are the invented examples in examples/methods/ with a [checks] table put in
(or taken out) here. Loading a file emits no warning (pytest runs with warnings as errors, and
:func:`_load` asserts it explicitly); the validity warnings come with the evaluation, in
``result.warnings``, and are the budget's ``estimate_warnings``. The check context is part of
the budget, so it is part of its fingerprint.
"""

from __future__ import annotations

import json
import math
import re
import tomllib
import warnings
from pathlib import Path
from typing import Any

import pytest

import viscometry.methods as methods_pkg
from viscometry.cli import main
from viscometry.errors import BudgetFileError, InputError
from viscometry.gum import Budget, Constant
from viscometry.gum.canonical import canonical_form
from viscometry.io import budget_to_document, dumps_budget, load_budget, loads_budget, save_budget
from viscometry.methods import METHODS, Method, get_method
from viscometry.methods import flow_checks as fc
from viscometry.methods.base import symbols
from viscometry.units import parse_unit, si_conversion

EXAMPLES = Path(__file__).resolve().parents[1] / "examples" / "methods"
#: The examples that carry a [checks] table (all within every threshold).
WITH_CHECKS = ("glass_capillary_hagenbach", "glass_capillary_corrected", "gas_capillary")


def _doc(name: str, checks: dict[str, Any] | None = None) -> dict[str, Any]:
    """The example document of method ``name`` with its [checks] table replaced (or removed)."""
    doc = tomllib.loads((EXAMPLES / f"{name}.toml").read_text(encoding="utf-8"))
    doc.pop("checks", None)
    if checks is not None:
        doc["checks"] = checks
    return doc


def _text(name: str, checks: dict[str, Any] | None = None) -> str:
    return dumps_budget(_doc(name, checks))


def _si_estimates(bf) -> dict[str, float]:
    x = bf.budget.si_arrays()[0]
    return dict(zip(bf.budget.input_names, (float(v) for v in x), strict=True))


def _load(text: str, name: str = "checks.toml"):
    """Load a budget text; loading emits no Python warning at all."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        bf = loads_budget(text, name)
    assert [str(w.message) for w in caught] == []
    return bf


def _method_check(bf) -> list[str]:
    """The same context through the method's own ``check`` (SI estimates + check context)."""
    values = _si_estimates(bf) | dict(bf.budget.check_context)
    return bf.budget.method.check(values)


# ----------------------------------------------------------------------------- units of keys
def test_every_context_key_has_an_si_unit() -> None:
    # Method.context_unit reads the bracketed unit of each description; it must be a valid
    # SI unit (scale 1, no offset) so that the loader's conversion lands in what the checker
    # expects.
    for method in METHODS.values():
        for key in method.context_keys:
            unit = method.context_unit(key)
            parse_unit(unit)
            assert si_conversion(unit) == (1.0, 0.0), (method.name, key, unit)


def test_context_unit_of_unknown_key_lists_the_accepted_keys() -> None:
    with pytest.raises(InputError, match=r"no check context key 'g_local'.*minimum_flow_time"):
        get_method("glass_capillary_corrected").context_unit("g_local")
    with pytest.raises(InputError, match=r"accepts: none"):
        get_method("pressure_capillary").context_unit("capillary_radius")


# Each key in a non-SI unit and its SI value. The factors are exact by definition: SI
# prefixes (SI Brochure, 9th ed., 2019, Table 7), 1 min = 60 s and 1 L = 1 dm³ (SI Brochure,
# Table 8), T/K = t/°C + 273.15 (SI Brochure, 2.3.1). The values are chosen so that no check
# fires when the key is given alone.
CONVERSIONS = {
    "capillary_radius": ({"value": 0.5, "unit": "mm"}, 5e-4),
    "flow_volume": ({"value": 4.0, "unit": "mL"}, 4e-6),
    "minimum_flow_time": ({"value": 3, "unit": "min"}, 180.0),
    "g_calibration": ({"value": 980.665, "unit": "cm/s^2"}, 9.80665),
    "g_local": ({"value": 9806.65, "unit": "mm/s^2"}, 9.80665),
    "mean_free_path": ({"value": 65.0, "unit": "nm"}, 6.5e-8),
    "temperature": ({"value": 20.0, "unit": "degC"}, 293.15),
    "molar_mass": ({"value": 28.0134, "unit": "g/mol"}, 0.0280134),
    "release_distance": ({"value": 5.0, "unit": "cm"}, 0.05),
    "bottom_distance": ({"value": 2.0, "unit": "dm"}, 0.2),
    "surface_distance": ({"value": 150.0, "unit": "mm"}, 0.15),
}
PAIRS = [(name, key) for name, m in METHODS.items() for key in m.context_keys]


def test_conversion_table_covers_every_key() -> None:
    assert {key for _, key in PAIRS} == set(CONVERSIONS)


@pytest.mark.parametrize(("name", "key"), PAIRS)
def test_each_accepted_key_converts_to_si(name: str, key: str) -> None:
    spec, expected = CONVERSIONS[key]
    bf = _load(_text(name, {key: spec}), f"{name}.toml")
    assert dict(bf.budget.check_context) == {key: pytest.approx(expected, rel=1e-12)}
    # the budget keeps the value as stated (its own unit); check_context gives SI
    assert bf.budget.checks == (Constant(key, float(spec["value"]), spec["unit"]),)
    assert bf.budget.estimate_warnings == ()  # no validity check fires (the values are chosen so)


def test_temperature_in_kelvin_and_fahrenheit() -> None:
    # T/K = (t/°F + 459.67)·5/9 (definition of the Fahrenheit scale): 68 °F = 293.15 K.
    bf = _load(_text("gas_capillary", {"temperature": {"value": 68.0, "unit": "degF"}}))
    assert bf.budget.check_context["temperature"] == pytest.approx(293.15, rel=1e-12)
    bf = _load(_text("gas_capillary", {"temperature": {"value": 293.15, "unit": "K"}}))
    assert bf.budget.check_context["temperature"] == 293.15


# ----------------------------------------------------------------------------- the examples
@pytest.mark.parametrize("name", WITH_CHECKS)
def test_examples_with_checks_load_clean_and_keep_their_fingerprint(name: str) -> None:
    text = (EXAMPLES / f"{name}.toml").read_text(encoding="utf-8")
    bf = _load(text, f"{name}.toml")
    assert bf.budget.checks
    assert set(bf.budget.check_context) == set(tomllib.loads(text)["checks"])
    assert bf.budget.estimate_warnings == ()  # no validity check fires
    # ... and the evaluation carries no warning either (glass_capillary_corrected: dT is a
    # signed deviation of the bath temperature, not a positive input of the model)
    assert bf.budget.evaluate().warnings == ()
    # the recorded fingerprint was computed with the [checks] table (it is part of the budget)
    assert bf.fingerprint == bf.recorded.fingerprint
    # the checks did run: the same context through Method.check gives the same (no) warnings
    assert _method_check(bf) == []


def test_gas_example_knudsen_number_is_in_the_continuum_regime() -> None:
    # Independent recomputation of the example's Knudsen number from its [checks] table:
    # λ = (η/p̄)·√(π R T/(2M)) (kinetic theory, from memory; see flow_checks.mean_free_path),
    # Kn = λ/(2r), continuum below 0.01 (KNUDSEN_CONTINUUM_LIMIT, common practice).
    bf = load_budget(EXAMPLES / "gas_capillary.toml")
    v = _si_estimates(bf)
    eta = get_method("gas_capillary").value(v)
    r_gas = 6.02214076e23 * 1.380649e-23  # N_A·k, exact (SI Brochure, 9th ed.)
    lam = (
        eta
        / (0.5 * (v["p1"] + v["p2"]))
        * math.sqrt(
            math.pi
            * r_gas
            * bf.budget.check_context["temperature"]
            / (2.0 * bf.budget.check_context["molar_mass"])
        )
    )
    kn = lam / (2.0 * v["r"])
    assert 0 < kn < fc.KNUDSEN_CONTINUUM_LIMIT


# ----------------------------------------------------------------------------- thresholds
def _cli_warnings(tmp_path: Path, capsys, text: str) -> list[str]:
    p = tmp_path / "checks.toml"
    p.write_text(text, encoding="utf-8")
    assert main(["evaluate", "--json", str(p)]) == 0
    captured = capsys.readouterr()
    return json.loads(captured.out)["warnings"]


def _reynolds_context(name: str, reynolds: float) -> dict[str, float]:
    """Bore radius and timed volume giving ``reynolds`` in a glass example, Re = 2V/(π r t ν)."""
    bf = _load(_text(name))
    v = _si_estimates(bf)
    nu = get_method(name).value(v)
    return {
        "capillary_radius": 2.0 * VOLUME / (math.pi * reynolds * v["t"] * nu),
        "flow_volume": VOLUME,
    }


VOLUME = 4e-6  # m³, an invented timed volume
# case → (method, [checks] within the threshold, [checks] beyond it, warning text (regex));
# a float in place of a table is a Reynolds number for _reynolds_context.
CASES: dict[str, tuple[str, Any, Any, str]] = {
    # usual range of glass capillary viscometers, Re ≲ 100 (GLASS_VISCOMETER_REYNOLDS_MAX,
    # common practice, no source): Re = 50 passes, Re = 150 warns
    "glass_reynolds_usual_range": (
        "glass_capillary_kinetic",
        50.0,
        150.0,
        "above the usual range of glass capillary viscometers",
    ),
    # laminar pipe flow up to Re ≈ 2000 (LAMINAR_REYNOLDS_LIMIT, common practice, no source):
    # Re = 1500 gives the usual-range warning only, Re = 2500 the laminar one
    "glass_reynolds_laminar_limit": (
        "glass_capillary_hagenbach",
        3.0,
        2500.0,
        "Reynolds number 2.5e\\+03 exceeds the laminar limit 2000",
    ),
    # ISO 3104, 7.2: apply C₂ = (g₂/g₁)·C₁ when g differs by more than 0.1 %
    # (GRAVITY_RATIO_TOLERANCE): −0.09 % passes, −0.11 % warns
    "gravity_iso_3104": (
        "glass_capillary_kinetic",
        {"g_calibration": 9.81, "g_local": 9.81 * (1 - 0.0009)},
        {"g_calibration": 9.81, "g_local": 9.81 * (1 - 0.0011)},
        r"by -0\.110 % .* more than 0\.1 %: apply C₂ = \(g₂/g₁\)·C₁ \(ISO 3104, 7\.2\)",
    ),
    # the lab's own minimum flow time replaces 200 s (ISO 3104 / ASTM D445): the example's
    # flow time is 459.98 s; a minimum of 400 s passes, 500 s warns
    "minimum_flow_time_glass": (
        "glass_capillary_kinetic",
        {"minimum_flow_time": 400.0},
        {"minimum_flow_time": 500.0},
        "flow time 460 s is below the minimum 500 s",
    ),
    # the same key for a calibration with a reference liquid (flow time 341.05 s)
    "minimum_flow_time_reference_liquid": (
        "constant_from_reference_liquid",
        {"minimum_flow_time": 300.0},
        {"minimum_flow_time": 360.0},
        "flow time 341.1 s is below the minimum 360 s",
    ),
    # Kn = λ/d, continuum below 0.01 (KNUDSEN_CONTINUUM_LIMIT, common practice); the example's
    # capillary has d = 0.2 mm: λ = 1 µm (Kn = 0.005) passes, λ = 4 µm (Kn = 0.02) warns
    "knudsen_continuum": (
        "gas_capillary",
        {"mean_free_path": 1e-6},
        {"mean_free_path": 4e-6},
        "Knudsen number 0.02 exceeds 0.01: slip at the wall matters",
    ),
    # slip / transition boundary Kn = 0.1 (KNUDSEN_SLIP_LIMIT, common practice); the slip
    # model's example has d = 20 µm: λ = 1 µm (Kn = 0.05) passes, λ = 3 µm (Kn = 0.15) warns
    "knudsen_transition": (
        "gas_capillary_slip",
        {"mean_free_path": 1e-6},
        {"mean_free_path": 3e-6},
        "Knudsen number 0.15 exceeds 0.1: transition regime",
    ),
}


def _si_table(name: str, values: Any) -> dict[str, Any]:
    if isinstance(values, float):
        values = _reynolds_context(name, values)
    method = get_method(name)
    return {k: {"value": x, "unit": method.context_unit(k)} for k, x in values.items()}


@pytest.mark.parametrize("case", list(CASES))
def test_warning_beyond_threshold_not_within(case: str, tmp_path: Path, capsys) -> None:
    name, within, beyond, match = CASES[case]
    within_text = _text(name, _si_table(name, within))
    beyond_text = _text(name, _si_table(name, beyond))
    # within: no warning while loading, none in the result
    bf = _load(within_text)
    assert bf.budget.estimate_warnings == () and bf.budget.evaluate().warnings == ()
    assert _cli_warnings(tmp_path, capsys, within_text) == []
    # beyond: still no warning while loading (loading never warns); the text comes with the
    # evaluation, in result.warnings and in --json
    bf = _load(beyond_text)
    result = bf.budget.evaluate()
    assert len(result.warnings) == 1 and re.search(match, result.warnings[0])
    assert bf.budget.estimate_warnings == result.warnings
    assert _cli_warnings(tmp_path, capsys, beyond_text) == list(result.warnings)
    # the same context through the method's own check gives the same text
    assert _method_check(bf) == list(result.warnings)
    # the same budget built in code (Budget.from_method with the same Constants) gives the
    # same warnings and the same fingerprint
    in_code = Budget.from_method(
        bf.budget.method, bf.budget.inputs, bf.budget.unit, checks=bf.budget.checks
    )
    assert in_code.evaluate().warnings == result.warnings
    assert in_code.fingerprint == bf.fingerprint


def test_test_only_files_trigger_every_context_check(tmp_path: Path, capsys) -> None:
    # One glass file beyond all three glass thresholds at once (Re = 150 > 100, gravity
    # −0.2 % > 0.1 % ISO 3104 7.2, flow time 460 s < the lab's 600 s), and one gas file
    # beyond the continuum limit through temperature and molar mass (λ estimated from η).
    glass = {
        **_si_table("glass_capillary_kinetic", 150.0),
        "g_calibration": {"value": 9.81, "unit": "m/s^2"},
        "g_local": {"value": 9.81 * (1 - 0.002), "unit": "m/s^2"},
        "minimum_flow_time": {"value": 10.0, "unit": "min"},
    }
    path = tmp_path / "glass_all_checks.toml"
    path.write_text(_text("glass_capillary_kinetic", glass), encoding="utf-8")
    bf = _load(path.read_text(encoding="utf-8"), str(path))  # loading itself warns nothing
    found = bf.budget.evaluate().warnings
    assert len(found) == 3 and found == bf.budget.estimate_warnings
    assert any("below the minimum 600 s" in w for w in found)
    assert any("above the usual range" in w for w in found)
    assert any("ISO 3104, 7.2" in w for w in found)
    assert _cli_warnings(tmp_path, capsys, path.read_text(encoding="utf-8")) == list(found)

    # a molar mass of 0.01 g/mol is unphysical on purpose: λ ∝ √(T/M) then gives
    # Kn ≈ 0.016 > 0.01 (KNUDSEN_CONTINUUM_LIMIT, common practice) for the example
    gas = {
        "temperature": {"value": 20.0, "unit": "degC"},
        "molar_mass": {"value": 0.01, "unit": "g/mol"},
    }
    bf = _load(_text("gas_capillary", gas), "gas_all_checks.toml")
    v = _si_estimates(bf)
    lam = fc.mean_free_path(get_method("gas_capillary").value(v), 0.5 * (v["p1"] + v["p2"]),
                            293.15, 1e-5)  # fmt: skip
    kn = fc.knudsen_number(lam, v["r"])
    assert fc.KNUDSEN_CONTINUUM_LIMIT < kn < fc.KNUDSEN_SLIP_LIMIT
    assert bf.budget.evaluate().warnings == (
        f"Knudsen number {kn:.3g} exceeds 0.01: slip at the wall matters; "
        "use the slip-corrected model (gas_capillary_slip)",
    )


def test_checks_change_no_number() -> None:
    base = _load(_text("glass_capillary_kinetic")).budget.evaluate()
    bf = _load(_text("glass_capillary_kinetic", {"minimum_flow_time": {"value": 1, "unit": "h"}}))
    result = bf.budget.evaluate()
    assert result.value == base.value
    assert result.standard_uncertainty == base.standard_uncertainty
    assert result.expanded_uncertainty == base.expanded_uncertainty
    assert result.effective_dof == base.effective_dof
    assert result.coverage_factor == base.coverage_factor
    # ... only the warnings (flow time 460 s < 3600 s) and, as part of the budget, the
    # fingerprint differ
    assert base.warnings == () and len(result.warnings) == 1
    assert "below the minimum 3600 s" in result.warnings[0]
    assert result.fingerprint != base.fingerprint


# ----------------------------------------------------------------------------- errors
def test_unknown_key_lists_the_allowed_keys() -> None:
    text = _text("glass_capillary_corrected", {"g_local": {"value": 9.8, "unit": "m/s^2"}})
    with pytest.raises(
        BudgetFileError,
        match=r"\[checks\] has unknown key 'g_local'; method 'glass_capillary_corrected' "
        r"accepts: capillary_radius, flow_volume, minimum_flow_time",
    ):
        loads_budget(text, "c.toml")


def test_method_without_context_keys_refuses_any_key() -> None:
    text = _text("pressure_capillary", {"capillary_radius": {"value": 0.3, "unit": "mm"}})
    with pytest.raises(
        BudgetFileError, match=r"\[checks\] has unknown key 'capillary_radius'.*none"
    ):
        loads_budget(text, "p.toml")


@pytest.mark.parametrize(
    ("spec", "match"),
    [
        ({"value": 0.5, "unit": "s"}, r"\[checks\] capillary_radius unit 's' does not fit.*'m'"),
        ({"value": 0.5, "unit": "mm^2"}, r"\[checks\] capillary_radius unit 'mm\^2' does not fit"),
        ({"value": 0.5, "unit": "furlongs_per_x"}, r"\[checks\] capillary_radius unit: unknown"),
        ({"value": 0.5}, r"\[checks\] capillary_radius is missing key unit"),
        ({"unit": "mm"}, r"\[checks\] capillary_radius is missing key value"),
        ({"value": "0.5", "unit": "mm"}, r"\[checks\] capillary_radius value must be a number"),
        ({"value": -0.5, "unit": "mm"}, r"\[checks\] capillary_radius value must be positive.*-0\.5 mm"),
        ({"value": 0.0, "unit": "mm"}, r"\[checks\] capillary_radius value must be positive"),
        ({"value": 0.5, "unit": "mm", "dof": 3}, r"\[checks\] capillary_radius has unknown key 'dof'"),
        (0.5, r"\[checks\] capillary_radius needs a unit: write capillary_radius = \{ value"),
        ("0.5 mm", r"\[checks\] capillary_radius must be a table such as"),
    ],
)  # fmt: skip
def test_bad_entries_name_the_table_and_key(spec: Any, match: str) -> None:
    text = _text("glass_capillary_kinetic", {"capillary_radius": spec})
    with pytest.raises(BudgetFileError, match=match):
        loads_budget(text, "g.toml")


def test_nan_and_overflow_are_refused() -> None:
    base = _text("glass_capillary_kinetic")
    for value in ("nan", "inf", "1e308"):
        unit = "km" if value == "1e308" else "mm"
        text = base.replace(
            "[recorded]",
            f'[checks]\ncapillary_radius = {{ value = {value}, unit = "{unit}" }}\n\n[recorded]',
        )
        with pytest.raises(BudgetFileError, match=r"\[checks\] capillary_radius"):
            loads_budget(text, "g.toml")


def test_temperature_difference_unit_is_refused() -> None:
    text = _text("gas_capillary", {"temperature": {"value": 20.0, "unit": "delta_degC"}})
    with pytest.raises(
        BudgetFileError, match=r"\[checks\] temperature unit 'delta_degC'.*absolute"
    ):
        loads_budget(text, "g.toml")


def test_checks_table_not_a_table() -> None:
    # a top-level key (before the first table) instead of a table
    text = _text("glass_capillary_kinetic").replace("\n[measurand]", "checks = 3\n\n[measurand]", 1)
    with pytest.raises(BudgetFileError, match=r"\[checks\] must be a table, got 3"):
        loads_budget(text, "g.toml")


def test_checks_with_a_formula_model_is_an_error() -> None:
    text = """
format = "viscometry-budget/1"
[measurand]
name = "nu"
unit = "mm^2/s"
model = "C * t"
[inputs.C]
value = 0.1
unit = "mm^2/s^2"
standard_uncertainty = 0.0001
[inputs.t]
value = 400.0
unit = "s"
standard_uncertainty = 0.1
[checks]
minimum_flow_time = { value = 200, unit = "s" }
"""
    # new wording (one budget): the budget refuses a check context for a formula model on
    # every path; the reader points the message at the file and the table
    with pytest.raises(
        BudgetFileError,
        match=r"^f.toml: \[checks\] a formula model has no validity checks to run; the check "
        r"context is only used with a built-in viscometer model$",
    ):
        loads_budget(text, "f.toml")
    # the same refusal in code
    with pytest.raises(InputError, match=r"checks: a formula model has no validity checks"):
        Budget.from_formula(
            "nu", "C * t", loads_budget(text.split("[checks]")[0]).budget.inputs, "mm^2/s",
            checks=(Constant("minimum_flow_time", 200.0, "s"),),
        )  # fmt: skip


# ----------------------------------------------------------------------------- dimensionless
def test_bare_number_for_a_dimensionless_key(monkeypatch) -> None:
    # A test-only method with a dimensionless context key (no built-in has one yet).
    c, t = symbols("C t")

    def checker(method: Method, v: dict[str, float]) -> list[str]:
        ratio = v.get("largest_ratio")
        if ratio is not None and v["t"] > ratio:
            return [f"t/1 s = {v['t']:g} exceeds {ratio:g}"]
        return []

    fake = Method(
        name="fake_ratio",
        title="test only",
        expression=c * t,
        input_names=("C", "t"),
        input_units={"C": "m^2/s^2", "t": "s"},
        input_descriptions={"C": "viscometer_constant", "t": "flow_time"},
        output_name="nu",
        output_unit="m^2/s",
        references=("none (test only)",),
        validity="test only",
        context_keys={"largest_ratio": "largest t/(1 s), dimensionless"},
        checker=checker,
    )
    original = methods_pkg.get_method
    monkeypatch.setattr(
        methods_pkg, "get_method", lambda n: fake if n == "fake_ratio" else original(n)
    )
    assert fake.context_unit("largest_ratio") == "1"
    text = """
format = "viscometry-budget/1"
[measurand]
name = "nu"
unit = "mm^2/s"
method = "fake_ratio"
[inputs.C]
value = 0.1
unit = "mm^2/s^2"
standard_uncertainty = 0.0001
[inputs.t]
value = 400.0
unit = "s"
standard_uncertainty = 0.1
[checks]
largest_ratio = 500
"""
    bf = _load(text, "r.toml")
    assert dict(bf.budget.check_context) == {"largest_ratio": 500.0}
    assert bf.budget.evaluate().warnings == ()
    # a percent is 0.01 (SI Brochure, 9th ed., 5.4.7): 50000 % = 500
    bf = _load(text.replace("= 500", '= { value = 50000, unit = "percent" }'), "r.toml")
    assert bf.budget.check_context["largest_ratio"] == pytest.approx(500.0, rel=1e-12)
    bf = _load(text.replace("= 500", "= 300"), "r.toml")  # no warning while loading
    assert bf.budget.evaluate().warnings == ("t/1 s = 400 exceeds 300",)
    with pytest.raises(BudgetFileError, match=r"\[checks\] largest_ratio unit 'mm' does not fit"):
        loads_budget(text.replace("= 500", '= { value = 5, unit = "mm" }'), "r.toml")
    with pytest.raises(BudgetFileError, match=r"\[checks\] largest_ratio must be finite"):
        loads_budget(text.replace("= 500", "= nan"), "r.toml")


# ----------------------------------------------------------------------------- save / load
@pytest.mark.parametrize("name", WITH_CHECKS)
def test_save_load_round_trip_keeps_the_checks(name: str, tmp_path: Path) -> None:
    bf = load_budget(EXAMPLES / f"{name}.toml")
    path = save_budget(bf, tmp_path / f"{name}.toml")
    again = load_budget(path)
    assert again.budget.checks == bf.budget.checks
    assert dict(again.budget.check_context) == dict(bf.budget.check_context)
    # the written [checks] table is the example's, key for key (values, units, sources)
    original = tomllib.loads((EXAMPLES / f"{name}.toml").read_text(encoding="utf-8"))["checks"]
    assert tomllib.loads(path.read_text(encoding="utf-8"))["checks"] == original
    assert budget_to_document(again.budget)["checks"] == budget_to_document(bf.budget)["checks"]
    assert again.fingerprint == bf.fingerprint == bf.recorded.fingerprint
    assert again.budget.evaluate().value == bf.budget.evaluate().value
    # writing it again gives identical text
    second = save_budget(again, tmp_path / "second.toml")
    assert second.read_text(encoding="utf-8") == path.read_text(encoding="utf-8")


def test_round_trip_with_warnings(tmp_path: Path) -> None:
    checks = {
        "g_calibration": {"value": 981.0, "unit": "cm/s^2", "source": "certificate (invented)"},
        "g_local": {"value": 9.79, "unit": "m/s^2"},
    }
    bf = _load(_text("glass_capillary_kinetic", checks), "w.toml")
    found = bf.budget.evaluate().warnings
    assert len(found) == 1 and "ISO 3104, 7.2" in found[0]
    path = save_budget(bf, tmp_path / "w.toml")
    assert tomllib.loads(path.read_text(encoding="utf-8"))["checks"] == checks
    again = _load(path.read_text(encoding="utf-8"), str(path))
    assert again.budget.checks == bf.budget.checks
    assert dict(again.budget.check_context) == dict(bf.budget.check_context)
    assert again.budget.estimate_warnings == bf.budget.estimate_warnings
    assert again.budget.evaluate().warnings == found
    assert again.fingerprint == bf.fingerprint


# ----------------------------------------------------------------------------- fingerprint
# Before the one-budget refactoring the [checks] table was outside the fingerprint, and this
# test checked that adding or removing it left a recorded fingerprint valid. The fingerprint
# is now that of the Budget, and the check context is part of the budget (it decides its
# warnings), so the opposite holds: adding, removing or changing a [checks] entry changes the
# fingerprint, and a record is tied to the context it was checked with.
@pytest.mark.parametrize("name", list(METHODS))
def test_fingerprint_changes_when_checks_are_added_or_removed(name: str) -> None:
    method = get_method(name)
    as_recorded = tomllib.loads((EXAMPLES / f"{name}.toml").read_text(encoding="utf-8"))
    recorded = as_recorded["recorded"]["fingerprint"]
    # the example as it is (with or without its [checks] table) matches its record
    assert loads_budget(dumps_budget(as_recorded)).fingerprint == recorded
    without = _doc(name)
    without_fp = loads_budget(dumps_budget(without)).fingerprint
    assert canonical_form(loads_budget(dumps_budget(without)).budget)["checks"] == {}
    if "checks" in as_recorded:
        assert without_fp != recorded  # taking the table out changes the fingerprint
    else:
        assert without_fp == recorded
    if method.context_keys:
        key = next(iter(method.context_keys))
        spec, _ = CONVERSIONS[key]
        with_checks = loads_budget(dumps_budget(_doc(name, {key: spec}))).budget
        assert key in canonical_form(with_checks)["checks"]
        assert with_checks.fingerprint != without_fp  # putting a table in changes it too
        # ... and so does any change of its number
        changed = dict(spec, value=spec["value"] * 2)
        other = loads_budget(dumps_budget(_doc(name, {key: changed}))).budget
        assert other.fingerprint not in (with_checks.fingerprint, without_fp)
