"""Dilute polymer solutions at one concentration, as built-in models for budget files.

``dilute_relative_viscosity``
    η_rel = (ρ/ρ₀)·(C t − E/t²)/(C t₀ − E/t₀²): the relative viscosity (viscosity ratio) of a
    solution from its flow time and the solvent's in the same viscometer, with the
    kinetic-energy correction of ISO 3105 / ASTM D446 and the density ratio ρ/ρ₀.
``viscosity_number``
    VN = (η_rel − 1)/c with c = w·m/V: the viscosity number (reduced viscosity) of plastics
    standards (ISO 1628-1:2009, clause 3, from memory), from the weighed polymer mass m, its
    dry-mass fraction w and the volume V it is dissolved in.

Both check the relative viscosity against the range where the linear extrapolations are
used (:data:`viscometry.polymer.viscosity.RELATIVE_VISCOSITY_RANGE`, 1.2–2.0, common
practice, no source) and the kinetic-energy term against
:data:`~viscometry.methods.flow_checks.KINETIC_ENERGY_FRACTION_LIMIT`. A whole dilution
series, its extrapolation to [η] and the correlations between its points are the job of
:mod:`viscometry.polymer` (series files, ``viscometry dilute``).
"""

from __future__ import annotations

from collections.abc import Mapping

from viscometry.methods import flow_checks as fc
from viscometry.methods.base import Method, symbols
from viscometry.polymer.viscosity import (
    RELATIVE_VISCOSITY_RANGE,
    relative_viscosity,
    viscosity_number,
)

__all__ = ["DILUTE_RELATIVE_VISCOSITY", "VISCOSITY_NUMBER"]

t, t0, C, E, r_rho, m, w, V = symbols("t t0 C E r_rho m w V")

_UNITS = {
    "t": "s", "t0": "s", "C": "m^2/s^2", "E": "m^2*s", "r_rho": "1", "m": "kg", "w": "1",
    "V": "m^3",
}  # fmt: skip
_DESCRIPTIONS = {
    "t": "flow_time: flow time of the solution",
    "t0": "solvent_flow_time: flow time of the pure solvent in the same viscometer",
    "C": "viscometer_constant: C of ν = C t − E/t² (only its ratio to E matters)",
    "E": "kinetic_energy_constant: E of ν = C t − E/t² (0 for no correction)",
    "r_rho": "density_ratio: density of the solution over that of the solvent (1 when dilute)",
    "m": "polymer_mass: mass of polymer weighed",
    "w": "mass_fraction: dry polymer content of the weighed material",
    "V": "solution_volume: volume the weighed polymer is dissolved in",
}
# The formulas of viscometry.polymer.viscosity, written once, applied to sympy symbols.
_RELATIVE = relative_viscosity(
    t, t0, density_ratio=r_rho, viscometer_constant=C, kinetic_energy_constant=E
)
_REFERENCES = (
    "ISO 1628-1:2009, clause 3: viscosity ratio, viscosity number (from memory)",
    "ISO 3105 / ASTM D446: kinetic-energy correction E/t²",
    "relative viscosity 1.2-2.0 for the linear Huggins/Kraemer forms: common practice, no source",
)


def _check(method: Method, v: Mapping[str, float]) -> list[str]:
    """η_rel within 1.2–2.0 and a small kinetic-energy term in both flow times."""
    c_vis, e_vis = v["C"], v["E"]
    rel = (
        v["r_rho"]
        * (c_vis * v["t"] - e_vis / v["t"] ** 2)
        / (c_vis * v["t0"] - e_vis / v["t0"] ** 2)
    )
    low, high = RELATIVE_VISCOSITY_RANGE
    out = []
    if rel < low or rel > high:
        out.append(
            f"relative viscosity {rel:.4f} is outside {low}–{high}, where the linear Huggins "
            "and Kraemer forms are used (common practice)"
        )
    shorter = min(v["t"], v["t0"])
    out += fc.check_kinetic_energy(e_vis / shorter**2, c_vis * shorter)
    return out


DILUTE_RELATIVE_VISCOSITY = Method(
    name="dilute_relative_viscosity",
    flow_time_inputs=("t", "t0"),
    positive_inputs=("t", "t0", "C", "r_rho"),
    title="Relative viscosity of a dilute solution, η_rel = (ρ/ρ₀)(C t − E/t²)/(C t₀ − E/t₀²)",
    expression=_RELATIVE,
    input_names=("t", "t0", "C", "E", "r_rho"),
    input_units={k: _UNITS[k] for k in ("t", "t0", "C", "E", "r_rho")},
    input_descriptions={k: _DESCRIPTIONS[k] for k in ("t", "t0", "C", "E", "r_rho")},
    output_name="eta_rel",
    output_unit="1",
    references=_REFERENCES,
    validity="solution and solvent timed in the same viscometer at the same temperature; "
    "Newtonian flow at the shear rate of the viscometer; relative viscosity 1.2–2.0 for the "
    "linear extrapolations to [η].",
    checker=_check,
)

VISCOSITY_NUMBER = Method(
    name="viscosity_number",
    flow_time_inputs=("t", "t0"),
    positive_inputs=("t", "t0", "C", "r_rho", "m", "w", "V"),
    title="Viscosity number VN = (η_rel − 1)/c of a polymer solution, c = w m/V",
    expression=viscosity_number(_RELATIVE, w * m / V),
    input_names=("t", "t0", "C", "E", "r_rho", "m", "w", "V"),
    input_units=_UNITS,
    input_descriptions=_DESCRIPTIONS,
    output_name="VN",
    output_unit="m^3/kg",
    references=_REFERENCES,
    validity="one concentration; the same conditions as dilute_relative_viscosity; the "
    "standard for the plastic fixes the solvent, concentration and temperature.",
    checker=_check,
)
