"""Demonstration budgets of an invented laboratory (invented data, never check values).

Everything here is set in the *Quarrywick Fluids Laboratory*, a fictional lab of this
project. The numbers are made up to be plausible and to show the method; they are not
measurements, not reference data, and must never be used as check values for the engine
(the engine's tests check against published examples and closed forms instead).
"""

from __future__ import annotations

from viscometry.gum import Budget, InputQuantity

__all__ = [
    "DEMO_LAB",
    "PRESSURE_CAPILLARY_FORMULA",
    "pressure_capillary_demo_budget",
]

#: Name of the invented laboratory in which the demo budgets are set.
DEMO_LAB = "Quarrywick Fluids Laboratory (fictional)"

#: Poiseuille's law for an absolute, pressure-driven capillary viscometer, with the
#: driving pressure difference Δp = ρ_m g h read from a liquid-column manometer.
PRESSURE_CAPILLARY_FORMULA = "pi * r**4 * rho_m * g * h * t / (8 * V * L)"

_INVENTED = "invented demo value"


def pressure_capillary_demo_budget() -> Budget:
    """Budget of the dynamic viscosity from an absolute pressure-driven capillary (invented).

    A volume V of the sample flows through a capillary of radius r and length L in a time t
    under a pressure difference Δp = ρ_m g h, read as the height h of a mercury column of
    density ρ_m at local gravity g. All input values are invented for the demo lab
    :data:`DEMO_LAB`.

    Returns
    -------
    Budget
        Measurand ``eta`` [mPa·s]; inputs ``r`` [mm], ``L`` [mm], ``V`` [mL], ``h`` [mm],
        ``rho_m`` [kg/m³], ``g`` [m/s²] and ``t`` [s] (Type A from six flow-time readings).

    Notes
    -----
    Measurement model (Hagen-Poiseuille law for steady laminar flow in a straight tube):

    .. math:: \\eta = \\frac{\\pi r^4 \\rho_m g h t}{8 V L}

    It is the ideal law: no kinetic-energy (Hagenbach) or end (Couette) correction, no
    hydrostatic head of the sample itself, no thermal expansion of the capillary. Its
    relative sensitivities are the exponents 4, 1, 1, 1, 1, −1, −1 for r, ρ_m, g, h, t, V,
    L, so the radius dominates the budget.

    References
    ----------
    JCGM 100:2008, 4.1 (measurement model), 4.2 (Type A), 4.3 (Type B) and 5.1.6 (power-law
    models: relative variances add with squared exponents).

    Examples
    --------
    >>> budget = pressure_capillary_demo_budget()
    >>> budget.input_names
    ('r', 'L', 'V', 'h', 'rho_m', 'g', 't')
    >>> budget.model.relative_sensitivity_expression("r")
    4
    """
    inputs = [
        InputQuantity.normal(
            "r", 0.4000, 0.0006, "mm",
            relative_uncertainty_of_uncertainty=0.10,
            description="mean bore radius of the capillary",
            source=f"{_INVENTED}: bore-gauge certificate QFL-C-017 (fictional)",
        ),
        InputQuantity.rectangular(
            "L", 200.00, 0.10, "mm",
            description="length of the capillary between the end faces",
            source=f"{_INVENTED}: calliper reading, ±0.10 mm tolerance",
        ),
        InputQuantity.normal(
            "V", 5.000, 0.004, "mL",
            description="volume of the timing bulb between its two marks",
            source=f"{_INVENTED}: gravimetric calibration with water",
        ),
        InputQuantity.normal(
            "h", 120.0, 0.20, "mm",
            description="difference of the mercury levels in the U-tube manometer",
            source=f"{_INVENTED}: cathetometer reading of both menisci",
        ),
        InputQuantity.normal(
            "rho_m", 13545.9, 0.5, "kg/m^3",
            description="density of the manometer mercury at the room temperature",
            source=f"{_INVENTED}: handbook value with a temperature allowance",
        ),
        InputQuantity.normal(
            "g", 9.8105, 0.0002, "m/s^2",
            description="local acceleration of gravity at the bench",
            source=f"{_INVENTED}: site gravity survey",
        ),
        InputQuantity.from_readings(
            "t", [118.42, 118.61, 118.37, 118.55, 118.49, 118.58], "s",
            description="flow time of the volume V (mean of six runs)",
            source=f"{_INVENTED}: stopwatch readings",
        ),
    ]  # fmt: skip
    return Budget.from_formula(
        "eta",
        PRESSURE_CAPILLARY_FORMULA,
        inputs,
        "mPa*s",
        title=f"Dynamic viscosity by an absolute pressure-driven capillary — {DEMO_LAB}",
    )
