"""Gas capillary viscometer: compressible (isothermal) Poiseuille flow.

``gas_capillary``
    η = π r⁴ (p₁² − p₂²) t / (16 L p₂ V₂)
``gas_capillary_slip``
    η = π r⁴ (p₁² − p₂²) t (1 + 4 ξ/r) / (16 L p₂ V₂)

A gas flows isothermally through a capillary of radius r and length L from the inlet pressure
p₁ to the outlet pressure p₂; V₂ is the volume collected in the time t, measured at p₂. The
mass flow is constant along the tube while the density ∝ p, which integrates to the
(p₁² − p₂²)/(2 p₂) of the equation. For small Δp = p₁ − p₂ it becomes the incompressible
Hagen-Poiseuille law η = π r⁴ Δp t / (8 L V₂).

Slip: with Maxwell's first-order slip boundary condition the flow rate at pressure p grows by
(1 + 4ξ(p)/r), ξ the slip length (≈ the mean free path λ for diffuse reflection); as ξ ∝ 1/p
the integral along the tube gives the factor (1 + 4ξ/r) with ξ evaluated at the mean pressure
(p₁ + p₂)/2. Valid in the slip regime, Knudsen number Kn = λ/d ≲ 0.1.

.. caution:: Pressurised gas lines and glass capillaries need the usual precautions; toxic or
   flammable gases need extra ones. Follow local codes and the laboratory's procedures.

References
----------
* O. E. Meyer, Pogg. Ann. 127 (1866) 253 — compressible capillary flow of gases (citation
  from memory).
* J. C. Maxwell, Philos. Trans. R. Soc. 170 (1879) 231 — first-order slip (from memory).
* E. H. Kennard, *Kinetic Theory of Gases* (McGraw-Hill, 1938), ch. VIII — slip in
  capillaries; mean free path from viscosity (from memory).
"""

from __future__ import annotations

from collections.abc import Mapping

import sympy as sp

from viscometry.methods import flow_checks as fc
from viscometry.methods.base import Method, symbols

__all__ = ["GAS_CAPILLARY", "GAS_CAPILLARY_SLIP"]

r, p1, p2, t, L, V2, xi = symbols("r p1 p2 t L V2 xi")

_core = sp.pi * r**4 * (p1**2 - p2**2) * t / (16 * L * p2 * V2)

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


def _check(method: Method, v: Mapping[str, float]) -> list[str]:
    out: list[str] = []
    if v["p1"] <= v["p2"]:
        out.append(
            f"inlet pressure {v['p1']:.6g} Pa is not above the outlet pressure {v['p2']:.6g} Pa"
        )
    out += fc.check_length_to_radius(v["L"], v["r"])
    lam = v.get("mean_free_path")
    eta = method.value(v)
    if lam is None and "temperature" in v and "molar_mass" in v and eta > 0 and v["p1"] > v["p2"]:
        lam = fc.mean_free_path(eta, 0.5 * (v["p1"] + v["p2"]), v["temperature"], v["molar_mass"])
    if lam is not None:
        out += fc.check_knudsen(
            fc.knudsen_number(lam, v["r"]), slip_corrected="xi" in method.input_names
        )
    return out


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
