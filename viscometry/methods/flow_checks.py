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


def check_wall_ratio(ratio: float, limit: float = WALL_RATIO_LIMIT) -> list[str]:
    """Warn when the sphere-to-tube diameter ratio is beyond the wall-correction series' range.

    Examples
    --------
    >>> check_wall_ratio(0.3)
    []
    """
    x = float(ratio)
    if x > limit:
        return [
            f"sphere-to-tube diameter ratio {x:.3g} exceeds {limit:g}: Faxén's wall-correction "
            "series loses accuracy"
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


def emit(messages: Iterable[str], stacklevel: int = 2) -> None:
    """Issue each message as a :class:`~viscometry.errors.ValidityWarning`."""
    for m in messages:
        warnings.warn(m, ValidityWarning, stacklevel=stacklevel + 1)
