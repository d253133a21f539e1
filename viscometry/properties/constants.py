"""Named, sourced constants of the reference-data layer (SI units throughout).

Every constant states its source (edition and clause) and whether the value was read from the
document or recalled ("from memory").  Values recalled from memory are cross-checked in the
test suite by an independent recomputation wherever one exists (see
``tests/test_properties_gravity.py`` and ``tests/test_properties_water.py``).

Groups
------
* Defining constants: standard gravity, zero Celsius, standard atmosphere.
* Water reference values: ISO/TR 3666:1998 viscosity and kinematic viscosity at 20 °C.
* Tanaka et al. (2001) density of air-free SMOW, coefficients ``a1`` ... ``a5``.
* IAPWS R12-08 viscosity formulation: reducing constants and coefficients ``H_i``, ``H_ij``.
* IAPWS-IF97 region 1 (liquid) Gibbs free energy: reducing constants and the 34 terms.
* WGS 84 ellipsoid and normal-gravity constants (NIMA TR8350.2).
"""

from __future__ import annotations

__all__ = [
    "STANDARD_GRAVITY",
    "ZERO_CELSIUS",
    "STANDARD_ATMOSPHERE",
    "ISO_TR_3666_WATER_VISCOSITY_20C",
    "ISO_TR_3666_WATER_VISCOSITY_20C_RELATIVE_EXPANDED_UNCERTAINTY",
    "ISO_TR_3666_COVERAGE_FACTOR",
    "ISO_TR_3666_WATER_KINEMATIC_VISCOSITY_20C",
    "TANAKA_A1",
    "TANAKA_A2",
    "TANAKA_A3",
    "TANAKA_A4",
    "TANAKA_A5",
    "TANAKA_TEMPERATURE_RANGE",
    "TANAKA_DENSITY_STANDARD_UNCERTAINTY",
    "IAPWS_CRITICAL_TEMPERATURE",
    "IAPWS_CRITICAL_DENSITY",
    "IAPWS_2008_VISCOSITY_REFERENCE",
    "IAPWS_2008_H0",
    "IAPWS_2008_H1",
    "IAPWS_2008_VISCOSITY_RELATIVE_EXPANDED_UNCERTAINTY",
    "IAPWS_2008_VISCOSITY_COVERAGE_FACTOR",
    "IAPWS_2008_TEMPERATURE_RANGE",
    "IF97_SPECIFIC_GAS_CONSTANT",
    "IF97_REGION1_REFERENCE_PRESSURE",
    "IF97_REGION1_REFERENCE_TEMPERATURE",
    "IF97_REGION1_TERMS",
    "WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE",
    "WGS84_SEMI_MAJOR_AXIS",
    "WGS84_INVERSE_FLATTENING",
    "WGS84_FLATTENING",
    "WGS84_SEMI_MINOR_AXIS",
    "WGS84_GRAVITATIONAL_CONSTANT",
    "WGS84_ANGULAR_VELOCITY",
    "WGS84_NORMAL_GRAVITY_EQUATOR",
    "WGS84_NORMAL_GRAVITY_POLE",
    "WGS84_SOMIGLIANA_K",
    "WGS84_FIRST_ECCENTRICITY_SQUARED",
    "WGS84_M",
]

# --------------------------------------------------------------------------------------------
# Defining constants
# --------------------------------------------------------------------------------------------

STANDARD_GRAVITY: float = 9.80665
"""Standard acceleration of gravity g_n [m/s²], exact by definition.

Source: 3rd General Conference on Weights and Measures (CGPM), 1901, declaration on the unit
of mass and the definition of weight; restated in the SI Brochure (BIPM, 9th ed., 2019).
"""

ZERO_CELSIUS: float = 273.15
"""Kelvin temperature of 0 °C [K], exact: t/°C = T/K − 273.15.

Source: SI Brochure (BIPM, 9th ed., 2019), 2.3.1 (definition of the degree Celsius).
"""

STANDARD_ATMOSPHERE: float = 101325.0
"""Standard atmosphere [Pa], exact (10th CGPM, 1954, Resolution 4).

The reference pressure of ISO/TR 3666:1998 and of Tanaka et al. (2001).
"""

# --------------------------------------------------------------------------------------------
# ISO/TR 3666:1998, viscosity of water
# --------------------------------------------------------------------------------------------

ISO_TR_3666_WATER_VISCOSITY_20C: float = 1.0016e-3
"""Dynamic viscosity of water at 20 °C and 101.325 kPa [Pa·s]: 1.0016 mPa·s.

Source: ISO/TR 3666:1998, *Viscosity of water* (recommended value). From memory; consistent with
the IAPWS R12-08 formulation, which reproduces it to better than 0.01 % (checked in the tests).
"""

ISO_TR_3666_WATER_VISCOSITY_20C_RELATIVE_EXPANDED_UNCERTAINTY: float = 0.0017
"""Relative expanded uncertainty of :data:`ISO_TR_3666_WATER_VISCOSITY_20C` [1]: 0.17 %.

Source: ISO/TR 3666:1998, as commonly cited. From memory: the coverage factor is taken as
k = 2 (:data:`ISO_TR_3666_COVERAGE_FACTOR`), i.e. a relative standard uncertainty of 0.085 %.
"""

ISO_TR_3666_COVERAGE_FACTOR: float = 2.0
"""Coverage factor of :data:`ISO_TR_3666_WATER_VISCOSITY_20C_RELATIVE_EXPANDED_UNCERTAINTY`
(k = 2, as commonly cited; from memory)."""

ISO_TR_3666_WATER_KINEMATIC_VISCOSITY_20C: float = 1.0034e-6
"""Kinematic viscosity of water at 20 °C and 101.325 kPa [m²/s]: 1.0034 mm²/s.

Source: ISO/TR 3666:1998 value as cited in ASTM D2162, 3.1.1.1 (published). Consistency:
1.0016 mPa·s / 998.2067 kg/m³ = 1.00340 mm²/s.
"""

# --------------------------------------------------------------------------------------------
# Tanaka et al. (2001): density of air-free SMOW at 101.325 kPa, 0 °C to 40 °C
# rho(t) = a5 * [1 - (t + a1)^2 (t + a2) / (a3 (t + a4))],  t in °C (ITS-90)
# Source: M. Tanaka, G. Girard, R. Davis, A. Peuto, N. Bignell, "Recommended table for the
# density of water between 0 °C and 40 °C based on recent experimental reports",
# Metrologia 38 (2001) 301-309, doi:10.1088/0026-1394/38/4/3, eq. (1).  Coefficients from
# memory; the test suite checks rho(20 °C) = 998.2067 and rho(25 °C) = 997.0470 kg/m³.
# --------------------------------------------------------------------------------------------

TANAKA_A1: float = -3.983035
"""Tanaka et al. (2001) eq. (1) coefficient a1 [°C] (≈ minus the temperature of maximum density)."""

TANAKA_A2: float = 301.797
"""Tanaka et al. (2001) eq. (1) coefficient a2 [°C]."""

TANAKA_A3: float = 522528.9
"""Tanaka et al. (2001) eq. (1) coefficient a3 [°C²]."""

TANAKA_A4: float = 69.34881
"""Tanaka et al. (2001) eq. (1) coefficient a4 [°C]."""

TANAKA_A5: float = 999.974950
"""Tanaka et al. (2001) eq. (1) coefficient a5 [kg/m³] (density at the maximum)."""

TANAKA_TEMPERATURE_RANGE: tuple[float, float] = (273.15, 313.15)
"""Validity range of the Tanaka et al. (2001) formula [K]: 0 °C to 40 °C (ITS-90)."""

TANAKA_DENSITY_STANDARD_UNCERTAINTY: float = 0.0009
"""Standard uncertainty of the Tanaka et al. (2001) formula [kg/m³], 0 °C to 40 °C.

From memory, not checked against the paper: Tanaka et al. give the uncertainty of the
recommended table as a function of temperature, of order 1 ppm of the density (≈ 0.001 kg/m³)
over 0 °C to 40 °C; 0.0009 kg/m³ is used here as a single representative standard uncertainty.
It covers the formula only: isotopic composition, dissolved air (about −0.004 kg/m³ for
air-saturated water) and pressure effects are the user's to add.
"""

# --------------------------------------------------------------------------------------------
# IAPWS R12-08: Release on the IAPWS Formulation 2008 for the Viscosity of Ordinary Water
# Substance (September 2008).  Also: M. L. Huber et al., J. Phys. Chem. Ref. Data 38 (2009) 101,
# doi:10.1063/1.3088050.  Reduced viscosity mu/mu* = mu0(Tr) * mu1(Tr, rhor) * mu2(Tr, rhor).
# --------------------------------------------------------------------------------------------

IAPWS_CRITICAL_TEMPERATURE: float = 647.096
"""Reducing temperature T* = T_c [K] of IAPWS R12-08 eq. (3) (critical temperature, IAPWS-95)."""

IAPWS_CRITICAL_DENSITY: float = 322.0
"""Reducing density ρ* = ρ_c [kg/m³] of IAPWS R12-08 eq. (3) (critical density, IAPWS-95)."""

IAPWS_2008_VISCOSITY_REFERENCE: float = 1.00e-6
"""Reducing viscosity μ* [Pa·s] of IAPWS R12-08 eq. (3)."""

IAPWS_2008_H0: tuple[float, ...] = (1.67752, 2.20462, 0.6366564, -0.241605)
"""Coefficients H_i, i = 0..3, of the dilute-gas term μ̄0, IAPWS R12-08 eq. (11), Table 1."""

IAPWS_2008_H1: tuple[tuple[float, ...], ...] = (
    # j = 0         1             2             3            4             5            6
    (5.20094e-1, 2.22531e-1, -2.81378e-1, 1.61913e-1, -3.25372e-2, 0.0, 0.0),  # i = 0
    (8.50895e-2, 9.99115e-1, -9.06851e-1, 2.57399e-1, 0.0, 0.0, 0.0),  # i = 1
    (-1.08374, 1.88797, -7.72479e-1, 0.0, 0.0, 0.0, 0.0),  # i = 2
    (-2.89555e-1, 1.26613, -4.89837e-1, 0.0, 6.98452e-2, 0.0, -4.35673e-3),  # i = 3
    (0.0, 0.0, -2.57040e-1, 0.0, 0.0, 8.72102e-3, 0.0),  # i = 4
    (0.0, 1.20573e-1, 0.0, 0.0, 0.0, 0.0, -5.93264e-4),  # i = 5
)
"""Coefficients H_ij (rows i = 0..5, columns j = 0..6) of the residual term μ̄1,
IAPWS R12-08 eq. (12), Table 2.  From memory; cross-checked against the release's
computer-verification values (Table 4) and the ``iapws`` package in the tests."""

IAPWS_2008_VISCOSITY_RELATIVE_EXPANDED_UNCERTAINTY: float = 0.01
"""Relative expanded uncertainty of IAPWS R12-08 for liquid water at 0.1 MPa, 0 °C to 100 °C [1].

From memory: the release's uncertainty figure assigns about 1 % to the liquid region at
ambient pressure (larger elsewhere); we read it as an expanded uncertainty with coverage factor
k = 2 (:data:`IAPWS_2008_VISCOSITY_COVERAGE_FACTOR`).  Near 20 °C the formulation agrees with
ISO/TR 3666:1998 (0.17 %, k = 2), which is the value to use when water calibrates a
viscometer at 20 °C.
"""

IAPWS_2008_VISCOSITY_COVERAGE_FACTOR: float = 2.0
"""Coverage factor assumed for :data:`IAPWS_2008_VISCOSITY_RELATIVE_EXPANDED_UNCERTAINTY`
(from memory)."""

IAPWS_2008_TEMPERATURE_RANGE: tuple[float, float] = (273.15, 1173.15)
"""Temperature range of IAPWS R12-08 used for validity warnings when a density is given [K].

The release covers T_m(p) ≤ T ≤ 1173.15 K for p up to p_t, with extensions; the lower bound is
simplified here to 273.15 K (the melting temperature at ambient pressure).
"""

# --------------------------------------------------------------------------------------------
# IAPWS-IF97 region 1 (IAPWS R7-97(2012), Revised Release on the IAPWS Industrial Formulation
# 1997 for the Thermodynamic Properties of Water and Steam), eq. (7), Table 2.
# g(p, T)/(R T) = gamma(pi, tau) = sum n_i (7.1 - pi)^I_i (tau - 1.222)^J_i,
# pi = p/p*, tau = T*/T.  From memory; cross-checked against the release's verification
# values (Table 5) and the ``iapws`` package in the tests.
# --------------------------------------------------------------------------------------------

IF97_SPECIFIC_GAS_CONSTANT: float = 461.526
"""Specific gas constant of IAPWS-IF97, eq. (1) [J/(kg·K)] (R = 0.461 526 kJ kg⁻¹ K⁻¹)."""

IF97_REGION1_REFERENCE_PRESSURE: float = 16.53e6
"""Reducing pressure p* of IAPWS-IF97 region 1, eq. (7) [Pa] (16.53 MPa)."""

IF97_REGION1_REFERENCE_TEMPERATURE: float = 1386.0
"""Reducing temperature T* of IAPWS-IF97 region 1, eq. (7) [K]."""

IF97_REGION1_TERMS: tuple[tuple[int, int, float], ...] = (
    # (I_i, J_i, n_i), i = 1..34, IAPWS-IF97 Table 2
    (0, -2, 0.14632971213167),
    (0, -1, -0.84548187169114),
    (0, 0, -0.37563603672040e1),
    (0, 1, 0.33855169168385e1),
    (0, 2, -0.95791963387872),
    (0, 3, 0.15772038513228),
    (0, 4, -0.16616417199501e-1),
    (0, 5, 0.81214629983568e-3),
    (1, -9, 0.28319080123804e-3),
    (1, -7, -0.60706301565874e-3),
    (1, -1, -0.18990068218419e-1),
    (1, 0, -0.32529748770505e-1),
    (1, 1, -0.21841717175414e-1),
    (1, 3, -0.52838357969930e-4),
    (2, -3, -0.47184321073267e-3),
    (2, 0, -0.30001780793026e-3),
    (2, 1, 0.47661393906987e-4),
    (2, 3, -0.44141845330846e-5),
    (2, 17, -0.72694996297594e-15),
    (3, -4, -0.31679644845054e-4),
    (3, 0, -0.28270797985312e-5),
    (3, 6, -0.85205128120103e-9),
    (4, -5, -0.22425281908000e-5),
    (4, -2, -0.65171222895601e-6),
    (4, 10, -0.14341729937924e-12),  # see note on n25, n30 below
    (5, -8, -0.40516996860117e-6),
    (8, -11, -0.12734301741641e-8),
    (8, -6, -0.17424871230634e-9),
    (21, -29, -0.68762131295531e-18),
    (23, -31, 0.14478307828521e-19),
    (29, -38, 0.26335781662795e-22),
    (30, -39, -0.11947622640071e-22),
    (31, -40, 0.18228094581404e-23),
    (32, -41, -0.93537087292458e-25),
)
"""Exponents I_i, J_i and coefficients n_i of IAPWS-IF97 region 1, eq. (7), Table 2.

Written from memory and compared term by term with the independent implementation in the
``iapws`` package (version 1.5.5, ``iapws._iapws97Constants``): all 34 agree except n25 and
n30, where our recollection differed in the 4th-7th digits; the values here follow ``iapws``
(n25 = −0.143 417 299 379 24e−12, n30 = 0.144 783 078 285 21e−19).  The choice matters for
n25 (its term is up to 1e−3 of γ_π at 0 °C): with our recollection the release's verification
value v(300 K, 3 MPa) = 0.100215168e−2 m³/kg would be missed by 2.3e−8 relative, with the
``iapws`` value it is met to the printed 9 digits (tested).  The n30 term is below 1e−11 of
γ_π at 0 °C to 100 °C and 0.1 MPa.
"""

WATER_DEFAULT_DENSITY_TEMPERATURE_RANGE: tuple[float, float] = (273.15, 373.15)
"""Temperature range [K] of :func:`viscometry.properties.water.water_viscosity` when it supplies
its own density (IAPWS-IF97 region 1 at 101.325 kPa): 0 °C to 100 °C.

Above the normal boiling point (373.124 K at 101.325 kPa, IAPWS-IF97 saturation line) the liquid
is metastable; IF97 region 1 extrapolates smoothly over the last 0.03 K.
"""

# --------------------------------------------------------------------------------------------
# World Geodetic System 1984, NIMA TR8350.2 (3rd ed., 4 July 1997, amended 3 January 2000),
# "Department of Defense World Geodetic System 1984, Its Definition and Relationships with
# Local Geodetic Systems": defining parameters Table 3.1, derived constants Tables 3.3-3.4.
# All values from memory; the derived ones are recomputed from the defining ones in the tests
# (closed-form Somigliana/Pizzetti relations, Heiskanen & Moritz 1967, §2-7 and §2-8).
# --------------------------------------------------------------------------------------------

WGS84_SEMI_MAJOR_AXIS: float = 6378137.0
"""Semi-major axis a [m], defining parameter (NIMA TR8350.2, Table 3.1)."""

WGS84_INVERSE_FLATTENING: float = 298.257223563
"""Reciprocal of flattening 1/f [1], defining parameter (NIMA TR8350.2, Table 3.1)."""

WGS84_FLATTENING: float = 1.0 / WGS84_INVERSE_FLATTENING
"""Flattening f = 1/298.257223563 [1] (NIMA TR8350.2, Table 3.1)."""

WGS84_SEMI_MINOR_AXIS: float = WGS84_SEMI_MAJOR_AXIS * (1.0 - WGS84_FLATTENING)
"""Semi-minor axis b = a(1 − f) [m] (NIMA TR8350.2, Table 3.3: 6356752.3142 m)."""

WGS84_GRAVITATIONAL_CONSTANT: float = 3.986004418e14
"""Earth's gravitational constant GM, atmosphere included [m³/s²], defining parameter
(NIMA TR8350.2, Table 3.1, value adopted in the 2000 amendment)."""

WGS84_ANGULAR_VELOCITY: float = 7.292115e-5
"""Nominal mean angular velocity of the Earth ω [rad/s], defining parameter
(NIMA TR8350.2, Table 3.1)."""

WGS84_NORMAL_GRAVITY_EQUATOR: float = 9.7803253359
"""Normal gravity at the equator on the ellipsoid γ_e [m/s²] (NIMA TR8350.2, Table 3.4)."""

WGS84_NORMAL_GRAVITY_POLE: float = 9.8321849378
"""Normal gravity at the poles on the ellipsoid γ_p [m/s²] (NIMA TR8350.2, Table 3.4)."""

WGS84_SOMIGLIANA_K: float = 0.00193185265241
"""Somigliana's constant k = bγ_p/(aγ_e) − 1 [1] (NIMA TR8350.2, Table 3.4)."""

WGS84_FIRST_ECCENTRICITY_SQUARED: float = 0.00669437999014
"""First eccentricity squared e² = f(2 − f) [1] (NIMA TR8350.2, Table 3.3, 6.69437999014e-3,
from memory; f(2 − f) = 0.006 694 379 990 141 3 rounds to it, checked in the tests)."""

WGS84_M: float = (
    WGS84_ANGULAR_VELOCITY**2
    * WGS84_SEMI_MAJOR_AXIS**2
    * WGS84_SEMI_MINOR_AXIS
    / WGS84_GRAVITATIONAL_CONSTANT
)
"""m = ω²a²b/GM [1] (NIMA TR8350.2, Table 3.4: 0.00344978650684), used in the free-air term."""
