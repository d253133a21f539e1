"""Sourced reference data: water, gravity, temperature models of viscosity (SI units inside).

Temperatures in kelvin, dynamic viscosity in Pa·s, density in kg/m³, kinematic viscosity in
m²/s, acceleration in m/s².  Constants and their sources: :mod:`viscometry.properties.constants`.
"""

from viscometry.properties.formula_functions import (
    FORMULA_FUNCTION_UNITS,
    FORMULA_FUNCTION_VALIDITY,
    FORMULA_FUNCTIONS,
)
from viscometry.properties.gravity import normal_gravity, standard_gravity
from viscometry.properties.temperature import (
    TemperatureModelFit,
    fit_andrade,
    fit_sutherland,
    fit_vogel_fulcher_tammann,
    fit_walther,
)
from viscometry.properties.water import (
    water_density,
    water_density_if97,
    water_density_uncertainty,
    water_kinematic_viscosity,
    water_viscosity,
    water_viscosity_relative_uncertainty,
)

__all__ = [
    "FORMULA_FUNCTIONS",
    "FORMULA_FUNCTION_UNITS",
    "FORMULA_FUNCTION_VALIDITY",
    "TemperatureModelFit",
    "fit_andrade",
    "fit_sutherland",
    "fit_vogel_fulcher_tammann",
    "fit_walther",
    "normal_gravity",
    "standard_gravity",
    "water_density",
    "water_density_if97",
    "water_density_uncertainty",
    "water_kinematic_viscosity",
    "water_viscosity",
    "water_viscosity_relative_uncertainty",
]
