"""Flow-regime and procedure checks for viscometer measurement models.

Each ``check_*`` function is pure: it takes SI floats and returns a list of human-readable
warning texts (empty when the check passes), each with the numbers that triggered it. The
``*_number`` and ``*_length`` helpers compute the dimensionless groups. :func:`emit` turns
warning texts into :class:`~viscometry.errors.ValidityWarning` warnings where a caller wants
Python warnings instead of a list.

Threshold convention: a check fires when the value is strictly beyond its limit (above a
maximum or below a minimum); a value exactly at the limit passes.

=====================================  =========  =====================================================
threshold                              default    source
=====================================  =========  =====================================================
:data:`LAMINAR_REYNOLDS_LIMIT`         2000       laminar pipe flow, common practice, no source
:data:`GLASS_VISCOMETER_REYNOLDS_MAX`  100        usual range of glass capillary viscometers (≈ 1-100),
                                                  common practice, no source
:data:`MINIMUM_FLOW_TIME_MANUAL`       200 s      ISO 3104 / ASTM D445 (manual timing)
:data:`KINETIC_ENERGY_FRACTION_LIMIT`  1 %        our default, no source (ISO 3105 / ASTM D446 designs
                                                  make the term negligible above 200 s)
:data:`ENTRANCE_LENGTH_COEFFICIENT`    0.06       laminar entrance length L_e ≈ 0.06 Re d, common
                                                  practice (Langhaar 1942 gives ≈ 0.0575, from memory)
:data:`ENTRANCE_FRACTION_LIMIT`        10 %       our default, no source
:data:`MINIMUM_LENGTH_TO_RADIUS`       100        our default, no source
:data:`GRAVITY_RATIO_TOLERANCE`        0.1 %      ISO 3104, 7.2
:data:`STEP_UP_MAXIMUM_RATIO`          3          ASTM D2162
:data:`TWO_REFERENCE_TOLERANCE`        0.1 %      ASTM D2162
:data:`PARTICLE_REYNOLDS_LIMIT`        0.1        Stokes regime, common practice, no source
:data:`WALL_RATIO_LIMIT`               0.3        our default for Faxén's series, no source
:data:`KNUDSEN_CONTINUUM_LIMIT`        0.01       continuum / slip boundary, common practice
:data:`KNUDSEN_SLIP_LIMIT`             0.1        slip / transition boundary, common practice
:data:`TURBULENT_REYNOLDS_LIMIT`       4000       start of turbulent pipe flow, common practice,
                                                  no source (2000-4000: transition)
:data:`OUTLET_MACH_LIMIT`              0.3        our default, no source (isothermal 1-D gas flow)
:data:`COMPRESSIBLE_CORRECTION_LIMIT`  5 %        our default, no source
:data:`OSEEN_REYNOLDS_LIMIT`           1          our default, no source (Oseen's 3Re/16 itself
                                                  fails beyond)
:data:`HABERMAN_WALL_RATIO_LIMIT`      0.5        our default, no source (Haberman-Sayre and
                                                  Bohlin's series agree within 1 % up to it)
:data:`TERMINAL_VELOCITY_TOLERANCE`    0.1 %      our default, no source
:data:`END_EFFECT_LIMIT`               1 %        our default, no source
=====================================  =========  =====================================================
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Iterable

from viscometry.errors import InputError, ValidityWarning

__all__ = [
    "LAMINAR_REYNOLDS_LIMIT",
    "GLASS_VISCOMETER_REYNOLDS_MAX",
    "MINIMUM_FLOW_TIME_MANUAL",
    "KINETIC_ENERGY_FRACTION_LIMIT",
    "ENTRANCE_LENGTH_COEFFICIENT",
    "ENTRANCE_FRACTION_LIMIT",
    "MINIMUM_LENGTH_TO_RADIUS",
    "GRAVITY_RATIO_TOLERANCE",
    "STEP_UP_MAXIMUM_RATIO",
    "TWO_REFERENCE_TOLERANCE",
    "PARTICLE_REYNOLDS_LIMIT",
    "WALL_RATIO_LIMIT",
    "KNUDSEN_CONTINUUM_LIMIT",
    "KNUDSEN_SLIP_LIMIT",
    "MOLAR_GAS_CONSTANT",
    "TURBULENT_REYNOLDS_LIMIT",
    "OUTLET_MACH_LIMIT",
    "COMPRESSIBLE_CORRECTION_LIMIT",
    "OSEEN_REYNOLDS_LIMIT",
    "HABERMAN_WALL_RATIO_LIMIT",
    "TERMINAL_VELOCITY_TOLERANCE",
    "END_EFFECT_LIMIT",
    "capillary_reynolds_number",
    "particle_reynolds_number",
    "entrance_length",
    "knudsen_number",
    "mean_free_path",
    "check_reynolds",
    "check_entrance_length",
    "check_kinetic_energy",
    "check_flow_time",
    "check_length_to_radius",
    "check_gravity_ratio",
    "check_step_ratio",
    "check_two_reference_constants",
    "check_particle_reynolds",
    "check_wall_ratio",
    "check_knudsen",
    "check_flow_regime",
    "check_outlet_mach",
    "check_compressible_correction",
    "check_oseen_limit",
    "terminal_velocity_distance",
    "check_terminal_velocity",
    "end_effect_estimate",
    "check_end_effects",
    "emit",
]

#: Upper limit of laminar pipe flow, Re ≈ 2000 (common practice, no source).
LAMINAR_REYNOLDS_LIMIT: float = 2000.0
#: Upper end of the usual Reynolds range of glass capillary viscometers, ≈ 1-100
#: (common practice, no source).
GLASS_VISCOMETER_REYNOLDS_MAX: float = 100.0
#: Minimum flow time for manually timed glass capillary viscometers [s]
#: (ISO 3104; ASTM D445 — published, see REFERENCES.md).
MINIMUM_FLOW_TIME_MANUAL: float = 200.0
#: Largest kinetic-energy term, as a fraction of the result, accepted without a warning
#: (our default, no source).
KINETIC_ENERGY_FRACTION_LIMIT: float = 0.01
#: Laminar entrance length L_e = coefficient · Re · d (common practice, no source; Langhaar,
#: J. Appl. Mech. 9 (1942) A55, gives ≈ 0.0575 — from memory).
ENTRANCE_LENGTH_COEFFICIENT: float = 0.06
#: Largest entrance length, as a fraction of the capillary length, accepted without a warning
#: (our default, no source).
ENTRANCE_FRACTION_LIMIT: float = 0.1
#: Smallest capillary length-to-radius ratio L/r accepted without a warning (our default, no
#: source): the end correction n·r then stays a small part of L.
MINIMUM_LENGTH_TO_RADIUS: float = 100.0
#: ISO 3104, 7.2: apply C₂ = (g₂/g₁)·C₁ when g differs by more than 0.1 % (published).
GRAVITY_RATIO_TOLERANCE: float = 1e-3
#: ASTM D2162: successive constants in a step-up chain differ by at most a factor 3 (published).
STEP_UP_MAXIMUM_RATIO: float = 3.0
#: ASTM D2162: constants from two reference liquids are averaged only if they agree within
#: 0.1 % (published).
TWO_REFERENCE_TOLERANCE: float = 1e-3
#: Largest particle Reynolds number for Stokes' law accepted without a warning (common
#: practice, no source); Oseen's first correction to the drag is ≈ 3·Re/16 (from memory).
PARTICLE_REYNOLDS_LIMIT: float = 0.1
#: Largest sphere-to-tube diameter ratio for Faxén's wall-correction series accepted
#: without a warning (our default, no source).
WALL_RATIO_LIMIT: float = 0.3
#: Knudsen number (mean free path / capillary diameter) above which slip matters
#: (common practice, no source).
KNUDSEN_CONTINUUM_LIMIT: float = 0.01
#: Knudsen number above which the first-order slip correction fails (transition regime;
#: common practice, no source).
KNUDSEN_SLIP_LIMIT: float = 0.1

#: Molar gas constant R [J/(mol·K)], exact since the 2019 SI (N_A·k, SI Brochure 9th ed.).
_MOLAR_GAS_CONSTANT = 6.02214076e23 * 1.380649e-23
#: Molar gas constant R = N_A·k [J/(mol·K)], exact (SI Brochure, 9th ed., 2019).
MOLAR_GAS_CONSTANT: float = _MOLAR_GAS_CONSTANT
#: Reynolds number above which pipe flow is taken as turbulent; between
#: :data:`LAMINAR_REYNOLDS_LIMIT` and this it is in transition (common practice, no source).
TURBULENT_REYNOLDS_LIMIT: float = 4000.0
#: Largest outlet Mach number ū₂/√(RT/M) of a gas capillary accepted without a warning (our
#: default, no source): the isothermal one-dimensional model and its closed form need a slow
#: flow (the momentum balance becomes singular at β·ū² = RT/M).
OUTLET_MACH_LIMIT: float = 0.3
#: Largest gas-acceleration plus entrance correction of a gas capillary, as a fraction of the
#: result, accepted without a warning (our default, no source).
COMPRESSIBLE_CORRECTION_LIMIT: float = 0.05
#: Particle Reynolds number beyond which Oseen's first correction itself fails (our default,
#: no source; the drag then needs an empirical correlation).
OSEEN_REYNOLDS_LIMIT: float = 1.0
#: Largest sphere-to-tube diameter ratio for the Haberman-Sayre wall factor accepted without a
#: warning (our default, no source: up to it, the closed form and Bohlin's series agree within
#: 1 %, see :mod:`viscometry.methods.falling_sphere`).
HABERMAN_WALL_RATIO_LIMIT: float = 0.5
#: A falling sphere counts as at terminal velocity once within this fraction of it (our
#: default, no source).
TERMINAL_VELOCITY_TOLERANCE: float = 1e-3
#: Largest end effect on a falling sphere's drag at a timing mark (Lorentz/Brenner estimate,
#: see :func:`end_effect_estimate`) accepted without a warning (our default, no source).
END_EFFECT_LIMIT: float = 0.01


def _positive(value: float, field: str, unit: str) -> float:
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{field} must be a number, got {value!r}") from None
    if not math.isfinite(x) or x <= 0:
        raise InputError(f"{field} must be positive and finite, got {x!r} {unit}".rstrip())
    return x


# ----------------------------------------------------------------------- dimensionless groups
def capillary_reynolds_number(
    density: float, volume: float, flow_time: float, radius: float, dynamic_viscosity: float
) -> float:
    """Reynolds number of the mean flow through a capillary.

    Parameters
    ----------
    density : float
        Liquid density ρ [kg/m³].
    volume : float
        Volume V that flows in ``flow_time`` [m³].
    flow_time : float
        Flow time t [s].
    radius : float
        Capillary radius r [m].
    dynamic_viscosity : float
        η [Pa·s].

    Returns
    -------
    float
        Re = ρ v̄ d / η = 2 ρ V / (π r t η) [1], with v̄ = V/(π r² t) and d = 2r.

    Examples
    --------
    >>> round(capillary_reynolds_number(1000.0, 1e-6, 100.0, 1e-4, 1e-3), 4)
    63.662
    """
    rho = _positive(density, "density", "kg/m³")
    v = _positive(volume, "volume", "m³")
    t = _positive(flow_time, "flow_time", "s")
    r = _positive(radius, "capillary_radius", "m")
    eta = _positive(dynamic_viscosity, "dynamic_viscosity", "Pa·s")
    return 2.0 * rho * v / (math.pi * r * t * eta)


def particle_reynolds_number(
    fluid_density: float, velocity: float, sphere_radius: float, dynamic_viscosity: float
) -> float:
    """Particle Reynolds number Re_p = ρ_f v d / η of a falling sphere (d = 2r).

    Parameters
    ----------
    fluid_density : float
        ρ_f [kg/m³].
    velocity : float
        Fall velocity v [m/s].
    sphere_radius : float
        r [m].
    dynamic_viscosity : float
        η [Pa·s].

    Returns
    -------
    float
        Re_p [1].

    Examples
    --------
    >>> particle_reynolds_number(1000.0, 0.001, 0.0005, 1.0)
    0.001
    """
    rho = _positive(fluid_density, "fluid_density", "kg/m³")
    v = abs(float(velocity))
    r = _positive(sphere_radius, "sphere_radius", "m")
    eta = _positive(dynamic_viscosity, "dynamic_viscosity", "Pa·s")
    return rho * v * 2.0 * r / eta


def entrance_length(
    reynolds: float, radius: float, coefficient: float = ENTRANCE_LENGTH_COEFFICIENT
) -> float:
    """Hydrodynamic entrance length of laminar pipe flow, L_e = coefficient · Re · 2r [m].

    Parameters
    ----------
    reynolds : float
        Re [1].
    radius : float
        Capillary radius r [m].
    coefficient : float
        Default 0.06 (common practice, no source).

    Examples
    --------
    >>> round(entrance_length(50.0, 0.25e-3), 6)
    0.0015
    """
    r = _positive(radius, "capillary_radius", "m")
    return coefficient * abs(float(reynolds)) * 2.0 * r


def mean_free_path(
    dynamic_viscosity: float, pressure: float, temperature: float, molar_mass: float
) -> float:
    """Mean free path of a gas from its viscosity, λ = (η/p)·√(π R T / (2 M)) [m].

    Parameters
    ----------
    dynamic_viscosity : float
        η [Pa·s].
    pressure : float
        p [Pa].
    temperature : float
        T [K].
    molar_mass : float
        M [kg/mol].

    Notes
    -----
    The usual kinetic-theory relation between viscosity and mean free path (from memory;
    e.g. E. H. Kennard, *Kinetic Theory of Gases*, 1938). Good to about 10 %, enough for a
    regime check.

    Examples
    --------
    >>> round(mean_free_path(1.81e-5, 101325.0, 293.15, 0.02896) * 1e9, 1)  # air, nm
    65.0
    """
    eta = _positive(dynamic_viscosity, "dynamic_viscosity", "Pa·s")
    p = _positive(pressure, "pressure", "Pa")
    t = _positive(temperature, "temperature", "K")
    m = _positive(molar_mass, "molar_mass", "kg/mol")
    return eta / p * math.sqrt(math.pi * _MOLAR_GAS_CONSTANT * t / (2.0 * m))


def knudsen_number(mean_free_path_m: float, radius: float) -> float:
    """Knudsen number Kn = λ / d of a capillary of diameter d = 2r [1].

    Examples
    --------
    >>> round(knudsen_number(1e-7, 5e-6), 12)
    0.01
    """
    r = _positive(radius, "capillary_radius", "m")
    return float(mean_free_path_m) / (2.0 * r)


# ----------------------------------------------------------------------- checks
def check_reynolds(
    reynolds: float,
    laminar_limit: float = LAMINAR_REYNOLDS_LIMIT,
    usual_maximum: float | None = None,
) -> list[str]:
    """Warn when the flow may not be laminar, or is outside a viscometer's usual range.

    Parameters
    ----------
    reynolds : float
        Re [1].
    laminar_limit : float
        Laminar pipe flow below ≈ 2000 (common practice, no source).
    usual_maximum : float or None
        Optional upper end of the usual range (glass capillary viscometers: ≈ 100, common
        practice, no source).

    Examples
    --------
    >>> check_reynolds(2000.0)
    []
    >>> check_reynolds(2500.0)[0][:40]
    'Reynolds number 2.5e+03 exceeds the lami'
    """
    re = abs(float(reynolds))
    out: list[str] = []
    if re > laminar_limit:
        out.append(
            f"Reynolds number {re:.3g} exceeds the laminar limit {laminar_limit:g}; "
            "Poiseuille flow does not hold (common practice, no source)"
        )
    elif usual_maximum is not None and re > usual_maximum:
        out.append(
            f"Reynolds number {re:.3g} is above the usual range of glass capillary viscometers "
            f"(about 1 to {usual_maximum:g}; common practice, no source): check the "
            "kinetic-energy and end effects"
        )
    return out


def check_entrance_length(
    reynolds: float,
    radius: float,
    length: float,
    max_fraction: float = ENTRANCE_FRACTION_LIMIT,
    coefficient: float = ENTRANCE_LENGTH_COEFFICIENT,
) -> list[str]:
    """Warn when the laminar entrance length is a large part of the capillary length.

    Parameters
    ----------
    reynolds : float
        Re [1].
    radius : float
        Capillary radius r [m].
    length : float
        Capillary length L [m].
    max_fraction : float
        Largest accepted L_e/L (default 0.1, our default).

    Examples
    --------
    >>> check_entrance_length(50.0, 0.25e-3, 0.015)
    []
    """
    le = entrance_length(reynolds, radius, coefficient)
    ln = _positive(length, "capillary_length", "m")
    frac = le / ln
    if frac > max_fraction:
        return [
            f"entrance length {le * 1e3:.3g} mm is {100 * frac:.3g} % of the capillary length "
            f"{ln * 1e3:.4g} mm (limit {100 * max_fraction:g} %): the end correction dominates "
            f"(L_e ≈ {coefficient:g}·Re·d, Re = {abs(float(reynolds)):.3g})"
        ]
    return []


def check_kinetic_energy(
    correction: float, result: float, limit: float = KINETIC_ENERGY_FRACTION_LIMIT
) -> list[str]:
    """Warn when the kinetic-energy term is a large fraction of the result.

    Parameters
    ----------
    correction : float
        The kinetic-energy term (same unit as ``result``).
    result : float
        The measurand's value.
    limit : float
        Largest accepted |correction/result| (default 0.01, our default, no source).

    Examples
    --------
    >>> check_kinetic_energy(0.001, 1.0)
    []
    >>> len(check_kinetic_energy(0.02, 1.0))
    1
    """
    if result == 0:
        return ["kinetic-energy fraction undefined: the result is zero"]
    frac = abs(float(correction) / float(result))
    if frac > limit:
        return [
            f"kinetic-energy term is {100 * frac:.3g} % of the result (limit {100 * limit:g} %): "
            "use a longer flow time or a viscometer with a smaller kinetic-energy coefficient"
        ]
    return []


def check_flow_time(flow_time: float, minimum: float = MINIMUM_FLOW_TIME_MANUAL) -> list[str]:
    """Warn when a flow time is shorter than the minimum (200 s for manual timing, ISO 3104).

    Parameters
    ----------
    flow_time : float
        t [s].
    minimum : float
        Minimum flow time [s] (default 200 s, ISO 3104 / ASTM D445).

    Examples
    --------
    >>> check_flow_time(200.0)
    []
    >>> check_flow_time(150.0)
    ['flow time 150 s is below the minimum 200 s (ISO 3104 / ASTM D445, manual timing)']
    """
    t = float(flow_time)
    if t < minimum:
        source = (
            "ISO 3104 / ASTM D445, manual timing"
            if minimum == MINIMUM_FLOW_TIME_MANUAL
            else "the laboratory's own minimum"
        )
        return [f"flow time {t:.4g} s is below the minimum {minimum:g} s ({source})"]
    return []


def check_length_to_radius(
    length: float, radius: float, minimum: float = MINIMUM_LENGTH_TO_RADIUS
) -> list[str]:
    """Warn when the capillary's L/r is small, so end effects are large.

    Parameters
    ----------
    length : float
        L [m].
    radius : float
        r [m].
    minimum : float
        Smallest accepted L/r (default 100, our default, no source).

    Examples
    --------
    >>> check_length_to_radius(0.1, 0.001)
    []
    """
    ln = _positive(length, "capillary_length", "m")
    r = _positive(radius, "capillary_radius", "m")
    ratio = ln / r
    if ratio < minimum:
        return [
            f"capillary length-to-radius ratio L/r = {ratio:.4g} is below {minimum:g}: "
            "end effects are large and the end correction n·r matters"
        ]
    return []


def check_gravity_ratio(
    g_calibration: float,
    g_local: float,
    applied: bool = False,
    tolerance: float = GRAVITY_RATIO_TOLERANCE,
) -> list[str]:
    """ISO 3104, 7.2: flag a gravity difference above 0.1 % that is not applied to C.

    Parameters
    ----------
    g_calibration : float
        g₁ at the calibrating laboratory [m/s²].
    g_local : float
        g₂ at the user's laboratory [m/s²].
    applied : bool
        Whether C₂ = (g₂/g₁)·C₁ is applied in the model.
    tolerance : float
        Default 0.001 (ISO 3104, 7.2).

    Examples
    --------
    >>> check_gravity_ratio(9.80665, 9.80665 * 1.001)
    []
    >>> len(check_gravity_ratio(9.80665, 9.80665 * 1.0011))
    1
    """
    g1 = _positive(g_calibration, "g_calibration", "m/s²")
    g2 = _positive(g_local, "g_local", "m/s²")
    dev = g2 / g1 - 1.0
    # compare with a relative margin of a few ulps so that a ratio built as 1.001 passes
    if abs(dev) > tolerance * (1.0 + 1e-9) and not applied:
        return [
            f"local gravity differs from the calibrating laboratory's by {100 * dev:+.3f} % "
            f"(g₂ = {g2:.6g}, g₁ = {g1:.6g} m/s²), more than {100 * tolerance:g} %: apply "
            "C₂ = (g₂/g₁)·C₁ (ISO 3104, 7.2)"
        ]
    return []


def check_step_ratio(
    constant_lower: float, constant_upper: float, max_ratio: float = STEP_UP_MAXIMUM_RATIO
) -> list[str]:
    """ASTM D2162: flag a step between successive constants larger than a factor 3.

    Parameters
    ----------
    constant_lower, constant_upper : float
        Constants of successive viscometers in a step-up chain [m²/s²].

    Examples
    --------
    >>> check_step_ratio(0.01, 0.03)
    []
    >>> len(check_step_ratio(0.01, 0.0301))
    1
    """
    a = _positive(constant_lower, "constant", "m²/s²")
    b = _positive(constant_upper, "constant", "m²/s²")
    ratio = max(a, b) / min(a, b)
    if ratio > max_ratio * (1.0 + 1e-12):
        return [
            f"step-up ratio {ratio:.4g} between constants {a:.6g} and {b:.6g} m²/s² exceeds "
            f"the factor {max_ratio:g} (ASTM D2162)"
        ]
    return []


def check_two_reference_constants(
    constant_first: float, constant_second: float, tolerance: float = TWO_REFERENCE_TOLERANCE
) -> list[str]:
    """ASTM D2162: flag constants from two reference liquids that differ by more than 0.1 %.

    The difference is taken relative to the mean of the two constants.

    Examples
    --------
    >>> check_two_reference_constants(1.0, 1.0009)
    []
    >>> len(check_two_reference_constants(1.0, 1.0011))
    1
    """
    a = _positive(constant_first, "constant_first", "m²/s²")
    b = _positive(constant_second, "constant_second", "m²/s²")
    rel = abs(a - b) / (0.5 * (a + b))
    if rel > tolerance * (1.0 + 1e-9):
        return [
            f"constants from the two reference liquids differ by {100 * rel:.3g} % "
            f"({a:.6g} and {b:.6g}), more than {100 * tolerance:g} %: do not average them "
            "(ASTM D2162)"
        ]
    return []


def check_particle_reynolds(reynolds: float, limit: float = PARTICLE_REYNOLDS_LIMIT) -> list[str]:
    """Warn when a falling sphere's Reynolds number leaves the Stokes regime.

    Examples
    --------
    >>> check_particle_reynolds(0.1)
    []
    >>> check_particle_reynolds(0.5)[0][:44]
    'particle Reynolds number 0.5 exceeds 0.1: St'
    """
    re = abs(float(reynolds))
    if re > limit:
        return [
            f"particle Reynolds number {re:.3g} exceeds {limit:g}: Stokes' law underestimates "
            f"the drag by about {100 * 3 * re / 16:.2g} % (Oseen's correction 3·Re/16, from memory)"
        ]
    return []


def check_wall_ratio(
    ratio: float,
    limit: float = WALL_RATIO_LIMIT,
    wall_model: str = "Faxén's wall-correction series",
) -> list[str]:
    """Warn when the sphere-to-tube diameter ratio is beyond the wall-correction series' range.

    ``wall_model`` names the correction in the message.

    Examples
    --------
    >>> check_wall_ratio(0.3)
    []
    """
    x = float(ratio)
    if x > limit:
        return [
            f"sphere-to-tube diameter ratio {x:.3g} exceeds {limit:g}: {wall_model} loses accuracy"
        ]
    return []


def check_knudsen(
    knudsen: float,
    slip_corrected: bool,
    continuum_limit: float = KNUDSEN_CONTINUUM_LIMIT,
    slip_limit: float = KNUDSEN_SLIP_LIMIT,
) -> list[str]:
    """Warn when a gas capillary leaves the regime of its model.

    Below ``continuum_limit`` the no-slip model holds; up to ``slip_limit`` a first-order slip
    correction is needed; above it (transition regime) neither holds.

    Examples
    --------
    >>> check_knudsen(0.005, slip_corrected=False)
    []
    >>> len(check_knudsen(0.05, slip_corrected=False)), len(check_knudsen(0.05, slip_corrected=True))
    (1, 0)
    """
    kn = float(knudsen)
    if kn > slip_limit:
        return [
            f"Knudsen number {kn:.3g} exceeds {slip_limit:g}: transition regime, the "
            "first-order slip correction does not hold"
        ]
    if kn > continuum_limit and not slip_corrected:
        return [
            f"Knudsen number {kn:.3g} exceeds {continuum_limit:g}: slip at the wall matters; "
            "use the slip-corrected model (gas_capillary_slip)"
        ]
    return []


def check_flow_regime(
    reynolds: float,
    laminar_limit: float = LAMINAR_REYNOLDS_LIMIT,
    turbulent_limit: float = TURBULENT_REYNOLDS_LIMIT,
) -> list[str]:
    """Warn when a capillary flow is in transition, and refuse the result when it is turbulent.

    Parameters
    ----------
    reynolds : float
        Re = ρ ū d / η of the capillary flow [1].
    laminar_limit : float
        Upper end of laminar pipe flow (default 2000, common practice, no source).
    turbulent_limit : float
        Start of turbulent pipe flow (default 4000, common practice, no source).

    Returns
    -------
    list of str
        Nothing up to ``laminar_limit``; a transition warning up to ``turbulent_limit``; beyond
        it a warning that the laminar model does not apply and the result must not be used.

    Examples
    --------
    >>> check_flow_regime(2000.0)
    []
    >>> check_flow_regime(3000.0)[0][:35]
    'Reynolds number 3e+03 is in the lam'
    >>> check_flow_regime(5000.0)[0][:40]
    'RESULT NOT VALID: Reynolds number 5e+03 '
    """
    re = abs(float(reynolds))
    if re > turbulent_limit:
        return [
            f"RESULT NOT VALID: Reynolds number {re:.3g} is above {turbulent_limit:g}, the flow "
            "is turbulent and the laminar (Poiseuille) model does not apply at all; do not use "
            "this result (reduce the pressure difference or the bore)"
        ]
    if re > laminar_limit:
        return [
            f"Reynolds number {re:.3g} is in the laminar-turbulent transition ({laminar_limit:g}"
            f" to {turbulent_limit:g}, common practice, no source): the flow may be unsteady or "
            "partly turbulent and the laminar model biased; reduce the flow rate"
        ]
    return []


def check_outlet_mach(mach: float, limit: float = OUTLET_MACH_LIMIT) -> list[str]:
    """Warn when a gas leaves a capillary too fast for the isothermal one-dimensional model.

    Parameters
    ----------
    mach : float
        Outlet Mach number ū₂/√(RT/M), with the isothermal speed of sound √(RT/M) [1].
    limit : float
        Default 0.3 (our default, no source).

    Examples
    --------
    >>> check_outlet_mach(0.3)
    []
    >>> len(check_outlet_mach(0.31))
    1
    """
    ma = abs(float(mach))
    if ma > limit:
        return [
            f"outlet Mach number {ma:.3g} (isothermal) exceeds {limit:g}: the gas cools as it "
            "accelerates and the isothermal one-dimensional model loses accuracy (our default "
            "limit, no source)"
        ]
    return []


def check_compressible_correction(
    acceleration_fraction: float,
    entrance_fraction: float,
    limit: float = COMPRESSIBLE_CORRECTION_LIMIT,
) -> list[str]:
    """Report a large gas-acceleration plus entrance correction of a gas capillary.

    Parameters
    ----------
    acceleration_fraction : float
        Gas-acceleration term as a fraction of the result [1].
    entrance_fraction : float
        Entrance kinetic-energy term as a fraction of the result [1].
    limit : float
        Largest accepted |sum| (default 0.05, our default, no source).

    Examples
    --------
    >>> check_compressible_correction(0.02, 0.01)
    []
    >>> check_compressible_correction(0.04, 0.02)[0][:48]
    'gas-acceleration and entrance terms are 6 % of t'
    """
    a, e = float(acceleration_fraction), float(entrance_fraction)
    if abs(a + e) > limit:
        return [
            f"gas-acceleration and entrance terms are {100 * (a + e):.3g} % of the result "
            f"(acceleration {100 * a:.3g} %, entrance {100 * e:.3g} %; limit {100 * limit:g} %, "
            "our default): they are applied, but their coefficients' uncertainties dominate; "
            "use a smaller pressure ratio or a longer capillary"
        ]
    return []


def check_oseen_limit(reynolds: float, limit: float = OSEEN_REYNOLDS_LIMIT) -> list[str]:
    """Refuse a falling-sphere result whose Reynolds number is beyond Oseen's correction.

    Examples
    --------
    >>> check_oseen_limit(1.0)
    []
    >>> check_oseen_limit(2.0)[0][:40]
    'RESULT NOT VALID: particle Reynolds numb'
    """
    re = abs(float(reynolds))
    if re > limit:
        return [
            f"RESULT NOT VALID: particle Reynolds number {re:.3g} exceeds {limit:g}: neither "
            "Stokes' law nor Oseen's first correction (3·Re/16, from memory) holds; use a "
            "smaller or lighter sphere or a more viscous liquid"
        ]
    return []


def terminal_velocity_distance(
    terminal_velocity: float,
    sphere_radius: float,
    sphere_density: float,
    fluid_density: float,
    dynamic_viscosity: float,
    tolerance: float = TERMINAL_VELOCITY_TOLERANCE,
) -> float:
    """Distance a sphere released at rest falls before it is within ``tolerance`` of v_t [m].

    Parameters
    ----------
    terminal_velocity : float
        v_t [m/s].
    sphere_radius : float
        r [m].
    sphere_density, fluid_density : float
        ρ_s, ρ_f [kg/m³].
    dynamic_viscosity : float
        η [Pa·s].
    tolerance : float
        ε: the velocity counts as terminal once v ≥ (1 − ε) v_t (default 0.001).

    Returns
    -------
    float
        x_ε = v_t τ (ln(1/ε) − 1 + ε) [m].

    Notes
    -----
    With Stokes' drag and the added mass ½ρ_f V of the sphere, the velocity from rest is
    v = v_t (1 − e^(−t/τ)), τ = (ρ_s + ρ_f/2) d² / (18 η) (exact analytic for that equation
    of motion; the added-mass coefficient ½ is exact for a sphere in potential flow, from
    memory). Integrating gives x_ε. The Basset history force, neglected here, slows the last
    part of the approach (the deficit then decays like t^(−1/2), from memory), and the wall
    raises the drag (shortening τ): the estimate is a guide, not a bound.

    Examples
    --------
    >>> round(terminal_velocity_distance(0.01, 1e-3, 7800.0, 1260.0, 1.2) * 1e6, 2)  # µm
    92.24
    """
    v = abs(float(terminal_velocity))
    r = _positive(sphere_radius, "sphere_radius", "m")
    rho_s = _positive(sphere_density, "sphere_density", "kg/m³")
    rho_f = _positive(fluid_density, "fluid_density", "kg/m³")
    eta = _positive(dynamic_viscosity, "dynamic_viscosity", "Pa·s")
    eps = float(tolerance)
    if not 0.0 < eps < 1.0:
        raise InputError(f"tolerance must lie between 0 and 1, got {tolerance!r}")
    tau = (rho_s + 0.5 * rho_f) * (2.0 * r) ** 2 / (18.0 * eta)
    return v * tau * (math.log(1.0 / eps) - 1.0 + eps)


def check_terminal_velocity(
    needed_distance: float, release_distance: float, tolerance: float = TERMINAL_VELOCITY_TOLERANCE
) -> list[str]:
    """Warn when the first timing mark is nearer the release point than the terminal distance.

    Parameters
    ----------
    needed_distance : float
        x_ε from :func:`terminal_velocity_distance` [m].
    release_distance : float
        Distance from the release point (sphere at rest) to the first timing mark [m].
    tolerance : float
        The ε used for ``needed_distance`` (for the message only).

    Examples
    --------
    >>> check_terminal_velocity(0.01, 0.01)
    []
    >>> check_terminal_velocity(0.0101, 0.01)[0][:45]
    'the sphere falls only 10 mm before the first '
    """
    need = float(needed_distance)
    have = float(release_distance)
    if have < need:
        return [
            f"the sphere falls only {have * 1e3:.3g} mm before the first timing mark, but needs "
            f"about {need * 1e3:.3g} mm to come within {100 * tolerance:g} % of its terminal "
            "velocity (Stokes drag with added mass; our default tolerance): release it higher "
            "or move the first mark down"
        ]
    return []


def end_effect_estimate(sphere_radius: float, distance: float, free_surface: bool) -> float:
    """First-order rise of a sphere's drag near a plane end of the liquid, as a fraction [1].

    Parameters
    ----------
    sphere_radius : float
        r [m].
    distance : float
        h: distance from the sphere's centre to the end (tube bottom or liquid surface) [m].
    free_surface : bool
        True for the liquid's free surface, False for a rigid bottom.

    Returns
    -------
    float
        (9/8)·r/h for a rigid plane (H. A. Lorentz, 1907, from memory), (3/4)·r/h for a free
        surface (H. Brenner, Chem. Eng. Sci. 16 (1961) 242, from memory).

    Notes
    -----
    These are the leading terms for a sphere moving towards an unbounded plane. In a tube the
    disturbance decays faster with distance, so the estimate is on the cautious side.

    Examples
    --------
    >>> end_effect_estimate(1e-3, 0.1125, free_surface=False)
    0.01
    """
    r = _positive(sphere_radius, "sphere_radius", "m")
    h = _positive(distance, "end_distance", "m")
    return (0.75 if free_surface else 1.125) * r / h


def check_end_effects(
    sphere_radius: float,
    bottom_distance: float | None = None,
    surface_distance: float | None = None,
    limit: float = END_EFFECT_LIMIT,
) -> list[str]:
    """Warn when a timing mark is so near an end of the liquid that the drag rises there.

    Parameters
    ----------
    sphere_radius : float
        r [m].
    bottom_distance : float or None
        From the lower timing mark to the tube bottom [m].
    surface_distance : float or None
        From the liquid surface to the upper timing mark [m].
    limit : float
        Largest accepted :func:`end_effect_estimate` (default 0.01, our default).

    Examples
    --------
    >>> check_end_effects(1e-3, bottom_distance=0.1125)
    []
    >>> len(check_end_effects(1e-3, bottom_distance=0.11))
    1
    """
    out: list[str] = []
    ends = (("bottom", bottom_distance, False), ("liquid surface", surface_distance, True))
    for label, h, free in ends:
        if h is None:
            continue
        effect = end_effect_estimate(sphere_radius, h, free)
        if effect > limit * (1.0 + 1e-12):
            out.append(
                f"a timing mark is {float(h) * 1e3:.4g} mm from the {label}: the drag there is "
                f"raised by about {100 * effect:.2g} % (plane-end estimate, limit "
                f"{100 * limit:g} %, our default); move the mark away from the end"
            )
    return out


def emit(messages: Iterable[str], stacklevel: int = 2) -> None:
    """Issue each message as a :class:`~viscometry.errors.ValidityWarning`."""
    for m in messages:
        warnings.warn(m, ValidityWarning, stacklevel=stacklevel + 1)
