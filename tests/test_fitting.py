"""Weighted linear least squares, checked on JCGM 100:2008 H.3 and against scipy."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
import scipy.optimize
import scipy.stats
from hypothesis import given, settings
from hypothesis import strategies as st

from viscometry.errors import InputError
from viscometry.fitting import LeastSquaresResult, weighted_least_squares

# JCGM 100:2008, H.3, Table H.6: thermometer readings t_k and corrections b_k [degC]
# (REFERENCES.md: from memory; recomputed).
H3_READINGS = np.array(
    [21.521, 22.012, 22.512, 23.003, 23.507, 23.999, 24.513, 25.002, 25.503, 26.010, 26.511]
)
H3_CORRECTIONS = np.array(
    [-0.171, -0.169, -0.166, -0.159, -0.164, -0.165, -0.156, -0.157, -0.159, -0.161, -0.160]
)
H3_REFERENCE_TEMPERATURE = 20.0  # t0 = 20 degC in b = y1 + y2 (t - t0)


@pytest.fixture(scope="module")
def h3_fit() -> LeastSquaresResult:
    design = np.column_stack([np.ones_like(H3_READINGS), H3_READINGS - H3_REFERENCE_TEMPERATURE])
    return weighted_least_squares(design, H3_CORRECTIONS)


def test_gum_h3_printed_digits(h3_fit: LeastSquaresResult) -> None:
    # JCGM 100:2008, H.3 (values from memory, recomputed; REFERENCES.md), compared at the
    # digits printed there.
    y1, y2 = h3_fit.parameters
    s1, s2 = h3_fit.standard_uncertainties
    assert round(y1, 4) == -0.1712  # degC
    assert round(s1, 4) == 0.0029  # degC
    assert round(y2, 5) == 0.00218
    assert round(s2, 5) == 0.00067
    assert round(h3_fit.correlation[0, 1], 3) == -0.930
    assert round(h3_fit.residual_standard_deviation, 4) == 0.0035  # degC
    assert h3_fit.degrees_of_freedom == 9
    value, u = h3_fit.predict([1.0, 30.0 - H3_REFERENCE_TEMPERATURE])
    assert round(value, 4) == -0.1494  # b(30 degC)
    assert round(u, 4) == 0.0041


def test_gum_h3_against_scipy_linregress(h3_fit: LeastSquaresResult) -> None:
    # Independent recomputation with scipy.stats.linregress (closed-form straight line).
    ref = scipy.stats.linregress(H3_READINGS - H3_REFERENCE_TEMPERATURE, H3_CORRECTIONS)
    np.testing.assert_allclose(h3_fit.parameters, [ref.intercept, ref.slope], rtol=1e-12)
    np.testing.assert_allclose(
        h3_fit.standard_uncertainties, [ref.intercept_stderr, ref.stderr], rtol=1e-10
    )


def test_weighted_fit_matches_curve_fit_absolute_sigma() -> None:
    # Independent recomputation: scipy.optimize.curve_fit with absolute_sigma=True.
    rng = np.random.default_rng(20240501)
    x = np.linspace(0.0, 10.0, 15)
    sigma = 0.05 + 0.02 * x
    y = 0.3 - 1.2 * x + 0.04 * x**2 + rng.normal(0.0, sigma)
    design = np.column_stack([np.ones_like(x), x, x**2])
    fit = weighted_least_squares(design, y, sigma)
    popt, pcov = scipy.optimize.curve_fit(
        lambda t, a, b, c: a + b * t + c * t**2, x, y, sigma=sigma, absolute_sigma=True
    )
    np.testing.assert_allclose(fit.parameters, popt, rtol=1e-7)
    np.testing.assert_allclose(fit.covariance, pcov, rtol=1e-6)
    assert fit.chi_squared == pytest.approx(np.sum(fit.residuals**2 / sigma**2))
    assert not fit.covariance_scaled
    relative = weighted_least_squares(design, y, sigma, absolute_sigma=False)
    np.testing.assert_allclose(
        relative.covariance, fit.covariance * fit.chi_squared / fit.degrees_of_freedom
    )


def test_exact_data_recovered() -> None:
    # Exact analytic case: y = 2 - 3x has zero residuals.
    x = np.array([0.0, 1.0, 2.0, 5.0])
    fit = weighted_least_squares(np.column_stack([np.ones(4), x]), 2.0 - 3.0 * x)
    np.testing.assert_allclose(fit.parameters, [2.0, -3.0], rtol=1e-13)
    assert fit.residual_standard_deviation == pytest.approx(0.0, abs=1e-13)


def test_predict_many_rows_matches_single(h3_fit: LeastSquaresResult) -> None:
    rows = np.array([[1.0, 0.0], [1.0, 5.0], [1.0, 10.0]])
    values, us = h3_fit.predict(rows)
    for row, v, u in zip(rows, values, us, strict=True):
        assert h3_fit.predict(row) == pytest.approx((v, u), rel=1e-14)
    # at x = 0 the prediction is the intercept and its standard uncertainty
    assert us[0] == pytest.approx(h3_fit.standard_uncertainties[0], rel=1e-14)
    with pytest.raises(InputError, match="row must have 2 elements"):
        h3_fit.predict([1.0, 2.0, 3.0])


def test_result_is_immutable(h3_fit: LeastSquaresResult) -> None:
    with pytest.raises(dataclasses.FrozenInstanceError):
        h3_fit.degrees_of_freedom = 3  # type: ignore[misc]
    with pytest.raises(ValueError):
        h3_fit.parameters[0] = 1.0


def test_input_errors() -> None:
    design = np.column_stack([np.ones(3), [1.0, 2.0, 3.0]])
    with pytest.raises(InputError, match="full column rank 2, got rank 1"):
        weighted_least_squares(np.ones((3, 2)), [1.0, 2.0, 3.0])
    with pytest.raises(InputError, match="must exceed the number of parameters"):
        weighted_least_squares(design[:2], [1.0, 2.0])
    with pytest.raises(InputError, match="sigma must be positive and finite, got -0.1"):
        weighted_least_squares(design, [1.0, 2.0, 3.0], [0.1, -0.1, 0.1])
    with pytest.raises(InputError, match="y must have 3 elements"):
        weighted_least_squares(design, [1.0, 2.0])
    with pytest.raises(InputError, match="y must be finite, got nan"):
        weighted_least_squares(design, [1.0, float("nan"), 2.0])
    # with absolute sigma, n = p is allowed (no residual variance needed)
    exact = weighted_least_squares(design[:2], [1.0, 2.0], [0.1, 0.1])
    assert exact.degrees_of_freedom == 0 and np.isnan(exact.residual_standard_deviation)


@settings(max_examples=30, deadline=None, derandomize=True)
@given(
    intercept=st.floats(-100, 100),
    slope=st.floats(-10, 10),
    scale=st.floats(0.01, 100),
)
def test_uniform_sigma_scaling_leaves_estimates(
    intercept: float, slope: float, scale: float
) -> None:
    # Property: multiplying every sigma by the same factor changes no estimate and scales the
    # absolute covariance by factor².
    rng = np.random.default_rng(7)
    x = np.linspace(-1.0, 1.0, 8)
    y = intercept + slope * x + rng.normal(0.0, 0.1, x.size)
    design = np.column_stack([np.ones_like(x), x])
    a = weighted_least_squares(design, y, np.full(x.size, 0.1))
    b = weighted_least_squares(design, y, np.full(x.size, 0.1 * scale))
    np.testing.assert_allclose(a.parameters, b.parameters, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(
        b.covariance, a.covariance * scale**2, rtol=1e-9, atol=1e-12 * np.max(b.covariance)
    )
