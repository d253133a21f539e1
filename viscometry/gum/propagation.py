"""The law of propagation of uncertainty and its companions, on plain numpy arrays.

Pure numerics, no units and no sympy: sensitivity coefficients c, standard uncertainties u,
a correlation matrix R and degrees of freedom ν in; variances, the effective degrees of freedom
and the coverage factor out.

References
----------
JCGM 100:2008 (GUM), 5.1.2 (eq. 10), 5.2.2 (eq. 13/16), G.4.1 (eq. G.2b), G.6.4.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from scipy import stats

from viscometry.errors import CorrelationError, InputError
from viscometry.gum.inputs import coverage_factor_for

__all__ = [
    "validate_correlation",
    "combined_variance",
    "welch_satterthwaite",
    "truncate_dof",
    "truncate_dofs",
    "coverage_factor_for",
    "coverage_factors",
    "higher_order_variance",
    "PSD_TOLERANCE",
]

#: Smallest eigenvalue accepted for a correlation matrix (round-off allowance).
PSD_TOLERANCE = 1e-10


def validate_correlation(matrix: np.ndarray, names: Sequence[str] | None = None) -> np.ndarray:
    """Check a correlation matrix and return it as a read-only float array.

    Requirements: square, finite, symmetric, unit diagonal, |r| ≤ 1, and positive
    semidefinite (smallest eigenvalue ≥ −:data:`PSD_TOLERANCE`). An invalid matrix is
    rejected, never silently repaired.

    Raises
    ------
    CorrelationError
        Naming the offending pair and value, or the negative eigenvalue.

    Examples
    --------
    >>> validate_correlation(np.array([[1.0, 0.5], [0.5, 1.0]]))[0, 1]
    np.float64(0.5)
    """
    r = np.array(matrix, dtype=float)
    n = r.shape[0] if r.ndim == 2 else -1
    if r.ndim != 2 or r.shape != (n, n):
        raise CorrelationError(f"correlation matrix must be square, got shape {r.shape}")
    label = list(names) if names is not None else [f"x{i + 1}" for i in range(n)]
    if not np.all(np.isfinite(r)):
        i, j = np.argwhere(~np.isfinite(r))[0]
        raise CorrelationError(
            f"correlation r({label[i]}, {label[j]}) is not finite: {float(r[i, j])!r}"
        )
    for i in range(n):
        if r[i, i] != 1.0:
            raise CorrelationError(
                f"correlation r({label[i]}, {label[i]}) must be 1, got {float(r[i, i])!r}"
            )
    bad = np.argwhere(np.abs(r) > 1.0)
    if bad.size:
        i, j = bad[0]
        raise CorrelationError(
            f"correlation r({label[i]}, {label[j]}) = {float(r[i, j])!r} lies outside [-1, 1]"
        )
    asym = np.argwhere(np.abs(r - r.T) > 1e-12)
    if asym.size:
        i, j = asym[0]
        raise CorrelationError(
            f"correlation matrix is not symmetric: r({label[i]}, {label[j]}) = {float(r[i, j])!r} but "
            f"r({label[j]}, {label[i]}) = {float(r[j, i])!r}"
        )
    if n:
        low = float(np.linalg.eigvalsh(r).min())
        if low < -PSD_TOLERANCE:
            raise CorrelationError(
                f"correlation matrix is not positive semidefinite (smallest eigenvalue {low:.3g}); "
                f"the coefficients are mutually inconsistent"
            )
    r.setflags(write=False)
    return r


def combined_variance(
    sensitivities: np.ndarray, uncertainties: np.ndarray, correlation: np.ndarray | None = None
) -> np.ndarray:
    """Combined variance u_c² = Σᵢ Σⱼ cᵢ cⱼ u(xᵢ) u(xⱼ) r(xᵢ, xⱼ) (JCGM 100:2008, eq. 16).

    ``sensitivities`` may carry extra trailing axes (one budget per column) for
    vectorised sweeps: shape (N,) or (N, M). ``uncertainties`` has shape (N,) or (N, M).

    Examples
    --------
    >>> float(combined_variance(np.array([1.0, 1.0]), np.array([3.0, 4.0])))
    25.0
    """
    cu = np.asarray(sensitivities, dtype=float) * np.asarray(uncertainties, dtype=float)
    if correlation is None:
        return np.sum(cu * cu, axis=0)
    return np.einsum("i...,ij,j...->...", cu, np.asarray(correlation, dtype=float), cu)


def welch_satterthwaite(
    contributions: np.ndarray, dofs: np.ndarray, combined_uncertainty: np.ndarray | float
) -> np.ndarray | float:
    """Effective degrees of freedom ν_eff = u_c⁴ / Σ (cᵢu(xᵢ))⁴/νᵢ (JCGM 100:2008, eq. G.2b).

    Inputs with infinite νᵢ add nothing to the denominator; when all do, ν_eff is infinite.
    The value returned is not truncated (see :func:`truncate_dof`).

    Examples
    --------
    >>> welch_satterthwaite(np.array([1.0, 1.0]), np.array([4.0, np.inf]), np.sqrt(2.0))
    16.000000000000004
    """
    c = np.asarray(contributions, dtype=float)
    nu = np.asarray(dofs, dtype=float)
    if nu.ndim < c.ndim:  # one dof per input, shared by every column
        nu = nu.reshape((-1,) + (1,) * (c.ndim - 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = np.where(np.isinf(nu), 0.0, c**4 / nu)
        denom = np.sum(terms, axis=0)
        uc4 = np.asarray(combined_uncertainty, dtype=float) ** 4
        out = np.where(denom > 0, uc4 / np.where(denom > 0, denom, 1.0), np.inf)
    return float(out) if np.ndim(out) == 0 else out


def truncate_dof(effective_dof: float) -> float:
    """Truncate ν_eff to the next lower integer, at least 1 (JCGM 100:2008, G.6.4).

    Examples
    --------
    >>> truncate_dof(16.7), truncate_dof(float("inf")), truncate_dof(0.4)
    (16.0, inf, 1.0)
    """
    if math.isnan(effective_dof):
        raise InputError("effective degrees of freedom is NaN")
    if math.isinf(effective_dof):
        return math.inf
    return float(max(1, math.floor(effective_dof + 1e-9)))


def coverage_factors(coverage_probability: float, effective_dofs: np.ndarray) -> np.ndarray:
    """Vectorised :func:`coverage_factor_for` over many ν_eff, each truncated per G.6.4.

    Examples
    --------
    >>> [round(float(k), 2) for k in coverage_factors(0.99, np.array([16.7, np.inf]))]
    [2.92, 2.58]
    """
    coverage_factor_for(coverage_probability)  # validates p
    truncated = truncate_dofs(effective_dofs)
    # one quantile per distinct (integer) dof: sweeps and upgrade searches repeat them a lot
    distinct, inverse = np.unique(truncated, return_inverse=True)
    q = 0.5 * (1.0 + coverage_probability)
    finite = np.isfinite(distinct)
    ks = np.where(finite, stats.t.ppf(q, np.where(finite, distinct, 1.0)), stats.norm.ppf(q))
    return ks[inverse].reshape(truncated.shape)


def truncate_dofs(effective_dofs: np.ndarray) -> np.ndarray:
    """Vectorised :func:`truncate_dof`: each ν_eff to the next lower integer, at least 1.

    Examples
    --------
    >>> truncate_dofs(np.array([16.7, np.inf, 0.4])).tolist()
    [16.0, inf, 1.0]
    """
    nu = np.asarray(effective_dofs, dtype=float)
    if np.any(np.isnan(nu)):
        raise InputError("effective degrees of freedom contain NaN")
    finite = np.isfinite(nu)
    return np.where(finite, np.maximum(1.0, np.floor(np.where(finite, nu, 1.0) + 1e-9)), np.inf)


def higher_order_variance(
    uncertainties: np.ndarray, gradient: np.ndarray, hessian: np.ndarray, third: np.ndarray
) -> float:
    """Second-order terms of the law of propagation (JCGM 100:2008, 5.1.2 note, eq. 10).

    Σᵢ Σⱼ [½ (∂²f/∂xᵢ∂xⱼ)² + ∂f/∂xᵢ · ∂³f/∂xᵢ∂xⱼ²] u²(xᵢ) u²(xⱼ), valid for uncorrelated
    inputs with symmetric (normal) distributions.

    Parameters
    ----------
    uncertainties : (N,) array
    gradient : (N,) array of ∂f/∂xᵢ
    hessian : (N, N) array of ∂²f/∂xᵢ∂xⱼ
    third : (N, N) array with ``third[i, j]`` = ∂³f/∂xᵢ∂xⱼ²
    """
    u2 = np.asarray(uncertainties, dtype=float) ** 2
    h = np.asarray(hessian, dtype=float)
    t = np.asarray(third, dtype=float)
    g = np.asarray(gradient, dtype=float)
    m = 0.5 * h * h + g[:, None] * t
    return float(u2 @ m @ u2)
