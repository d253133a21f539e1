"""The law of propagation of uncertainty and its companions, on plain numpy arrays.

Pure numerics, no units and no sympy: sensitivity coefficients c, standard uncertainties u,
a correlation matrix R and degrees of freedom ν in; variances, the effective degrees of freedom
and the coverage factor out.

References
----------
JCGM 100:2008 (GUM), 5.1.2 (eq. 10), 5.2.2 (eq. 13/16), G.4.1 (eq. G.2b), G.6.4.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from typing import NamedTuple

import numpy as np
from scipy import special

from viscometry._checks import finite as _finite
from viscometry.errors import CorrelationError, InputError

__all__ = [
    "DEFAULT_COVERAGE_PROBABILITY",
    "FIXED_K_SHORTFALL",
    "PSD_TOLERANCE",
    "Propagation",
    "check_probability",
    "combined_variance",
    "coverage_factors",
    "coverage_probabilities",
    "higher_order_variance",
    "propagate",
    "t_quantile",
    "truncate_dof",
    "truncate_dofs",
    "validate_correlation",
    "welch_satterthwaite",
]

#: The one default coverage probability of the package (budgets, Monte Carlo runs, files,
#: widgets): p = 95.45 %, the probability of k = 2 for a normal distribution, so that a
#: budget with ν_eff = ∞ gets k = 2.00 (JCGM 100:2008, 6.3.3 and G.1.3).
DEFAULT_COVERAGE_PROBABILITY = 0.9545

#: A fixed k whose coverage probability falls short of the stated one by more than this
#: (0.5 percentage points) is reported with the probability it really gives.
FIXED_K_SHORTFALL = 0.005

#: Smallest eigenvalue accepted for a correlation matrix (round-off allowance); the one
#: tolerance of every path (first-order, higher-order, Monte Carlo).
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
    vectorised evaluations (working ranges, upgrade sets): shape (N,) or (N, M). ``uncertainties`` has shape (N,) or (N, M).

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


def coverage_factors(coverage_probability: float, effective_dofs: np.ndarray | float) -> np.ndarray:
    """k = t_p(ν) for many ν_eff at once, each truncated per G.6.4 (normal quantile for ∞).

    Uses :func:`scipy.special.stdtrit` and :func:`scipy.special.ndtri` directly: no
    distribution objects, so a what-if slider or an upgrade search pays microseconds.

    Examples
    --------
    >>> [round(float(k), 2) for k in coverage_factors(0.99, np.array([16.7, np.inf]))]
    [2.92, 2.58]
    """
    q = 0.5 * (1.0 + check_probability(coverage_probability))
    truncated = truncate_dofs(effective_dofs)
    finite = np.isfinite(truncated)
    with np.errstate(invalid="ignore"):
        t = special.stdtrit(np.where(finite, truncated, 1.0), q)
    return np.where(finite, t, special.ndtri(q))


def coverage_probabilities(
    coverage_factor: float, effective_dofs: np.ndarray | float
) -> np.ndarray:
    """Two-sided coverage probability of ±k under a t distribution with ν (normal for ∞).

    Examples
    --------
    >>> [round(float(p), 3) for p in coverage_probabilities(2.0, np.array([np.inf, 2.0]))]
    [0.954, 0.816]
    """
    nu = np.asarray(effective_dofs, dtype=float)
    finite = np.isfinite(nu)
    with np.errstate(invalid="ignore"):
        t = 2.0 * special.stdtr(np.where(finite, nu, 1.0), coverage_factor) - 1.0
    return np.where(finite, t, 2.0 * special.ndtr(coverage_factor) - 1.0)


def truncate_dofs(effective_dofs: np.ndarray | float) -> np.ndarray:
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


class Propagation(NamedTuple):
    """What the law of propagation gives for one budget (floats) or many (1-d arrays).

    For one budget every field but ``contributions`` is a float; for M budgets an array of
    shape ``(M,)``. ``contributions`` has the inputs on its first axis. Units are
    those of the sensitivities times the uncertainties (the caller's choice, SI inside the
    engine).

    Attributes
    ----------
    contributions : array
        Signed cᵢ u(xᵢ).
    first_order_variance : array
        u_c² of the first-order law (JCGM 100:2008, eq. 13/16).
    standard_uncertainty : array
        u_c, including ``extra_variance`` when given (higher-order terms).
    effective_dof : array
        ν_eff (eq. G.2b) from the first-order contributions, not truncated.
    effective_dof_used : array
        ν_eff truncated per G.6.4.
    coverage_factor : array
        t_p(ν_eff), the normal quantile for ν_eff = ∞, or the fixed k.
    coverage_probability : array
        The probability the expanded uncertainty stands for: the one asked for, or, for a
        fixed k whose t probability falls short of it by more than
        :data:`FIXED_K_SHORTFALL`, the probability that k really gives.
    fixed_k_short : array of bool
        True where a fixed k falls short (the statement then reports the lower p).
    expanded_uncertainty : array
        U = k u_c.
    """

    contributions: np.ndarray
    first_order_variance: np.ndarray
    standard_uncertainty: np.ndarray
    effective_dof: np.ndarray
    effective_dof_used: np.ndarray
    coverage_factor: np.ndarray
    coverage_probability: np.ndarray
    fixed_k_short: np.ndarray
    expanded_uncertainty: np.ndarray


def propagate(
    sensitivities: np.ndarray,
    uncertainties: np.ndarray,
    dofs: np.ndarray,
    correlation: np.ndarray | None = None,
    *,
    coverage_probability: float = DEFAULT_COVERAGE_PROBABILITY,
    coverage_factor: float | None = None,
    extra_variance: np.ndarray | float = 0.0,
) -> Propagation:
    """The one propagation kernel: c, u, ν, R and the coverage settings → u_c, ν_eff, k, U.

    Every path that propagates uncertainty — a budget's evaluation, the fast what-if of a
    slider, upgrade planning, working ranges — calls this function, vectorised over
    trailing axes instead of written again.

    Parameters
    ----------
    sensitivities : (N,) or (N, M) array
        cᵢ = ∂f/∂xᵢ.
    uncertainties : (N,) or (N, M) array
        u(xᵢ), ≥ 0, in units matching ``sensitivities``.
    dofs : (N,) or (N, M) array
        νᵢ (``inf`` allowed).
    correlation : (N, N) array, optional
        A validated correlation matrix (see :func:`validate_correlation`); None for
        uncorrelated inputs.
    coverage_probability : float
        p of the expanded uncertainty (default :data:`DEFAULT_COVERAGE_PROBABILITY`).
    coverage_factor : float, optional
        A fixed k instead of t_p(ν_eff).
    extra_variance : float or array
        Variance added to u_c² but not to the Welch-Satterthwaite formula (the higher-order
        terms of eq. 10, which have no degrees of freedom of their own).

    Returns
    -------
    Propagation

    Notes
    -----
    u_c² = Σᵢⱼ cᵢcⱼu(xᵢ)u(xⱼ)r(xᵢ,xⱼ) (JCGM 100:2008, eq. 16); ν_eff = u_c⁴/Σ(cᵢu(xᵢ))⁴/νᵢ
    (eq. G.2b) with the first-order u_c, truncated to an integer ≥ 1 (G.6.4); k = t_p(ν_eff)
    (G.3) unless a fixed k is given; U = k u_c (6.2.1).

    Examples
    --------
    >>> r = propagate(np.array([1.0, 1.0]), np.array([3.0, 4.0]), np.array([np.inf, np.inf]),
    ...               coverage_factor=2.0)
    >>> float(r.standard_uncertainty), float(r.expanded_uncertainty)
    (5.0, 10.0)
    """
    c = np.asarray(sensitivities, dtype=float)
    u = np.asarray(uncertainties, dtype=float)
    if c.ndim == 1 and u.ndim == 1 and isinstance(extra_variance, float | int):
        return _propagate_one(
            c, u, np.asarray(dofs, dtype=float), correlation, coverage_probability,
            coverage_factor, float(extra_variance),
        )  # fmt: skip
    with np.errstate(over="ignore", invalid="ignore"):
        cu = c * u
        var = combined_variance(c, u, correlation)
        first_uc = np.sqrt(np.maximum(var, 0.0))
        nu_eff = np.asarray(welch_satterthwaite(cu, dofs, first_uc), dtype=float)
        nu_eff = np.where(first_uc > 0, nu_eff, np.inf)
        uc = np.sqrt(np.maximum(var + extra_variance, 0.0))
    used = truncate_dofs(nu_eff)
    p = check_probability(coverage_probability)
    if coverage_factor is None:
        k = coverage_factors(p, used)
        p_out = np.full(np.shape(used), p)
        short = np.zeros(np.shape(used), dtype=bool)
    else:
        k = np.full(np.shape(used), float(coverage_factor))
        delivered = coverage_probabilities(float(coverage_factor), used)
        short = delivered < p - FIXED_K_SHORTFALL
        p_out = np.where(short, delivered, p)
    return Propagation(
        contributions=cu, first_order_variance=np.asarray(var, dtype=float),
        standard_uncertainty=uc, effective_dof=nu_eff, effective_dof_used=used,
        coverage_factor=k, coverage_probability=p_out, fixed_k_short=short,
        expanded_uncertainty=k * uc,
    )  # fmt: skip


def _propagate_one(
    c: np.ndarray,
    u: np.ndarray,
    nu: np.ndarray,
    correlation: np.ndarray | None,
    coverage_probability: float,
    coverage_factor: float | None,
    extra_variance: float,
) -> Propagation:
    """:func:`propagate` for one budget, in Python floats (the slider path: microseconds).

    The same formulas as the vectorised path; a product too large for a float becomes
    ``inf`` (no exception), which the caller reports.
    """
    cu = [a * b for a, b in zip(c.tolist(), u.tolist(), strict=True)]
    if correlation is None:
        var = math.fsum(x * x for x in cu)
    else:
        arr = np.array(cu)
        with np.errstate(over="ignore", invalid="ignore"):
            var = float(arr @ correlation @ arr)
    first_uc = math.sqrt(var) if var > 0 else 0.0
    nu_eff = math.inf
    if first_uc > 0:
        denom = math.fsum(
            x * x * x * x / n for x, n in zip(cu, nu.tolist(), strict=True) if n != math.inf
        )
        nu_eff = first_uc**4 / denom if denom > 0 else math.inf
    total = var + extra_variance
    uc = math.sqrt(total) if total > 0 else (total if math.isnan(total) else 0.0)
    used = truncate_dof(nu_eff)
    p = float(coverage_probability)
    if not 0.0 < p < 1.0:
        check_probability(coverage_probability)  # raises with the message
    short, p_out = False, p
    if coverage_factor is None:
        k = t_quantile(p, used)
    else:
        k = float(coverage_factor)
        delivered = _delivered(k, used)
        short = delivered < p - FIXED_K_SHORTFALL
        p_out = delivered if short else p
    return Propagation(np.array(cu), var, uc, nu_eff, used, k, p_out, short, k * uc)


@functools.lru_cache(maxsize=4096)
def t_quantile(coverage_probability: float, dof: float) -> float:
    """k = t_p(ν), the (1 + p)/2 quantile of Student's t (the normal one for ν = ∞), cached.

    ``dof`` is used as given (any positive real); :func:`propagate` passes ν_eff already
    truncated per G.6.4.

    Examples
    --------
    >>> round(t_quantile(0.95, math.inf), 3), round(t_quantile(0.99, 16.0), 2)
    (1.96, 2.92)
    """
    q = 0.5 * (1.0 + coverage_probability)
    if math.isinf(dof):
        return float(special.ndtri(q))
    return float(special.stdtrit(dof, q))


@functools.lru_cache(maxsize=4096)
def _delivered(coverage_factor: float, dof: float) -> float:
    """Two-sided coverage probability of ±k under t_ν (normal for ν = ∞), cached."""
    if math.isinf(dof):
        return float(2.0 * special.ndtr(coverage_factor) - 1.0)
    return float(2.0 * special.stdtr(dof, coverage_factor) - 1.0)


def check_probability(value: object, field: str = "coverage_probability") -> float:
    """A coverage probability strictly between 0 and 1, else :class:`InputError`.

    Examples
    --------
    >>> check_probability(0.95)
    0.95
    """
    p = _finite(value, field)
    if not 0.0 < p < 1.0:
        raise InputError(f"{field} must lie strictly between 0 and 1, got {p!r}")
    return p


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
