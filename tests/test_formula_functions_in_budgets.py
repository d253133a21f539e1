"""Reference-data functions inside budget formulas: values, sensitivities and unit checks."""

import pytest

from viscometry.errors import UnitError
from viscometry.gum import Budget, InputQuantity


def water_budget(unit="mPa*s", arg="T", t_unit="degC"):
    return Budget.from_formula(
        "eta", f"water_viscosity({arg})", [InputQuantity.normal(arg, 20.0, 0.01, t_unit)], unit
    )


def test_water_viscosity_in_a_formula_carries_its_temperature_sensitivity():
    r = water_budget().evaluate()
    # ISO/TR 3666:1998: eta(20 C) = 1.0016 mPa s (from memory; REFERENCES.md)
    assert r.value == pytest.approx(1.0016, abs=5e-5)
    # about -2.5 %/K near 20 C (REFERENCES.md, recomputed from the IAPWS formulation)
    rel_per_kelvin = r.contribution("T").sensitivity / r.value
    assert rel_per_kelvin == pytest.approx(-0.0245, abs=0.0005)
    assert r.standard_uncertainty == pytest.approx(0.01 * abs(r.contribution("T").sensitivity))


def test_units_of_function_calls_are_checked():
    with pytest.raises(UnitError, match="do not match the measurand unit 'm'"):
        water_budget(unit="m")
    with pytest.raises(UnitError, match="argument L has dimension"):
        water_budget(unit="Pa*s", arg="L", t_unit="m")
