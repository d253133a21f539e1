"""Symbolic water properties: same numbers as the numeric functions, exact derivatives."""

from __future__ import annotations

import numpy as np
import pint
import pytest
import sympy

from viscometry.errors import FormulaError
from viscometry.properties import water
from viscometry.properties.formula_functions import (
    FORMULA_FUNCTION_UNITS,
    FORMULA_FUNCTION_VALIDITY,
    FORMULA_FUNCTIONS,
)

T = sympy.Symbol("T", positive=True)

# Temperatures inside each function's validity range [K]
SAMPLE_TEMPERATURES = {
    "water_density": np.array([273.15, 283.15, 293.15, 298.15, 313.15]),
    "water_viscosity": np.array([273.15, 293.15, 298.15, 323.15, 353.15, 373.15]),
    "water_kinematic_viscosity": np.array([273.15, 293.15, 298.15, 323.15, 353.15, 373.15]),
}


@pytest.fixture(scope="module")
def compiled() -> dict[str, tuple[sympy.Expr, object, object]]:
    out = {}
    for name, function in FORMULA_FUNCTIONS.items():
        expr = function(T)
        derivative = sympy.diff(expr, T)
        out[name] = (
            expr,
            sympy.lambdify(T, expr, "numpy"),
            # cse=True only for speed (the derivatives are large); same numbers
            sympy.lambdify(T, derivative, "numpy", cse=True),
        )
    return out


def test_names_units_and_ranges_agree() -> None:
    assert set(FORMULA_FUNCTIONS) == set(FORMULA_FUNCTION_UNITS) == set(FORMULA_FUNCTION_VALIDITY)
    assert set(FORMULA_FUNCTIONS) == {
        "water_density",
        "water_viscosity",
        "water_kinematic_viscosity",
    }


def test_units_are_pint_parsable_with_the_right_dimensions() -> None:
    ureg = pint.UnitRegistry()
    expected = {
        "water_density": "[mass] / [length] ** 3",
        "water_viscosity": "[mass] / [length] / [time]",
        "water_kinematic_viscosity": "[length] ** 2 / [time]",
    }
    for name, (argument, result) in FORMULA_FUNCTION_UNITS.items():
        assert ureg.Unit(argument).dimensionality == ureg.Unit("K").dimensionality
        assert ureg.Unit(result).dimensionality == ureg.get_dimensionality(expected[name])


@pytest.mark.parametrize("name", sorted(FORMULA_FUNCTIONS))
def test_lambdified_equals_numeric(compiled, name: str) -> None:
    # Same formulation, same coefficients: agreement to rounding (1e-12 relative).
    _, fn, _ = compiled[name]
    temps = SAMPLE_TEMPERATURES[name]
    np.testing.assert_allclose(fn(temps), getattr(water, name)(temps), rtol=1e-12)


@pytest.mark.parametrize("name", sorted(FORMULA_FUNCTIONS))
def test_derivative_matches_central_difference(compiled, name: str) -> None:
    # sympy derivative vs central difference of the numeric function, h = 1e-3 K:
    # truncation ~h²|f'''/f'|/6 < 1e-8 and rounding ~1e-16/h relative, both far below 1e-6.
    _, _, dfn = compiled[name]
    temps = SAMPLE_TEMPERATURES[name][1:-1]  # interior, so T ± h stays in range
    h = 1e-3
    numeric = getattr(water, name)
    central = (numeric(temps + h) - numeric(temps - h)) / (2 * h)
    np.testing.assert_allclose(dfn(temps), central, rtol=1e-6)


@pytest.mark.parametrize("name", sorted(FORMULA_FUNCTIONS))
def test_expressions_use_sympy_functions_only(compiled, name: str) -> None:
    expr, _, _ = compiled[name]
    assert expr.free_symbols == {T}
    function_types = {type(f) for f in expr.atoms(sympy.Function)}
    assert function_types <= {sympy.exp}
    assert not expr.atoms(sympy.core.function.AppliedUndef)


def test_composite_argument_and_chain_rule() -> None:
    # A formula may pass an expression, e.g. a bath reading plus a correction.
    reading, correction = sympy.symbols("t_bath delta_t", real=True)
    rho = FORMULA_FUNCTIONS["water_density"](reading + correction)
    point = {reading: 293.15, correction: 0.01}
    d_corr = float(sympy.diff(rho, correction).subs(point))
    d_read = float(sympy.diff(rho, reading).subs(point))
    assert d_corr == pytest.approx(d_read, rel=1e-14)
    assert float(rho.subs(point)) == pytest.approx(water.water_density(293.16), rel=1e-14)
    eta = FORMULA_FUNCTIONS["water_viscosity"](reading + correction)
    assert eta.free_symbols == {reading, correction}
    assert float(eta.subs(point)) == pytest.approx(water.water_viscosity(293.16), rel=1e-12)


def test_water_density_maximum_has_zero_derivative() -> None:
    # Exact analytic case of Tanaka eq. (1): d rho/dT = 0 at t = -a1 (3.983035 degC).
    rho = FORMULA_FUNCTIONS["water_density"](T)
    from viscometry.properties.constants import TANAKA_A1, ZERO_CELSIUS

    slope = sympy.diff(rho, T).subs(T, ZERO_CELSIUS - TANAKA_A1)
    assert abs(float(slope)) < 1e-12


def test_numbers_accepted_text_rejected() -> None:
    value = FORMULA_FUNCTIONS["water_density"](293.15)
    assert float(value) == pytest.approx(water.water_density(293.15), rel=1e-14)
    with pytest.raises(FormulaError, match="argument of water_density must be a sympy expression"):
        FORMULA_FUNCTIONS["water_density"]("T")  # type: ignore[arg-type]
