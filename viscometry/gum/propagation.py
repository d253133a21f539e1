"""The law of propagation of uncertainty and its companions, on plain numpy arrays.

Pure numerics, no units and no sympy: sensitivity coefficients c, standard uncertainties u,
a correlation matrix R and degrees of freedom ν in; variances, the effective degrees of freedom
and the coverage factor out.

Squares and fourth powers never under- or overflow on their own: the contributions cᵢu(xᵢ)
are scaled by a power of two (their largest binary exponent, as ``hypot`` does) before they
are squared, so u_c and ν_eff are right whenever u_c is a normal floating-point number —
with no change at all to the digits in the normal range, since scaling by a power of two
is exact. What still cannot be represented (u_c itself below the smallest normal float or
above the largest) is flagged by :func:`representation_problem`, never returned as a silent
0 or ∞.

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
from viscometry.errors import CorrelationError, InputError, ModelError

__all__ = [
    "DEFAULT_COVERAGE_PROBABILITY",
    "FIXED_K_SHORTFALL",
    "PSD_TOLERANCE",
    "SMALLEST_KEPT",
    "SMALLEST_NORMAL",
    "Propagation",
    "magnitude",
    "check_probability",
    "combined_variance",
    "coverage_factors",
    "coverage_probabilities",
    "higher_order_variance",
    "propagate",
    "representation_problem",
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

#: The smallest positive normal float (2.2e-308): a non-zero number below it keeps fewer
#: than 53 significant bits, and one below about 4.9e-324 becomes 0 (underflow).
SMALLEST_NORMAL = float(np.finfo(float).tiny)

#: Non-zero numbers below this (2⁻¹⁰⁴⁸ ≈ 3e-316) are subnormal floats that keep fewer than
#: 27 of the 53 significant bits: a relative rounding error above 2⁻²⁷ ≈ 7e-9, which may
#: show in the digits of a result. Subnormal numbers above it lose less than that; below
#: it the engine refuses a number rather than show it with lost digits (or as 0).
SMALLEST_KEPT = math.ldexp(1.0, -1048)

#: Contributions whose largest magnitude lies between these (2⁻²⁴⁰ ≈ 6e-73 and 2²⁴⁰ ≈ 2e72)
#: have squares and fourth powers that neither overflow nor lose anything that matters
#: next to the largest: the kernel then skips the (exact, but slower) scaling.
_SAFE_LOW, _SAFE_HIGH = math.ldexp(1.0, -240), math.ldexp(1.0, 240)

#: The largest float (1.8e308).
_LARGEST = float(np.finfo(float).max)

#: log10(2), to turn a binary exponent into a decimal magnitude for messages.
_LOG10_2 = math.log10(2.0)


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

    The variance itself is returned, so it under- or overflows where u_c² does (below
    about 1e-308 or above 1e308) even when u_c is representable; :func:`propagate`
    works on scaled contributions instead and never squares an unscaled one.

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
    uc = np.asarray(combined_uncertainty, dtype=float)
    with np.errstate(all="ignore"):
        # scale by the largest binary exponent of u_c and the |cᵢu(xᵢ)| (exact), so that the
        # fourth powers neither underflow nor overflow
        top = np.maximum(np.max(np.abs(c), axis=0), np.abs(uc))
        shift = -np.frexp(np.where(np.isfinite(top) & (top > 0), top, 1.0))[1]
        cs, ucs = np.ldexp(c, shift), np.ldexp(uc, shift)
        terms = np.where(np.isinf(nu), 0.0, cs**4 / nu)
        denom = np.sum(terms, axis=0)
        out = np.where(denom > 0, ucs**4 / np.where(denom > 0, denom, 1.0), np.inf)
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
    distribution objects, so a what-if slider or an upgrade search pays microseconds; for
    many ν_eff each distinct truncated ν is looked up once (the same k as one by one).

    Examples
    --------
    >>> [round(float(k), 2) for k in coverage_factors(0.99, np.array([16.7, np.inf]))]
    [2.92, 2.58]
    """
    q = 0.5 * (1.0 + check_probability(coverage_probability))
    truncated = truncate_dofs(effective_dofs)
    if truncated.size < _DISTINCT_FROM:
        return _t_quantiles(q, truncated)
    # After truncation (G.6.4) many budgets share few distinct ν: the quantile is computed
    # once per distinct ν (the same special function on the same numbers: the same k)
    distinct, inverse = np.unique(truncated.ravel(), return_inverse=True)
    return _t_quantiles(q, distinct)[np.ravel(inverse)].reshape(truncated.shape)


#: From this many ν_eff on, :func:`coverage_factors` computes each distinct one once.
_DISTINCT_FROM = 32


def _t_quantiles(q: float, dofs: np.ndarray) -> np.ndarray:
    """The q quantile of Student's t for each ν of ``dofs`` (the normal one for ν = ∞)."""
    finite = np.isfinite(dofs)
    with np.errstate(invalid="ignore"):
        t = special.stdtrit(np.where(finite, dofs, 1.0), q)
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

    For one budget every field but ``contributions`` and ``scaled_contributions`` is a
    float; for M budgets an array of shape ``(M,)``. ``contributions`` and
    ``scaled_contributions`` have the inputs on their first axis. Units are those of the sensitivities times the
    uncertainties (the caller's choice, SI inside the engine).

    Attributes
    ----------
    contributions : array
        Signed cᵢ u(xᵢ).
    first_order_variance : array
        u_c² of the first-order law (JCGM 100:2008, eq. 13/16); it under- or overflows
        where u_c² does, so use ``first_order_uncertainty``.
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
    first_order_uncertainty : array
        u_c of the first-order law, computed from scaled contributions (right whenever it
        is a normal float; see :func:`representation_problem`).
    log10_uncertainty : array
        log₁₀ of the first-order u_c as the exact arithmetic gives it (−∞ for u_c = 0),
        also where u_c itself is too small or too large for a float: for messages.
    scaled_contributions, scaled_uncertainty : array
        cᵢu(xᵢ) and u_c divided by the same power of two per budget (so that neither under-
        nor overflows): what :attr:`variance_shares` is computed from.
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
    first_order_uncertainty: np.ndarray = np.nan  # type: ignore[assignment]
    log10_uncertainty: np.ndarray = np.nan  # type: ignore[assignment]
    scaled_contributions: np.ndarray = np.nan  # type: ignore[assignment]
    scaled_uncertainty: np.ndarray = np.nan  # type: ignore[assignment]

    @property
    def variance_shares(self) -> np.ndarray:
        """(cᵢu(xᵢ))²/u_c² with the u_c of ``standard_uncertainty``, from the scaled numbers
        (right also where the squares themselves under- or overflow; 0 where u_c = 0);
        correlation cross-terms are not included."""
        z = np.asarray(self.scaled_contributions, dtype=float)
        t = np.asarray(self.scaled_uncertainty, dtype=float)
        with np.errstate(all="ignore"):
            t2 = t * t
            return np.where(t2 > 0, z * z / np.where(t2 > 0, t2, 1.0), 0.0)


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
        u_c is ``inf`` where it overflows and 0 or subnormal where it underflows; callers
        ask :func:`representation_problem` and refuse such a result.

    Notes
    -----
    u_c² = Σᵢⱼ cᵢcⱼu(xᵢ)u(xⱼ)r(xᵢ,xⱼ) (JCGM 100:2008, eq. 16); ν_eff = u_c⁴/Σ(cᵢu(xᵢ))⁴/νᵢ
    (eq. G.2b) with the first-order u_c, truncated to an integer ≥ 1 (G.6.4); k = t_p(ν_eff)
    (G.3) unless a fixed k is given; U = k u_c (6.2.1). Each cᵢu(xᵢ) is written as
    zᵢ·2^E with E the largest binary exponent of the column (``frexp`` of cᵢ and of u(xᵢ),
    so even a product that would underflow keeps its digits); the sums run over the zᵢ
    (|zᵢ| ≤ 1) and u_c = 2^E·√(Σ zᵢzⱼrᵢⱼ). Scaling by a power of two is exact, so a budget
    in the normal range gets the same digits as the unscaled formulas.

    Examples
    --------
    >>> r = propagate(np.array([1.0, 1.0]), np.array([3.0, 4.0]), np.array([np.inf, np.inf]),
    ...               coverage_factor=2.0)
    >>> float(r.standard_uncertainty), float(r.expanded_uncertainty)
    (5.0, 10.0)
    >>> tiny = propagate(np.array([1e-100, 1e-100]), np.array([3e-100, 4e-100]),
    ...                  np.array([np.inf, np.inf]), coverage_factor=2.0)
    >>> float(tiny.standard_uncertainty)  # (3e-200)² underflows; the scaled sum does not
    5e-200
    """
    c = np.asarray(sensitivities, dtype=float)
    u = np.asarray(uncertainties, dtype=float)
    if c.ndim == 1 and u.ndim == 1 and isinstance(extra_variance, float | int):
        return _propagate_one(
            c, u, np.asarray(dofs, dtype=float), correlation, coverage_probability,
            coverage_factor, float(extra_variance),
        )  # fmt: skip
    with np.errstate(all="ignore"):
        cu = c * u
        top = np.max(np.abs(cu), axis=0) if cu.size else np.zeros(cu.shape[1:])
        if np.all((top > _SAFE_LOW) & (top < _SAFE_HIGH)):
            z, big = cu, np.zeros(np.shape(top), dtype=np.int64)  # nothing to scale
        else:
            z, big = _scaled(c, u)
        s2 = (
            np.sum(z * z, axis=0)
            if correlation is None
            else np.einsum("i...,ij,j...->...", z, np.asarray(correlation, dtype=float), z)
        )
        root = np.sqrt(np.maximum(s2, 0.0))
        first_uc = np.ldexp(root, big)
        nu = np.asarray(dofs, dtype=float)
        if nu.ndim < z.ndim:
            nu = nu.reshape((-1,) + (1,) * (z.ndim - 1))
        fourth = z**4  # (a statement of its own: numpy then skips its slow search for
        # a temporary to reuse in `z**4 / nu`; the same numbers)
        denom = np.sum(np.where(np.isinf(nu), 0.0, fourth / nu), axis=0)
        ok = (root > 0) & (denom > 0)
        nu_eff = np.where(ok, root**4 / np.where(ok, denom, 1.0), np.inf)
        uc, total = _with_extra(s2, big, first_uc, np.asarray(extra_variance, dtype=float))

        log10 = np.log10(root) + big * _LOG10_2
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
    with np.errstate(over="ignore"):
        var, big_u = first_uc * first_uc, k * uc
    return Propagation(
        contributions=cu, first_order_variance=var,
        standard_uncertainty=uc, effective_dof=nu_eff, effective_dof_used=used,
        coverage_factor=k, coverage_probability=p_out, fixed_k_short=short,
        expanded_uncertainty=big_u, first_order_uncertainty=first_uc,
        log10_uncertainty=log10, scaled_contributions=z, scaled_uncertainty=total,
    )  # fmt: skip


def _scaled(c: np.ndarray, u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """cᵢu(xᵢ) = zᵢ·2^E per column, |zᵢ| ≤ 1, E the largest binary exponent (int array).

    The mantissas and exponents of cᵢ and u(xᵢ) are multiplied and added separately
    (``frexp``), so a product too small or too large for a float keeps its digits; a
    column of zeros gets E = 0.
    """
    mc, ec = np.frexp(c)
    mu, eu = np.frexp(u)
    m = mc * mu
    e = ec.astype(np.int64) + eu
    live = (m != 0) & np.isfinite(m)
    big = np.max(np.where(live, e, np.iinfo(np.int64).min), axis=0)
    big = np.where(np.any(live, axis=0), big, 0)
    return np.ldexp(m, np.clip(e - big, -4000, 0)), big


def _with_extra(
    s2: np.ndarray, big: np.ndarray, first_uc: np.ndarray, extra: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """u_c = 2^E·√(Σz² + extra·2^(−2E)) with the higher-order variance ``extra`` (≥ or < 0),
    and u_c·2^(−E), the scaled u_c the shares are taken against."""
    root = np.sqrt(np.maximum(s2, 0.0))
    if not np.any(extra != 0):
        return first_uc, root
    scaled = np.ldexp(extra, np.clip(-2 * big, -4000, 4000))
    total = np.sqrt(np.maximum(s2 + scaled, 0.0))
    # where the higher-order part dwarfs the first-order one so much that its scaled value
    # overflows, u_c is √extra to the last digit (and every first-order share is 0)
    finite = np.isfinite(scaled)
    uc = np.where(finite, np.ldexp(total, big), np.sqrt(np.maximum(extra, 0.0)))
    return uc, np.where(finite, total, np.inf)


def _scaled_one(c: list[float], u: list[float]) -> tuple[list[float], int]:
    """:func:`_scaled` for one budget, in Python floats."""
    mant, expo = [], []
    for a, b in zip(c, u, strict=True):
        ma, ea = math.frexp(a)
        mb, eb = math.frexp(b)
        mant.append(ma * mb)
        expo.append(ea + eb)
    big = max((e for m, e in zip(mant, expo, strict=True) if m != 0 and math.isfinite(m)),
              default=0)  # fmt: skip
    z = [math.ldexp(m, min(e - big, 0)) if m != 0 else 0.0 for m, e in zip(mant, expo, strict=True)]
    return z, big


def _ldexp(x: float, exponent: int) -> float:
    """math.ldexp that gives ±inf instead of raising OverflowError."""
    try:
        return math.ldexp(x, exponent)
    except OverflowError:
        return math.copysign(math.inf, x)


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

    The same formulas and the same scaling as the vectorised path; a u_c too large for a
    float becomes ``inf`` (no exception), which the caller reports.
    """
    cl, ul = c.tolist(), u.tolist()
    cu = [a * b for a, b in zip(cl, ul, strict=True)]
    z, big = cu, 0
    if correlation is None:
        s2 = math.fsum(x * x for x in z)
        if not _SAFE_LOW * _SAFE_LOW < s2 < _SAFE_HIGH * _SAFE_HIGH:  # scale (exactly)
            z, big = _scaled_one(cl, ul)
            s2 = math.fsum(x * x for x in z)
    else:
        if not _SAFE_LOW < max(map(abs, cu), default=0.0) < _SAFE_HIGH:
            z, big = _scaled_one(cl, ul)
        arr = np.array(z)
        with np.errstate(over="ignore", invalid="ignore"):
            s2 = float(arr @ correlation @ arr)
    root = math.sqrt(s2) if s2 > 0 else (s2 if math.isnan(s2) else 0.0)
    first_uc = _ldexp(root, big)
    nu_eff = math.inf
    if root > 0:
        denom = math.fsum(
            x * x * x * x / n for x, n in zip(z, nu.tolist(), strict=True) if n != math.inf
        )
        nu_eff = root**4 / denom if denom > 0 else math.inf
    uc, t = first_uc, root
    if extra_variance != 0:
        scaled = _ldexp(extra_variance, -2 * big)
        if math.isinf(scaled):
            uc, t = (math.sqrt(extra_variance) if extra_variance > 0 else 0.0), math.inf
        else:
            total = s2 + scaled
            t = math.sqrt(total) if total > 0 else (total if math.isnan(total) else 0.0)
            uc = _ldexp(t, big)
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
    contributions = np.array(cu)
    scaled = contributions if z is cu else np.array(z)
    log10 = math.log10(root) + big * _LOG10_2 if root > 0 else -math.inf
    return Propagation(contributions, first_uc * first_uc, uc, nu_eff, used, k, p_out, short,
                       k * uc, first_uc, log10, scaled, t)  # fmt: skip


def representation_problem(prop: Propagation) -> tuple[int, str] | None:
    """The first budget (column) whose u_c or U is not a normal float, and why; else None.

    A u_c that exact arithmetic makes non-zero but smaller than :data:`SMALLEST_KEPT`
    would be shown as 0 or with lost digits (underflow); one above the largest float, or
    a U = k·u_c above it, would be ``inf`` (overflow). Both are refused by the callers,
    which add where the budget is (its estimates, a point of a range, a set of upgrades).

    Returns
    -------
    (int, str) or None
        The column (0 for one budget) and a text such as ``"u_c ≈ 5e-400 is too small
        for a floating-point number (underflow below 3e-316)"``.

    Examples
    --------
    >>> p = propagate(np.array([1e-200]), np.array([3e-200]), np.array([np.inf]))
    >>> representation_problem(p)
    (0, 'u_c ≈ 3e-400 is too small for a floating-point number (underflow below 3e-316)')
    """
    first_one = prop.first_order_uncertainty
    if isinstance(first_one, float) and (
        (SMALLEST_KEPT <= first_one < math.inf or prop.log10_uncertainty == -math.inf)
        and prop.standard_uncertainty < math.inf
        and prop.expanded_uncertainty < math.inf
    ):
        return None  # one budget, nothing to say (the slider path: no arrays)
    log10 = np.atleast_1d(np.asarray(prop.log10_uncertainty, dtype=float))
    first = np.atleast_1d(np.asarray(prop.first_order_uncertainty, dtype=float))
    uc = np.atleast_1d(np.asarray(prop.standard_uncertainty, dtype=float))
    big_u = np.atleast_1d(np.asarray(prop.expanded_uncertainty, dtype=float))
    under = np.isfinite(log10) & (np.abs(first) < SMALLEST_KEPT)
    over = ~np.isfinite(first) | ~np.isfinite(uc) | ~np.isfinite(big_u)
    bad = under | over
    if not np.any(bad):
        return None
    j = int(np.argmax(bad))
    size = magnitude(float(log10[j]))
    if under[j]:
        return j, (
            f"u_c ≈ {size} is too small for a floating-point number (underflow below "
            f"{SMALLEST_KEPT:.1g})"
        )
    if np.isfinite(first[j]) and np.isfinite(uc[j]):
        return j, (
            f"U = k·u_c ≈ {float(np.asarray(prop.coverage_factor).flat[j]):.3g}·{float(uc[j]):.3g}"
            " is too large for a floating-point number (overflow)"
        )
    return j, f"u_c ≈ {size} is too large for a floating-point number (overflow)"


def magnitude(log10: float) -> str:
    """``"5e-400"`` for a number given by its decimal logarithm (any size, for messages).

    Examples
    --------
    >>> magnitude(-399.3), magnitude(308 + math.log10(2.83)), magnitude(-math.inf)
    ('5e-400', '2.8e+308', '0')
    """
    if not math.isfinite(log10):
        return "∞" if log10 > 0 else "0"
    exponent = math.floor(log10)
    mantissa = 10 ** (log10 - exponent)
    if round(mantissa, 1) >= 10:
        mantissa, exponent = mantissa / 10, exponent + 1
    return f"{mantissa:.2g}e{exponent:+03d}"


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

    Raises
    ------
    ModelError
        When the terms matter next to the first-order variance but no float can hold them.

    Notes
    -----
    The terms are products of up to six numbers, which under- or overflow for budgets of
    very small or very large numbers (u = 1e-200 gives u⁴ = 0). When any product leaves
    the range where a float keeps its digits, the sum is taken again in arbitrary-exponent
    arithmetic (mpmath): a variance a float holds is returned; one that is negligible next
    to the first-order variance (below 2⁻⁶⁰ of it) gives 0; any other is refused.

    Examples
    --------
    >>> round(higher_order_variance(np.array([0.1, 0.2]), np.array([2.0, 1.0]),
    ...                             np.array([[0.0, 1.0], [1.0, 0.0]]), np.zeros((2, 2))), 15)
    0.0004
    """
    u = np.asarray(uncertainties, dtype=float)
    h = np.asarray(hessian, dtype=float)
    t = np.asarray(third, dtype=float)
    g = np.asarray(gradient, dtype=float)
    with np.errstate(all="ignore"):
        u2 = u * u
        m = 0.5 * h * h + g[:, None] * t
        var = float(u2 @ m @ u2)
        terms = u2[:, None] * m * u2[None, :]  # only to check that every product kept its digits
    factors_ok = np.all((u == 0) | ((u2 >= SMALLEST_KEPT) & np.isfinite(u2)))
    live = (u2[:, None] != 0) & (u2[None, :] != 0) & ((h != 0) | ((g[:, None] != 0) & (t != 0)))
    terms_ok = np.all(np.isfinite(terms) & (~live | (np.abs(terms) >= SMALLEST_KEPT)))
    if factors_ok and terms_ok and math.isfinite(var):
        return var
    return _exact_higher_order(u, g, h, t)


def _exact_higher_order(u: np.ndarray, g: np.ndarray, h: np.ndarray, t: np.ndarray) -> float:
    """:func:`higher_order_variance` summed in arbitrary-exponent arithmetic (see there)."""
    import mpmath

    with mpmath.workprec(80):
        uu = [mpmath.mpf(float(v)) ** 2 for v in u]
        n = len(uu)
        total = mpmath.fsum(
            (mpmath.mpf(float(h[i, j])) ** 2 / 2 + mpmath.mpf(float(g[i])) * float(t[i, j]))
            * uu[i] * uu[j]
            for i in range(n) for j in range(n)
        )  # fmt: skip
        first = mpmath.fsum((mpmath.mpf(float(g[i])) ** 2) * uu[i] for i in range(n))
        if total == 0 or abs(total) < first * mpmath.ldexp(1, -60):
            return 0.0  # nothing, or nothing a float of u_c² could show
        size = magnitude(float(mpmath.log10(abs(total))))
        if SMALLEST_KEPT <= abs(total) <= _LARGEST:
            return float(total)
    how = "small" if abs(total) < 1 else "large"
    raise ModelError(
        f"the higher-order terms of the law of propagation are about {size} (a variance, SI "
        f"units), too {how} for a floating-point number; evaluate without the higher-order "
        "terms or use the Monte Carlo method"
    )
