"""Chain files (``viscometry-chain/1``): the example, the defaults, and every refusal.

The example chain (examples/chains/ashcombe_step_up_chain.toml) holds the invented data that
workbook 03 used to type in Python; loading it must give the same chain. Its numbers are
regression values: captured from workbook 03's own code (the chain built with
``step_up_chain`` from literals) before the chain file existed. Invented demo data is never a
reference value.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from viscometry.cli import main
from viscometry.errors import BudgetFileError
from viscometry.gum import InputQuantity
from viscometry.io.chain import (
    CHAIN_FORMAT,
    ChainFile,
    load_chain,
    load_chain_file,
    loads_chain,
    loads_chain_file,
)
from viscometry.io.reader import is_budget_file
from viscometry.methods import (
    StepUpStep,
    step_up_chain,
    water_reference_input,
    water_temperature_coefficient,
)
from viscometry.text import statement

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "chains" / "ashcombe_step_up_chain.toml"
BUDGET_EXAMPLE = ROOT / "examples" / "calibration_lab_viscometer_constant.toml"

# Regression values: workbook 03's chain as built in Python before the chain file (masters
# 1 … 10, C in mm²/s²; C10's U and u_c in mm²/s²; ν_eff).
REGRESSION_CONSTANTS = (
    0.002999790726180155, 0.00865446102817699, 0.025022373613386616, 0.07318095926855653,
    0.2134697444712636, 0.6302341191345184, 1.8317657263351463, 5.400200696452403,
    15.75231513045273, 45.603599719594165,
)  # fmt: skip
REGRESSION_C10 = 45.603599719594165
REGRESSION_U10 = 0.09575003287226128
REGRESSION_UC10 = 0.04772422768241251
REGRESSION_DOF10 = 397.07715713146274
# Regression values: relative U of C1 … C10 and the water's share of u_c², as workbook 03
# printed them (4 decimals in %, 1 decimal in %).
REGRESSION_REL_U_PERCENT = (0.1723, 0.1752, 0.1774, 0.1791, 0.1812, 0.1866, 0.1894, 0.1958,
                            0.1995, 0.2100)  # fmt: skip
REGRESSION_WATER_SHARE_PERCENT = (97.4, 94.2, 91.9, 90.1, 88.1, 83.2, 80.7, 75.6, 72.8, 66.0)

# The invented data of workbook 03's former code cell (label, t' readings, t readings, α).
WORKBOOK_STEPS = [
    ("S2", [610.09, 610.16, 609.95], [211.50, 211.42, 211.46], -0.025),
    ("S3", [596.18, 596.21, 596.12], [206.19, 206.24, 206.16], -0.034),
    ("S4", [601.29, 601.19, 601.28], [205.61, 205.58, 205.56], -0.044),
    ("S5", [598.13, 598.09, 598.18], [205.07, 205.02, 205.06], -0.053),
    ("S6", [606.94, 607.03, 607.03], [205.67, 205.55, 205.58], -0.062),
    ("S7", [609.29, 609.32, 609.22], [209.65, 209.62, 209.61], -0.072),
    ("S8", [602.02, 602.18, 602.18], [204.18, 204.29, 204.26], -0.081),
    ("S9", [614.71, 614.74, 614.64], [210.74, 210.71, 210.74], -0.090),
    ("S10", [609.32, 609.26, 609.32], [210.50, 210.53, 210.36], -0.100),
]
WORKBOOK_WATER_TIMES = [334.47, 334.55, 334.54, 334.44, 334.45]


def _workbook_chain(n: int = 10):
    """The chain as workbook 03's code built it before the chain file."""
    steps = [
        StepUpStep(
            InputQuantity.from_readings("tp", known, "s"),
            InputQuantity.from_readings("tn", new, "s"),
            temperature_coefficient=InputQuantity.normal("a", alpha, 0.1 * abs(alpha), "1/K"),
            temperature_difference=InputQuantity.normal("d", 0.0, 0.002, "K"),
            label=label,
        )
        for label, known, new, alpha in WORKBOOK_STEPS
    ]
    return step_up_chain(
        water_reference_input(), InputQuantity.from_readings("t1", WORKBOOK_WATER_TIMES, "s"),
        steps[: n - 1],
        thermometer_error=InputQuantity.from_expanded("dT_th", 0.0, 0.010, "K", coverage_factor=2),
        water_temperature_coefficient=InputQuantity.normal(
            "alpha_w", water_temperature_coefficient(293.15), 0.0002, "1/K"
        ),
        unit="mm^2/s^2",
    )  # fmt: skip


# ----------------------------------------------------------------------------- the example
@pytest.fixture(scope="module")
def example() -> ChainFile:
    return load_chain_file(EXAMPLE)


def test_example_gives_workbook_03s_chain(example: ChainFile) -> None:
    result = load_chain(EXAMPLE).budget.evaluate()
    assert result.measurand == "C10" and result.unit == "mm^2/s^2"
    assert len(example.chain.budget.inputs) == 40  # 2 + 2 + 9 × 4 (regression value)
    # regression values (workbook 03's code before the chain file)
    assert result.value == pytest.approx(REGRESSION_C10, rel=1e-12)
    assert result.expanded_uncertainty == pytest.approx(REGRESSION_U10, rel=1e-12)
    assert result.standard_uncertainty == pytest.approx(REGRESSION_UC10, rel=1e-12)
    assert result.effective_dof == pytest.approx(REGRESSION_DOF10, rel=1e-9)
    constants_mm = [c * 1e6 for c in example.chain.constants()]  # m²/s² → mm²/s²
    assert constants_mm == pytest.approx(REGRESSION_CONSTANTS, rel=1e-12)
    assert result.warnings == ()  # all flow times ≥ 200 s, all steps ≤ factor 3


def test_example_matches_the_code_it_replaces(example: ChainFile) -> None:
    # The same numbers in a file and in code give the same chain (regression: the file holds
    # 0.0025 where the code computed 0.1 × 0.025 = 0.0025000000000000005, so compare to 1e-12).
    for n in (1, 5, 10):
        from_file = example.chain_to(n).budget.evaluate()
        from_code = _workbook_chain(n).budget.evaluate()
        assert from_file.measurand == from_code.measurand == f"C{n}"
        assert from_file.value == from_code.value  # exact: same readings, same model
        assert from_file.expanded_uncertainty == pytest.approx(
            from_code.expanded_uncertainty, rel=1e-12
        )
        assert from_file.effective_dof == pytest.approx(from_code.effective_dof, rel=1e-9)


def test_growth_along_the_chain_as_workbook_03_printed_it(example: ChainFile) -> None:
    for n in range(1, 11):
        r = example.chain_to(n).budget.evaluate()
        # regression values, compared at the precision workbook 03 printed them
        assert f"{100 * r.relative_expanded_uncertainty:.4f}" == (
            f"{REGRESSION_REL_U_PERCENT[n - 1]:.4f}"
        )
        share = r.contribution("nu_w").variance_share
        assert f"{100 * share:.1f}" == f"{REGRESSION_WATER_SHARE_PERCENT[n - 1]:.1f}"


def test_example_parts_and_defaults(example: ChainFile) -> None:
    assert example.masters == 10 and example.labels()[:3] == ("water", "S2", "S3")
    assert example.unit == "mm^2/s^2" and example.minimum_flow_time == 200.0
    # [water] reference left out: the library's water value (ISO/TR 3666 via ASTM D2162)
    assert example.water_value == water_reference_input("nu_w")
    # α_w's value left out: water at 20 °C from IAPWS, exactly the library function's value
    alpha_w = example.water_temperature_coefficient
    assert alpha_w is not None and alpha_w.value == water_temperature_coefficient(293.15)
    assert alpha_w.standard_uncertainty == 0.0002 and alpha_w.unit == "1/K"
    # the thermometer certificate's U and k stay U and k (the budget input form)
    dT = example.thermometer_error
    assert dT is not None and dT.form == "expanded"
    assert dict(dT.stated)["expanded_uncertainty"] == 0.010
    assert dict(dT.stated)["coverage_factor"] == 2.0
    assert dT.standard_uncertainty == pytest.approx(0.005, rel=1e-15)  # exact: U/k
    s4 = example.steps[2]
    assert s4.label == "S4" and s4.time_in_known.readings == (601.29, 601.19, 601.28)
    assert s4.time_in_known.dof == 2.0  # exact: n − 1 (JCGM 100:2008, 4.2.6)
    assert example.chain_to(10).budget.fingerprint == example.chain.budget.fingerprint
    assert example.chain.budget.title.startswith("Step-up chain from water to master 10")


def test_chain_to_refuses_a_master_outside_the_chain(example: ChainFile) -> None:
    for bad in (0, 11, 2.0, True):
        with pytest.raises(BudgetFileError, match="master must be"):
            example.chain_to(bad)  # type: ignore[arg-type]


def test_example_is_an_invented_demo_with_a_caution() -> None:
    text = EXAMPLE.read_text(encoding="utf-8")
    head = text.split("format =")[0]
    assert "Invented demo" in head and "fictional" in head
    assert "Caution" in head and "local codes" in head
    # the first line that is not a comment names the format
    first = next(line for line in text.splitlines() if not line.startswith("#"))
    assert first == f'format = "{CHAIN_FORMAT}"'


def test_audit_skips_the_chain_file_and_demo_evaluates_it(tmp_path: Path, capsys) -> None:
    from viscometry.audit import collect_files

    assert is_budget_file(EXAMPLE) is False
    (tmp_path / "chains").mkdir()
    (tmp_path / "chains" / EXAMPLE.name).write_bytes(EXAMPLE.read_bytes())
    (tmp_path / BUDGET_EXAMPLE.name).write_bytes(BUDGET_EXAMPLE.read_bytes())
    files, empty = collect_files([tmp_path])
    assert [f.name for f in files] == [BUDGET_EXAMPLE.name] and empty == []
    assert main(["demo", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    # not audited as a budget; the demo's summary shows the chain's own result in one line
    expected = statement(load_chain(EXAMPLE).budget.evaluate())
    assert f"chains/ashcombe_step_up_chain.toml: step-up chain, {expected}" in out
    # a damaged chain file is an error line in the summary, the demo goes on
    (tmp_path / "chains" / EXAMPLE.name).write_text(
        EXAMPLE.read_text(encoding="utf-8").replace("\n[water]\n", "\n[water]\nbogus = 1\n"),
        encoding="utf-8",
    )
    assert main(["demo", str(tmp_path)]) == 2  # a file that could not be evaluated
    out = capsys.readouterr().out
    assert "chains/ashcombe_step_up_chain.toml: error: " in out and "=== summary" in out


# ----------------------------------------------------------------------------- small chains
MINIMAL = """\
format = "viscometry-chain/1"
[water]
readings = [334.47, 334.55, 334.54]
[[steps]]
label = "S2"
readings_in_known = [610.09, 610.16, 609.95]
readings_in_new = [211.50, 211.42, 211.46]
"""

WITH_TEMPERATURES = """\
format = "viscometry-chain/1"
[water]
readings = [334.47, 334.55, 334.54]
temperature_coefficient = { value = -0.0243, standard_uncertainty = 0.0002, unit = "1/K" }
[thermometer_error]
value = 0.0
unit = "K"
expanded_uncertainty = 0.010
coverage_factor = 2
[[steps]]
label = "S2"
readings_in_known = [610.09, 610.16, 609.95]
readings_in_new = [211.50, 211.42, 211.46]
temperature_coefficient = { value = -0.025, standard_uncertainty = 0.0025, unit = "1/K" }
temperature_difference = { value = 0.0, standard_uncertainty = 0.002, unit = "K" }
[certified]
label = "R50"
readings = [233.64, 233.71, 233.60]
temperature_coefficient = { value = -0.05, standard_uncertainty = 0.005, unit = "1/K" }
"""


def test_minimal_chain_without_temperature_terms() -> None:
    chain = loads_chain(MINIMAL, "minimal.toml")
    r = chain.budget.evaluate()
    assert r.measurand == "C2" and r.unit == "mm^2/s^2"
    t1 = (334.47 + 334.55 + 334.54) / 3
    ratio = ((610.09 + 610.16 + 609.95) / 3) / ((211.50 + 211.42 + 211.46) / 3)
    # exact analytic: C2 = ν_w / t1 · t'2 / t2, ν_w = 1.0034 mm²/s
    assert r.value == pytest.approx(1.0034 / t1 * ratio, rel=1e-13)
    assert set(chain.budget.input_names) == {"nu_w", "t1", "tp2", "t2"}


def test_a_file_without_steps_is_master_1_alone() -> None:
    text = MINIMAL.split("[[steps]]")[0]
    r = loads_chain(text, "water_only.toml").budget.evaluate()
    t1 = (334.47 + 334.55 + 334.54) / 3
    assert r.measurand == "C1" and r.value == pytest.approx(1.0034 / t1, rel=1e-13)  # exact


def test_certified_liquid_and_the_shared_thermometer() -> None:
    cf = loads_chain_file(WITH_TEMPERATURES, "certified.toml")
    r = cf.chain.budget.evaluate()
    assert r.measurand == "nu_X" and r.unit == "mm^2/s" and cf.certified_label == "R50"
    t_x = (233.64 + 233.71 + 233.60) / 3
    c2 = cf.chain.constants()[-1] * 1e6  # mm²/s²
    assert r.value == pytest.approx(c2 * t_x, rel=1e-13)  # exact analytic at δT = 0
    # exact analytic (step_up_chain's docstring): ∂ν_X/∂δT = (α_w − α_X) ν_X at δT = 0
    c = r.contribution("dT_th")
    assert c.sensitivity == pytest.approx((-0.0243 - -0.05) * r.value, rel=1e-9)
    # the constants' unit stays that of the file (default mm²/s²) for chain_to
    assert cf.chain_to(2).budget.unit == "mm^2/s^2"


def test_units_of_the_file_are_used() -> None:
    text = MINIMAL.replace(
        'format = "viscometry-chain/1"', 'format = "viscometry-chain/1"\nunit = "m^2/s^2"'
    )
    r = loads_chain(text, "si.toml").budget.evaluate()
    ref = loads_chain(MINIMAL, "mm.toml").budget.evaluate()
    assert r.unit == "m^2/s^2"
    assert r.value == pytest.approx(ref.value * 1e-6, rel=1e-13)  # exact: 1 mm² = 1e-6 m²


def test_a_step_beyond_factor_3_warns_on_evaluation_not_on_loading() -> None:
    text = MINIMAL.replace("[211.50, 211.42, 211.46]", "[180.50, 180.42, 180.46]")
    chain = loads_chain(text, "big_step.toml")  # loading never warns (pytest: warnings = errors)
    warnings = chain.budget.evaluate().warnings
    # ASTM D2162 factor 3; ISO 3104 minimum flow time 200 s
    assert any(w.startswith("step 2: step-up ratio 3.38") for w in warnings)
    assert any(w.startswith("t2: flow time 180.5 s is below the minimum 200 s") for w in warnings)
    low = text.replace(
        'format = "viscometry-chain/1"', 'format = "viscometry-chain/1"\nminimum_flow_time = 150'
    )
    assert not any("below the minimum" in w for w in loads_chain(low).budget.evaluate().warnings)


def test_the_quantity_tables_take_every_budget_input_form() -> None:
    text = WITH_TEMPERATURES.replace(
        'temperature_difference = { value = 0.0, standard_uncertainty = 0.002, unit = "K" }',
        'temperature_difference = { value = 0.0, half_width = 0.003, distribution = "rectangular", unit = "K" }',
    )
    dt = loads_chain_file(text, "bounds.toml").steps[0].temperature_difference
    assert dt is not None and dt.form == "bounds"
    assert dt.standard_uncertainty == pytest.approx(0.003 / math.sqrt(3), rel=1e-15)  # a/√3
    sub = MINIMAL.replace(
        "[[steps]]",
        '[water.reference]\nvalue = 1.0034\nunit = "mm^2/s"\nstandard_uncertainty = 0.0009\n[[steps]]',
    )
    assert loads_chain_file(sub, "sub.toml").water_value.standard_uncertainty == 0.0009


# ----------------------------------------------------------------------------- refusals
def _edit(old: str, new: str, base: str = MINIMAL) -> str:
    assert base.count(old) == 1, old
    return base.replace(old, new)


CASES = [
    # (id, text, expected message after "chain.toml: ", where)
    ("format missing", MINIMAL.replace('format = "viscometry-chain/1"\n', ""),
     'missing key format (write format = "viscometry-chain/1" first)', "top"),
    ("format of a budget", _edit("viscometry-chain/1", "viscometry-budget/1"),
     "format = 'viscometry-budget/1' is not supported; expected 'viscometry-chain/1'", "top"),
    ("unknown top key", _edit("[water]", 'colour = "red"\n[water]'),
     "top level has unknown key 'colour' (allowed: format, title, unit, minimum_flow_time, water, "
     "thermometer_error, steps, certified)", "top"),
    ("unit of the wrong dimension", _edit("[water]", 'unit = "s"\n[water]'),
     "top level unit must be a unit of a viscometer constant (like 'mm^2/s^2'), got 's'", "top"),
    ("minimum flow time not positive", _edit("[water]", "minimum_flow_time = -1\n[water]"),
     "top level minimum_flow_time must be positive (in s), got -1.0", "top"),
    ("water missing", MINIMAL.replace("[water]\nreadings = [334.47, 334.55, 334.54]\n", ""),
     "missing table [water] (the flow-time readings of water in master 1)", "water"),
    ("water readings missing", _edit("readings = [334.47, 334.55, 334.54]", ""),
     "[water] is missing key readings (the flow-time readings, in s)", "water"),
    ("one water reading", _edit("[334.47, 334.55, 334.54]", "[334.47]"),
     "[water] readings: t1.readings: a Type A evaluation needs at least 2 readings, got 1", "water"),
    ("negative mean flow time", _edit("[334.47, 334.55, 334.54]", "[-334.47, -334.55]"),
     "[water] readings value (the mean of the readings) must be positive for method "
     "'step_up_chain' (flow time of water in master 1), got -334.51 s", "water"),
    ("reference not a table", _edit("readings = [334.47", "reference = 1.0034\nreadings = [334.47"),
     '[water] reference must be a table such as { value = ..., unit = "...", '
     "standard_uncertainty = ... }, got 1.0034", "water.reference"),
    ("reading not a number", _edit("[211.50, 211.42, 211.46]", '[211.50, "fast", 211.46]'),
     "[[steps]] entry 1 (S2) readings_in_new[1] must be a finite number, got 'fast'", "steps.0"),
    ("readings empty", _edit("[211.50, 211.42, 211.46]", "[]"),
     "[[steps]] entry 1 (S2) readings_in_new must be a non-empty list of numbers, got []",
     "steps.0"),
    ("step key unknown", _edit('label = "S2"', 'label = "S2"\ncolour = "red"'),
     "[[steps]] entry 1 (S2) has unknown key 'colour' (allowed: label, readings_in_known, "
     "readings_in_new, temperature_coefficient, temperature_difference, surface_tension, density, "
     "kinetic_energy, upper_radius, lower_radius, driving_head)", "steps.0"),
    ("step readings missing", _edit("readings_in_known = [610.09, 610.16, 609.95]\n", ""),
     "[[steps]] entry 1 (S2) is missing key readings_in_known (the flow-time readings, in s)",
     "steps.0"),
    ("label not text", _edit('label = "S2"', "label = 2"),
     "[[steps]] entry 1 label must be a string, got 2", "steps.0"),
    ("steps not an array", MINIMAL.split("[[steps]]")[0].replace("[water]", "steps = 3\n[water]"),
     "steps must be an array of tables [[steps]], got 3", "steps"),
    ("step not a table", MINIMAL.split("[[steps]]")[0].replace("[water]", "steps = [1]\n[water]"),
     "[[steps]] entry 1 must be a table, got 1", "steps.0"),
    ("α with a negative u", _edit("temperature_coefficient = { value = -0.025, standard_uncertainty = 0.0025",
                                  "temperature_coefficient = { value = -0.025, standard_uncertainty = -0.0025",
                                  WITH_TEMPERATURES),
     "[[steps]] entry 1 (S2) temperature_coefficient alpha2.standard_uncertainty must be "
     "non-negative, got -0.0025", "steps.0"),
    ("α without unit", _edit('standard_uncertainty = 0.0025, unit = "1/K" }',
                             "standard_uncertainty = 0.0025 }", WITH_TEMPERATURES),
     '[[steps]] entry 1 (S2) temperature_coefficient is missing key unit (use unit = "1" for a '
     "dimensionless quantity)", "steps.0"),
    ("α in a unit of the wrong dimension", _edit('standard_uncertainty = 0.0025, unit = "1/K" }',
                                                 'standard_uncertainty = 0.0025, unit = "1/s" }',
                                                 WITH_TEMPERATURES),
     "[[steps]] entry 1 (S2) temperature_coefficient unit '1/s' does not fit method "
     "'step_up_chain', which expects a quantity measured in units like '1/K'", "steps.0"),
    ("two uncertainty forms", _edit("value = 0.0, standard_uncertainty = 0.002, unit",
                                    "value = 0.0, standard_uncertainty = 0.002, half_width = 0.003, unit",
                                    WITH_TEMPERATURES),
     "[[steps]] entry 1 (S2) temperature_difference must give exactly one uncertainty form "
     "(standard_uncertainty | expanded_uncertainty | half_width or lower/upper | readings), got "
     "standard_uncertainty and half_width", "steps.0"),
    ("thermometer without α_w", _edit(
        'temperature_coefficient = { value = -0.0243, standard_uncertainty = 0.0002, unit = "1/K" }\n',
        "", WITH_TEMPERATURES),
     "[thermometer_error] is given alone; the bath thermometer's error [thermometer_error] and "
     "water's temperature coefficient [water] temperature_coefficient go together: give both or "
     "neither", "thermometer_error"),
    ("α_w without thermometer", _edit(
        'readings = [334.47, 334.55, 334.54]',
        'readings = [334.47, 334.55, 334.54]\ntemperature_coefficient = { standard_uncertainty = 0.0002, unit = "1/K" }'),
     "[water] temperature_coefficient is given alone; the bath thermometer's error "
     "[thermometer_error] and water's temperature coefficient [water] temperature_coefficient go "
     "together: give both or neither", "water.temperature_coefficient"),
    ("ΔT without α", _edit(
        'temperature_coefficient = { value = -0.025, standard_uncertainty = 0.0025, unit = "1/K" }\n',
        "", WITH_TEMPERATURES),
     "[[steps]] entry 1 (S2) temperature_difference needs the step liquid's "
     "temperature_coefficient", "steps.0"),
    ("α with nothing to act on", _edit(
        'readings_in_new = [211.50, 211.42, 211.46]',
        'readings_in_new = [211.50, 211.42, 211.46]\ntemperature_coefficient = { value = -0.025, standard_uncertainty = 0.0025, unit = "1/K" }'),
     "[[steps]] entry 1 (S2) temperature_coefficient has no effect without [thermometer_error] or "
     "a temperature_difference; leave it out", "steps.0"),
    ("certified without α", _edit(
        'temperature_coefficient = { value = -0.05, standard_uncertainty = 0.005, unit = "1/K" }\n',
        "", WITH_TEMPERATURES),
     "[certified] needs temperature_coefficient (the certified liquid's α) when the chain has a "
     "[thermometer_error]", "certified"),
    ("certified key unknown", _edit('label = "R50"', 'label = "R50"\nvalue = 50.0', WITH_TEMPERATURES),
     "[certified] has unknown key 'value' (allowed: label, readings, temperature_coefficient, unit, "
     "surface_tension, density)",
     "certified"),
    ("certified unit of a constant", _edit('label = "R50"', 'label = "R50"\nunit = "mm^2/s^2"',
                                           WITH_TEMPERATURES),
     "[certified] unit must be a unit of kinematic viscosity (like 'mm^2/s'), got 'mm^2/s^2'",
     "certified"),
    ("not TOML", MINIMAL + "[water\n", "not valid TOML: ", "top"),
]  # fmt: skip


@pytest.mark.parametrize("text, message, where", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_each_refusal_names_file_part_key_and_value(text: str, message: str, where: str) -> None:
    # expected messages: the reader's own wording (common practice, no source)
    with pytest.raises(BudgetFileError) as info:
        loads_chain(text, "chain.toml")
    assert str(info.value).startswith(f"chain.toml: {message}")
    assert info.value.where == where


def test_refusals_of_the_file_itself(tmp_path: Path) -> None:
    with pytest.raises(BudgetFileError, match="cannot read the file"):
        load_chain(tmp_path / "missing.toml")
    with pytest.raises(BudgetFileError, match="is a directory, not a chain file"):
        load_chain(tmp_path)
    bad = tmp_path / "latin1.toml"
    bad.write_bytes(MINIMAL.replace("S2", "S\xe9").encode("latin-1"))
    with pytest.raises(BudgetFileError, match="not UTF-8 text"):
        load_chain(bad)
    big = tmp_path / "big.toml"
    big.write_text(MINIMAL + "# " + "x" * 1_000_001 + "\n", encoding="utf-8")
    with pytest.raises(BudgetFileError, match="a chain file may be at most 1000000 bytes"):
        load_chain(big)
    with pytest.raises(BudgetFileError, match="more than 1000000 bytes"):
        loads_chain(MINIMAL + "# " + "x" * 1_000_001, "big.toml")
    with pytest.raises(BudgetFileError, match="chain text must be a str, got bytes"):
        loads_chain(MINIMAL.encode(), "bytes.toml")  # type: ignore[arg-type]


def test_a_budget_file_is_not_a_chain_file() -> None:
    with pytest.raises(BudgetFileError, match="is not supported; expected 'viscometry-chain/1'"):
        load_chain(BUDGET_EXAMPLE)
