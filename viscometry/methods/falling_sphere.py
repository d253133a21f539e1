"""Falling-sphere viscometer (Stokes' law with Faxén's wall correction).

``falling_sphere``
    η = 2 r² g (ρ_s − ρ_f) t / (9 s) · K(r/R),
    K(x) = 1 − 2.104 x + 2.09 x³ − 0.95 x⁵,
``falling_sphere_stokes``
    η = 2 r² g (ρ_s − ρ_f) t / (9 s) (unbounded liquid, K = 1).

A sphere of radius r falls the distance s in the time t (terminal velocity v = s/t) on the
axis of a tube of radius R. The wall slows it: v = K·v_∞ with Faxén's series K(d/D), d/D = r/R,
so η = 2 r² g Δρ / (9 v_∞) = 2 r² g Δρ K / (9 v). The series is for a sphere on the axis, at
low Reynolds number, far from the ends of the tube.

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
"""

from __future__ import annotations

from collections.abc import Mapping

import sympy as sp

from viscometry.methods import flow_checks as fc
from viscometry.methods.base import Method, symbols

__all__ = [
    "FAXEN_COEFFICIENTS",
    "faxen_wall_factor",
    "FALLING_SPHERE",
    "FALLING_SPHERE_STOKES",
]

#: Faxén's series K(x) = 1 + Σ a_k x^k for a sphere on the axis of a cylinder, x = d/D:
#: {exponent: coefficient} (from memory; Happel & Brenner 1965, ch. 7).
FAXEN_COEFFICIENTS: dict[int, float] = {1: -2.104, 3: 2.09, 5: -0.95}

r, g, rho_s, rho_f, s, t, R = symbols("r g rho_s rho_f s t R")


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
        re = fc.particle_reynolds_number(v["rho_f"], v["s"] / v["t"], v["r"], eta)
        out += fc.check_particle_reynolds(re)
    if "R" in method.input_names:
        out += fc.check_wall_ratio(v["r"] / v["R"])
    return out


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
    checker=_check,
)
