"""Sourced reference data: water, gravity, temperature models of viscosity (SI units inside).

Temperatures in kelvin, dynamic viscosity in Pa·s, density in kg/m³, kinematic viscosity in
m²/s, acceleration in m/s².  Constants and their sources: :mod:`viscometry.properties.constants`.
"""

from viscometry._lazy import lazy_names

#: Where each public name lives; imported on first use (see :mod:`viscometry._lazy`), so
#: that the water or gravity data do not bring the temperature fits (scipy.optimize).
_LAZY = {
    "viscometry.properties.formula_functions": (
        "FORMULA_FUNCTION_UNITS",
        "FORMULA_FUNCTION_VALIDITY",
        "FORMULA_FUNCTIONS",
    ),
    "viscometry.properties.gravity": ("normal_gravity", "standard_gravity"),
    "viscometry.properties.temperature": (
        "TemperatureModelFit",
        "fit_andrade",
        "fit_sutherland",
        "fit_vogel_fulcher_tammann",
        "fit_walther",
    ),
    "viscometry.properties.water": (
        "water_density",
        "water_density_if97",
        "water_density_uncertainty",
        "water_kinematic_viscosity",
        "water_viscosity",
        "water_viscosity_relative_uncertainty",
    ),
}
__getattr__, __dir__ = lazy_names(globals(), _LAZY)


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
