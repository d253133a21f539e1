"""Pressure-driven absolute capillary viscometer (Hagen-Poiseuille with corrections).

Three variants of one working equation, differing in how the pressure difference and the
radius are obtained:

``pressure_capillary``
    η = π r⁴ Δp t / (8 V (L + n r)) − m ρ V / (8 π (L + n r) t)
``pressure_capillary_manometer``
    the same with Δp = (ρ_m − ρ_air) g h, i.e. ρ_m g h (1 − ρ_air/ρ_m) with the air-buoyancy
    factor (set ρ_air = 0 to leave it out)
``pressure_capillary_mercury_thread``
    the same with the radius from the mass and length of a mercury thread,
    r² = m_Hg / (π ρ_Hg l_Hg); r⁴ then becomes m_Hg² / (π² ρ_Hg² l_Hg²), so the budget shows
    a relative sensitivity 2 on the thread mass where a measured radius has 4.
``pressure_capillary_sample_head``
    the same with the sample's own hydrostatic head added to Δp: the driving pressure goes
    from p₁ = Δp + ρ g (h_s + Δh_s/2) at the start to p₂ = Δp + ρ g (h_s − Δh_s/2) at the end
    of the efflux, and the working equation takes its mean effective value, the logarithmic
    mean p_eff = (p₁ − p₂)/ln(p₁/p₂) = ρ g Δh_s / ln(p₁/p₂) (see :func:`effective_pressure`).

.. caution::
   Mercury is toxic; its vapour and spills are hazardous. Follow local codes, the
   laboratory's own procedures and accredited practice for handling, spill response and
   waste; many laboratories now calibrate capillary bores by other means (optical or
   gravimetric with other liquids). The mercury-thread model is given for evaluating
   existing calibrations as much as for new work.

The first term is the Hagen-Poiseuille law for laminar flow in a tube; ``n`` (the Couette
end correction, of order 0.5 to 1) lengthens the tube to account for the non-developed flow
at its ends and ``m`` (the kinetic-energy or Hagenbach coefficient, about 1.1 to 1.2) accounts
for the kinetic energy of the emerging jet. Both are inputs with uncertainties.

References
----------
* G. Hagen (1839), J. L. M. Poiseuille (1840-1846): the laminar-flow law.
* E. Hagenbach, Ann. Phys. (Poggendorff) 109 (1860) 385: the kinetic-energy term
  (citation from memory).
* M. Couette, Ann. Chim. Phys. (6) 21 (1890) 433: the end correction n r (citation from
  memory).
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import sympy as sp

from viscometry.methods import flow_checks as fc
from viscometry.methods.base import Method, symbols

__all__ = [
    "poiseuille_expression",
    "PRESSURE_CAPILLARY",
    "PRESSURE_CAPILLARY_MANOMETER",
    "PRESSURE_CAPILLARY_MERCURY_THREAD",
    "PRESSURE_CAPILLARY_SAMPLE_HEAD",
    "effective_pressure",
]

_REFERENCES = (
    "Hagen (1839) and Poiseuille (1840-1846): laminar flow in a tube",
    "E. Hagenbach, Ann. Phys. (Poggendorff) 109 (1860) 385 (from memory): kinetic-energy "
    "term m·ρ·V/(8π(L + n r) t)",
    "M. Couette, Ann. Chim. Phys. (6) 21 (1890) 433 (from memory): end correction n·r",
)

_VALIDITY = (
    "Steady, laminar, isothermal flow of an incompressible Newtonian liquid through a straight "
    "capillary of uniform circular bore (Re below ≈ 2000, common practice); end effects small "
    "(L/r large, entrance length short compared with L); the kinetic-energy and end terms are "
    "corrections, not the main effect."
)

r, dp, t, V, L, n, m, rho = symbols("r dp t V L n m rho")
rho_m, g, h, rho_air = symbols("rho_m g h rho_air")
m_Hg, rho_Hg, l_Hg = symbols("m_Hg rho_Hg l_Hg")
h_s, dh_s = symbols("h_s dh_s")


def poiseuille_expression(
    radius: sp.Expr, pressure_difference: sp.Expr, radius_fourth: sp.Expr | None = None
) -> sp.Expr:
    """The corrected Hagen-Poiseuille expression for η in given radius and Δp expressions.

    Parameters
    ----------
    radius : sympy.Expr
        Expression of the capillary radius r [m] (used in the end correction n·r).
    pressure_difference : sympy.Expr
        Expression of Δp [Pa].
    radius_fourth : sympy.Expr, optional
        Expression of r⁴ [m⁴] if simpler than ``radius**4``.

    Returns
    -------
    sympy.Expr
        η = π r⁴ Δp t / (8 V (L + n r)) − m ρ V / (8 π (L + n r) t) [Pa·s].

    Examples
    --------
    >>> r, dp = sp.symbols("r dp", real=True)
    >>> poiseuille_expression(r, dp).free_symbols == set(symbols("r dp t V L n m rho"))
    True
    """
    r4 = radius**4 if radius_fourth is None else radius_fourth
    length = L + n * radius
    return sp.pi * r4 * pressure_difference * t / (8 * V * length) - m * rho * V / (
        8 * sp.pi * length * t
    )


_COMMON_UNITS = {
    "t": "s",
    "V": "m^3",
    "L": "m",
    "n": "1",
    "m": "1",
    "rho": "kg/m^3",
}
_COMMON_DESCRIPTIONS = {
    "t": "flow_time: time for the volume V to flow through the capillary",
    "V": "flow_volume: volume of liquid timed (between the timing marks)",
    "L": "capillary_length: length of the capillary",
    "n": "end_correction_coefficient: Couette end correction n (length L + n·r), typically 0.5-1",
    "m": "kinetic_energy_coefficient: Hagenbach coefficient m, typically 1.1-1.2",
    "rho": "density: density of the liquid at the measurement temperature",
}


def _checks(method: Method, radius: float, values: Mapping[str, float]) -> list[str]:
    eta = method.value(values)
    out: list[str] = []
    ln, vol, tt, dens = values["L"], values["V"], values["t"], values["rho"]
    ke = values["m"] * dens * vol / (8 * math.pi * (ln + values["n"] * radius) * tt)
    out += fc.check_length_to_radius(ln, radius)
    if eta > 0 and dens > 0 and vol > 0 and tt > 0 and radius > 0:
        re = fc.capillary_reynolds_number(dens, vol, tt, radius, eta)
        out += fc.check_reynolds(re)
        out += fc.check_entrance_length(re, radius, ln)
    else:
        out.append(
            f"viscosity {eta:.4g} Pa·s is not positive at the estimates: the kinetic-energy "
            "term exceeds the Poiseuille term"
        )
    out += fc.check_kinetic_energy(ke, eta)
    return out


def _check_direct(method: Method, values: Mapping[str, float]) -> list[str]:
    return _checks(method, values["r"], values)


def _check_thread(method: Method, values: Mapping[str, float]) -> list[str]:
    radius = math.sqrt(values["m_Hg"] / (math.pi * values["rho_Hg"] * values["l_Hg"]))
    return _checks(method, radius, values)


PRESSURE_CAPILLARY = Method(
    name="pressure_capillary",
    positive_inputs=("r", "dp", "t", "V", "L", "rho"),
    title="Pressure-driven absolute capillary viscometer (Hagen-Poiseuille, corrected)",
    expression=poiseuille_expression(r, dp),
    input_names=("r", "dp", "t", "V", "L", "n", "m", "rho"),
    input_units={"r": "m", "dp": "Pa", **_COMMON_UNITS},
    input_descriptions={
        "r": "capillary_radius: mean bore radius of the capillary",
        "dp": "pressure_difference: driving pressure difference across the capillary",
        **_COMMON_DESCRIPTIONS,
    },
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES,
    validity=_VALIDITY,
    checker=_check_direct,
)

PRESSURE_CAPILLARY_MANOMETER = Method(
    name="pressure_capillary_manometer",
    positive_inputs=("r", "rho_m", "g", "h", "t", "V", "L", "rho"),
    title="Pressure-driven capillary, Δp from a liquid manometer (with air buoyancy)",
    expression=poiseuille_expression(r, (rho_m - rho_air) * g * h),
    input_names=("r", "rho_m", "g", "h", "rho_air", "t", "V", "L", "n", "m", "rho"),
    input_units={
        "r": "m",
        "rho_m": "kg/m^3",
        "g": "m/s^2",
        "h": "m",
        "rho_air": "kg/m^3",
        **_COMMON_UNITS,
    },
    input_descriptions={
        "r": "capillary_radius: mean bore radius of the capillary",
        "rho_m": "manometer_liquid_density: density of the manometer liquid",
        "g": "local_gravity: local acceleration of gravity",
        "h": "manometer_height: height difference of the manometer columns",
        "rho_air": "air_density: density of the air above the manometer liquid "
        "(0 leaves the buoyancy factor 1 − ρ_air/ρ_m out)",
        **_COMMON_DESCRIPTIONS,
    },
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES
    + ("Hydrostatics: Δp = ρ_m g h (1 − ρ_air/ρ_m) for a liquid column under air",),
    validity=_VALIDITY + " The manometer reads the pressure difference at the capillary ends.",
    checker=_check_direct,
)

PRESSURE_CAPILLARY_MERCURY_THREAD = Method(
    name="pressure_capillary_mercury_thread",
    positive_inputs=("m_Hg", "rho_Hg", "l_Hg", "dp", "t", "V", "L", "rho"),
    title="Pressure-driven capillary, radius from a mercury thread's mass and length",
    expression=poiseuille_expression(
        sp.sqrt(m_Hg / (sp.pi * rho_Hg * l_Hg)),
        dp,
        radius_fourth=m_Hg**2 / (sp.pi**2 * rho_Hg**2 * l_Hg**2),
    ),
    input_names=("m_Hg", "rho_Hg", "l_Hg", "dp", "t", "V", "L", "n", "m", "rho"),
    input_units={"m_Hg": "kg", "rho_Hg": "kg/m^3", "l_Hg": "m", "dp": "Pa", **_COMMON_UNITS},
    input_descriptions={
        "m_Hg": "thread_mass: mass of the mercury thread in the bore",
        "rho_Hg": "mercury_density: density of mercury at the calibration temperature",
        "l_Hg": "thread_length: length of the mercury thread",
        "dp": "pressure_difference: driving pressure difference across the capillary",
        **_COMMON_DESCRIPTIONS,
    },
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES
    + (
        "Mean bore radius from a mercury thread: r² = m/(π ρ_Hg l) (mass and length of a "
        "thread in a uniform bore)",
    ),
    validity=_VALIDITY
    + " The bore is uniform over the thread's positions (mean radius). CAUTION: mercury is "
    "toxic; follow local codes and the laboratory's procedures; many laboratories now use "
    "alternatives.",
    checker=_check_thread,
)


# ============================================================ the sample's own head
def effective_pressure(
    pressure_difference: float,
    density: float,
    local_gravity: float,
    mean_sample_head: float,
    sample_head_change: float,
) -> float:
    """Mean effective driving pressure with the sample's falling head [Pa].

    Parameters
    ----------
    pressure_difference : float
        Applied Δp across the capillary (gas above the sample minus outlet) [Pa].
    density : float
        ρ of the sample [kg/m³].
    local_gravity : float
        g [m/s²].
    mean_sample_head : float
        h_s, mean height of the sample's free surface above the capillary outlet during the
        timed efflux [m].
    sample_head_change : float
        Δh_s > 0, fall of the free surface during the timed efflux [m].

    Returns
    -------
    float
        p_eff = ρ g Δh_s / ln(p₁/p₂), p₁,₂ = Δp + ρ g (h_s ± Δh_s/2) [Pa].

    Notes
    -----
    With Poiseuille flow Q = k p (k = π r⁴/(8 η L)) and a reservoir of constant
    cross-section A (dh = −Q dt/A), dp/dt = −(ρ g k/A) p, so p falls exponentially and
    t = (A/(ρ g k)) ln(p₁/p₂) while V = A Δh_s; hence V/t = k p_eff with the logarithmic mean
    above (exact for quasi-steady Poiseuille flow, derived here). For Δp = 0 it is the
    logarithmic-mean head of gravity-driven capillaries (common practice, from memory). For
    small Δh_s, p_eff ≈ p̄ − (ρ g Δh_s)²/(12 p̄), p̄ = Δp + ρ g h_s.

    Examples
    --------
    >>> round(effective_pressure(0.0, 1000.0, 9.81, 0.1, 0.01), 2)  # p̄ = 981 Pa, 0.08 % lower
    980.18
    """
    rgd = density * local_gravity * sample_head_change
    p_mean = pressure_difference + density * local_gravity * mean_sample_head
    return rgd / math.log((p_mean + rgd / 2.0) / (p_mean - rgd / 2.0))


def _check_sample_head(method: Method, values: Mapping[str, float]) -> list[str]:
    rg = values["rho"] * values["g"]
    p_end = values["dp"] + rg * (values["h_s"] - values["dh_s"] / 2.0)
    if not p_end > 0:
        return [
            f"driving pressure at the end of the efflux Δp + ρ g (h_s − Δh_s/2) = {p_end:.4g} Pa "
            "is not positive: the flow would stop or reverse before the timed volume has run "
            "(the logarithmic mean needs p₁, p₂ > 0)"
        ]
    return _checks(method, values["r"], values)


_p_start = dp + rho * g * (h_s + dh_s / 2)
_p_end = dp + rho * g * (h_s - dh_s / 2)

PRESSURE_CAPILLARY_SAMPLE_HEAD = Method(
    name="pressure_capillary_sample_head",
    positive_inputs=("r", "g", "dh_s", "t", "V", "L", "rho"),
    title="Pressure-driven capillary with the sample's own hydrostatic head (mean effective "
    "head during efflux)",
    expression=poiseuille_expression(r, rho * g * dh_s / sp.log(_p_start / _p_end)),
    input_names=("r", "dp", "h_s", "dh_s", "g", "t", "V", "L", "n", "m", "rho"),
    input_units={"r": "m", "dp": "Pa", "h_s": "m", "dh_s": "m", "g": "m/s^2", **_COMMON_UNITS},
    input_descriptions={
        "r": "capillary_radius: mean bore radius of the capillary",
        "dp": "pressure_difference: driving pressure difference across the capillary "
        "(applied; gas above the sample minus outlet)",
        "h_s": "mean_sample_head: mean height of the sample's free surface above the "
        "capillary outlet during the timed efflux",
        "dh_s": "sample_head_change: fall of the sample's free surface during the timed efflux",
        "g": "local_gravity: local acceleration of gravity",
        **_COMMON_DESCRIPTIONS,
    },
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES
    + (
        "Hydrostatics and quasi-steady Poiseuille flow: driving pressure Δp + ρ g h falling "
        "exponentially during efflux, mean effective value (p₁ − p₂)/ln(p₁/p₂) (derived here; "
        "the logarithmic-mean head of gravity capillaries is common practice, from memory)",
    ),
    validity=_VALIDITY + " The sample's reservoir has a constant cross-section over the "
    "timed efflux (head linear in the volume run out); the driving pressure stays positive; "
    "the kinetic-energy term uses the mean flow rate V/t.",
    checker=_check_sample_head,
)
