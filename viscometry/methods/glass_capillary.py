"""Gravity-driven glass capillary viscometers (kinematic viscosity from a flow time).

``glass_capillary_kinetic``
    ν = C t − E/t², the kinetic-energy form of ISO 3105 / ASTM D446.
``glass_capillary_hagenbach``
    ν = C t − B/t, the Hagenbach form.
``glass_capillary_corrected``
    ν = [C (g₂/g₁) cos θ · t − E/t²] · (1 − α ΔT)
``glass_capillary_corrected_surface_tension``
    ν = [C (g₂/g₁) cos θ · (1 + S) · t − E/t²] · (1 − α ΔT), with
    S = 2 (1/r_u − 1/r_l) (σ_c/ρ_c − σ_x/ρ_x) / (g₂ h).
``glass_capillary_thermal_expansion``
    ν = [C (g₂/g₁) cos θ · (1 + α_g ΔT_c) · t − E/t²] · (1 − α ΔT)
``glass_capillary_fixed_charge``
    ν = [C (g₂/g₁) cos θ · (1 + α_g ΔT_c) · (1 − V_c β ΔT_f/(A_l h)) · t − E/t²] · (1 − α ΔT)

The corrections of the last two, and where they come from:

* **Gravity.** A constant is proportional to g: C₂ = (g₂/g₁)·C₁ (ISO 3104, 7.2), with g₁ at
  the calibrating and g₂ at the user's laboratory.
* **Tilt.** The driving head of a viscometer tilted by θ from its calibrated (vertical)
  position is h cos θ, so the effective constant is C cos θ (hydrostatics). At θ = 0 its
  first-order sensitivity is zero: give θ a non-zero estimate (e.g. the mean of a rectangular
  distribution between 0 and the largest tilt) or evaluate with ``higher_order=True`` or the
  Monte Carlo method.
* **Bath temperature.** The bath runs at T₀ + ΔT instead of the stated T₀; with the liquid's
  relative temperature coefficient α = (1/ν)(∂ν/∂T) (negative; from
  :mod:`viscometry.properties.temperature` fits or the literature), ν(T₀) = ν(T₀ + ΔT)·(1 − α ΔT)
  to first order (Taylor expansion).
* **Surface tension.** The pressures 2σ/R under the upper and lower menisci (bulb radii
  r_u, r_l) change the effective head by −(2σ/(ρ g))(1/r_u − 1/r_l); a constant found with a
  calibration liquid (σ_c, ρ_c) and used with a test liquid (σ_x, ρ_x) then changes by the
  factor 1 + S above, to first order in S. This is the surface-tension correction given for
  capillary viscometers in ISO 3105 / ASTM D446 (form from memory; derived here from the
  meniscus pressures). h is the mean driving head.
* **Temperature of the constant: glass expansion.** For a gravity-driven capillary,
  C = π g r⁴ h / (8 L V) (Hagen-Poiseuille with the mean head h, the capillary's radius r and
  length L and the timed volume V). If the glass expands isotropically with the linear
  coefficient α_g, every length scales by (1 + α_g ΔT_c) and V by (1 + α_g ΔT_c)³, so
  C(T) = C(T_c)·(1 + α_g ΔT_c) to first order (exponent 4 + 1 − 1 − 3 = 1), ΔT_c the test
  temperature minus the temperature of the constant (derived here; that the constant of a
  glass viscometer changes by this small amount with temperature is stated in ISO 3105 /
  ASTM D446 — from memory). Borosilicate glass has α_g ≈ 3.3·10⁻⁶ K⁻¹ (from memory).
* **Temperature of the constant: the charge of fixed-charge designs.** A viscometer charged
  with a fixed volume V_c (e.g. U-tube designs such as the Cannon-Fenske routine, whose charge
  sits in the lower reservoir) and heated from the filling to the test temperature holds the
  extra volume V_c β ΔT_f, β the volumetric expansion of the liquid relative to the glass
  (β_liquid − 3 α_g). It lifts the lower meniscus by V_c β ΔT_f / A_l (A_l the reservoir's
  cross-section there) and lowers the mean head h by as much, so
  C = C_cal·(1 − V_c β ΔT_f / (A_l h)) (derived here from the head change; ISO 3105 /
  ASTM D446 ask fixed-charge designs to be charged so that the volume at the test temperature
  is the calibrated one — from memory). ΔT_f is (test − filling temperature) in use minus the
  same at calibration; for a constant determined with a charge filled at its test temperature
  it is simply test minus filling temperature. Suspended-level designs (Ubbelohde) do not
  depend on the charge: use ``glass_capillary_thermal_expansion``.

References
----------
ISO 3104 (kinematic viscosity: 7.2 gravity, minimum flow time); ISO 3105 and ASTM D446
(glass capillary viscometers: kinetic-energy correction E/t², surface-tension correction);
ASTM D445; E. Hagenbach (1860) for the B/t form; the temperature dependence of the constant
derived from the Hagen-Poiseuille law with the geometry scaled by thermal expansion.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import sympy as sp

from viscometry.methods import flow_checks as fc
from viscometry.methods.base import Method, symbols

__all__ = [
    "GLASS_CAPILLARY_KINETIC",
    "GLASS_CAPILLARY_HAGENBACH",
    "GLASS_CAPILLARY_CORRECTED",
    "GLASS_CAPILLARY_CORRECTED_SURFACE_TENSION",
    "GLASS_CAPILLARY_THERMAL_EXPANSION",
    "GLASS_CAPILLARY_FIXED_CHARGE",
    "CHARGE_CORRECTION_LIMIT",
    "charge_volume_factor",
    "glass_expansion_factor",
    "surface_tension_factor",
]

C, t, E, B = symbols("C t E B")
g1, g2, theta, alpha, dT = symbols("g1 g2 theta alpha dT")
h, r_u, r_l, sigma_c, rho_c, sigma_x, rho_x = symbols("h r_u r_l sigma_c rho_c sigma_x rho_x")
alpha_g, dT_c, V_c, beta, dT_f, A_l = symbols("alpha_g dT_c V_c beta dT_f A_l")

#: Largest relative change of the constant by the charge-volume correction before a warning
#: (our default, no source): beyond it the viscometer was charged far from its test
#: temperature; recharging at the test temperature is the usual remedy.
CHARGE_CORRECTION_LIMIT = 0.01

_VALIDITY = (
    "Laminar flow (Re ≈ 1-100 in glass viscometers, common practice, no source), a Newtonian "
    "liquid, flow time at least the minimum (200 s for manual timing, ISO 3104 / ASTM D445), "
    "viscometer vertical and filled as at calibration, the kinetic-energy term a small correction."
)

_CONTEXT = {
    "capillary_radius": "capillary radius r [m], enables the Reynolds-number check",
    "flow_volume": "timed volume V [m^3], enables the Reynolds-number check",
    "minimum_flow_time": "minimum flow time [s] (default 200 s, ISO 3104 manual timing)",
    "g_calibration": "g at the calibrating laboratory [m/s^2], enables the ISO 3104 7.2 flag",
    "g_local": "g at the user's laboratory [m/s^2], enables the ISO 3104 7.2 flag",
}

_BASE_UNITS = {"C": "m^2/s^2", "t": "s", "E": "m^2*s", "B": "m^2"}
_BASE_DESCRIPTIONS = {
    "C": "viscometer_constant: calibration constant of the viscometer",
    "t": "flow_time: measured flow time",
    "E": "kinetic_energy_constant: kinetic-energy correction constant E (ν = C t − E/t²)",
    "B": "hagenbach_constant: kinetic-energy constant B of the Hagenbach form (ν = C t − B/t)",
}
_CORRECTION_UNITS = {"g1": "m/s^2", "g2": "m/s^2", "theta": "rad", "alpha": "1/K", "dT": "K"}
_CORRECTION_DESCRIPTIONS = {
    "g1": "calibration_gravity: acceleration of gravity at the calibrating laboratory",
    "g2": "local_gravity: acceleration of gravity at the user's laboratory",
    "theta": "tilt_angle: tilt of the viscometer from its calibrated (vertical) position",
    "alpha": "relative_temperature_coefficient: (1/ν)·∂ν/∂T of the test liquid (negative)",
    "dT": "bath_temperature_deviation: bath temperature minus the stated temperature "
    "(a difference; give it in K or delta_degC)",
}
_SURFACE_UNITS = {
    "h": "m",
    "r_u": "m",
    "r_l": "m",
    "sigma_c": "N/m",
    "rho_c": "kg/m^3",
    "sigma_x": "N/m",
    "rho_x": "kg/m^3",
}
_SURFACE_DESCRIPTIONS = {
    "h": "driving_head: mean driving head of the viscometer",
    "r_u": "upper_meniscus_radius: radius of the upper bulb at the meniscus",
    "r_l": "lower_meniscus_radius: radius of the lower bulb (or reservoir) at the meniscus",
    "sigma_c": "calibration_surface_tension: surface tension of the calibration liquid",
    "rho_c": "calibration_density: density of the calibration liquid",
    "sigma_x": "test_surface_tension: surface tension of the test liquid",
    "rho_x": "test_density: density of the test liquid",
}


def _pick(mapping: Mapping[str, str], names: tuple[str, ...]) -> dict[str, str]:
    return {k: mapping[k] for k in names}


def surface_tension_factor(
    driving_head: float,
    upper_radius: float,
    lower_radius: float,
    calibration_surface_tension: float,
    calibration_density: float,
    test_surface_tension: float,
    test_density: float,
    gravity: float,
) -> float:
    """Relative change S of a constant between calibration and test liquids (C_x = C_c (1 + S)).

    Parameters
    ----------
    driving_head : float
        Mean driving head h [m].
    upper_radius, lower_radius : float
        Meniscus radii r_u, r_l [m].
    calibration_surface_tension, test_surface_tension : float
        σ_c, σ_x [N/m].
    calibration_density, test_density : float
        ρ_c, ρ_x [kg/m³].
    gravity : float
        g [m/s²].

    Returns
    -------
    float
        S = 2 (1/r_u − 1/r_l)(σ_c/ρ_c − σ_x/ρ_x)/(g h) [1].

    Notes
    -----
    Form from memory of ISO 3105 / ASTM D446; derived in this module's docstring.

    Examples
    --------
    >>> surface_tension_factor(0.1, 0.01, 0.01, 0.072, 998.0, 0.030, 860.0, 9.81)
    0.0
    """
    return (
        2.0
        * (1.0 / upper_radius - 1.0 / lower_radius)
        * (calibration_surface_tension / calibration_density - test_surface_tension / test_density)
        / (gravity * driving_head)
    )


def _glass_checks(
    method: Method, values: Mapping[str, float], ke_term: float, gravity_applied: bool
) -> list[str]:
    nu = method.value(values)
    tt = values["t"]
    out = fc.check_flow_time(tt, values.get("minimum_flow_time", fc.MINIMUM_FLOW_TIME_MANUAL))
    out += fc.check_kinetic_energy(ke_term, nu)
    if "capillary_radius" in values and "flow_volume" in values and nu > 0 and tt > 0:
        re = 2.0 * values["flow_volume"] / (math.pi * values["capillary_radius"] * tt * nu)
        out += fc.check_reynolds(re, usual_maximum=fc.GLASS_VISCOMETER_REYNOLDS_MAX)
    if "g_calibration" in values and "g_local" in values:
        out += fc.check_gravity_ratio(
            values["g_calibration"], values["g_local"], applied=gravity_applied
        )
    return out


def _check_kinetic(method: Method, values: Mapping[str, float]) -> list[str]:
    return _glass_checks(method, values, values["E"] / values["t"] ** 2, False)


def _check_hagenbach(method: Method, values: Mapping[str, float]) -> list[str]:
    return _glass_checks(method, values, values["B"] / values["t"], False)


def _check_corrected(method: Method, values: Mapping[str, float]) -> list[str]:
    ke = values["E"] / values["t"] ** 2 * (1.0 - values["alpha"] * values["dT"])
    return _glass_checks(method, values, ke, True)


GLASS_CAPILLARY_KINETIC = Method(
    name="glass_capillary_kinetic",
    flow_time_inputs=("t",),
    positive_inputs=("C", "t"),
    title="Glass capillary viscometer, kinetic-energy form ν = C t − E/t²",
    expression=C * t - E / t**2,
    input_names=("C", "t", "E"),
    input_units=_pick(_BASE_UNITS, ("C", "t", "E")),
    input_descriptions=_pick(_BASE_DESCRIPTIONS, ("C", "t", "E")),
    output_name="nu",
    output_unit="m^2/s",
    references=(
        "ISO 3104: kinematic viscosity by glass capillary viscometer (minimum flow time; 7.2 gravity)",
        "ISO 3105 / ASTM D446: kinetic-energy correction E/t²",
        "ASTM D445",
    ),
    validity=_VALIDITY,
    context_keys=_CONTEXT,
    checker=_check_kinetic,
)

GLASS_CAPILLARY_HAGENBACH = Method(
    name="glass_capillary_hagenbach",
    flow_time_inputs=("t",),
    positive_inputs=("C", "t"),
    title="Glass capillary viscometer, Hagenbach form ν = C t − B/t",
    expression=C * t - B / t,
    input_names=("C", "t", "B"),
    input_units=_pick(_BASE_UNITS, ("C", "t", "B")),
    input_descriptions=_pick(_BASE_DESCRIPTIONS, ("C", "t", "B")),
    output_name="nu",
    output_unit="m^2/s",
    references=(
        "E. Hagenbach, Ann. Phys. (Poggendorff) 109 (1860) 385 (from memory): the B/t term",
        "ISO 3104: minimum flow time; 7.2 gravity",
    ),
    validity=_VALIDITY,
    context_keys=_CONTEXT,
    checker=_check_hagenbach,
)

_corrected_core = C * (g2 / g1) * sp.cos(theta)
_CORRECTED_NAMES = ("C", "t", "E", "g1", "g2", "theta", "alpha", "dT")
_CORRECTED_REFERENCES = (
    "ISO 3104, 7.2: C₂ = (g₂/g₁)·C₁",
    "ISO 3105 / ASTM D446: kinetic-energy correction E/t²",
    "Hydrostatics: head h cos θ of a tilted viscometer",
    "First-order Taylor expansion ν(T₀) = ν(T₀ + ΔT)(1 − α ΔT), α = (1/ν)∂ν/∂T",
)

GLASS_CAPILLARY_CORRECTED = Method(
    name="glass_capillary_corrected",
    flow_time_inputs=("t",),
    positive_inputs=("C", "t", "g1", "g2"),
    title="Glass capillary viscometer with gravity, tilt and bath-temperature corrections",
    expression=(_corrected_core * t - E / t**2) * (1 - alpha * dT),
    input_names=_CORRECTED_NAMES,
    input_units=_pick({**_BASE_UNITS, **_CORRECTION_UNITS}, _CORRECTED_NAMES),
    input_descriptions=_pick({**_BASE_DESCRIPTIONS, **_CORRECTION_DESCRIPTIONS}, _CORRECTED_NAMES),
    output_name="nu",
    output_unit="m^2/s",
    references=_CORRECTED_REFERENCES,
    validity=_VALIDITY + " Corrections small: |g₂/g₁ − 1|, 1 − cos θ and |α ΔT| well below 1 %.",
    context_keys={k: v for k, v in _CONTEXT.items() if not k.startswith("g_")},
    checker=_check_corrected,
)

_SURFACE_NAMES = _CORRECTED_NAMES + tuple(_SURFACE_UNITS)
_surface = 1 + 2 * (1 / r_u - 1 / r_l) * (sigma_c / rho_c - sigma_x / rho_x) / (g2 * h)

GLASS_CAPILLARY_CORRECTED_SURFACE_TENSION = Method(
    name="glass_capillary_corrected_surface_tension",
    flow_time_inputs=("t",),
    positive_inputs=("C", "t", "g1", "g2", "h", "r_u", "r_l", "rho_c", "rho_x"),
    title="Glass capillary viscometer with gravity, tilt, bath-temperature and surface-tension "
    "corrections",
    expression=(_corrected_core * _surface * t - E / t**2) * (1 - alpha * dT),
    input_names=_SURFACE_NAMES,
    input_units=_pick({**_BASE_UNITS, **_CORRECTION_UNITS, **_SURFACE_UNITS}, _SURFACE_NAMES),
    input_descriptions=_pick(
        {**_BASE_DESCRIPTIONS, **_CORRECTION_DESCRIPTIONS, **_SURFACE_DESCRIPTIONS}, _SURFACE_NAMES
    ),
    output_name="nu",
    output_unit="m^2/s",
    references=_CORRECTED_REFERENCES
    + (
        "ISO 3105 / ASTM D446: surface-tension correction C_x = C_c[1 + (2/(g h))(1/r_u − 1/r_l)"
        "(σ_c/ρ_c − σ_x/ρ_x)] (form from memory; derived from the meniscus pressures 2σ/R)",
    ),
    validity=_VALIDITY
    + " Corrections small; the surface-tension factor is first order in S (|S| ≪ 1).",
    context_keys={k: v for k, v in _CONTEXT.items() if not k.startswith("g_")},
    checker=_check_corrected,
)


# ============================================================ temperature of the constant
_THERMAL_UNITS = {"alpha_g": "1/K", "dT_c": "K"}
_THERMAL_DESCRIPTIONS = {
    "alpha_g": "glass_expansion_coefficient: linear thermal expansion coefficient of the "
    "viscometer glass (borosilicate ≈ 3.3e-6 1/K, from memory)",
    "dT_c": "constant_temperature_difference: test temperature minus the temperature at which "
    "the constant was determined (a difference; K or delta_degC)",
}
_CHARGE_UNITS = {"V_c": "m^3", "beta": "1/K", "dT_f": "K", "A_l": "m^2", "h": "m"}
_CHARGE_DESCRIPTIONS = {
    "V_c": "charge_volume: volume of the fixed charge at the filling temperature",
    "beta": "liquid_expansion_coefficient: volumetric thermal expansion coefficient of the "
    "test liquid relative to the glass (β_liquid − 3 α_g)",
    "dT_f": "filling_temperature_difference: test minus filling temperature, less the same "
    "difference at calibration (K or delta_degC)",
    "A_l": "lower_reservoir_area: cross-section of the lower reservoir at the meniscus",
    "h": "driving_head: mean driving head of the viscometer",
}


def glass_expansion_factor(expansion_coefficient: float, temperature_difference: float) -> float:
    """Factor C(T)/C(T_c) = 1 + α_g ΔT_c of a glass viscometer's constant.

    Parameters
    ----------
    expansion_coefficient : float
        Linear thermal expansion coefficient α_g of the glass [1/K].
    temperature_difference : float
        ΔT_c, test temperature minus the temperature of the constant [K].

    Returns
    -------
    float
        1 + α_g ΔT_c [1].

    Notes
    -----
    C = π g r⁴ h/(8 L V) with every length scaled by (1 + α_g ΔT_c) and V by its cube gives
    C ∝ (1 + α_g ΔT_c)^(4+1−1−3), first order (derived in the module docstring; the effect is
    stated in ISO 3105 / ASTM D446 — from memory).

    Examples
    --------
    >>> round(glass_expansion_factor(3.3e-6, 60.0), 6)  # borosilicate, 20 °C → 80 °C
    1.000198
    """
    return 1.0 + expansion_coefficient * temperature_difference


def charge_volume_factor(
    charge_volume: float,
    liquid_expansion_coefficient: float,
    filling_temperature_difference: float,
    lower_reservoir_area: float,
    driving_head: float,
) -> float:
    """Factor C/C_cal = 1 − V_c β ΔT_f/(A_l h) of a fixed-charge viscometer.

    Parameters
    ----------
    charge_volume : float
        V_c [m³].
    liquid_expansion_coefficient : float
        β, volumetric expansion of the liquid relative to the glass [1/K].
    filling_temperature_difference : float
        ΔT_f, test minus filling temperature less the same at calibration [K].
    lower_reservoir_area : float
        A_l, cross-section of the lower reservoir at the meniscus [m²].
    driving_head : float
        Mean driving head h [m].

    Returns
    -------
    float
        1 − V_c β ΔT_f/(A_l h) [1].

    Notes
    -----
    The expanded charge V_c β ΔT_f lifts the lower meniscus by V_c β ΔT_f/A_l and lowers the
    mean head by as much; C is proportional to the mean head (derived here; ISO 3105 /
    ASTM D446 charging of fixed-volume designs — from memory). First order in the lift over
    h; for a head that falls by Δh during the timing, integrating the efflux gives a
    correction larger by the factor 1 + (Δh/h)²/6 (about 2 % for Δh/h = 1/3; exact analytic
    for a linear fall, checked by integration in the tests).

    Examples
    --------
    >>> round(charge_volume_factor(7e-6, 7e-4, 20.0, 3.1e-4, 0.08), 5)
    0.99605
    """
    change = charge_volume * liquid_expansion_coefficient * filling_temperature_difference
    return 1.0 - change / (lower_reservoir_area * driving_head)


def _check_fixed_charge(method: Method, values: Mapping[str, float]) -> list[str]:
    out = _check_corrected(method, values)
    f = charge_volume_factor(
        values["V_c"], values["beta"], values["dT_f"], values["A_l"], values["h"]
    )
    if abs(f - 1.0) > CHARGE_CORRECTION_LIMIT:
        out.append(
            f"charge-volume correction changes the constant by {100 * (f - 1):+.3g} %, more "
            f"than {100 * CHARGE_CORRECTION_LIMIT:g} % (our default, no source): the viscometer "
            "was charged far from its test temperature; recharge it at the test temperature "
            "(ISO 3105 / ASTM D446 charging instructions, from memory)"
        )
    return out


_THERMAL_NAMES = _CORRECTED_NAMES + tuple(_THERMAL_UNITS)
_thermal_core = _corrected_core * (1 + alpha_g * dT_c)
_THERMAL_REFERENCES = _CORRECTED_REFERENCES + (
    "Constant of a glass viscometer at another temperature: C(T) = C(T_c)(1 + α_g ΔT_c), "
    "derived from C = π g r⁴ h/(8 L V) with isotropic glass expansion; the effect is stated "
    "in ISO 3105 / ASTM D446 (from memory)",
)

GLASS_CAPILLARY_THERMAL_EXPANSION = Method(
    name="glass_capillary_thermal_expansion",
    flow_time_inputs=("t",),
    positive_inputs=("C", "t", "g1", "g2"),
    title="Glass capillary viscometer with gravity, tilt, bath-temperature corrections and the "
    "glass expansion of the constant",
    expression=(_thermal_core * t - E / t**2) * (1 - alpha * dT),
    input_names=_THERMAL_NAMES,
    input_units=_pick({**_BASE_UNITS, **_CORRECTION_UNITS, **_THERMAL_UNITS}, _THERMAL_NAMES),
    input_descriptions=_pick(
        {**_BASE_DESCRIPTIONS, **_CORRECTION_DESCRIPTIONS, **_THERMAL_DESCRIPTIONS}, _THERMAL_NAMES
    ),
    output_name="nu",
    output_unit="m^2/s",
    references=_THERMAL_REFERENCES,
    validity=_VALIDITY + " Corrections small; the glass expands isotropically with a constant "
    "α_g over ΔT_c (first order in α_g ΔT_c); a suspended-level design or a charge filled at "
    "the test temperature (else use glass_capillary_fixed_charge).",
    context_keys={k: v for k, v in _CONTEXT.items() if not k.startswith("g_")},
    checker=_check_corrected,
)

_CHARGE_NAMES = _THERMAL_NAMES + tuple(_CHARGE_UNITS)

GLASS_CAPILLARY_FIXED_CHARGE = Method(
    name="glass_capillary_fixed_charge",
    flow_time_inputs=("t",),
    positive_inputs=("C", "t", "g1", "g2", "A_l", "h"),
    title="Fixed-charge glass capillary viscometer with gravity, tilt, bath-temperature, glass "
    "expansion and charge-volume corrections",
    expression=(_thermal_core * (1 - V_c * beta * dT_f / (A_l * h)) * t - E / t**2)
    * (1 - alpha * dT),
    input_names=_CHARGE_NAMES,
    input_units=_pick(
        {**_BASE_UNITS, **_CORRECTION_UNITS, **_THERMAL_UNITS, **_CHARGE_UNITS}, _CHARGE_NAMES
    ),
    input_descriptions=_pick(
        {
            **_BASE_DESCRIPTIONS,
            **_CORRECTION_DESCRIPTIONS,
            **_THERMAL_DESCRIPTIONS,
            **_CHARGE_DESCRIPTIONS,
        },
        _CHARGE_NAMES,
    ),
    output_name="nu",
    output_unit="m^2/s",
    references=_THERMAL_REFERENCES
    + (
        "Fixed-charge designs: C = C_cal(1 − V_c β ΔT_f/(A_l h)), derived from the rise of "
        "the lower meniscus by the expanded charge; charging of fixed-volume designs in "
        "ISO 3105 / ASTM D446 (from memory)",
    ),
    validity=_VALIDITY + " Corrections small; the expanded charge stays in the lower "
    "reservoir, of cross-section A_l over the meniscus's travel; the charge-volume factor "
    f"within {100 * CHARGE_CORRECTION_LIMIT:g} % of 1 (our default).",
    context_keys={k: v for k, v in _CONTEXT.items() if not k.startswith("g_")},
    checker=_check_fixed_charge,
)
