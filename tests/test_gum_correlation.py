"""Correlated inputs (JCGM 100:2008, 5.2)."""

import numpy as np
import pytest
from uncertainties import correlated_values

from viscometry.errors import CorrelationError
from viscometry.gum import Budget, Correlation, InputQuantity, validate_correlation
from viscometry.gum.montecarlo import draw_inputs, run_monte_carlo


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
    # exact analytic (JCGM 100:2008, eq. 16): cross term 2 r c1 c2 u1 u2 = 0.15
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


# --------------------------------------------------------------------------- one refusal, every path
# A correlation matrix is refused by the first-order path (Budget, through
# validate_correlation with the input names) and by the Monte Carlo path (run_monte_carlo,
# draw_inputs) in exactly the same way: same exception class, same message. Nothing is
# symmetrised, clipped or otherwise repaired, however small the defect.
_NAMES = ("a", "b", "c")
_NOT_PSD = [[1.0, 0.9, -0.9], [0.9, 1.0, 0.9], [-0.9, 0.9, 1.0]]  # smallest eigenvalue -0.8
# Barely not PSD: r(a,b) = r(b,c) = 1 force r(a,c) = 1; 1 - 1e-6 gives an eigenvalue of
# about -3e-7, far below the round-off allowance of 1e-10 but easy to "repair" by clipping.
_BARELY_NOT_PSD = [[1.0, 1.0, 1.0 - 1e-6], [1.0, 1.0, 1.0], [1.0 - 1e-6, 1.0, 1.0]]
_ASYMMETRIC = [[1.0, 0.5, 0.0], [0.5 + 1e-9, 1.0, 0.0], [0.0, 0.0, 1.0]]
_ABOVE_ONE = [[1.0, 1.0 + 1e-9, 0.0], [1.0 + 1e-9, 1.0, 0.0], [0.0, 0.0, 1.0]]


def _pairs(matrix):
    return [
        Correlation(_NAMES[i], _NAMES[j], matrix[i][j])
        for i in range(3)
        for j in range(i + 1, 3)
        if matrix[i][j] != 0.0
    ]


def _mc_inputs():
    return [InputQuantity.normal(n, 1.0, 0.1) for n in _NAMES]


def _refusal(call):
    with pytest.raises(CorrelationError) as err:
        call()
    return type(err.value), str(err.value)


def _mc_refusals(matrix):
    rng = np.random.default_rng(0)
    return (
        _refusal(lambda: draw_inputs(_mc_inputs(), matrix, 10, rng)),
        _refusal(
            lambda: run_monte_carlo(
                lambda a, b, c: a + b + c, _mc_inputs(), correlation=matrix, trials=1000, seed=1
            )
        ),
    )


@pytest.mark.parametrize(
    ("matrix", "fragment"),
    [
        (_NOT_PSD, "not positive semidefinite"),
        (_BARELY_NOT_PSD, "not positive semidefinite"),
        (_ABOVE_ONE, "lies outside [-1, 1]"),
    ],
    ids=["not-psd", "barely-not-psd", "r-above-one"],
)
def test_budget_and_monte_carlo_refuse_a_bad_matrix_identically(matrix, fragment):
    inputs = [InputQuantity.normal(n, 1.0, 0.1) for n in _NAMES]
    first_order = _refusal(
        lambda: Budget.from_formula("y", "a + b + c", inputs, correlations=_pairs(matrix))
    )
    assert first_order[0] is CorrelationError
    assert fragment in first_order[1]
    # the validator of the first-order path, given the same matrix and names, says the same
    assert _refusal(lambda: validate_correlation(np.array(matrix), _NAMES)) == first_order
    for mc in _mc_refusals(matrix):
        assert mc == first_order, "Monte Carlo must refuse with the budget's exact message"


def test_an_asymmetric_matrix_is_refused_identically_and_not_symmetrised():
    # A budget's pairwise Correlations are symmetric by construction; the first-order path's
    # check of a matrix is validate_correlation (tolerance 1e-12), and Monte Carlo must give
    # the very same refusal for a difference of 1e-9, not average the two halves.
    first_order = _refusal(lambda: validate_correlation(np.array(_ASYMMETRIC), _NAMES))
    assert first_order[1].startswith("correlation matrix is not symmetric: r(a, b) = 0.5 but")
    for mc in _mc_refusals(_ASYMMETRIC):
        assert mc == first_order, "Monte Carlo must refuse with the first-order path's message"


def test_monte_carlo_accepts_what_the_budget_accepts_at_the_edges():
    # |r| = 1 exactly and a singular (but PSD) matrix are legal on both paths.
    edge = [[1.0, 1.0, 0.0], [1.0, 1.0, 0.0], [0.0, 0.0, 1.0]]
    inputs = [InputQuantity.normal(n, 1.0, 0.1) for n in _NAMES]
    b = Budget.from_formula("y", "a + b + c", inputs, correlations=_pairs(edge))
    # exact analytic: u = sqrt((0.1 + 0.1)^2 + 0.1^2) = sqrt(0.05)
    assert b.evaluate().standard_uncertainty == pytest.approx(0.05**0.5, rel=1e-12)
    x = draw_inputs(_mc_inputs(), edge, 1000, np.random.default_rng(2))
    np.testing.assert_allclose(x[0], x[1], atol=1e-12)  # r = 1: identical draws (exact)
