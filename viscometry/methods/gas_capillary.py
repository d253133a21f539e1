"""Gas capillary viscometer: compressible (isothermal) Poiseuille flow.

``gas_capillary``
    η = π r⁴ (p₁² − p₂²) t / (16 L p₂ V₂)
``gas_capillary_slip``
    η = π r⁴ (p₁² − p₂²) t (1 + 4 ξ/r) / (16 L p₂ V₂)
``gas_capillary_compressible``
    η = π r⁴ (p₁² − p₂²) t / (16 L p₂ V₂) − (β ln(p₁/p₂) + m) ρ₂ V₂ / (8 π L t),
    ρ₂ = p₂ M / (R T), R = N_A·k exact (the input ``R_gas``)

A gas flows isothermally through a capillary of radius r and length L from the inlet pressure
p₁ to the outlet pressure p₂; V₂ is the volume collected in the time t, measured at p₂. The
mass flow is constant along the tube while the density ∝ p, which integrates to the
(p₁² − p₂²)/(2 p₂) of the equation. For small Δp = p₁ − p₂ it becomes the incompressible
Hagen-Poiseuille law η = π r⁴ Δp t / (8 L V₂).

Slip: with Maxwell's first-order slip boundary condition the flow rate at pressure p grows by
(1 + 4ξ(p)/r), ξ the slip length (≈ the mean free path λ for diffuse reflection); as ξ ∝ 1/p
the integral along the tube gives the factor (1 + 4ξ/r) with ξ evaluated at the mean pressure
(p₁ + p₂)/2. Valid in the slip regime, Knudsen number Kn = λ/d ≲ 0.1.

Gas acceleration and entrance kinetic energy (``gas_capillary_compressible``): as the pressure
falls along the tube the gas expands and speeds up, and the pressure must also supply that
momentum. The one-dimensional, isothermal momentum balance of an ideal gas (molar mass M,
temperature T, ρ = p M/(RT)) with mass flow ṁ through the section A = π r²,

    A dp/dx + β ṁ dū/dx + 8 π η ū = 0,   ū = ṁ R T / (M p A),

assumes that the velocity profile is the fully developed parabolic (Poiseuille) profile at
every section: the wall friction is then 8πηū per unit length and the momentum flux through a
section is β ṁ ū with β = ∫u² dA / (A ū²) = 4/3 (exact for the parabola; β = 1 for a flat
profile). Multiplied by p it integrates exactly from p₁ to p₂ (with ṁRT/M = p₂V₂/t):

    η = π r⁴ (p₁² − p₂²) t / (16 L p₂ V₂) − β ln(p₁/p₂) ρ₂ V₂ / (8 π L t).

The gas also gains kinetic energy where it enters the capillary from the wide inlet volume:
the pressure at the inlet plane is p₁ − m ρ₁ ū₁², m the entrance (Hagenbach) coefficient,
≈ 1.1-1.2 for liquids (from memory). To first order in m ρ₁ū₁²/p₁ this subtracts the same
m ρ₂ V₂ / (8 π L t) as for a liquid, with the density at the outlet (ρ₁ū₁² p₁ = ρ₂ū₂² p₂);
the second order is left out (nitrogen, r = 0.1 mm, L = 100 mm, 150 → 101.325 kPa, m = 1.1:
entrance term 3.7 % of η, the model 0.025 % below the integrated balance).
β and m are inputs, so that their uncertainties enter the budget. With β = m = 0 the model is
``gas_capillary``; for a small pressure drop it becomes the incompressible Hagen-Poiseuille law
with Hagenbach's correction. :func:`compressible_correction_fractions` gives the size of both
terms. The model holds for laminar flow (checked: Reynolds number, transition warned, turbulent
refused), a slow outlet flow (outlet Mach number checked) and the continuum regime (Knudsen
number from η, T and M).

.. caution:: Pressurised gas lines and glass capillaries need the usual precautions; toxic or
   flammable gases need extra ones. Follow local codes and the laboratory's procedures.

References
----------
* O. E. Meyer, Pogg. Ann. 127 (1866) 253 — compressible capillary flow of gases (citation
  from memory).
* J. C. Maxwell, Philos. Trans. R. Soc. 170 (1879) 231 — first-order slip (from memory).
* E. H. Kennard, *Kinetic Theory of Gases* (McGraw-Hill, 1938), ch. VIII — slip in
  capillaries; mean free path from viscosity (from memory).
* A. H. Shapiro, *The Dynamics and Thermodynamics of Compressible Fluid Flow*, vol. 1
  (Ronald, 1953), ch. 6 — one-dimensional isothermal flow with friction (from memory).
* E. Hagenbach, Pogg. Ann. 109 (1860) 385 — kinetic-energy (entrance) correction of
  capillary flow (from memory).
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import sympy as sp

from viscometry.methods import flow_checks as fc
from viscometry.methods.base import Method, symbols

__all__ = [
    "GAS_CAPILLARY",
    "GAS_CAPILLARY_SLIP",
    "GAS_CAPILLARY_COMPRESSIBLE",
    "PARABOLIC_MOMENTUM_FLUX_COEFFICIENT",
    "compressible_correction_fractions",
]

r, p1, p2, t, L, V2, xi = symbols("r p1 p2 t L V2 xi")
T, M, R_gas, beta, m = symbols("T M R_gas beta m")

#: β = ∫u² dA / (A ū²) of the parabolic (Poiseuille) profile: 4/3 (exact analytic).
PARABOLIC_MOMENTUM_FLUX_COEFFICIENT: float = 4.0 / 3.0

_core = sp.pi * r**4 * (p1**2 - p2**2) * t / (16 * L * p2 * V2)
#: Outlet density ρ₂ = p₂ M / (R T) of the ideal gas [kg/m³].
_rho2 = p2 * M / (R_gas * T)
_acceleration = beta * sp.log(p1 / p2) * _rho2 * V2 / (8 * sp.pi * L * t)
_entrance = m * _rho2 * V2 / (8 * sp.pi * L * t)

_UNITS = {"r": "m", "p1": "Pa", "p2": "Pa", "t": "s", "L": "m", "V2": "m^3"}
_DESCRIPTIONS = {
    "r": "capillary_radius: bore radius of the capillary",
    "p1": "inlet_pressure: absolute pressure at the capillary inlet",
    "p2": "outlet_pressure: absolute pressure at the outlet (where V₂ is measured)",
    "t": "flow_time: time to collect the volume V₂",
    "L": "capillary_length: length of the capillary",
    "V2": "outlet_volume: gas volume collected at the outlet pressure p₂",
}
_CONTEXT = {
    "mean_free_path": "mean free path λ at the mean pressure [m], enables the Knudsen check",
    "temperature": "gas temperature T [K]; with molar_mass, λ is estimated from η",
    "molar_mass": "molar mass M [kg/mol]; with temperature, λ is estimated from η",
}


def compressible_correction_fractions(values: Mapping[str, float]) -> tuple[float, float]:
    """Gas-acceleration and entrance terms of ``gas_capillary_compressible``, as fractions.

    Parameters
    ----------
    values : mapping
        SI values of ``r, p1, p2, t, L, V2, T, M, R_gas, beta, m`` (the model's inputs).

    Returns
    -------
    tuple of float
        (β ln(p₁/p₂) ρ₂V₂/(8πLt), m ρ₂V₂/(8πLt)), each divided by the corrected result η [1].

    Examples
    --------
    >>> v = {"r": 1e-4, "p1": 150e3, "p2": 101325.0, "t": 100.0, "L": 0.1, "V2": 1.3228e-4,
    ...      "T": 293.15, "M": 0.0280134, "R_gas": 8.314462618, "beta": 4 / 3, "m": 0.0}
    >>> [round(f, 4) for f in compressible_correction_fractions(v)]
    [0.0182, 0.0]
    """
    eta = GAS_CAPILLARY_COMPRESSIBLE.value(values)
    rho2 = values["p2"] * values["M"] / (values["R_gas"] * values["T"])
    per_unit = rho2 * values["V2"] / (8 * math.pi * values["L"] * values["t"]) / eta
    return values["beta"] * math.log(values["p1"] / values["p2"]) * per_unit, values["m"] * per_unit


def _gas_flow_checks(
    eta: float, v: Mapping[str, float], temperature: float, molar_mass: float
) -> list[str]:
    """Reynolds number and outlet Mach number from the outlet density p₂M/(RT)."""
    rho2 = v["p2"] * molar_mass / (fc.MOLAR_GAS_CONSTANT * temperature)
    out = fc.check_flow_regime(fc.capillary_reynolds_number(rho2, v["V2"], v["t"], v["r"], eta))
    outlet_velocity = v["V2"] / (v["t"] * math.pi * v["r"] ** 2)
    sound = math.sqrt(fc.MOLAR_GAS_CONSTANT * temperature / molar_mass)
    return out + fc.check_outlet_mach(outlet_velocity / sound)


def _check(method: Method, v: Mapping[str, float]) -> list[str]:
    out: list[str] = []
    if v["p1"] <= v["p2"]:
        out.append(
            f"inlet pressure {v['p1']:.6g} Pa is not above the outlet pressure {v['p2']:.6g} Pa"
        )
    out += fc.check_length_to_radius(v["L"], v["r"])
    lam = v.get("mean_free_path")
    eta = method.value(v)
    compressible = "beta" in method.input_names
    temp, molar = (v["T"], v["M"]) if compressible else (v.get("temperature"), v.get("molar_mass"))
    if eta <= 0 and not (compressible and v["p1"] > v["p2"]):
        return out
    if eta <= 0:
        return [
            *out,
            f"RESULT NOT VALID: the result {eta:.4g} Pa·s is not positive: the gas-acceleration "
            "and entrance terms exceed the Poiseuille term (the flow is far outside the model)",
        ]
    known = temp is not None and molar is not None
    if lam is None and known and v["p1"] > v["p2"]:
        lam = fc.mean_free_path(eta, 0.5 * (v["p1"] + v["p2"]), temp, molar)
    if lam is not None:
        out += fc.check_knudsen(
            fc.knudsen_number(lam, v["r"]), slip_corrected="xi" in method.input_names
        )
    if known and v["p1"] > v["p2"]:
        out += _gas_flow_checks(eta, v, temp, molar)
        if compressible:
            out += fc.check_compressible_correction(*compressible_correction_fractions(v))
            out += _check_gas_constant(v["R_gas"])
        else:
            out += _neglected_acceleration(eta, v, temp, molar)
    return out


def _check_gas_constant(value: float) -> list[str]:
    """R_gas is exact (N_A·k, 2019 SI): flag a value that differs by more than 1 part in 10⁹."""
    if abs(value / fc.MOLAR_GAS_CONSTANT - 1.0) > 1e-9:
        return [
            f"molar gas constant R_gas = {value:.10g} J/(mol·K) differs from the exact "
            f"{fc.MOLAR_GAS_CONSTANT:.10g} J/(mol·K) (N_A·k, SI Brochure, 9th ed.)"
        ]
    return []


def _neglected_acceleration(
    eta: float, v: Mapping[str, float], temperature: float, molar_mass: float
) -> list[str]:
    """The gas-acceleration term (β = 4/3) a model without it leaves out, if above 1 %."""
    rho2 = v["p2"] * molar_mass / (fc.MOLAR_GAS_CONSTANT * temperature)
    term = PARABOLIC_MOMENTUM_FLUX_COEFFICIENT * math.log(v["p1"] / v["p2"]) * rho2 * v["V2"]
    frac = term / (8 * math.pi * v["L"] * v["t"]) / eta
    if frac > fc.KINETIC_ENERGY_FRACTION_LIMIT:
        return [
            f"the gas-acceleration term this model leaves out is {100 * frac:.3g} % of the result "
            f"(limit {100 * fc.KINETIC_ENERGY_FRACTION_LIMIT:g} %, our default): use "
            "gas_capillary_compressible"
        ]
    return []


_REFERENCES = ("O. E. Meyer, Pogg. Ann. 127 (1866) 253 (from memory): compressible capillary flow",)
_VALIDITY = (
    "Isothermal, laminar, fully developed flow of an ideal gas; L/r large; continuum regime "
    f"(Kn = λ/d below ≈ {fc.KNUDSEN_CONTINUUM_LIMIT:g}, common practice) or, with the slip "
    f"factor, slip regime (Kn ≲ {fc.KNUDSEN_SLIP_LIMIT:g})."
)

GAS_CAPILLARY = Method(
    name="gas_capillary",
    positive_inputs=("r", "p1", "p2", "t", "L", "V2"),
    title="Gas capillary viscometer, compressible Poiseuille flow",
    expression=_core,
    input_names=tuple(_UNITS),
    input_units=_UNITS,
    input_descriptions=_DESCRIPTIONS,
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES,
    validity=_VALIDITY,
    context_keys=_CONTEXT,
    checker=_check,
)

GAS_CAPILLARY_SLIP = Method(
    name="gas_capillary_slip",
    positive_inputs=("r", "p1", "p2", "t", "L", "V2"),
    title="Gas capillary viscometer, compressible Poiseuille flow with first-order slip",
    expression=_core * (1 + 4 * xi / r),
    input_names=(*_UNITS, "xi"),
    input_units={**_UNITS, "xi": "m"},
    input_descriptions={
        **_DESCRIPTIONS,
        "xi": "slip_length: slip length at the mean pressure (≈ mean free path; 0 for no slip)",
    },
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES
    + (
        "J. C. Maxwell, Philos. Trans. R. Soc. 170 (1879) 231 (from memory): first-order slip",
        "E. H. Kennard, Kinetic Theory of Gases (1938), ch. VIII (from memory)",
    ),
    validity=_VALIDITY,
    context_keys=_CONTEXT,
    checker=_check,
)

GAS_CAPILLARY_COMPRESSIBLE = Method(
    name="gas_capillary_compressible",
    positive_inputs=("r", "p1", "p2", "t", "L", "V2", "T", "M", "R_gas"),
    title="Gas capillary viscometer, compressible flow with gas-acceleration and entrance terms",
    expression=_core - _acceleration - _entrance,
    input_names=(*_UNITS, "T", "M", "R_gas", "beta", "m"),
    input_units={**_UNITS, "T": "K", "M": "kg/mol", "R_gas": "J/(mol*K)", "beta": "1", "m": "1"},
    input_descriptions={
        **_DESCRIPTIONS,
        "T": "gas_temperature: temperature of the gas in the capillary (absolute)",
        "M": "molar_mass: molar mass of the gas",
        "R_gas": "molar_gas_constant: R = N_A·k = 8.314462618 J/(mol·K), exact since the 2019 SI "
        "(give it with zero uncertainty)",
        "beta": "momentum_flux_coefficient: ∫u² dA/(A ū²) of the velocity profile "
        "(4/3 parabolic, 1 flat; 0 leaves the gas-acceleration term out)",
        "m": "kinetic_energy_coefficient: entrance (Hagenbach) coefficient m, about 1.1 "
        "(0 leaves the entrance term out)",
    },
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES
    + (
        "A. H. Shapiro, The Dynamics and Thermodynamics of Compressible Fluid Flow, vol. 1 "
        "(1953), ch. 6 (from memory): one-dimensional isothermal flow with friction",
        "E. Hagenbach, Pogg. Ann. 109 (1860) 385 (from memory): entrance kinetic-energy term",
    ),
    validity=_VALIDITY
    + " Velocity profile parabolic at every section (β = 4/3), ideal gas, outlet Mach number "
    f"≤ {fc.OUTLET_MACH_LIMIT:g} (our default); Reynolds number ≤ "
    f"{fc.LAMINAR_REYNOLDS_LIMIT:g} (transition to {fc.TURBULENT_REYNOLDS_LIMIT:g} warned, "
    "turbulent refused; common practice).",
    context_keys={"mean_free_path": _CONTEXT["mean_free_path"]},
    checker=_check,
)
