"""Standard and WGS 84 normal gravity.

The WGS 84 constants were written from memory (NIMA TR8350.2); the derived ones are checked
here by recomputation from the four defining parameters a, 1/f, GM, ω.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from viscometry.errors import InputError, ValidityWarning
from viscometry.properties import constants as c
from viscometry.properties.gravity import normal_gravity, standard_gravity

A = c.WGS84_SEMI_MAJOR_AXIS
F = c.WGS84_FLATTENING
B = A * (1.0 - F)
GM = c.WGS84_GRAVITATIONAL_CONSTANT
OMEGA = c.WGS84_ANGULAR_VELOCITY


def _closed_form_normal_gravity_at_equator_and_pole() -> tuple[float, float]:
    """γ_e, γ_p of a level ellipsoid from a, b, GM, ω (Pizzetti/Somigliana closed form,
    W. A. Heiskanen & H. Moritz, Physical Geodesy (1967), section 2-8; H. Moritz, Geodetic
    Reference System 1980, Bull. Géod. 54 (1980) 395)."""
    e_prime = math.sqrt(A**2 - B**2) / B  # second eccentricity
    q0 = 0.5 * ((1.0 + 3.0 / e_prime**2) * math.atan(e_prime) - 3.0 / e_prime)
    q0_prime = 3.0 * (1.0 + 1.0 / e_prime**2) * (1.0 - math.atan(e_prime) / e_prime) - 1.0
    m = OMEGA**2 * A**2 * B / GM
    ratio = e_prime * q0_prime / q0
    gamma_e = GM / (A * B) * (1.0 - m - m / 6.0 * ratio)
    gamma_p = GM / A**2 * (1.0 + m / 3.0 * ratio)
    return gamma_e, gamma_p


def test_standard_gravity_is_exact() -> None:
    # 3rd CGPM (1901): g_n = 9.806 65 m/s^2 exactly [published; REFERENCES.md]
    assert standard_gravity() == 9.80665


def test_tabulated_normal_gravity_recomputed_from_defining_constants() -> None:
    # NIMA TR8350.2 Table 3.4 values (from memory) against the closed form above.
    # Agreement 4e-13 (equator) and 6e-12 (pole) observed; tolerance 1e-10 = the 10-decimal
    # rounding of the tabulated values.
    gamma_e, gamma_p = _closed_form_normal_gravity_at_equator_and_pole()
    assert gamma_e == pytest.approx(c.WGS84_NORMAL_GRAVITY_EQUATOR, rel=1e-10)
    assert gamma_p == pytest.approx(c.WGS84_NORMAL_GRAVITY_POLE, rel=1e-10)


def test_derived_ellipsoid_constants_recomputed() -> None:
    # NIMA TR8350.2 Tables 3.3-3.4 (from memory), recomputed from a, f, GM, omega.
    assert c.WGS84_FIRST_ECCENTRICITY_SQUARED == pytest.approx(F * (2.0 - F), abs=5e-15)
    assert B == pytest.approx(6356752.3142, abs=1e-4)  # Table 3.3, 4 decimals
    k = B * c.WGS84_NORMAL_GRAVITY_POLE / (A * c.WGS84_NORMAL_GRAVITY_EQUATOR) - 1.0
    assert c.WGS84_SOMIGLIANA_K == pytest.approx(k, rel=1e-8)  # limited by rounded gammas
    assert c.WGS84_M == pytest.approx(0.00344978650684, abs=1e-14)  # Table 3.4 value


def test_equator_is_gamma_e_exactly() -> None:
    assert normal_gravity(0.0) == c.WGS84_NORMAL_GRAVITY_EQUATOR


@pytest.mark.parametrize("latitude", [90.0, -90.0])
def test_pole_is_gamma_p(latitude: float) -> None:
    # Mathematically exact; numerically the tabulated k and γ_e, γ_p are each rounded, which
    # leaves 6e-12 relative (see test_derived_ellipsoid_constants_recomputed).
    assert normal_gravity(latitude) == pytest.approx(c.WGS84_NORMAL_GRAVITY_POLE, rel=1e-10)


@pytest.mark.parametrize("latitude", [15.0, 45.0, 52.5, 80.0])
def test_somigliana_original_form(latitude: float) -> None:
    # Independent recomputation: Somigliana's formula in its original form
    # γ = (aγ_e cos²φ + bγ_p sin²φ)/√(a² cos²φ + b² sin²φ) (Heiskanen & Moritz 1967, 2-8).
    phi = math.radians(latitude)
    cos2, sin2 = math.cos(phi) ** 2, math.sin(phi) ** 2
    expected = (
        A * c.WGS84_NORMAL_GRAVITY_EQUATOR * cos2 + B * c.WGS84_NORMAL_GRAVITY_POLE * sin2
    ) / (math.sqrt(A**2 * cos2 + B**2 * sin2))
    assert normal_gravity(latitude) == pytest.approx(expected, rel=1e-10)


def test_45_degrees_against_grs80_series() -> None:
    # International gravity formula 1980 (GRS 80, series form), from memory:
    # g = 9.780327 (1 + 0.0053024 sin²φ − 0.0000058 sin²2φ) m/s². Its truncation and the
    # GRS 80/WGS 84 difference allow a few 1e-6 m/s²; observed 2.1e-6.
    phi = math.radians(45.0)
    series = 9.780327 * (1 + 0.0053024 * math.sin(phi) ** 2 - 0.0000058 * math.sin(2 * phi) ** 2)
    assert normal_gravity(45.0) == pytest.approx(series, abs=3e-6)


def test_free_air_gradient() -> None:
    # Common practice, no source: the normal free-air gradient is about -3.086e-6 s^-2
    # (-0.3086 mGal/m) near 45 degrees.
    h = 1.0
    gradient = (normal_gravity(45.0, h) - normal_gravity(45.0, -h)) / (2 * h)
    assert gradient == pytest.approx(-3.086e-6, rel=5e-4)


def test_free_air_second_order_term() -> None:
    # The h² term of NIMA TR8350.2 eq. (4-3): γ_h - γ_linear = 3 γ h²/a² exactly.
    h = 5000.0
    g0 = normal_gravity(30.0)
    sin2 = math.sin(math.radians(30.0)) ** 2
    linear = g0 * (1 - 2 / A * (1 + F + c.WGS84_M - 2 * F * sin2) * h)
    assert normal_gravity(30.0, h) - linear == pytest.approx(3 * g0 * h**2 / A**2, rel=1e-6)


def test_vectorised_and_symmetric() -> None:
    lat = np.array([-60.0, -30.0, 0.0, 30.0, 60.0])
    g = normal_gravity(lat, np.array([0.0, 100.0, 0.0, 100.0, 0.0]))
    assert isinstance(g, np.ndarray) and g.shape == (5,)
    assert g[0] == g[4] and g[1] == g[3]
    assert np.all(np.diff(normal_gravity(np.linspace(0, 90, 10))) > 0)


def test_invalid_inputs() -> None:
    with pytest.raises(InputError, match="latitude must be between -90 and 90 degrees, got 91.0"):
        normal_gravity(91.0)
    with pytest.raises(InputError, match="height must be finite, got nan"):
        normal_gravity(10.0, float("nan"))
    with pytest.warns(ValidityWarning, match="height 30000 m"):
        normal_gravity(10.0, 30000.0)
