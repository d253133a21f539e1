"""Falling-sphere viscometer (Stokes' law with Faxén's wall correction).

``falling_sphere``
    η = 2 r² g (ρ_s − ρ_f) t / (9 s) · K(r/R),
    K(x) = 1 − 2.104 x + 2.09 x³ − 0.95 x⁵,
``falling_sphere_stokes``
    η = 2 r² g (ρ_s − ρ_f) t / (9 s) (unbounded liquid, K = 1).
``falling_sphere_haberman_sayre``
    η = 2 r² g (ρ_s − ρ_f) t / (9 s) · K_HS(x) · (1 + δ_w),
    K_HS(x) = (1 − 2.105 x + 2.0865 x³ − 1.7068 x⁵ + 0.72603 x⁶) / (1 − 0.75857 x⁵).

A sphere of radius r falls the distance s in the time t (terminal velocity v = s/t) on the
axis of a tube of radius R. The wall slows it: v = K·v_∞ with Faxén's series K(d/D), d/D = r/R,
so η = 2 r² g Δρ / (9 v_∞) = 2 r² g Δρ K / (9 v). The series is for a sphere on the axis, at
low Reynolds number, far from the ends of the tube.

The three-term series is 0.22 % above the Haberman-Sayre closed form at x = 0.3 (and 1.2 % at
0.4). ``falling_sphere_haberman_sayre`` uses that closed form instead, which agrees with
Bohlin's longer series (terms to x¹⁰) within 0.02 % up to x = 0.3 and within 1 % up to 0.5
(its range here, :data:`~viscometry.methods.flow_checks.HABERMAN_WALL_RATIO_LIMIT`); the input
δ_w (estimate 0) carries the wall model's own uncertainty into the budget —
:func:`wall_model_spread` gives the spread between the two forms as a guide.

Checks (all three models): ρ_s > ρ_f; particle Reynolds number ρ_f v d/η ≤ 0.1 (Oseen's
correction ≈ 3Re/16 quoted) and, above 1, a "result not valid"; with the context keys
``release_distance`` the distance needed to reach terminal velocity (Stokes drag with added
mass, :func:`~viscometry.methods.flow_checks.terminal_velocity_distance`) against the position
of the first mark, and ``bottom_distance`` / ``surface_distance`` the end effect (Lorentz /
Brenner first-order estimate, :func:`~viscometry.methods.flow_checks.end_effect_estimate`)
against 1 %. The model itself makes no end correction: it limits it by the check.

.. caution:: Dense spheres in hot or solvent-based liquids, and glass tubes, need the usual
   laboratory precautions; follow local codes and the laboratory's procedures.

References
----------
* G. G. Stokes, Trans. Cambridge Philos. Soc. 9 (1851) 8 — drag 6πηrv on a sphere (from
  memory).
* H. Faxén, doctoral dissertation, Uppsala (1921), and Ark. Mat. Astron. Fys. 17 (1923) —
  wall correction 1 − 2.104 x + 2.09 x³ − 0.95 x⁵ for a sphere on the axis of a cylinder
  (coefficients from memory; as quoted in J. Happel and H. Brenner, *Low Reynolds Number
  Hydrodynamics*, 1965, ch. 7).
* C. W. Oseen (1910): first inertial correction of the drag, ≈ 3Re/16 (from memory), used for
  the particle Reynolds-number check.
* W. L. Haberman and R. M. Sayre, David Taylor Model Basin Report 1143 (1958) — closed-form
  wall factor for a sphere on the axis of a cylinder (coefficients from memory).
* B. Bohlin, Trans. Chalmers Univ. Technol. 233 (1960) — Faxén's series continued to x¹⁰
  (coefficients from memory; as quoted by Happel & Brenner, ch. 7).
"""

from __future__ import annotations

from collections.abc import Mapping

import sympy as sp

from viscometry.methods import flow_checks as fc
from viscometry.methods.base import Method, symbols

__all__ = [
    "FAXEN_COEFFICIENTS",
    "faxen_wall_factor",
    "HABERMAN_SAYRE_NUMERATOR",
    "HABERMAN_SAYRE_DENOMINATOR",
    "haberman_sayre_wall_factor",
    "BOHLIN_COEFFICIENTS",
    "bohlin_wall_factor",
    "wall_model_spread",
    "FALLING_SPHERE_HABERMAN_SAYRE",
    "FALLING_SPHERE",
    "FALLING_SPHERE_STOKES",
]

#: Faxén's series K(x) = 1 + Σ a_k x^k for a sphere on the axis of a cylinder, x = d/D:
#: {exponent: coefficient} (from memory; Happel & Brenner 1965, ch. 7).
FAXEN_COEFFICIENTS: dict[int, float] = {1: -2.104, 3: 2.09, 5: -0.95}

#: Haberman-Sayre closed form K(x) = (1 + Σ a_k x^k) / (1 + Σ b_k x^k), x = d/D: numerator
#: and denominator {exponent: coefficient} (from memory; Haberman & Sayre 1958, DTMB 1143).
HABERMAN_SAYRE_NUMERATOR: dict[int, float] = {1: -2.105, 3: 2.0865, 5: -1.7068, 6: 0.72603}
HABERMAN_SAYRE_DENOMINATOR: dict[int, float] = {5: -0.75857}

#: Bohlin's continuation of Faxén's series, K(x) = 1 + Σ a_k x^k (from memory; Bohlin 1960, as
#: quoted by Happel & Brenner 1965, ch. 7).
BOHLIN_COEFFICIENTS: dict[int, float] = {
    1: -2.10444,
    3: 2.08877,
    5: -0.94813,
    6: -1.372,
    8: 3.87,
    10: -4.19,
}

r, g, rho_s, rho_f, s, t, R, dw = symbols("r g rho_s rho_f s t R delta_w")


def faxen_wall_factor(ratio: float) -> float:
    """Faxén's wall factor K(x) = v/v_∞ for a sphere on a cylinder's axis, x = d/D [1].

    Examples
    --------
    >>> faxen_wall_factor(0.0)
    1.0
    >>> round(faxen_wall_factor(0.1), 5)
    0.79168
    """
    return 1.0 + sum(a * ratio**k for k, a in FAXEN_COEFFICIENTS.items())


def haberman_sayre_wall_factor(ratio: float) -> float:
    """Haberman-Sayre wall factor K(x) = v/v_∞ for a sphere on a cylinder's axis, x = d/D [1].

    Parameters
    ----------
    ratio : float or array
        x = d/D, sphere-to-tube diameter ratio [1].

    Returns
    -------
    float or array
        K = (1 − 2.105 x + 2.0865 x³ − 1.7068 x⁵ + 0.72603 x⁶) / (1 − 0.75857 x⁵) [1].

    Notes
    -----
    W. L. Haberman and R. M. Sayre, DTMB Report 1143 (1958), the drag factor for a sphere
    moving along the axis of a cylinder (from memory); K is the reciprocal of their drag factor.
    It agrees with Bohlin's series within 0.02 % for x ≤ 0.3 (see :func:`wall_model_spread`).

    Examples
    --------
    >>> haberman_sayre_wall_factor(0.0)
    1.0
    >>> round(haberman_sayre_wall_factor(0.3), 6)
    0.421995
    """
    num = 1.0 + sum(a * ratio**k for k, a in HABERMAN_SAYRE_NUMERATOR.items())
    den = 1.0 + sum(b * ratio**k for k, b in HABERMAN_SAYRE_DENOMINATOR.items())
    return num / den


def bohlin_wall_factor(ratio: float) -> float:
    """Bohlin's series K(x) = 1 − 2.10444 x + … − 4.19 x¹⁰ for a sphere on a cylinder's axis [1].

    Examples
    --------
    >>> round(bohlin_wall_factor(0.3), 5)
    0.42199
    """
    return 1.0 + sum(a * ratio**k for k, a in BOHLIN_COEFFICIENTS.items())


def wall_model_spread(ratio: float) -> float:
    """|K_Bohlin / K_HS − 1|: the spread of two published wall factors at x = d/D [1].

    A guide for the standard uncertainty of ``delta_w`` (e.g. the spread taken as the
    half-width of a rectangular distribution, plus the lab's own allowance for an off-axis
    sphere); it grows quickly above x ≈ 0.3.

    Examples
    --------
    >>> f"{wall_model_spread(0.3):.1e}"
    '1.3e-05'
    >>> round(wall_model_spread(0.5), 4)
    0.0089
    """
    return abs(bohlin_wall_factor(ratio) / haberman_sayre_wall_factor(ratio) - 1.0)


def _haberman_sayre_expr(x: sp.Expr) -> sp.Expr:
    num = 1 + sum(sp.Float(a, 15) * x**k for k, a in HABERMAN_SAYRE_NUMERATOR.items())
    den = 1 + sum(sp.Float(b, 15) * x**k for k, b in HABERMAN_SAYRE_DENOMINATOR.items())
    return num / den


def _faxen_expr(x: sp.Expr) -> sp.Expr:
    return 1 + sum(sp.Float(a, 15) * x**k for k, a in FAXEN_COEFFICIENTS.items())


_stokes = 2 * r**2 * g * (rho_s - rho_f) * t / (9 * s)

_UNITS = {
    "r": "m",
    "g": "m/s^2",
    "rho_s": "kg/m^3",
    "rho_f": "kg/m^3",
    "s": "m",
    "t": "s",
    "R": "m",
}
_DESCRIPTIONS = {
    "r": "sphere_radius: radius of the sphere",
    "g": "local_gravity: local acceleration of gravity",
    "rho_s": "sphere_density: density of the sphere",
    "rho_f": "fluid_density: density of the liquid",
    "s": "fall_distance: distance between the timing marks",
    "t": "fall_time: time to fall the distance s",
    "R": "tube_radius: inner radius of the tube",
}


def _check(method: Method, v: Mapping[str, float]) -> list[str]:
    eta = method.value(v)
    out: list[str] = []
    if v["rho_s"] <= v["rho_f"]:
        out.append(
            f"sphere density {v['rho_s']:.6g} kg/m³ is not above the liquid's "
            f"{v['rho_f']:.6g} kg/m³: the sphere does not fall"
        )
    if eta > 0 and v["t"] > 0:
        velocity = v["s"] / v["t"]
        re = fc.particle_reynolds_number(v["rho_f"], velocity, v["r"], eta)
        out += fc.check_oseen_limit(re) or fc.check_particle_reynolds(re)
        if "release_distance" in v and v["rho_s"] > v["rho_f"]:
            need = fc.terminal_velocity_distance(velocity, v["r"], v["rho_s"], v["rho_f"], eta)
            out += fc.check_terminal_velocity(need, v["release_distance"])
    out += fc.check_end_effects(v["r"], v.get("bottom_distance"), v.get("surface_distance"))
    if "delta_w" in method.input_names:
        out += fc.check_wall_ratio(
            v["r"] / v["R"], fc.HABERMAN_WALL_RATIO_LIMIT, "the Haberman-Sayre wall factor"
        )
    elif "R" in method.input_names:
        out += fc.check_wall_ratio(v["r"] / v["R"])
    return out


_CONTEXT = {
    "release_distance": "distance from the release point (sphere at rest) to the first timing "
    "mark [m], enables the terminal-velocity check",
    "bottom_distance": "distance from the lower timing mark to the tube bottom [m], enables the "
    "end-effect check",
    "surface_distance": "distance from the liquid surface to the upper timing mark [m], enables "
    "the end-effect check",
}


_REFERENCES = (
    "G. G. Stokes, Trans. Cambridge Philos. Soc. 9 (1851) 8 (from memory): Stokes' law",
    "C. W. Oseen (1910) (from memory): inertial correction ≈ 3Re/16, for the Reynolds check",
)
_VALIDITY = (
    "Terminal velocity reached; particle Reynolds number small (≲ 0.1, common practice); "
    "sphere on the tube axis far from the ends; Newtonian liquid."
)

FALLING_SPHERE = Method(
    name="falling_sphere",
    positive_inputs=("r", "g", "rho_s", "rho_f", "s", "t", "R"),
    title="Falling-sphere viscometer, Stokes' law with Faxén's wall correction",
    expression=_stokes * _faxen_expr(r / R),
    input_names=tuple(_UNITS),
    input_units=_UNITS,
    input_descriptions=_DESCRIPTIONS,
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES
    + (
        "H. Faxén, Ark. Mat. Astron. Fys. 17 (1923) (from memory), as quoted in Happel & "
        "Brenner, Low Reynolds Number Hydrodynamics (1965), ch. 7: "
        "K = 1 − 2.104 x + 2.09 x³ − 0.95 x⁵, x = d/D",
    ),
    validity=_VALIDITY + f" Diameter ratio d/D ≲ {fc.WALL_RATIO_LIMIT:g} (our default).",
    context_keys=_CONTEXT,
    checker=_check,
)

FALLING_SPHERE_STOKES = Method(
    name="falling_sphere_stokes",
    positive_inputs=("r", "g", "rho_s", "rho_f", "s", "t"),
    title="Falling-sphere viscometer, Stokes' law (unbounded liquid)",
    expression=_stokes,
    input_names=tuple(k for k in _UNITS if k != "R"),
    input_units={k: u for k, u in _UNITS.items() if k != "R"},
    input_descriptions={k: d for k, d in _DESCRIPTIONS.items() if k != "R"},
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES,
    validity=_VALIDITY + " Container much wider than the sphere (else use falling_sphere).",
    context_keys=_CONTEXT,
    checker=_check,
)

FALLING_SPHERE_HABERMAN_SAYRE = Method(
    name="falling_sphere_haberman_sayre",
    positive_inputs=("r", "g", "rho_s", "rho_f", "s", "t", "R"),
    title="Falling-sphere viscometer, Stokes' law with the Haberman-Sayre wall factor",
    expression=_stokes * _haberman_sayre_expr(r / R) * (1 + dw),
    input_names=(*_UNITS, "delta_w"),
    input_units={**_UNITS, "delta_w": "1"},
    input_descriptions={
        **_DESCRIPTIONS,
        "delta_w": "wall_model_error: relative error of the wall factor (estimate 0; its "
        "uncertainty is the wall model's)",
    },
    output_name="eta",
    output_unit="Pa*s",
    references=_REFERENCES
    + (
        "W. L. Haberman and R. M. Sayre, David Taylor Model Basin Report 1143 (1958) (from "
        "memory): K = (1 − 2.105 x + 2.0865 x³ − 1.7068 x⁵ + 0.72603 x⁶)/(1 − 0.75857 x⁵)",
        "B. Bohlin, Trans. Chalmers Univ. Technol. 233 (1960) (from memory), as quoted in "
        "Happel & Brenner (1965), ch. 7: series to x¹⁰, for the wall-model spread",
    ),
    validity=_VALIDITY
    + f" Diameter ratio d/D ≲ {fc.HABERMAN_WALL_RATIO_LIMIT:g} (our default: the closed form "
    "and Bohlin's series agree within 1 % up to it); Oseen limit Re ≤ "
    f"{fc.OSEEN_REYNOLDS_LIMIT:g} (result not valid beyond); end effects checked, not corrected.",
    context_keys=_CONTEXT,
    checker=_check,
)
