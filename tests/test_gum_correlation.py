"""Correlated inputs (JCGM 100:2008, 5.2)."""

import numpy as np
import pytest
from uncertainties import correlated_values

from viscometry.errors import CorrelationError
from viscometry.gum import Budget, Correlation, InputQuantity, validate_correlation


def two(r):
    inputs = [InputQuantity.normal("x1", 1.0, 0.3), InputQuantity.normal("x2", 2.0, 0.5)]
    return Budget.from_formula("y", "x1 + x2", inputs, correlations=[Correlation("x1", "x2", r)])


def test_full_positive_correlation_adds_uncertainties():
    # exact analytic (JCGM 100:2008, 5.2.2 note 1): r = +1 -> u = u1 + u2
    assert two(1.0).evaluate().standard_uncertainty == pytest.approx(0.8)


def test_full_negative_correlation_subtracts():
    # exact analytic: r = -1 -> u = |u1 - u2|
    assert two(-1.0).evaluate().standard_uncertainty == pytest.approx(0.2)


def test_cross_term_line():
    r = two(0.5).evaluate()
    (term,) = r.cross_terms
    assert term.covariance_term == pytest.approx(2 * 0.5 * 0.3 * 0.5)
    shares = sum(c.variance_share for c in r.contributions) + term.variance_share
    assert shares == pytest.approx(1.0)


def test_against_uncertainties_package():
    # independent reference library: `uncertainties.correlated_values`
    cov = np.array([[0.09, 0.3 * 0.3 * 0.5], [0.3 * 0.3 * 0.5, 0.25]])
    a, b = correlated_values([1.0, 2.0], cov)
    y = a * b**2
    inputs = [InputQuantity.normal("x1", 1.0, 0.3), InputQuantity.normal("x2", 2.0, 0.5)]
    r = Budget.from_formula(
        "y", "x1 * x2**2", inputs, correlations=[Correlation("x1", "x2", 0.3)]
    ).evaluate()
    assert r.standard_uncertainty == pytest.approx(y.std_dev, rel=1e-12)


@pytest.mark.parametrize(
    ("matrix", "fragment"),
    [
        ([[1, 0.5], [0.4, 1]], "not symmetric"),
        ([[1, 1.2], [1.2, 1]], "outside"),
        ([[1, 0.9, -0.9], [0.9, 1, 0.9], [-0.9, 0.9, 1]], "not positive semidefinite"),
        ([[0.9, 0], [0, 1]], "must be 1"),
    ],
)
def test_invalid_matrix_rejected(matrix, fragment):
    with pytest.raises(CorrelationError, match=fragment):
        validate_correlation(np.array(matrix, dtype=float))


def test_inconsistent_pairwise_correlations_rejected_in_budget():
    inputs = [InputQuantity.normal(n, 1.0, 0.1) for n in ("a", "b", "c")]
    corr = [Correlation("a", "b", 0.9), Correlation("b", "c", 0.9), Correlation("a", "c", -0.9)]
    with pytest.raises(CorrelationError, match="not positive semidefinite"):
        Budget.from_formula("y", "a + b + c", inputs, correlations=corr)


def test_unknown_name_and_bad_coefficient():
    inputs = [InputQuantity.normal("a", 1.0, 0.1), InputQuantity.normal("b", 1.0, 0.1)]
    with pytest.raises(CorrelationError, match="unknown input 'z'"):
        Budget.from_formula("y", "a + b", inputs, correlations=[Correlation("a", "z", 0.1)])
    with pytest.raises(CorrelationError, match="1.5 lies outside"):
        Correlation("a", "b", 1.5)


def test_welch_satterthwaite_with_correlation_is_flagged():
    inputs = [
        InputQuantity.from_readings("a", [1.0, 1.1, 0.9]),
        InputQuantity.normal("b", 1.0, 0.1),
    ]
    r = Budget.from_formula(
        "y", "a + b", inputs, correlations=[Correlation("a", "b", 0.4)]
    ).evaluate()
    assert any("Welch-Satterthwaite assumes independent inputs" in w for w in r.warnings)
