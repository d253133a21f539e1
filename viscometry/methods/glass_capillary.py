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

References
----------
ISO 3104 (kinematic viscosity: 7.2 gravity, minimum flow time); ISO 3105 and ASTM D446
(glass capillary viscometers: kinetic-energy correction E/t², surface-tension correction);
ASTM D445; E. Hagenbach (1860) for the B/t form.
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
    "surface_tension_factor",
]

C, t, E, B = symbols("C t E B")
g1, g2, theta, alpha, dT = symbols("g1 g2 theta alpha dT")
h, r_u, r_l, sigma_c, rho_c, sigma_x, rho_x = symbols("h r_u r_l sigma_c rho_c sigma_x rho_x")

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
