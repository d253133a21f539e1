"""Water density and viscosity against published values and an independent implementation.

Sources of the expected numbers are given beside each assertion.  The ``iapws`` package
(PyPI, an independent implementation of the IAPWS releases) serves as a second opinion.
"""

from __future__ import annotations

import warnings

import iapws
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from iapws.iapws97 import _Region1

from viscometry.errors import InputError, ValidityWarning
from viscometry.properties import constants
from viscometry.properties.water import (
    water_density,
    water_density_if97,
    water_density_uncertainty,
    water_kinematic_viscosity,
    water_viscosity,
    water_viscosity_relative_uncertainty,
)

P_ATM_MPA = 0.101325  # 101 325 Pa in the MPa the iapws package expects (exact)


def _iapws95_liquid(temperature: float):
    state = iapws.IAPWS95(T=float(temperature), P=P_ATM_MPA)
    assert state.phase == "Liquid"
    return state


# ------------------------------------------------------------------ Tanaka et al. (2001)


@pytest.mark.parametrize(
    ("celsius", "expected"),
    [
        (20.0, 998.2067),  # REFERENCES.md: Tanaka et al., Metrologia 38 (2001) 301, table
        (25.0, 997.0470),  # idem
    ],
)
def test_tanaka_density_table_values(celsius: float, expected: float) -> None:
    rho = water_density(constants.ZERO_CELSIUS + celsius)
    assert rho == pytest.approx(expected, abs=0.5e-4)  # printed to 4 decimals


def test_tanaka_density_maximum_is_a5_at_minus_a1() -> None:
    # Exact analytic case of the formula: at t = -a1 the bracket term vanishes, rho = a5,
    # and it is the maximum (Tanaka et al. 2001, eq. (1)).
    t_max = constants.ZERO_CELSIUS - constants.TANAKA_A1
    assert water_density(t_max) == pytest.approx(constants.TANAKA_A5, rel=1e-15)
    assert water_density(t_max - 0.1) < water_density(t_max) > water_density(t_max + 0.1)


def test_tanaka_density_agrees_with_iapws95() -> None:
    # Independent recomputation: IAPWS-95 (iapws package) at 101.325 kPa, 0.01 to 40 degC.
    # Observed deviation 1.2e-6; tolerance 3e-6 = a few times the ~1 ppm uncertainty of the
    # Tanaka formula (from memory) and of IAPWS-95 in this range.
    temps = np.linspace(273.16, 313.15, 9)
    reference = np.array([_iapws95_liquid(t).rho for t in temps])
    np.testing.assert_allclose(water_density(temps), reference, rtol=3e-6)


def test_tanaka_density_vectorised_and_scalar() -> None:
    temps = np.array([[280.0, 290.0], [300.0, 310.0]])
    rho = water_density(temps)
    assert isinstance(rho, np.ndarray) and rho.shape == (2, 2)
    assert isinstance(water_density(293.15), float)
    assert rho[0, 1] == water_density(290.0)


def test_tanaka_density_warns_outside_range_with_value_and_range() -> None:
    with pytest.warns(ValidityWarning, match=r"temperature 323\.15 K .*273\.15 to 313\.15 K"):
        water_density(323.15)


@pytest.mark.parametrize("bad", [-1.0, 0.0, float("nan"), float("inf")])
def test_tanaka_density_rejects_nonphysical_temperature(bad: float) -> None:
    with pytest.raises(InputError, match="temperature must be positive"):
        water_density(bad)


def test_tanaka_density_rejects_text() -> None:
    with pytest.raises(InputError, match="temperature"):
        water_density("hot")  # type: ignore[arg-type]


def test_tanaka_density_uncertainty_constant() -> None:
    # Value from memory (constants.TANAKA_DENSITY_STANDARD_UNCERTAINTY): order 1 ppm.
    u = water_density_uncertainty(np.array([280.0, 300.0]))
    np.testing.assert_array_equal(u, [0.0009, 0.0009])
    assert 0.0 < u[0] / water_density(300.0) < 2e-6


# ------------------------------------------------------------------ IAPWS-IF97 region 1


@pytest.mark.parametrize(
    ("temperature", "pressure", "specific_volume"),
    [
        # IAPWS R7-97(2012), Table 5 (computer-verification values), from memory; the first
        # is also printed in the iapws package's docstring of _Region1.
        (300.0, 3e6, 0.100215168e-2),
        (300.0, 80e6, 0.971180894e-3),
        (500.0, 3e6, 0.120241800e-2),
    ],
)
def test_if97_region1_verification_values(
    temperature: float, pressure: float, specific_volume: float
) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ValidityWarning)  # 500 K is outside our 0-100 degC check
        rho = water_density_if97(temperature, pressure)
    assert 1.0 / rho == pytest.approx(specific_volume, rel=1e-8)  # 9 significant digits


def test_if97_density_matches_iapws_package_region1() -> None:
    # Same formulation, independent code (iapws.iapws97._Region1): rounding-level agreement.
    temps = np.linspace(273.15, 373.15, 21)
    reference = np.array([1.0 / _Region1(t, P_ATM_MPA)["v"] for t in temps])
    np.testing.assert_allclose(water_density_if97(temps), reference, rtol=1e-12)


def test_if97_density_close_to_iapws95() -> None:
    # IF97 is an approximation of IAPWS-95; observed max deviation 1.5e-5 at 0-100 degC,
    # 101.325 kPa. Tolerance 3e-5 (common practice: IF97 region 1 densities agree with
    # IAPWS-95 to a few 1e-5 or better).
    temps = np.linspace(273.16, 373.10, 21)
    reference = np.array([_iapws95_liquid(t).rho for t in temps])
    np.testing.assert_allclose(water_density_if97(temps), reference, rtol=3e-5)


def test_if97_density_warnings_and_errors() -> None:
    with pytest.warns(ValidityWarning, match="temperature 380 K"):
        water_density_if97(380.0)
    with pytest.warns(ValidityWarning, match="pressure 2e\\+08 Pa"):
        water_density_if97(300.0, 200e6)
    with pytest.raises(InputError, match="pressure must be positive and finite, got -1.0 Pa"):
        water_density_if97(300.0, -1.0)


# ------------------------------------------------------------------ IAPWS R12-08 viscosity


@pytest.mark.parametrize(
    ("temperature", "density", "micro_pascal_seconds"),
    [
        # IAPWS R12-08, Table 4 (computer-verification values, mu2 = 1) [published;
        # REFERENCES.md]
        (298.15, 998.0, 889.735100),
        (373.15, 1000.0, 307.883622),
        (433.15, 1.0, 14.538324),
    ],
)
def test_viscosity_r12_08_verification_table(
    temperature: float, density: float, micro_pascal_seconds: float
) -> None:
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # all three are inside the validity range: no warning
        eta = water_viscosity(temperature, density)
    assert eta * 1e6 == pytest.approx(micro_pascal_seconds, abs=0.6e-6)  # printed digits


def test_viscosity_matches_iapws_package_at_same_density() -> None:
    # Independent implementation of the same release (iapws._iapws._Viscosity via IAPWS95,
    # whose critical enhancement is ~1 here): agreement to rounding when fed the same density.
    temps = np.linspace(273.16, 373.10, 21)
    states = [_iapws95_liquid(t) for t in temps]
    rho = np.array([s.rho for s in states])
    mu = np.array([s.mu for s in states])
    np.testing.assert_allclose(water_viscosity(temps, rho), mu, rtol=1e-12)


def test_viscosity_default_density_agrees_with_iapws95() -> None:
    # iapws.IAPWS95(T, P=0.101325).mu: R12-08 with the IAPWS-95 density. Ours uses the IF97
    # density; observed deviation 2.2e-5, tolerance 5e-5 (the density difference, see above,
    # times d ln(eta)/d ln(rho) < 2; far below the formulation's 1 % uncertainty).
    temps = np.linspace(273.16, 373.10, 41)
    reference = np.array([_iapws95_liquid(t).mu for t in temps])
    np.testing.assert_allclose(water_viscosity(temps), reference, rtol=5e-5)


def test_viscosity_at_20c_within_iso_tr_3666_uncertainty() -> None:
    # ISO/TR 3666:1998: 1.0016 mPa*s at 20 degC, 101.325 kPa, U = 0.17 % (k = 2) [from memory]
    eta = water_viscosity(constants.ZERO_CELSIUS + 20.0)
    reference = constants.ISO_TR_3666_WATER_VISCOSITY_20C
    u_rel = constants.ISO_TR_3666_WATER_VISCOSITY_20C_RELATIVE_EXPANDED_UNCERTAINTY
    assert abs(eta / reference - 1.0) <= u_rel
    assert round(eta * 1e3, 4) == 1.0016  # and at the printed digits


def test_kinematic_viscosity_at_20c() -> None:
    # ISO/TR 3666:1998 value as cited in ASTM D2162, 3.1.1.1: 1.0034 mm^2/s [published]
    nu = water_kinematic_viscosity(constants.ZERO_CELSIUS + 20.0)
    assert abs(nu / constants.ISO_TR_3666_WATER_KINEMATIC_VISCOSITY_20C - 1.0) <= 0.0017
    assert round(nu * 1e6, 4) == 1.0034


def test_kinematic_viscosity_is_ratio() -> None:
    temps = np.array([275.0, 300.0, 350.0])
    np.testing.assert_allclose(
        water_kinematic_viscosity(temps),
        water_viscosity(temps) / water_density_if97(temps),
        rtol=1e-15,
    )


def test_viscosity_warnings() -> None:
    with pytest.warns(ValidityWarning, match=r"temperature 380 K .*273\.15 to 373\.15 K"):
        water_viscosity(380.0)
    with pytest.warns(ValidityWarning, match="temperature 1200 K"):
        water_viscosity(1200.0, 100.0)
    with pytest.warns(ValidityWarning, match="temperature 270 K"):
        water_kinematic_viscosity(270.0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        water_viscosity(np.linspace(273.15, 373.15, 5))  # the whole range: silent


def test_viscosity_rejects_nonpositive_density() -> None:
    with pytest.raises(InputError, match="density must be positive and finite, got -5.0"):
        water_viscosity(300.0, -5.0)


def test_viscosity_relative_uncertainty() -> None:
    # IAPWS R12-08: about 1 % (k = 2) in the liquid at 0.1 MPa [from memory] -> 0.5 % standard
    assert water_viscosity_relative_uncertainty(300.0) == pytest.approx(0.005)
    assert water_viscosity_relative_uncertainty(np.array([280.0, 350.0])).shape == (2,)
    with pytest.warns(ValidityWarning):
        water_viscosity_relative_uncertainty(400.0)


@settings(max_examples=50, deadline=None, derandomize=True)
@given(st.floats(min_value=273.15, max_value=373.0))
def test_viscosity_decreases_with_temperature(temperature: float) -> None:
    # Common practice, no source: liquid water's viscosity falls monotonically with T.
    assert water_viscosity(temperature + 0.1) < water_viscosity(temperature)
