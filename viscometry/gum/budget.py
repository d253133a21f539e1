"""Uncertainty budgets: an immutable description, and its evaluated, immutable result.

A :class:`Budget` holds the measurement model, the input quantities (in their own units),
exactly known constants, correlations and the coverage settings. :meth:`Budget.evaluate`
converts everything to SI floats, applies the law of propagation of uncertainty
(JCGM 100:2008, 5.1.2 and 5.2.2) with the model's cached symbolic derivatives, and returns a
:class:`BudgetResult` in the measurand's unit. A what-if is a new budget
(:meth:`Budget.with_input`), never a mutation.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field, replace
from typing import Any, Literal

import numpy as np

from viscometry import units as _units
from viscometry.errors import CorrelationError, InputError, ModelError
from viscometry.gum.inputs import InputQuantity, check_name, coverage_factor_for
from viscometry.gum.model import CompiledModel, MeasurementModel, compile_model
from viscometry.gum.propagation import (
    combined_variance,
    coverage_factors,
    higher_order_variance,
    truncate_dof,
    validate_correlation,
    welch_satterthwaite,
)
from viscometry.gum.rounding import RoundedResult, Rounding, round_result

__all__ = [
    "Constant",
    "Correlation",
    "Budget",
    "BudgetResult",
    "InputContribution",
    "CrossTerm",
    "LinearisedBudget",
    "DEFAULT_COVERAGE_PROBABILITY",
]

#: Default coverage probability: the ≈95 % of a coverage factor 2 for a normal distribution.
DEFAULT_COVERAGE_PROBABILITY = 0.9545

#: A fixed k whose coverage probability falls short of the stated one by more than this
#: (0.5 percentage points) is reported with the probability it really gives.
FIXED_K_SHORTFALL = 0.005

#: Ratio of higher-order to first-order u_c beyond which the higher-order terms are flagged.
HIGHER_ORDER_NOTICE = 0.01


@dataclass(frozen=True, slots=True)
class Constant:
    """An exactly known quantity used by the model (no uncertainty), in its own unit."""

    name: str
    value: float
    unit: str = ""
    description: str = ""
    source: str = ""

    def __post_init__(self) -> None:
        check_name(self.name, "constant name")
        v = self.value
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise InputError(f"constant {self.name}.value must be a finite number, got {v!r}")
        object.__setattr__(self, "value", float(v))


@dataclass(frozen=True, slots=True)
class Correlation:
    """Correlation coefficient r(x₁, x₂) between two inputs (JCGM 100:2008, 5.2.2)."""

    first: str
    second: str
    coefficient: float

    def __post_init__(self) -> None:
        r = self.coefficient
        if isinstance(r, bool) or not isinstance(r, (int, float)) or not math.isfinite(r):
            raise CorrelationError(
                f"correlation r({self.first}, {self.second}) must be a finite number, got {r!r}"
            )
        if not -1.0 <= r <= 1.0:
            raise CorrelationError(
                f"correlation r({self.first}, {self.second}) = {r!r} lies outside [-1, 1]"
            )
        if self.first == self.second:
            raise CorrelationError(f"correlation of {self.first!r} with itself is always 1")
        object.__setattr__(self, "coefficient", float(r))


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


@dataclass(frozen=True)
class Budget:
    """A complete uncertainty budget description (immutable).

    Parameters
    ----------
    model : MeasurementModel
        The measurement function. Its ``input_names`` are taken in the order of ``inputs``.
    inputs : sequence of InputQuantity
    unit : str
        Unit in which the measurand is reported (pint syntax).
    constants : sequence of Constant
    correlations : sequence of Correlation
    coverage_probability : float
        Coverage probability p of the expanded uncertainty (default 0.9545).
    coverage_factor : float or None
        A fixed k instead of t_p(ν_eff).
    title : str
    check_units : bool
        Check that the model's dimensions match ``unit`` (needs the formula's unit info).
    """

    model: MeasurementModel
    inputs: tuple[InputQuantity, ...]
    unit: str = ""
    constants: tuple[Constant, ...] = ()
    correlations: tuple[Correlation, ...] = ()
    coverage_probability: float = DEFAULT_COVERAGE_PROBABILITY
    coverage_factor: float | None = None
    title: str = ""
    check_units: bool = True
    _correlation_matrix: np.ndarray | None = field(init=False, repr=False, compare=False)
    _scales: tuple = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "inputs", tuple(self.inputs))
        object.__setattr__(self, "constants", tuple(self.constants))
        object.__setattr__(self, "correlations", tuple(self.correlations))
        names = [q.name for q in self.inputs]
        if not names:
            raise InputError("a budget needs at least one input quantity")
        if len(set(names)) != len(names):
            dup = sorted({n for n in names if names.count(n) > 1})
            raise InputError(f"input names used twice: {', '.join(dup)}")
        cnames = [c.name for c in self.constants]
        if set(self.model.input_names) != set(names):
            missing = sorted(set(self.model.input_names) - set(names))
            extra = sorted(set(names) - set(self.model.input_names))
            raise ModelError(
                "model inputs and budget inputs differ"
                + (f"; no input quantity for {', '.join(missing)}" if missing else "")
                + (f"; not in the model: {', '.join(extra)}" if extra else "")
            )
        if set(self.model.constant_names) != set(cnames):
            raise ModelError(
                f"model constants {sorted(self.model.constant_names)} differ from the "
                f"budget's constants {sorted(cnames)}"
            )
        if tuple(self.model.input_names) != tuple(names) or tuple(
            self.model.constant_names
        ) != tuple(cnames):
            object.__setattr__(
                self,
                "model",
                MeasurementModel(
                    self.model.expression,
                    tuple(names),
                    tuple(cnames),
                    self.model.output_name,
                    self.model.formula,
                ),  # fmt: skip
            )
        if self.coverage_factor is not None:
            k = self.coverage_factor
            if (
                isinstance(k, bool)
                or not isinstance(k, (int, float))
                or not (math.isfinite(k) and k > 0)
            ):
                raise InputError(f"coverage_factor must be a positive number, got {k!r}")
        p = self.coverage_probability
        if isinstance(p, bool) or not isinstance(p, (int, float)) or not 0.0 < p < 1.0:
            raise InputError(f"coverage_probability must lie strictly between 0 and 1, got {p!r}")
        # Units: conversion factors to SI, once.
        for q in self.inputs:
            _units.check_offset_unit(q.unit, f"{q.name}.unit")
        for c in self.constants:
            _units.check_offset_unit(c.unit, f"constant {c.name}.unit")
        _units.check_offset_unit(self.unit, "measurand unit")
        in_scales = tuple(_units.si_conversion(q.unit, f"{q.name}.unit") for q in self.inputs)
        c_scales = tuple(
            _units.si_conversion(c.unit, f"constant {c.name}.unit") for c in self.constants
        )
        out_scale = _units.si_conversion(self.unit, "measurand unit")
        object.__setattr__(self, "_scales", (in_scales, c_scales, out_scale))
        if self.check_units:
            unit_map = {q.name: q.unit for q in self.inputs} | {
                c.name: c.unit for c in self.constants
            }
            expression, placeholders = self.model.dimension_view()
            _units.check_model_dimensions(
                expression, unit_map, self.unit, function_placeholders=placeholders
            )
        object.__setattr__(self, "_correlation_matrix", self._build_correlation())

    # ---------------------------------------------------------------- construction
    @classmethod
    def from_formula(
        cls,
        measurand: str,
        formula: str,
        inputs: Iterable[InputQuantity],
        unit: str = "",
        *,
        constants: Iterable[Constant] = (),
        correlations: Iterable[Correlation] = (),
        coverage_probability: float = DEFAULT_COVERAGE_PROBABILITY,
        coverage_factor: float | None = None,
        title: str = "",
    ) -> Budget:
        """Build a budget from a formula string (parsed by the whitelist parser).

        Examples
        --------
        >>> from viscometry.gum import InputQuantity
        >>> b = Budget.from_formula("y", "a + b", [InputQuantity.normal("a", 1.0, 0.3),
        ...                                        InputQuantity.normal("b", 2.0, 0.4)])
        >>> r = b.evaluate()
        >>> float(r.value), round(float(r.standard_uncertainty), 12)
        (3.0, 0.5)
        """
        inputs = tuple(inputs)
        constants = tuple(constants)
        model = MeasurementModel.from_formula(
            formula,
            [q.name for q in inputs],
            [c.name for c in constants],
            output_name=measurand,
            field="[measurand] model",
        )
        return cls(
            model, inputs, unit, constants, tuple(correlations),
            coverage_probability, coverage_factor, title,
        )  # fmt: skip

    def _build_correlation(self) -> np.ndarray | None:
        if not self.correlations:
            return None
        index = {q.name: i for i, q in enumerate(self.inputs)}
        n = len(self.inputs)
        r = np.eye(n)
        seen: set[frozenset[str]] = set()
        for c in self.correlations:
            for nm in (c.first, c.second):
                if nm not in index:
                    raise CorrelationError(
                        f"correlation names unknown input {nm!r} (inputs: {', '.join(index)})"
                    )
            key = frozenset((c.first, c.second))
            if key in seen:
                raise CorrelationError(f"correlation between {c.first} and {c.second} given twice")
            seen.add(key)
            i, j = index[c.first], index[c.second]
            r[i, j] = r[j, i] = c.coefficient
        return validate_correlation(r, [q.name for q in self.inputs])

    # ---------------------------------------------------------------- accessors
    @property
    def measurand(self) -> str:
        return self.model.output_name

    @property
    def input_names(self) -> tuple[str, ...]:
        return tuple(q.name for q in self.inputs)

    @property
    def correlation_matrix(self) -> np.ndarray | None:
        """The validated correlation matrix (read-only), or None when inputs are uncorrelated."""
        return self._correlation_matrix

    def input(self, name: str) -> InputQuantity:
        """The input quantity called ``name``."""
        for q in self.inputs:
            if q.name == name:
                return q
        raise InputError(f"no input named {name!r} (inputs: {', '.join(self.input_names)})")

    @property
    def compiled(self) -> CompiledModel:
        return compile_model(self.model)

    # ---------------------------------------------------------------- what-ifs
    def with_input(self, quantity: InputQuantity) -> Budget:
        """A new budget with one input replaced (matched by name)."""
        self.input(quantity.name)
        new = tuple(quantity if q.name == quantity.name else q for q in self.inputs)
        return replace(self, inputs=new)

    def with_uncertainty(self, name: str, standard_uncertainty: float) -> Budget:
        """A new budget where ``name`` has another standard uncertainty (its own unit)."""
        return self.with_input(self.input(name).with_uncertainty(standard_uncertainty))

    def with_settings(self, **changes: Any) -> Budget:
        """A new budget with other settings (coverage_probability, coverage_factor, title...)."""
        return replace(self, **changes)

    # ---------------------------------------------------------------- SI arrays
    def si_arrays(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        """Estimates, standard uncertainties and dofs of the inputs in SI, and constants in SI."""
        in_scales, c_scales, _ = self._scales
        x = np.array([q.value * s + o for q, (s, o) in zip(self.inputs, in_scales, strict=True)])
        u = np.array(
            [q.standard_uncertainty * s for q, (s, _o) in zip(self.inputs, in_scales, strict=True)]
        )
        nu = np.array([q.dof for q in self.inputs], dtype=float)
        c = np.array([k.value * s + o for k, (s, o) in zip(self.constants, c_scales, strict=True)])
        return x, u, nu, c

    def si_inputs(self) -> tuple[InputQuantity, ...]:
        """The inputs converted to SI units (for the Monte Carlo method)."""
        in_scales = self._scales[0]
        out = []
        for q, (s, o) in zip(self.inputs, in_scales, strict=True):
            out.append(
                replace(
                    q,
                    value=q.value * s + o,
                    standard_uncertainty=q.standard_uncertainty * s,
                    half_width=None if q.half_width is None else q.half_width * s,
                    readings=None,
                    unit=_units.si_unit_label(q.unit) if q.unit else "",
                )
            )
        return tuple(out)

    # ---------------------------------------------------------------- evaluation
    def evaluate(
        self, *, higher_order: bool = False, rounding: Rounding = "nearest"
    ) -> BudgetResult:
        """Evaluate the budget by the law of propagation of uncertainty.

        Parameters
        ----------
        higher_order : bool
            Add the second-order terms of JCGM 100:2008 eq. (10) (for uncorrelated, normal
            inputs; with correlated inputs a :class:`ModelError` is raised).
        rounding : {"nearest", "up", "ea-4/02"}
            How the statement rounds U (see :func:`viscometry.gum.rounding.round_result`).
        """
        x, u, nu, c = self.si_arrays()
        comp = self.compiled
        args = (*x, *c)
        y = float(comp.value(*args))
        if not math.isfinite(y):
            raise ModelError(
                f"the model gives {y!r} at the input estimates ({self._estimates()}); "
                "check the estimates and the formula"
            )
        grad = comp.gradient(*args)
        bad = [n for n, g in zip(self.input_names, grad, strict=True) if not math.isfinite(g)]
        if bad:
            raise ModelError(
                f"sensitivity coefficient of {', '.join(bad)} is not finite at the estimates "
                f"({self._estimates()})"
            )
        return _assemble(self, x, u, nu, y, grad, higher_order, rounding)

    def _estimates(self, limit: int = 6) -> str:
        """``a = 1.0 mm, b = 2.0 mm, ...`` for error messages."""
        parts = [
            f"{q.name} = {q.value!r} {'' if q.unit in ('', '1') else q.unit}".rstrip()
            for q in self.inputs[:limit]
        ]
        if len(self.inputs) > limit:
            parts.append("...")
        return ", ".join(parts)

    def linearise(self) -> LinearisedBudget:
        """The budget linearised at its estimates, for fast what-ifs on uncertainties.

        Sensitivity coefficients depend on the estimates only, so changing standard
        uncertainties (an upgrade, a slider) needs no new derivative and no model call:
        :meth:`LinearisedBudget.with_uncertainty` recomputes u_c, ν_eff, k and U in a few
        array operations. Changing an *estimate* needs a new :meth:`evaluate`.
        """
        x, u, nu, c = self.si_arrays()
        grad = self.compiled.gradient(*x, *c)
        in_scales, _c, (out_scale, out_offset) = self._scales
        scale_in = np.array([s for s, _o in in_scales])
        sens = grad * scale_in / out_scale
        own_u = np.array([q.standard_uncertainty for q in self.inputs])
        y = (float(self.compiled.value(*x, *c)) - out_offset) / out_scale
        return LinearisedBudget(
            names=self.input_names,
            value=y,
            sensitivities=_frozen(sens),
            uncertainties=_frozen(own_u),
            dofs=_frozen(nu),
            correlation=self._correlation_matrix,
            coverage_probability=self.coverage_probability,
            fixed_coverage_factor=self.coverage_factor,
        )

    def sweep(self, name: str, values: Sequence[float] | np.ndarray) -> dict[str, np.ndarray]:
        """Evaluate the budget for many estimates of one input, in one vectorised pass.

        Parameters
        ----------
        name : str
            Input whose estimate varies (its uncertainty stays as given).
        values : array
            Estimates of ``name``, in its own unit.

        Returns
        -------
        dict of arrays (measurand unit)
            ``value``, ``standard_uncertainty``, ``effective_dof``, ``coverage_factor``,
            ``expanded_uncertainty`` and ``contributions`` (N × M, signed cᵢu(xᵢ)).
        """
        idx = self.input_names.index(self.input(name).name)
        v = np.asarray(values, dtype=float)
        if v.ndim != 1 or v.size == 0:
            raise InputError(f"sweep values for {name!r} must be a non-empty 1-D array")
        x, u, nu, c = self.si_arrays()
        s, o = self._scales[0][idx]
        cols = [np.full_like(v, xi) for xi in x]
        cols[idx] = v * s + o
        comp = self.compiled
        args = (*cols, *c)
        out_scale, out_offset = self._scales[2]
        yv = (comp.value(*args) - out_offset) / out_scale
        grad = comp.gradient(*args) / out_scale
        contributions = grad * u[:, None]
        var = combined_variance(grad, u[:, None], self._correlation_matrix)
        uc = np.sqrt(var)
        nu_eff = np.asarray(welch_satterthwaite(contributions, nu, uc), dtype=float)
        if self.coverage_factor is not None:
            k = np.full_like(v, float(self.coverage_factor))
        else:
            k = coverage_factors(self.coverage_probability, np.atleast_1d(nu_eff))
        return {
            "value": np.asarray(yv, dtype=float),
            "standard_uncertainty": uc,
            "effective_dof": np.atleast_1d(nu_eff),
            "coverage_factor": k,
            "expanded_uncertainty": k * uc,
            "contributions": contributions,
        }


def _largest(budget: Budget, contributions_si: np.ndarray) -> str:
    i = int(np.nanargmax(np.abs(np.where(np.isnan(contributions_si), np.inf, contributions_si))))
    return f"{budget.inputs[i].name} gives {float(contributions_si[i]):.3g} in SI units"


def coverage_probability_of(coverage_factor: float, dof: float) -> float:
    """Two-sided coverage probability of ±k for a t distribution with ν (normal if ν = ∞).

    Examples
    --------
    >>> round(coverage_probability_of(2.0, math.inf), 4), round(coverage_probability_of(2.0, 2), 3)
    (0.9545, 0.816)
    """
    from scipy import stats

    if math.isinf(dof):
        return float(2.0 * stats.norm.cdf(coverage_factor) - 1.0)
    return float(2.0 * stats.t.cdf(coverage_factor, dof) - 1.0)


def _frozen(a: np.ndarray) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.setflags(write=False)
    return a


@dataclass(frozen=True)
class LinearisedBudget:
    """A first-order budget linearised at fixed estimates (measurand unit; inputs' own units).

    Cheap to copy with new standard uncertainties; the derived quantities are computed on
    first access. Built by :meth:`Budget.linearise`.

    Examples
    --------
    >>> from viscometry.gum import InputQuantity
    >>> b = Budget.from_formula("y", "a + 2*b", [InputQuantity.normal("a", 1.0, 0.3),
    ...                                          InputQuantity.normal("b", 1.0, 0.2)])
    >>> lin = b.linearise()
    >>> round(lin.standard_uncertainty, 12), round(lin.with_uncertainty("b", 0.0).standard_uncertainty, 12)
    (0.5, 0.3)
    """

    names: tuple[str, ...]
    value: float
    sensitivities: np.ndarray
    uncertainties: np.ndarray
    dofs: np.ndarray
    correlation: np.ndarray | None
    coverage_probability: float
    fixed_coverage_factor: float | None

    def with_uncertainty(self, name: str, standard_uncertainty: float) -> LinearisedBudget:
        """A copy where input ``name`` has another standard uncertainty (its own unit)."""
        return self.with_uncertainties({name: standard_uncertainty})

    def with_uncertainties(self, changes: dict[str, float]) -> LinearisedBudget:
        """A copy with several standard uncertainties changed."""
        u = self.uncertainties.copy()
        for name, value in changes.items():
            try:
                i = self.names.index(name)
            except ValueError:
                raise InputError(
                    f"no input named {name!r} (inputs: {', '.join(self.names)})"
                ) from None
            if not (math.isfinite(value) and value >= 0):
                raise InputError(f"{name}.standard_uncertainty must be non-negative, got {value!r}")
            u[i] = value
        u.setflags(write=False)
        # A shallow copy without the cached derived values (faster than dataclasses.replace,
        # which matters for sliders and exhaustive upgrade searches).
        new = object.__new__(LinearisedBudget)
        fields = {k: v for k, v in self.__dict__.items() if k in _LINEAR_FIELDS}
        fields["uncertainties"] = u
        new.__dict__.update(fields)
        return new

    @functools.cached_property
    def contributions(self) -> np.ndarray:
        """Signed cᵢu(xᵢ) in the measurand unit."""
        return self.sensitivities * self.uncertainties

    @functools.cached_property
    def standard_uncertainty(self) -> float:
        cu = self.contributions
        var = float(cu @ cu) if self.correlation is None else float(cu @ self.correlation @ cu)
        return math.sqrt(max(var, 0.0))

    @functools.cached_property
    def effective_dof(self) -> float:
        uc = self.standard_uncertainty
        finite = np.isfinite(self.dofs)
        if uc == 0 or not finite.any():
            return math.inf
        cu = self.contributions[finite]
        denom = float(np.sum(cu**4 / self.dofs[finite]))
        return uc**4 / denom if denom > 0 else math.inf

    @functools.cached_property
    def coverage_factor(self) -> float:
        if self.fixed_coverage_factor is not None:
            return float(self.fixed_coverage_factor)
        return coverage_factor_for(self.coverage_probability, truncate_dof(self.effective_dof))

    @property
    def expanded_uncertainty(self) -> float:
        return self.coverage_factor * self.standard_uncertainty

    @property
    def variance_shares(self) -> np.ndarray:
        """(cᵢu(xᵢ))²/u_c² per input (correlation cross-terms not included)."""
        v = self.standard_uncertainty**2
        return self.contributions**2 / v if v > 0 else np.zeros_like(self.contributions)


_LINEAR_FIELDS = frozenset(
    (
        "names", "value", "sensitivities", "uncertainties", "dofs", "correlation",
        "coverage_probability", "fixed_coverage_factor",
    )
)  # fmt: skip


def _assemble(
    budget: Budget,
    x: np.ndarray,
    u: np.ndarray,
    nu: np.ndarray,
    y_si: float,
    grad_si: np.ndarray,
    higher_order: bool,
    rounding: Rounding,
) -> BudgetResult:
    in_scales, _c, (out_scale, out_offset) = budget._scales
    warnings: list[str] = []
    r = budget._correlation_matrix
    with np.errstate(over="ignore", invalid="ignore"):
        contrib_si = grad_si * u
        var = float(combined_variance(grad_si, u, r))
    if not math.isfinite(var):
        raise ModelError(
            "the combined variance overflows (sensitivity coefficients times standard "
            f"uncertainties are too large to square: {_largest(budget, contrib_si)}); "
            "express the inputs in units closer to their size"
        )
    method: Literal["first-order", "higher-order"] = "first-order"
    first_order_uc = math.sqrt(max(var, 0.0))
    if higher_order:
        if r is not None and np.any(r - np.eye(len(u)) != 0):
            raise ModelError(
                "higher-order terms (JCGM 100:2008 eq. 10) are defined for uncorrelated inputs; "
                "remove the correlations or use the Monte Carlo method"
            )
        h, t = budget.compiled.higher_order(*x, *budget.si_arrays()[3])
        extra = higher_order_variance(u, grad_si, h, t)
        var = var + extra
        method = "higher-order"
    uc_si = math.sqrt(max(var, 0.0))
    if (
        higher_order
        and first_order_uc > 0
        and abs(uc_si / first_order_uc - 1) > HIGHER_ORDER_NOTICE
    ):
        warnings.append(
            f"higher-order terms change u_c by {100 * (uc_si / first_order_uc - 1):+.1f} % "
            f"(first-order u_c would be {first_order_uc / out_scale:.3g} {budget.unit}); "
            f"consider validating with the Monte Carlo method (JCGM 101)"
        )
    # Variance shares
    shares = contrib_si**2 / var if var > 0 else np.zeros_like(contrib_si)
    cross: list[CrossTerm] = []
    if r is not None:
        n = len(u)
        for i in range(n):
            for j in range(i + 1, n):
                if r[i, j] != 0:
                    term = 2.0 * r[i, j] * contrib_si[i] * contrib_si[j]
                    cross.append(
                        CrossTerm(
                            budget.inputs[i].name,
                            budget.inputs[j].name,
                            float(r[i, j]),
                            term / out_scale**2,
                            term / var if var > 0 else 0.0,
                        )  # fmt: skip
                    )
    # Degrees of freedom
    # With the higher-order terms, nu_eff still comes from the first-order contributions:
    # the second-order terms have no degrees of freedom of their own to put into eq. (G.2b),
    # and counting them as exact would raise nu_eff (and lower k) unduly.
    nu_eff = (
        float(welch_satterthwaite(contrib_si, nu, first_order_uc))
        if first_order_uc > 0
        else math.inf
    )
    correlated = r is not None and bool(np.any(r - np.eye(len(u)) != 0))
    if correlated:
        involved = {
            budget.inputs[i].name
            for i in range(len(u))
            for j in range(len(u))
            if i != j and r[i, j] != 0 and math.isfinite(nu[i])
        }
        if involved:
            warnings.append(
                "Welch-Satterthwaite assumes independent inputs; with correlated inputs of finite "
                f"degrees of freedom ({', '.join(sorted(involved))}) ν_eff is computed from the "
                "individual contributions and the full u_c, an approximation (JCGM 100:2008 G.4.1)"
            )
    nu_used = truncate_dof(nu_eff)
    if budget.coverage_factor is not None:
        k = float(budget.coverage_factor)
        p = budget.coverage_probability
        k_source = "fixed"
        delivered = coverage_probability_of(k, nu_used)
        if delivered < p - FIXED_K_SHORTFALL:
            warnings.append(
                f"with ν_eff = {nu_used:g} the fixed coverage factor k = {k:.2f} gives a "
                f"coverage probability of about {100 * delivered:.1f} %, not "
                f"{100 * p:.2f} % (JCGM 100:2008, G.3 and G.6.4); the statement reports the "
                f"{100 * delivered:.1f} %. Give a coverage probability instead of a fixed k "
                f"to get k = t_p(ν_eff)"
            )
            p = delivered
    else:
        p = budget.coverage_probability
        k = coverage_factor_for(p, nu_used)
        k_source = "t" if math.isfinite(nu_used) else "normal"
    if uc_si == 0:
        warnings.append("combined standard uncertainty is zero: every input is exactly known")
    y = (y_si - out_offset) / out_scale
    uc = uc_si / out_scale
    if not (math.isfinite(y) and math.isfinite(uc) and math.isfinite(k * uc)):
        raise ModelError(
            f"the result y = {y_si!r} (SI), u_c = {uc_si!r} (SI) cannot be expressed in the "
            f"measurand unit {budget.unit!r} (overflow); choose a unit closer to its size"
        )
    rows = []
    for q, (s, _o), g, cu, sh, xi in zip(
        budget.inputs, in_scales, grad_si, contrib_si, shares, x, strict=True
    ):
        sens = g * s / out_scale
        rel = float(g * xi / y_si) if y_si != 0 else math.nan
        rows.append(
            InputContribution(
                name=q.name,
                value=q.value,
                unit=q.unit,
                standard_uncertainty=q.standard_uncertainty,
                distribution=q.distribution,
                evaluation=q.evaluation,
                dof=q.dof,
                sensitivity=float(sens),
                sensitivity_unit=_units.sensitivity_unit(budget.unit, q.unit),
                relative_sensitivity=rel,
                contribution=float(cu / out_scale),
                variance_share=float(sh),
                description=q.description,
                source=q.source,
            )
        )
    if y_si == 0:
        warnings.append(
            "the estimate is zero: relative uncertainty and relative sensitivities are undefined"
        )
    return BudgetResult(
        budget=budget,
        value=y,
        standard_uncertainty=uc,
        effective_dof=nu_eff,
        effective_dof_used=nu_used,
        coverage_probability=p,
        coverage_factor=k,
        coverage_factor_source=k_source,
        expanded_uncertainty=k * uc,
        method=method,
        rounding=rounding,
        contributions=tuple(rows),
        cross_terms=tuple(cross),
        warnings=tuple(warnings),
        first_order_standard_uncertainty=first_order_uc / out_scale,
    )


@dataclass(frozen=True)
class BudgetResult:
    """An evaluated budget (immutable snapshot), all measurand values in ``budget.unit``.

    Attributes
    ----------
    value : float
        Estimate y of the measurand.
    standard_uncertainty : float
        Combined standard uncertainty u_c(y).
    effective_dof : float
        ν_eff from Welch-Satterthwaite, before truncation (``inf`` possible).
    effective_dof_used : float
        ν_eff truncated per JCGM 100:2008 G.6.4, used for the t quantile.
    coverage_factor : float
        k (t_p(ν_eff), the normal quantile, or the user's fixed k).
    expanded_uncertainty : float
        U = k u_c.
    contributions : tuple of InputContribution
    cross_terms : tuple of CrossTerm
    warnings : tuple of str
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
    method: str
    rounding: str
    contributions: tuple[InputContribution, ...]
    cross_terms: tuple[CrossTerm, ...]
    warnings: tuple[str, ...]
    first_order_standard_uncertainty: float

    @property
    def unit(self) -> str:
        return self.budget.unit

    @property
    def measurand(self) -> str:
        return self.budget.measurand

    @property
    def relative_expanded_uncertainty(self) -> float:
        """U/|y|; NaN when y = 0 or when the measurand is in an offset unit such as degC
        (a relative uncertainty of a Celsius value has no meaning)."""
        if self.value == 0 or self.budget._scales[2][1] != 0.0:
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
        """Value and U rounded per JCGM 100:2008 7.2.6 with this result's rounding rule."""
        if self.expanded_uncertainty <= 0:
            raise InputError("cannot round a result whose expanded uncertainty is zero")
        return round_result(
            self.value, self.expanded_uncertainty, digits=digits, rounding=self.rounding
        )  # type: ignore[arg-type]

    def statement(self, digits: int = 2) -> str:
        """The result statement, e.g. ``"nu = (41.27 ± 0.15) mm²/s, k = 2.00, p ≈ 95 %"``."""
        unit = _units.format_unit(self.unit) if self.unit else ""
        if self.expanded_uncertainty <= 0:
            return f"{self.measurand} = {self.value:.10g} {unit} (exactly known inputs)".rstrip()
        r = self.rounded(digits)
        p = _percent(self.coverage_probability)
        k = f"{self.coverage_factor:.2f}"
        text = f"{self.measurand} = ({r.value} ± {r.uncertainty})"
        text += f" {unit}" if unit else ""
        text += f", k = {k}, p ≈ {p} %"
        rel = self.relative_expanded_uncertainty
        if math.isfinite(rel):
            text += f" (relative U = {_rel(rel)})"
        return text

    def to_ufloat(self) -> Any:
        """The result as an ``uncertainties`` value (nominal value, u_c), measurand unit."""
        from uncertainties import ufloat

        return ufloat(self.value, self.standard_uncertainty, tag=self.measurand)

    # ---------------------------------------------------------------- tables
    def table(self) -> Any:
        """The budget table as a pandas DataFrame (one row per input, plus correlation rows)."""
        import pandas as pd

        rows = []
        for c in self.contributions:
            rows.append(
                {
                    "quantity": c.name,
                    "estimate": c.value,
                    "unit": _units.format_unit(c.unit) if c.unit else "",
                    "standard uncertainty": c.standard_uncertainty,
                    "distribution": c.distribution,
                    "type": c.evaluation,
                    "dof": c.dof,
                    "sensitivity": c.sensitivity,
                    "sensitivity unit": c.sensitivity_unit,
                    "relative sensitivity": c.relative_sensitivity,
                    "contribution": c.contribution,
                    "variance share": c.variance_share,
                }
            )
        for t in self.cross_terms:
            rows.append(
                {
                    "quantity": f"r({t.first}, {t.second}) = {t.coefficient:g}",
                    "estimate": math.nan,
                    "unit": "",
                    "standard uncertainty": math.nan,
                    "distribution": "",
                    "type": "",
                    "dof": math.nan,
                    "sensitivity": math.nan,
                    "sensitivity unit": "",
                    "relative sensitivity": math.nan,
                    "contribution": math.nan,
                    "variance share": t.variance_share,
                }
            )
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
            "method": self.method,
        }

    def to_text(self) -> str:
        """A plain-text rendering: the table, the combined result and the statement."""
        from viscometry.report_text import budget_text

        return budget_text(self)

    def _repr_html_(self) -> str:
        from viscometry.report_text import budget_html

        return budget_html(self)


def _percent(p: float) -> str:
    s = f"{100 * p:.2f}".rstrip("0").rstrip(".")
    return s


def _rel(rel: float) -> str:
    return f"{100 * rel:#.2g}".rstrip(".") + " %"
