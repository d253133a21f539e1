"""Dilute-solution viscosity ratios, single-point estimates and the Mark–Houwink law.

Pure, vectorised functions on SI floats (or numpy arrays, complex arrays included: the
extrapolation in :mod:`viscometry.polymer.series` differentiates them by the complex step).
Concentrations are mass concentrations c [kg/m³]; viscosity numbers, reduced, inherent and
intrinsic viscosities are in m³/kg (1 mL/g = 10⁻³ m³/kg, 1 dL/g = 0.1 m³/kg).

=======================================  ===========  ==============================================
threshold                                value        source
=======================================  ===========  ==============================================
:data:`RELATIVE_VISCOSITY_RANGE`         1.2 – 2.0    range where the linear Huggins and Kraemer
                                                      forms are used; common practice, no source
                                                      at hand (polymer-characterisation texts)
=======================================  ===========  ==============================================

References
----------
ISO 1628-1:2009, *Plastics — Determination of the viscosity of polymers in dilute solution
using capillary viscometers — Part 1: General principles*, clause 3 (viscosity ratio,
relative viscosity increment, viscosity number, logarithmic viscosity number, limiting
viscosity number) — from memory.
M. L. Huggins, J. Am. Chem. Soc. 64 (1942) 2716; E. O. Kraemer, Ind. Eng. Chem. 30 (1938)
1200; O. F. Solomon and I. Z. Ciută, J. Appl. Polym. Sci. 6 (1962) 683; F. W. Billmeyer,
J. Polym. Sci. 4 (1949) 83; P. C. Deb and S. R. Chatterjee, Makromol. Chem. 120 (1968) 49
— all from memory.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from viscometry.errors import InputError

__all__ = [
    "RELATIVE_VISCOSITY_RANGE",
    "SINGLE_POINT_FORMS",
    "inherent_viscosity",
    "mark_houwink_molar_mass",
    "reduced_viscosity",
    "relative_viscosity",
    "single_point_intrinsic_viscosity",
    "specific_viscosity",
    "viscosity_number",
]

#: Range of the relative viscosity η_rel where the linear Huggins and Kraemer forms are used
#: (lower, upper) [1]; common practice, no source at hand.
RELATIVE_VISCOSITY_RANGE = (1.2, 2.0)

#: The single-point forms :func:`single_point_intrinsic_viscosity` knows, with their source.
SINGLE_POINT_FORMS = {
    "solomon_ciuta": "Solomon and Ciută, J. Appl. Polym. Sci. 6 (1962) 683 (from memory)",
    "billmeyer": "Billmeyer, J. Polym. Sci. 4 (1949) 83 (from memory)",
    "deb_chatterjee": "Deb and Chatterjee, Makromol. Chem. 120 (1968) 49 (from memory)",
}


def _kinetic_flow_time(flow_time: Any, constant: Any, kinetic_energy_constant: Any) -> Any:
    """t − E/(C t²): the flow time that ν = C t − E/t² makes proportional to ν [s]."""
    return flow_time - kinetic_energy_constant / (constant * flow_time**2)


def relative_viscosity(
    flow_time: Any,
    solvent_flow_time: Any,
    *,
    density_ratio: Any = 1.0,
    viscometer_constant: Any = 1.0,
    kinetic_energy_constant: Any = 0.0,
) -> Any:
    """Relative viscosity (viscosity ratio) η_rel = η/η₀ from flow times.

    Parameters
    ----------
    flow_time : float or array
        Flow time t of the solution [s].
    solvent_flow_time : float or array
        Flow time t₀ of the pure solvent in the same viscometer [s].
    density_ratio : float or array, optional
        ρ/ρ₀, density of the solution over that of the solvent [1]; 1 (default) for the
        usual dilute-solution approximation.
    viscometer_constant : float or array, optional
        C of ν = C t − E/t² [m²/s²]; only its ratio to E matters.
    kinetic_energy_constant : float or array, optional
        E of ν = C t − E/t² [m²·s]; 0 (default) for no kinetic-energy correction.

    Returns
    -------
    float or array
        η_rel [1].

    Notes
    -----
    η_rel = (ρ/ρ₀)·(C t − E/t²)/(C t₀ − E/t₀²); with E = 0 and ρ = ρ₀ it is the flow-time
    ratio t/t₀ (ISO 1628-1:2009, clause 3 and the flow-time approximation it states, from
    memory). The kinetic-energy form is that of ISO 3105 / ASTM D446.

    Examples
    --------
    >>> float(relative_viscosity(150.0, 100.0))
    1.5
    """
    t = _kinetic_flow_time(flow_time, viscometer_constant, kinetic_energy_constant)
    t0 = _kinetic_flow_time(solvent_flow_time, viscometer_constant, kinetic_energy_constant)
    return density_ratio * t / t0


def specific_viscosity(relative: Any) -> Any:
    """Specific viscosity (relative viscosity increment) η_sp = η_rel − 1 [1].

    Examples
    --------
    >>> round(float(specific_viscosity(1.25)), 12)
    0.25
    """
    return relative - 1


def reduced_viscosity(relative: Any, concentration: Any) -> Any:
    """Reduced viscosity η_sp/c [m³/kg] from η_rel [1] and c [kg/m³].

    The viscosity number of ISO 1628-1:2009, clause 3 (from memory) is the same quantity,
    stated in mL/g; see :func:`viscosity_number`.

    Examples
    --------
    >>> round(float(reduced_viscosity(1.25, 5.0)), 12)  # 5 kg/m³ = 0.5 g/dL → 0.05 m³/kg
    0.05
    """
    return (relative - 1) / concentration


def viscosity_number(relative: Any, concentration: Any) -> Any:
    """Viscosity number VN = (η − η₀)/(η₀ c) [m³/kg] (ISO 1628-1:2009, clause 3, from memory).

    Plastics standards state it in mL/g: multiply the result by 1000.

    Examples
    --------
    >>> round(float(viscosity_number(1.25, 5.0)) * 1000, 9)  # mL/g
    50.0
    """
    return reduced_viscosity(relative, concentration)


def inherent_viscosity(relative: Any, concentration: Any) -> Any:
    """Inherent viscosity (logarithmic viscosity number) ln(η_rel)/c [m³/kg].

    Examples
    --------
    >>> round(float(inherent_viscosity(np.e, 10.0)), 12)
    0.1
    """
    return np.log(relative) / concentration


def single_point_intrinsic_viscosity(relative: Any, concentration: Any, form: str) -> Any:
    """An estimate of [η] from one concentration [m³/kg].

    Parameters
    ----------
    relative : float or array
        η_rel at the concentration [1].
    concentration : float or array
        c [kg/m³].
    form : {"solomon_ciuta", "billmeyer", "deb_chatterjee"}
        Which published single-point form (:data:`SINGLE_POINT_FORMS`).

    Returns
    -------
    float or array
        [η] [m³/kg].

    Notes
    -----
    With η_sp = η_rel − 1:

    * Solomon–Ciută: [η] = √(2(η_sp − ln η_rel))/c;
    * Billmeyer: [η] = (η_sp + 3 ln η_rel)/(4c);
    * Deb–Chatterjee: [η] = (3 ln η_rel + 1.5 η_sp² − 3 η_sp)^(1/3)/c.

    For data following the Huggins law η_sp/c = [η] + k_H[η]²c, a series expansion gives the
    bias of each form to first order in c as (k_H − k*)[η]²c with k* = 1/3, 3/8 and 1/4
    respectively (exact analytic), so each is unbiased near c = 0.

    Examples
    --------
    >>> round(float(single_point_intrinsic_viscosity(1.0 + 1e-4, 1.0, "solomon_ciuta")), 6)
    0.0001
    """
    sp = relative - 1.0
    ln = np.log(relative)
    if form == "solomon_ciuta":
        return np.sqrt(2.0 * (sp - ln)) / concentration
    if form == "billmeyer":
        return (sp + 3.0 * ln) / (4.0 * concentration)
    if form == "deb_chatterjee":
        return (3.0 * ln + 1.5 * sp**2 - 3.0 * sp) ** (1.0 / 3.0) / concentration
    raise InputError(f"form must be one of {', '.join(SINGLE_POINT_FORMS)}, got {form!r}")


def mark_houwink_molar_mass(intrinsic: Any, k_constant: Any, exponent: Any) -> Any:
    """Viscosity-average molar mass from [η] = K·M^a: M = ([η]/K)^(1/a) [g/mol].

    Parameters
    ----------
    intrinsic : float or array
        [η] [m³/kg].
    k_constant : float or array
        K of the Mark–Houwink law, for M in g/mol [m³/kg].
    exponent : float or array
        a [1].

    Returns
    -------
    float or array
        M, the number of grams per mole (the constants are fitted to M in g/mol) [g/mol].

    Examples
    --------
    >>> round(float(mark_houwink_molar_mass(0.1, 1e-5, 0.5)), 6)  # (10⁴)² = 10⁸
    100000000.0
    """
    return (intrinsic / k_constant) ** (1.0 / exponent)
