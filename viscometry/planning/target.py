"""The inverse question: which u(xᵢ), all else unchanged, brings U down to a target?

Core layer. The answer is a :class:`RequiredUncertainty` of numbers (input numbers in the
input's own unit, measurand numbers in ``budget.unit``); :func:`viscometry.text.required_text`
puts it in words. Every U below comes from the one propagation kernel.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
from scipy import optimize

from viscometry._checks import finite as _number
from viscometry.errors import InputError
from viscometry.gum.budget import Budget
from viscometry.gum.inputs import coverage_factor_for
from viscometry.gum.propagation import propagate
from viscometry.planning.upgrades import TARGET_TOLERANCE

__all__ = ["RequiredUncertainty", "required_uncertainty", "required_uncertainties"]

Solver = Literal["closed form", "root finding"]


@dataclass(frozen=True)
class RequiredUncertainty:
    """Answer of :func:`required_uncertainty` (input numbers in the input's own unit).

    Attributes
    ----------
    name, unit : str
        The input and its unit.
    target : float
        Target U. [measurand unit]
    measurand_unit : str
    current_uncertainty : float
        u(xᵢ) now. [input unit]
    current_expanded_uncertainty : float
        U now. [measurand unit]
    required_uncertainty : float
        The largest u(xᵢ) for which U ≤ target, all else unchanged; NaN when unreachable;
        ``inf`` when U does not depend on u(xᵢ) and the target is met anyway. [input unit]
    floor : float
        U with u(xᵢ) = 0: the part the other inputs set. [measurand unit]
    reachable, already_met : bool
    solver : {"closed form", "root finding"}
    """

    name: str
    unit: str
    target: float
    measurand_unit: str
    current_uncertainty: float
    current_expanded_uncertainty: float
    required_uncertainty: float
    floor: float
    reachable: bool
    already_met: bool
    solver: Solver


def _sensitivities(budget: Budget) -> np.ndarray:
    """cᵢ at the estimates (SI)."""
    x, _u, _nu, c = budget.si_arrays()
    return budget.compiled.gradient(*x, *c)


def _cases(budget: Budget, i: int, u_i_si: np.ndarray) -> np.ndarray:
    """U (SI) of the budget with u(xᵢ) set to each of ``u_i_si`` (one kernel call)."""
    _x, u, nu, _c = budget.si_arrays()
    grad = _sensitivities(budget)
    m = len(u_i_si)
    uu = np.repeat(u[:, None], m, axis=1)
    uu[i] = u_i_si
    prop = propagate(
        np.repeat(grad[:, None], m, axis=1), uu, nu, budget.correlation_matrix,
        coverage_probability=budget.coverage_probability, coverage_factor=budget.coverage_factor,
    )  # fmt: skip
    return prop.expanded_uncertainty


def _largest_u(budget: Budget, i: int, sigma: float) -> float:
    """The largest u(xᵢ) (SI) with u_c ≤ ``sigma`` (SI), all else unchanged; ``inf`` when u_c
    does not depend on u(xᵢ) and is below ``sigma`` anyway; NaN when no u(xᵢ) ≥ 0 reaches it.

    With wᵢ = |cᵢ|u(xᵢ)/σ, β = sign(cᵢ)·Σⱼ≠ᵢ r(xᵢ,xⱼ)cⱼu(xⱼ)/σ and ρ = 1 − Σⱼₖ≠ᵢ (cⱼu(xⱼ)/σ)
    r(xⱼ,xₖ)(cₖu(xₖ)/σ), u_c² ≤ σ² reads wᵢ² + 2βwᵢ ≤ ρ (JCGM 100:2008, eq. 16, divided by
    σ²): the largest root is wᵢ = −β + √(β² + ρ). Every number is relative to the target,
    so no square of a very small or very large uncertainty under- or overflows.
    """
    _x, u, _nu, _c = budget.si_arrays()
    grad = _sensitivities(budget)
    r = budget.correlation_matrix
    r = np.eye(len(u)) if r is None else r
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):
        others = grad * u / sigma
        others[i] = 0.0
        rho = 1.0 - float(others @ r @ others)
        if grad[i] == 0:
            return math.inf if rho >= 0 else math.nan
        beta = math.copysign(1.0, float(grad[i])) * float(r[i] @ others)
        disc = beta * beta + rho
        w = -beta + math.sqrt(disc) if disc >= 0 and math.isfinite(disc) else math.nan
        if not w >= 0:
            return math.nan
        return w * (sigma / abs(float(grad[i])))


def required_uncertainty(budget: Budget, name: str, target_U: float) -> RequiredUncertainty:
    """The standard uncertainty u(xᵢ) that, all else unchanged, makes U reach a target.

    Parameters
    ----------
    budget : Budget
    name : str
        Input whose uncertainty would change.
    target_U : float
        Target expanded uncertainty, > 0. [measurand unit]

    Returns
    -------
    RequiredUncertainty

    Raises
    ------
    InputError
        Unknown input or a non-positive target.
    ModelError
        The budget as it stands cannot be evaluated (as :meth:`Budget.evaluate`).

    Notes
    -----
    With the sensitivities fixed, u_c²(uᵢ) = a uᵢ² + 2 b uᵢ + d with a = cᵢ²,
    b = Σⱼ≠ᵢ r(xᵢ,xⱼ) cᵢ cⱼ u(xⱼ) and d the variance of the other inputs (JCGM 100:2008,
    eq. 16). When k is constant (a fixed k, or every input with infinite dof) the largest root
    of a uᵢ² + 2 b uᵢ + d = (target/k)² is the answer in closed form. When k = t_p(ν_eff)
    depends on uᵢ (eq. G.2b, truncated per G.6.4), U(uᵢ) is evaluated on a grid from 0 to a
    bound where U surely exceeds the target (k replaced by the normal quantile, a lower bound
    of any t quantile), the last crossing is bracketed and refined with Brent's method
    (``scipy.optimize.brentq``). k changes in steps, so the answer may sit on a step; a dip
    narrower than the grid spacing could be missed.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity as Q
    >>> b = Budget.from_formula("y", "a + b", [Q.normal("a", 1.0, 3.0), Q.normal("b", 1.0, 4.0)],
    ...                         coverage_factor=2.0)  # U = 2·√(3² + u_b²) (exact analytic)
    >>> round(required_uncertainty(b, "b", 8.0).required_uncertainty, 12)
    2.645751311065
    >>> r = required_uncertainty(b, "b", 5.0)
    >>> r.reachable, float(r.floor)
    (False, 6.0)
    """
    q = budget.input(name)
    target = _number(target_U, "target_U")
    if target <= 0:
        raise InputError(f"target_U must be positive, got {target!r}")
    i = budget.input_names.index(name)
    out_s, scale = budget.output_scale, budget.input_scales[i]
    t_si = target * out_s
    budget.linearise().expanded_uncertainty  # noqa: B018 - refuses what evaluate() refuses
    current = float(_cases(budget, i, np.array([q.standard_uncertainty * scale]))[0]) / out_s
    floor = float(_cases(budget, i, np.array([0.0]))[0]) / out_s
    nu = np.array([p.dof for p in budget.inputs])
    solver: Solver
    if budget.coverage_factor is not None or bool(np.all(np.isinf(nu))):
        solver = "closed form"
        k = budget.coverage_factor or coverage_factor_for(budget.coverage_probability)
        req = _largest_u(budget, i, t_si / k) / scale
    else:
        solver = "root finding"
        req = _root_find(budget, i, t_si, scale)
    return RequiredUncertainty(
        name=name, unit=q.unit, target=target, measurand_unit=budget.unit,
        current_uncertainty=q.standard_uncertainty, current_expanded_uncertainty=current,
        required_uncertainty=float(req), floor=floor, reachable=not math.isnan(req),
        already_met=current <= target * (1 + TARGET_TOLERANCE), solver=solver,
    )  # fmt: skip


def _root_find(budget: Budget, i: int, t_si: float, scale: float) -> float:
    """Largest u(xᵢ) (own unit) with U ≤ target when k depends on ν_eff; NaN if none."""
    tol = t_si * TARGET_TOLERANCE
    if _sensitivities(budget)[i] == 0:
        u_now = budget.si_arrays()[1][i]
        return math.inf if _cases(budget, i, np.array([u_now]))[0] <= t_si + tol else math.nan
    z = coverage_factor_for(budget.coverage_probability)  # t_p(ν) ≥ z_p for every ν
    bound = _largest_u(budget, i, t_si / z)
    if not math.isfinite(bound):
        return math.nan
    grid = np.linspace(0.0, 1.01 * bound + 1e-300, 4097)

    def excess(v: np.ndarray) -> np.ndarray:
        return _cases(budget, i, v) - t_si

    ok = excess(grid) <= tol
    if not ok.any():
        return math.nan
    last = int(np.flatnonzero(ok)[-1])
    if last == len(grid) - 1:  # cannot happen: U(upper) > target by construction
        return float(grid[-1]) / scale
    lo, hi = grid[last], grid[last + 1]
    # Brent's method multiplies function values: it runs on the relative excess and on u(xᵢ)
    # in units of a power of two near the bracket (exact), so that no product under- or
    # overflows for a budget of very small or very large numbers.
    unit = math.ldexp(1.0, math.frexp(float(hi))[1])

    def g(s: float) -> float:
        return float(excess(np.array([s * unit]))[0]) / t_si

    s_lo, s_hi = float(lo) / unit, float(hi) / unit
    if g(s_lo) == 0:
        return float(lo) / scale
    root = optimize.brentq(g, s_lo, s_hi, xtol=1e-15 * s_hi, rtol=4 * np.finfo(float).eps)
    # On a step of k the root can land just above the target; step back into the feasible side.
    if g(root) > TARGET_TOLERANCE:
        root = s_lo + (root - s_lo) * (1 - 1e-12)
        if g(root) > TARGET_TOLERANCE:
            root = s_lo
    return float(root) * unit / scale


def required_uncertainties(budget: Budget, target_U: float) -> tuple[RequiredUncertainty, ...]:
    """:func:`required_uncertainty` for every input, in input order."""
    return tuple(required_uncertainty(budget, name, target_U) for name in budget.input_names)
