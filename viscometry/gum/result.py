"""The evaluated budget: an immutable snapshot of numbers in the measurand's unit.

:class:`BudgetResult` holds the estimate, u_c, ν_eff, k, U, one :class:`InputContribution`
per input, one :class:`CrossTerm` per correlated pair and the warnings of the budget. It
holds numbers only: statements, tables and reports are made from it by
:mod:`viscometry.text` and :mod:`viscometry.report`. :func:`assemble` turns the SI numbers of
the propagation kernel into a result (called by :meth:`viscometry.gum.Budget.evaluate`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from viscometry import units as _units
from viscometry.errors import InputError, ModelError
from viscometry.gum.propagation import SMALLEST_KEPT, SMALLEST_NORMAL, Propagation
from viscometry.gum.rounding import RoundedResult, Rounding, round_result
from viscometry.gum.validity import uncertainty_warnings

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.budget import Budget

__all__ = ["BudgetResult", "InputContribution", "CrossTerm", "OfBudget", "Propagation", "assemble"]

#: Ratio of higher-order to first-order u_c beyond which the higher-order terms are flagged.
HIGHER_ORDER_NOTICE = 0.01


@dataclass(frozen=True, slots=True)
class InputContribution:
    """One row of an evaluated budget, in the input's and the measurand's units.

    ``sensitivity`` is ∂f/∂xᵢ in ``sensitivity_unit`` (measurand unit per input unit);
    ``contribution`` = cᵢ·u(xᵢ) in the measurand unit (signed); ``variance_share`` =
    (cᵢu(xᵢ))²/u_c²; ``relative_sensitivity`` = (xᵢ/y)·∂f/∂xᵢ with xᵢ in SI units (so a
    temperature counts from absolute zero), NaN when y = 0.
    """

    name: str
    value: float
    unit: str
    standard_uncertainty: float
    distribution: str
    evaluation: str
    dof: float
    sensitivity: float
    sensitivity_unit: str
    relative_sensitivity: float
    contribution: float
    variance_share: float
    description: str = ""
    source: str = ""


@dataclass(frozen=True, slots=True)
class CrossTerm:
    """A correlation term 2 r cᵢ cⱼ u(xᵢ) u(xⱼ) of the combined variance, as its own line."""

    first: str
    second: str
    coefficient: float
    covariance_term: float
    variance_share: float


class OfBudget:
    """What every result made from one budget says about it: the measurand's name and unit,
    the rounding rule and the fingerprint (a mix-in of BudgetResult, BudgetSimulation and
    WorkingRange, whose ``budget`` field it reads)."""

    budget: Budget

    @property
    def unit(self) -> str:
        """The measurand's unit (every measurand number of the result is in it)."""
        return self.budget.unit

    @property
    def measurand(self) -> str:
        """The measurand's name."""
        return self.budget.measurand

    @property
    def rounding(self) -> Rounding:
        """The budget's rounding rule for the statement."""
        return self.budget.rounding

    @property
    def fingerprint(self) -> str:
        """The fingerprint of the budget."""
        return self.budget.fingerprint


@dataclass(frozen=True)
class BudgetResult(OfBudget):
    """An evaluated budget (immutable snapshot), all measurand values in ``budget.unit``.

    Attributes
    ----------
    budget : Budget
        The budget that was evaluated (its rounding rule, title, fingerprint...).
    value : float
        Estimate y of the measurand.
    standard_uncertainty : float
        Combined standard uncertainty u_c(y).
    effective_dof : float
        ν_eff from Welch-Satterthwaite, before truncation (``inf`` possible).
    effective_dof_used : float
        ν_eff truncated per JCGM 100:2008 G.6.4, used for the t quantile.
    coverage_probability : float
        p that U stands for (lower than the budget's when a fixed k falls short).
    coverage_factor : float
        k (t_p(ν_eff), the normal quantile, or the user's fixed k).
    coverage_factor_source : {"t", "normal", "fixed"}
    expanded_uncertainty : float
        U = k u_c.
    propagation : {"first-order", "higher-order"}
        Whether the second-order terms of JCGM 100:2008 eq. (10) are included.
    contributions : tuple of InputContribution
    cross_terms : tuple of CrossTerm
    warnings : tuple of str
        Everything the budget warns about (validity checks of a built-in model, unused
        inputs, plausibility, approximations), the same on every path.
    first_order_standard_uncertainty : float
        u_c without the higher-order terms.
    """

    budget: Budget
    value: float
    standard_uncertainty: float
    effective_dof: float
    effective_dof_used: float
    coverage_probability: float
    coverage_factor: float
    coverage_factor_source: str
    expanded_uncertainty: float
    propagation: str
    contributions: tuple[InputContribution, ...]
    cross_terms: tuple[CrossTerm, ...]
    warnings: tuple[str, ...]
    first_order_standard_uncertainty: float

    @property
    def relative_expanded_uncertainty(self) -> float:
        """U/|y|; NaN when y = 0 or when the measurand is in an offset unit such as degC
        (a relative uncertainty of a Celsius value has no meaning)."""
        if self.value == 0 or self.budget.output_offset != 0.0:
            return math.nan
        return self.expanded_uncertainty / abs(self.value)

    def contribution(self, name: str) -> InputContribution:
        """The budget row of input ``name``."""
        for c in self.contributions:
            if c.name == name:
                return c
        raise InputError(f"no input named {name!r} in this budget")

    @property
    def dominant(self) -> InputContribution:
        """The input with the largest variance share."""
        return max(self.contributions, key=lambda c: c.variance_share)

    def rounded(self, digits: int = 2) -> RoundedResult:
        """Value and U rounded per JCGM 100:2008 7.2.6 with the budget's rounding rule."""
        if self.expanded_uncertainty <= 0:
            raise InputError("cannot round a result whose expanded uncertainty is zero")
        return round_result(
            self.value, self.expanded_uncertainty, digits=digits, rounding=self.rounding
        )

    def to_ufloat(self) -> Any:
        """The result as an ``uncertainties`` value (nominal value, u_c), measurand unit."""
        from uncertainties import ufloat

        return ufloat(self.value, self.standard_uncertainty, tag=self.measurand)

    def table(self) -> Any:
        """The budget table as a pandas DataFrame of numbers (one row per input, then one
        per correlation term, whose ``quantity`` is ``r(first, second)``)."""
        import pandas as pd

        rows = [
            {
                "quantity": c.name, "estimate": c.value, "unit": c.unit,
                "standard_uncertainty": c.standard_uncertainty, "distribution": c.distribution,
                "type": c.evaluation, "dof": c.dof, "sensitivity": c.sensitivity,
                "sensitivity_unit": c.sensitivity_unit,
                "relative_sensitivity": c.relative_sensitivity, "contribution": c.contribution,
                "variance_share": c.variance_share, "correlation": math.nan,
            }
            for c in self.contributions
        ]  # fmt: skip
        for t in self.cross_terms:
            row = dict.fromkeys(rows[0], math.nan) if rows else {}
            row.update(quantity=f"r({t.first}, {t.second})", unit="", distribution="", type="",
                       sensitivity_unit="", correlation=t.coefficient,
                       variance_share=t.variance_share)  # fmt: skip
            rows.append(row)
        return pd.DataFrame(rows)

    def summary(self) -> dict[str, Any]:
        """Headline numbers as a plain dict (measurand unit)."""
        return {
            "measurand": self.measurand,
            "unit": self.unit,
            "value": self.value,
            "standard_uncertainty": self.standard_uncertainty,
            "effective_dof": self.effective_dof,
            "coverage_probability": self.coverage_probability,
            "coverage_factor": self.coverage_factor,
            "expanded_uncertainty": self.expanded_uncertainty,
            "relative_expanded_uncertainty": self.relative_expanded_uncertainty,
            "propagation": self.propagation,
        }


# ----------------------------------------------------------------------------- assembly
def assemble(
    budget: Budget,
    x_si: np.ndarray,
    y_si: float,
    grad_si: np.ndarray,
    prop: Propagation,
    higher_order: bool,
    notes: tuple[str, ...] = (),
) -> BudgetResult:
    """The :class:`BudgetResult` of one evaluation (numbers from :func:`propagate`, in SI);
    ``notes`` are warnings found while propagating (a sensitivity whose share is lost)."""
    out_scale = budget.output_scale
    first_uc = float(prop.first_order_uncertainty)
    uc_si = float(prop.standard_uncertainty)
    k = float(prop.coverage_factor)
    y, uc = _in_measurand_unit(budget, y_si, uc_si, k)
    contrib_si = prop.contributions
    shares = np.asarray(prop.variance_shares, dtype=float)
    rows = tuple(_rows(budget, x_si, y_si, grad_si, contrib_si, shares))
    cross = tuple(_cross_terms(budget, contrib_si, uc_si))
    nu_used = float(prop.effective_dof_used)
    if budget.coverage_factor is not None:
        k_source = "fixed"
    else:
        k_source = "t" if math.isfinite(nu_used) else "normal"
    p = float(prop.coverage_probability)
    found = _evaluation_warnings(budget, prop, first_uc, uc_si, y_si, higher_order)
    found += notes
    found += uncertainty_warnings(
        budget.inputs,
        budget.measurand,
        y,
        k * uc,
        budget.positive_measurand,
        budget.sign_bound,
        budget.unit,
    )
    return BudgetResult(
        budget=budget, value=y, standard_uncertainty=uc,
        effective_dof=float(prop.effective_dof), effective_dof_used=nu_used,
        coverage_probability=p, coverage_factor=k, coverage_factor_source=k_source,
        expanded_uncertainty=k * uc,
        propagation="higher-order" if higher_order else "first-order",
        contributions=rows, cross_terms=cross,
        warnings=budget.estimate_warnings + tuple(found),
        first_order_standard_uncertainty=first_uc / out_scale,
    )  # fmt: skip


def _in_measurand_unit(budget: Budget, y_si: float, uc_si: float, k: float) -> tuple[float, float]:
    """y and u_c in the measurand unit; a :class:`ModelError` when either (or U) overflows,
    or a non-zero one falls below :data:`SMALLEST_KEPT` (underflow), in that unit."""
    y = (y_si - budget.output_offset) / budget.output_scale
    uc = uc_si / budget.output_scale
    finite = math.isfinite(y) and math.isfinite(uc) and math.isfinite(k * uc)
    lost = (y_si != 0 and abs(y) < SMALLEST_KEPT) or (uc_si != 0 and uc < SMALLEST_KEPT)
    if not finite or lost:
        how = "overflow" if not finite else f"underflow below {SMALLEST_KEPT:.1g}"
        raise ModelError(
            f"the result y = {y_si!r} (SI), u_c = {uc_si!r} (SI) cannot be expressed in the "
            f"measurand unit {budget.unit!r} ({how}); choose a unit closer to its size"
        )
    return y, uc


def _rows(budget, x_si, y_si, grad_si, contrib_si, shares):  # type: ignore[no-untyped-def]
    out_scale = budget.output_scale
    for q, s, g, cu, sh, xi in zip(
        budget.inputs, budget.input_scales, grad_si, contrib_si, shares, x_si, strict=True
    ):
        yield InputContribution(
            name=q.name, value=q.value, unit=q.unit,
            standard_uncertainty=q.standard_uncertainty, distribution=q.distribution,
            evaluation=q.evaluation, dof=q.dof, sensitivity=float(g * s / out_scale),
            sensitivity_unit=_units.sensitivity_unit(budget.unit, q.unit),
            relative_sensitivity=float(g * xi / y_si) if y_si != 0 else math.nan,
            contribution=float(cu / out_scale), variance_share=float(sh),
            description=q.description, source=q.source,
        )  # fmt: skip


def _cross_terms(budget: Budget, contrib_si: np.ndarray, uc_si: float) -> list[CrossTerm]:
    r = budget.correlation_matrix
    out: list[CrossTerm] = []
    if r is None:
        return out
    n = len(contrib_si)
    var = uc_si * uc_si
    normal = SMALLEST_NORMAL <= var < math.inf
    for i in range(n):
        for j in range(i + 1, n):
            if r[i, j] != 0:
                term = 2.0 * r[i, j] * contrib_si[i] * contrib_si[j]
                if normal:
                    share = term / var
                elif uc_si > 0:  # u_c² under- or overflows: the same ratio, scaled first
                    share = 2.0 * r[i, j] * (contrib_si[i] / uc_si) * (contrib_si[j] / uc_si)
                else:
                    share = 0.0
                out.append(
                    CrossTerm(
                        budget.inputs[i].name,
                        budget.inputs[j].name,
                        float(r[i, j]),
                        term / budget.output_scale**2,
                        float(share),
                    )  # fmt: skip
                )
    return out


def _evaluation_warnings(
    budget: Budget,
    prop: Propagation,
    first_uc: float,
    uc_si: float,
    y_si: float,
    higher_order: bool,
) -> list[str]:
    """Warnings about the evaluation itself (approximations, degenerate results)."""
    notes: list[str] = []
    if higher_order and first_uc > 0 and abs(uc_si / first_uc - 1) > HIGHER_ORDER_NOTICE:
        notes.append(
            f"higher-order terms change u_c by {100 * (uc_si / first_uc - 1):+.1f} % "
            f"(first-order u_c would be {first_uc / budget.output_scale:.3g} {budget.unit}); "
            f"consider validating with the Monte Carlo method (JCGM 101)"
        )
    involved = budget.correlated_with_finite_dof()
    if involved:
        notes.append(
            "Welch-Satterthwaite assumes independent inputs; with correlated inputs of finite "
            f"degrees of freedom ({', '.join(involved)}) ν_eff is computed from the "
            "individual contributions and the full u_c, an approximation (JCGM 100:2008 G.4.1)"
        )
    if bool(prop.fixed_k_short):
        nu = float(prop.effective_dof_used)
        delivered = float(prop.coverage_probability)
        notes.append(
            f"with ν_eff = {nu:g} the fixed coverage factor k = {budget.coverage_factor:.2f} "
            f"gives a coverage probability of about {100 * delivered:.1f} %, not "
            f"{100 * budget.coverage_probability:.2f} % (JCGM 100:2008, G.3 and G.6.4); the "
            f"statement reports the {100 * delivered:.1f} %. Give a coverage probability "
            "instead of a fixed k to get k = t_p(ν_eff)"
        )
    if uc_si == 0:
        notes.append("combined standard uncertainty is zero: every input is exactly known")
    if y_si == 0:
        notes.append(
            "the estimate is zero: relative uncertainty and relative sensitivities are undefined"
        )
    return notes
