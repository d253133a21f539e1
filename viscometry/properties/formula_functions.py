"""Symbolic (sympy) versions of the one-argument water properties, for measurement models.

A measurement model written as a formula may call ``water_viscosity(T)`` etc.; the formula
layer looks the name up in :data:`FORMULA_FUNCTIONS` and gets a closed-form sympy expression
in its argument, built from sympy arithmetic, ``exp`` and ``sqrt`` only, so that
:func:`sympy.diff` gives exact sensitivity coefficients and :func:`sympy.lambdify` evaluates
it with numpy.  The expressions are built by the very same code as the numeric functions of
:mod:`viscometry.properties.water` (its ``_*_core`` helpers), so both agree to rounding.

The symbolic versions do not check validity (they cannot warn inside a derivative); callers
check the numeric argument against :data:`FORMULA_FUNCTION_VALIDITY` and the units against
:data:`FORMULA_FUNCTION_UNITS`.

======================================  ===========  ============  ============================
name                                    argument     result        formulation
======================================  ===========  ============  ============================
``water_density``                       T [K]        ρ [kg/m³]     Tanaka et al. (2001)
``water_viscosity``                     T [K]        η [Pa·s]      IAPWS R12-08, ρ from IF97
                                                                   region 1 at 101 325 Pa
``water_kinematic_viscosity``           T [K]        ν [m²/s]      η/ρ, same ρ
======================================  ===========  ============  ============================

Examples
--------
>>> import sympy
>>> T = sympy.Symbol("T", positive=True)
>>> rho = FORMULA_FUNCTIONS["water_density"](T)
>>> round(float(rho.subs(T, 293.15)), 4)
998.2067
>>> d_eta = sympy.diff(FORMULA_FUNCTIONS["water_viscosity"](T), T)
>>> round(float(d_eta.subs(T, 293.15)) * 1e6, 2)  # µPa·s/K
-24.53
"""

from __future__ import annotations

from collections.abc import Callable
from functools import cache

import sympy

from viscometry.errors import FormulaError
from viscometry.properties.constants import (
    STANDARD_ATMOSPHERE,
    TANAKA_TEMPERATURE_RANGE,
    WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE,
)
from viscometry.properties.water import (
    _iapws2008_viscosity_core,
    _if97_region1_density_core,
    _tanaka_density_core,
)

__all__ = ["FORMULA_FUNCTIONS", "FORMULA_FUNCTION_UNITS", "FORMULA_FUNCTION_VALIDITY"]

_X = sympy.Dummy("temperature", positive=True)


@cache
def _template(name: str) -> sympy.Expr:
    """The expression of ``name`` in the placeholder symbol ``_X`` (built once)."""
    if name == "water_density":
        return _tanaka_density_core(_X)
    rho = _if97_region1_density_core(_X, STANDARD_ATMOSPHERE)
    eta = _iapws2008_viscosity_core(_X, rho, sympy.exp, sympy.sqrt)
    if name == "water_viscosity":
        return eta
    if name == "water_kinematic_viscosity":
        return eta / rho
    raise KeyError(name)  # pragma: no cover - only called with the names below


def _as_expr(argument: object, name: str) -> sympy.Expr:
    if isinstance(argument, sympy.Expr):
        return argument
    if isinstance(argument, int | float) and not isinstance(argument, bool):
        return sympy.Float(argument)
    raise FormulaError(
        f"argument of {name} must be a sympy expression or a number, got {argument!r}"
    )


def _make(name: str) -> Callable[[sympy.Expr], sympy.Expr]:
    def function(temperature: sympy.Expr) -> sympy.Expr:
        return _template(name).xreplace({_X: _as_expr(temperature, name)})

    function.__name__ = name
    function.__qualname__ = name
    function.__doc__ = (
        f"Symbolic {name}: sympy expression of the temperature [K] "
        f"→ [{FORMULA_FUNCTION_UNITS[name][1]}]; see viscometry.properties.water.{name}."
    )
    return function


FORMULA_FUNCTION_UNITS: dict[str, tuple[str, str]] = {
    "water_density": ("K", "kg/m**3"),
    "water_viscosity": ("K", "Pa*s"),
    "water_kinematic_viscosity": ("K", "m**2/s"),
}
"""Argument and result units of each formula function, as pint-parsable strings."""

FORMULA_FUNCTION_VALIDITY: dict[str, tuple[float, float]] = {
    "water_density": TANAKA_TEMPERATURE_RANGE,
    "water_viscosity": WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE,
    "water_kinematic_viscosity": WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE,
}
"""Validity range of the argument of each formula function [K]."""

FORMULA_FUNCTIONS: dict[str, Callable[[sympy.Expr], sympy.Expr]] = {
    name: _make(name) for name in FORMULA_FUNCTION_UNITS
}
"""Name → callable taking a sympy expression (temperature [K]) and returning a closed-form
sympy expression."""
