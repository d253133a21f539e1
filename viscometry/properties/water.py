"""Density and viscosity of liquid water from published formulations (SI units).

Functions
---------
water_density
    Tanaka et al. (2001): air-free SMOW at 101.325 kPa, 0 °C to 40 °C.
water_density_if97
    IAPWS-IF97 region 1 (liquid), any pressure up to 100 MPa; used as the default density of
    :func:`water_viscosity` at 101.325 kPa, 0 °C to 100 °C.
water_viscosity
    IAPWS R12-08 (IAPWS 2008 formulation), η(T, ρ), critical enhancement μ̄2 = 1.
water_kinematic_viscosity
    η/ρ at 101.325 kPa with the IF97 density.
water_density_uncertainty, water_viscosity_relative_uncertainty
    The stated (standard) uncertainties of the formulations.

All functions are vectorised (NumPy broadcasting) and return a float for scalar input.
Outside a formulation's validity range they compute anyway and emit
:class:`viscometry.errors.ValidityWarning`; non-physical input (T ≤ 0, ρ ≤ 0) raises
:class:`viscometry.errors.InputError`.

The private ``_*_core`` functions use only arithmetic and the ``exp``/``sqrt`` they are given,
so the very same code builds the sympy expressions of
:mod:`viscometry.properties.formula_functions`.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from viscometry.errors import InputError, ValidityWarning
from viscometry.properties.constants import (
    IAPWS_2008_H0,
    IAPWS_2008_H1,
    IAPWS_2008_TEMPERATURE_RANGE,
    IAPWS_2008_VISCOSITY_COVERAGE_FACTOR,
    IAPWS_2008_VISCOSITY_REFERENCE,
    IAPWS_2008_VISCOSITY_RELATIVE_EXPANDED_UNCERTAINTY,
    IAPWS_CRITICAL_DENSITY,
    IAPWS_CRITICAL_TEMPERATURE,
    IF97_REGION1_REFERENCE_PRESSURE,
    IF97_REGION1_REFERENCE_TEMPERATURE,
    IF97_REGION1_TERMS,
    IF97_SPECIFIC_GAS_CONSTANT,
    STANDARD_ATMOSPHERE,
    TANAKA_A1,
    TANAKA_A2,
    TANAKA_A3,
    TANAKA_A4,
    TANAKA_A5,
    TANAKA_DENSITY_STANDARD_UNCERTAINTY,
    TANAKA_TEMPERATURE_RANGE,
    WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE,
    ZERO_CELSIUS,
)

__all__ = [
    "water_density",
    "water_density_uncertainty",
    "water_density_if97",
    "water_viscosity",
    "water_viscosity_relative_uncertainty",
    "water_kinematic_viscosity",
]

IF97_PRESSURE_RANGE: tuple[float, float] = (611.657, 100.0e6)
"""Pressure range of IAPWS-IF97 region 1 [Pa]: up to 100 MPa (R7-97(2012), section 4);
the lower bound is the triple-point pressure (the true bound is the saturation pressure)."""

# --------------------------------------------------------------------------------------------
# private helpers (also used by gravity.py and temperature.py)
# --------------------------------------------------------------------------------------------


def _as_float_array(value: ArrayLike, name: str) -> NDArray[np.float64]:
    """Return ``value`` as a float array, raising :class:`InputError` if it is not numeric."""
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputError(
            f"{name} must be a real number or an array of them, got {value!r}"
        ) from exc


def _require_positive_finite(array: NDArray[np.float64], name: str, unit: str) -> None:
    """Raise :class:`InputError` naming the first offending element unless all are > 0."""
    bad = ~(np.isfinite(array) & (array > 0.0))
    if np.any(bad):
        first = float(np.atleast_1d(array)[np.atleast_1d(bad)][0])
        raise InputError(f"{name} must be positive and finite, got {first!r} {unit}")


def _warn_outside(
    array: NDArray[np.float64],
    name: str,
    unit: str,
    bounds: tuple[float, float],
    what: str,
    stacklevel: int = 3,
) -> None:
    """Emit a :class:`ValidityWarning` naming the values of ``array`` outside ``bounds``."""
    low, high = bounds
    flat = np.atleast_1d(array)
    values = flat[(flat < low) | (flat > high)]
    if values.size:
        shown = ", ".join(f"{v:.6g}" for v in values[:3]) + (", ..." if values.size > 3 else "")
        warnings.warn(
            f"{name} {shown} {unit} is outside the validity range {low:g} to {high:g} {unit} "
            f"of {what}; the value is extrapolated",
            ValidityWarning,
            stacklevel=stacklevel,
        )


def _scalar_or_array(array: NDArray[np.float64]) -> float | NDArray[np.float64]:
    """Return a Python float for a 0-d array, the array itself otherwise."""
    return float(array) if np.ndim(array) == 0 else array


# --------------------------------------------------------------------------------------------
# formulation cores: plain arithmetic, valid for numpy arrays and sympy expressions alike
# --------------------------------------------------------------------------------------------


def _tanaka_density_core(temperature: Any) -> Any:
    """Tanaka et al. (2001) eq. (1); ``temperature`` in kelvin, result in kg/m³."""
    t = temperature - ZERO_CELSIUS
    return TANAKA_A5 * (1 - (t + TANAKA_A1) ** 2 * (t + TANAKA_A2) / (TANAKA_A3 * (t + TANAKA_A4)))


def _if97_region1_density_core(temperature: Any, pressure: Any) -> Any:
    """IAPWS-IF97 region 1 density ρ = 1/v, v = (RT/p) π γ_π; SI in, kg/m³ out."""
    pi = pressure / IF97_REGION1_REFERENCE_PRESSURE
    tau = IF97_REGION1_REFERENCE_TEMPERATURE / temperature
    gamma_pi = 0
    for i_exp, j_exp, n in IF97_REGION1_TERMS:
        if i_exp == 0:
            continue  # d/dπ of a π-independent term
        gamma_pi = gamma_pi - n * i_exp * (7.1 - pi) ** (i_exp - 1) * (tau - 1.222) ** j_exp
    specific_volume = IF97_SPECIFIC_GAS_CONSTANT * temperature / pressure * pi * gamma_pi
    return 1 / specific_volume


def _iapws2008_viscosity_core(
    temperature: Any,
    density: Any,
    exp: Callable[[Any], Any],
    sqrt: Callable[[Any], Any],
) -> Any:
    """IAPWS R12-08 eqs. (10)-(12) with μ̄2 = 1; SI in, Pa·s out."""
    t_r = temperature / IAPWS_CRITICAL_TEMPERATURE
    rho_r = density / IAPWS_CRITICAL_DENSITY
    mu0 = 100 * sqrt(t_r) / sum(h / t_r**i for i, h in enumerate(IAPWS_2008_H0))
    x = 1 / t_r - 1
    y = rho_r - 1
    # sum over j outside, i inside: the density enters 7 times rather than 21 (smaller sympy
    # expressions for formula_functions; same value)
    inner = 0
    for j in range(len(IAPWS_2008_H1[0])):
        column = sum(row[j] * x**i for i, row in enumerate(IAPWS_2008_H1) if row[j] != 0.0)
        inner = inner + column * y**j
    mu1 = exp(rho_r * inner)
    return IAPWS_2008_VISCOSITY_REFERENCE * mu0 * mu1


# --------------------------------------------------------------------------------------------
# public functions
# --------------------------------------------------------------------------------------------


def water_density(temperature: ArrayLike) -> float | NDArray[np.float64]:
    """Density of air-free SMOW at 101.325 kPa by the formula of Tanaka et al. (2001).

    Parameters
    ----------
    temperature : float or array_like
        Temperature (ITS-90) [K]; valid 273.15 K to 313.15 K (0 °C to 40 °C).

    Returns
    -------
    float or numpy.ndarray
        Density [kg/m³].

    Raises
    ------
    viscometry.errors.InputError
        If a temperature is not positive and finite.

    Warns
    -----
    viscometry.errors.ValidityWarning
        If a temperature is outside 0 °C to 40 °C (the value is extrapolated).

    Notes
    -----
    .. math:: \\rho(t) = a_5\\left[1 - \\frac{(t + a_1)^2 (t + a_2)}{a_3 (t + a_4)}\\right],
              \\quad t = T - 273.15\\ \\mathrm{K}

    with the coefficients of :mod:`viscometry.properties.constants`.  The standard uncertainty
    is given by :func:`water_density_uncertainty`.  For air-saturated water, ordinary tap or
    laboratory water of different isotopic composition, or other pressures, the paper's
    corrections apply and are not included here.

    References
    ----------
    M. Tanaka, G. Girard, R. Davis, A. Peuto, N. Bignell, Metrologia 38 (2001) 301-309,
    doi:10.1088/0026-1394/38/4/3, eq. (1).

    Examples
    --------
    >>> round(water_density(293.15), 4)
    998.2067
    """
    temp = _as_float_array(temperature, "temperature")
    _require_positive_finite(temp, "temperature", "K")
    _warn_outside(temp, "temperature", "K", TANAKA_TEMPERATURE_RANGE, "Tanaka et al. (2001)")
    return _scalar_or_array(_tanaka_density_core(temp))


def water_density_uncertainty(temperature: ArrayLike) -> float | NDArray[np.float64]:
    """Standard uncertainty of :func:`water_density` (formula only).

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K]; valid 273.15 K to 313.15 K.

    Returns
    -------
    float or numpy.ndarray
        Standard uncertainty of the density [kg/m³], same shape as ``temperature``.

    Warns
    -----
    viscometry.errors.ValidityWarning
        If a temperature is outside 0 °C to 40 °C (no uncertainty is stated there).

    Notes
    -----
    A single value, :data:`~viscometry.properties.constants.TANAKA_DENSITY_STANDARD_UNCERTAINTY`
    (0.0009 kg/m³), over the whole range; recalled from memory, see that constant.

    References
    ----------
    Tanaka et al., Metrologia 38 (2001) 301-309 (uncertainty of the recommended table).

    Examples
    --------
    >>> water_density_uncertainty(293.15)
    0.0009
    """
    temp = _as_float_array(temperature, "temperature")
    _require_positive_finite(temp, "temperature", "K")
    _warn_outside(temp, "temperature", "K", TANAKA_TEMPERATURE_RANGE, "Tanaka et al. (2001)")
    return _scalar_or_array(np.full_like(temp, TANAKA_DENSITY_STANDARD_UNCERTAINTY))


def water_density_if97(
    temperature: ArrayLike, pressure: ArrayLike = STANDARD_ATMOSPHERE
) -> float | NDArray[np.float64]:
    """Density of liquid water by IAPWS-IF97 region 1 (Gibbs free energy).

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K]; checked against 273.15 K to 373.15 K.
    pressure : float or array_like, optional
        Absolute pressure [Pa]; default 101 325 Pa; IF97 region 1 goes up to 100 MPa.

    Returns
    -------
    float or numpy.ndarray
        Density [kg/m³].

    Raises
    ------
    viscometry.errors.InputError
        If a temperature or pressure is not positive and finite.

    Warns
    -----
    viscometry.errors.ValidityWarning
        If a temperature is outside 0 °C to 100 °C or a pressure above 100 MPa.

    Notes
    -----
    .. math:: \\frac{1}{\\rho} = \\frac{RT}{p}\\,\\pi\\,\\gamma_\\pi,\\qquad
              \\gamma_\\pi = -\\sum_{i=1}^{34} n_i I_i (7.1-\\pi)^{I_i-1}(\\tau-1.222)^{J_i},
              \\quad \\pi = p/16.53\\ \\mathrm{MPa},\\ \\tau = 1386\\ \\mathrm{K}/T.

    Region 1 is bounded below in pressure by the saturation pressure; at 101.325 kPa water
    boils at 373.124 K, so the last 0.03 K below 100 °C are metastable liquid (the equation
    extrapolates smoothly).  At lower pressures the boiling point is lower still and is not
    checked here.  IF97 reproduces IAPWS-95 densities to about 1e-5 relative or better in this
    range (checked against the ``iapws`` package in the tests).

    References
    ----------
    IAPWS R7-97(2012), Revised Release on the IAPWS Industrial Formulation 1997 for the
    Thermodynamic Properties of Water and Steam, section 5, eq. (7), Tables 2 and 3.

    Examples
    --------
    >>> round(water_density_if97(293.15), 3)
    998.206
    """
    temp = _as_float_array(temperature, "temperature")
    pres = _as_float_array(pressure, "pressure")
    _require_positive_finite(temp, "temperature", "K")
    _require_positive_finite(pres, "pressure", "Pa")
    _warn_outside(
        temp, "temperature", "K", WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE, "IAPWS-IF97 region 1"
    )
    _warn_outside(pres, "pressure", "Pa", IF97_PRESSURE_RANGE, "IAPWS-IF97 region 1")
    return _scalar_or_array(_if97_region1_density_core(temp, pres))


def water_viscosity(
    temperature: ArrayLike, density: ArrayLike | None = None
) -> float | NDArray[np.float64]:
    """Dynamic viscosity of ordinary water by the IAPWS 2008 formulation (IAPWS R12-08).

    Parameters
    ----------
    temperature : float or array_like
        Temperature (ITS-90) [K].
    density : float or array_like, optional
        Density [kg/m³].  If omitted, the liquid density at 101 325 Pa from IAPWS-IF97 region 1
        (:func:`water_density_if97`) is used, valid 273.15 K to 373.15 K.

    Returns
    -------
    float or numpy.ndarray
        Dynamic viscosity [Pa·s].

    Raises
    ------
    viscometry.errors.InputError
        If a temperature or density is not positive and finite.

    Warns
    -----
    viscometry.errors.ValidityWarning
        If ``density`` is omitted and a temperature is outside 0 °C to 100 °C, or if a density
        is given and a temperature is outside 273.15 K to 1173.15 K.

    Notes
    -----
    .. math:: \\eta = \\mu^*\\,\\bar\\mu_0(\\bar T)\\,\\bar\\mu_1(\\bar T,\\bar\\rho)\\,\\bar\\mu_2,
              \\quad \\bar\\mu_0 = \\frac{100\\sqrt{\\bar T}}{\\sum_{i=0}^{3} H_i/\\bar T^i},
              \\quad \\bar\\mu_1 = \\exp\\Big[\\bar\\rho\\sum_{i=0}^{5}\\big(\\tfrac{1}{\\bar T}-1\\big)^i
              \\sum_{j=0}^{6} H_{ij}(\\bar\\rho-1)^j\\Big]

    with :math:`\\bar T = T/647.096` K, :math:`\\bar\\rho = \\rho/322` kg/m³,
    :math:`\\mu^* = 1` µPa·s.  The critical enhancement :math:`\\bar\\mu_2` is set to 1: the
    release states it is significant only in a small region around the critical point
    (647 K, 322 kg/m³), far from any viscometer bath.  Relative uncertainty: see
    :func:`water_viscosity_relative_uncertainty`.

    References
    ----------
    IAPWS R12-08, Release on the IAPWS Formulation 2008 for the Viscosity of Ordinary Water
    Substance (2008), eqs. (10)-(12), Tables 1-2, verification Table 4; M. L. Huber et al.,
    J. Phys. Chem. Ref. Data 38 (2009) 101, doi:10.1063/1.3088050.

    Examples
    --------
    >>> round(water_viscosity(298.15, 998.0) * 1e6, 6)  # R12-08 Table 4: 889.735100 µPa·s
    889.7351
    >>> round(water_viscosity(293.15) * 1e3, 4)  # mPa·s, ISO/TR 3666: 1.0016
    1.0016
    """
    temp = _as_float_array(temperature, "temperature")
    _require_positive_finite(temp, "temperature", "K")
    if density is None:
        _warn_outside(
            temp,
            "temperature",
            "K",
            WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE,
            "IAPWS R12-08 with the IAPWS-IF97 liquid density at 101325 Pa",
        )
        rho = _if97_region1_density_core(temp, STANDARD_ATMOSPHERE)
    else:
        rho = _as_float_array(density, "density")
        _require_positive_finite(rho, "density", "kg/m³")
        _warn_outside(temp, "temperature", "K", IAPWS_2008_TEMPERATURE_RANGE, "IAPWS R12-08")
    return _scalar_or_array(_iapws2008_viscosity_core(temp, rho, np.exp, np.sqrt))


def water_viscosity_relative_uncertainty(temperature: ArrayLike) -> float | NDArray[np.float64]:
    """Relative standard uncertainty of :func:`water_viscosity` at 101.325 kPa, 0 °C to 100 °C.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K]; valid 273.15 K to 373.15 K.

    Returns
    -------
    float or numpy.ndarray
        Relative standard uncertainty [1], same shape as ``temperature``.

    Warns
    -----
    viscometry.errors.ValidityWarning
        If a temperature is outside 0 °C to 100 °C.

    Notes
    -----
    u_rel = U_rel/k = 1 %/2 = 0.5 % throughout (from memory: IAPWS R12-08, uncertainty figure,
    liquid at ambient pressure; the coverage factor k = 2 is our reading).  At 20 °C,
    ISO/TR 3666:1998 gives the lower 0.17 % (k = 2), i.e. 0.085 %; use
    :data:`~viscometry.properties.constants.ISO_TR_3666_WATER_VISCOSITY_20C` with that
    uncertainty when water at 20 °C calibrates a viscometer.

    References
    ----------
    IAPWS R12-08 (2008), section on estimated uncertainties; ISO/TR 3666:1998.

    Examples
    --------
    >>> water_viscosity_relative_uncertainty(293.15)
    0.005
    """
    temp = _as_float_array(temperature, "temperature")
    _require_positive_finite(temp, "temperature", "K")
    _warn_outside(
        temp, "temperature", "K", WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE, "IAPWS R12-08 at 0.1 MPa"
    )
    u_rel = (
        IAPWS_2008_VISCOSITY_RELATIVE_EXPANDED_UNCERTAINTY / IAPWS_2008_VISCOSITY_COVERAGE_FACTOR
    )
    return _scalar_or_array(np.full_like(temp, u_rel))


def water_kinematic_viscosity(temperature: ArrayLike) -> float | NDArray[np.float64]:
    """Kinematic viscosity of water at 101.325 kPa, ν = η/ρ.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K]; valid 273.15 K to 373.15 K.

    Returns
    -------
    float or numpy.ndarray
        Kinematic viscosity [m²/s].

    Raises
    ------
    viscometry.errors.InputError
        If a temperature is not positive and finite.

    Warns
    -----
    viscometry.errors.ValidityWarning
        If a temperature is outside 0 °C to 100 °C.

    Notes
    -----
    .. math:: \\nu(T) = \\eta(T, \\rho(T))/\\rho(T)

    with η from IAPWS R12-08 and ρ from IAPWS-IF97 region 1 at 101 325 Pa, the same density for
    both.  Relative uncertainty: that of η (the density's is negligible beside it).

    References
    ----------
    IAPWS R12-08 (2008); IAPWS R7-97(2012), eq. (7); ISO/TR 3666:1998 (1.0034 mm²/s at 20 °C,
    as cited in ASTM D2162, 3.1.1.1).

    Examples
    --------
    >>> round(water_kinematic_viscosity(293.15) * 1e6, 4)  # mm²/s
    1.0034
    """
    temp = _as_float_array(temperature, "temperature")
    _require_positive_finite(temp, "temperature", "K")
    _warn_outside(
        temp,
        "temperature",
        "K",
        WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE,
        "IAPWS R12-08 with the IAPWS-IF97 liquid density at 101325 Pa",
    )
    rho = _if97_region1_density_core(temp, STANDARD_ATMOSPHERE)
    eta = _iapws2008_viscosity_core(temp, rho, np.exp, np.sqrt)
    return _scalar_or_array(eta / rho)
