"""The uncertainty budget: one immutable object that decides every number and every warning.

A :class:`Budget` holds the measurement model — a formula, or a built-in viscometer model
(:class:`~viscometry.gum.validity.BuiltInModel`, looked up in :mod:`viscometry.methods` by its
registry name) — the input quantities in their own units, exactly known constants,
correlations, the coverage settings, the rounding rule of the result statement and the
context values of the built-in model's validity checks. Every path asks the budget:
:meth:`Budget.evaluate` (law of propagation, JCGM 100:2008, 5.1.2 and 5.2.2, through the one
kernel :func:`~viscometry.gum.propagation.propagate`), :meth:`Budget.linearise` for fast
what-ifs, the Monte Carlo method, planning and working ranges, files, reports and widgets.
So the same budget gives the same warnings and the same :attr:`Budget.fingerprint` whichever
door it came in by. A what-if is a new budget (:meth:`Budget.with_input`), never a mutation.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, fields, replace
from types import MappingProxyType
from typing import Any

import numpy as np

from viscometry import units as _units
from viscometry.errors import CorrelationError, InputError, ModelError
from viscometry.gum.inputs import InputQuantity, check_name
from viscometry.gum.linearised import LinearisedBudget, frozen_array
from viscometry.gum.model import CompiledModel, MeasurementModel, compile_model
from viscometry.gum.propagation import (
    DEFAULT_COVERAGE_PROBABILITY,
    SMALLEST_KEPT,
    check_probability,
    higher_order_variance,
    propagate,
    validate_correlation,
)
from viscometry.gum.result import BudgetResult, CrossTerm, InputContribution, assemble
from viscometry.gum.rounding import ROUNDINGS, Rounding
from viscometry.gum.validity import (
    BuiltInModel,
    check_context_problems,
    check_propagation,
    estimate_warnings,
    exact_value_note,
    method_problems,
    si_problem,
    sign_bound_inputs,
    underflow,
)

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

#: Units of measurands that cannot be negative (viscosities and viscometer constants), used
#: for the plausibility warning of a coverage interval that reaches below zero.
_POSITIVE_MEASURAND_UNITS = ("Pa*s", "m^2/s", "m^2/s^2")

#: Said with a result whose higher-order terms came from finite differences (the symbolic
#: second and third derivatives would have been too large; see ``SYMBOLIC_HIGHER_ORDER_NODES``
#: in :mod:`viscometry.gum.model`).
HIGHER_ORDER_BY_DIFFERENCES = (
    "higher-order terms computed by central differences of the exact first derivatives "
    "(their symbolic form would be too large); they agree with the exact terms to about "
    "1e-10 of the first-order variance"
)


@dataclass(frozen=True, slots=True)
class Constant:
    """An exactly known quantity (no uncertainty), in its own unit.

    Used for the constants of a model and for the context values of a built-in model's
    validity checks (a bore radius, a timed volume, the local gravity ...).
    """

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
        if not isinstance(self.unit, str):
            raise InputError(f"constant {self.name}.unit must be a string, got {self.unit!r}")


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


@dataclass(frozen=True)
class Budget:
    """A complete uncertainty budget (immutable).

    Parameters
    ----------
    model : MeasurementModel
        The measurement function; its inputs are taken in the order of ``inputs``.
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
        Check that the model's dimensions match ``unit``.
    rounding : {"nearest", "up", "ea-4/02"}
        How the result statement rounds U (:func:`viscometry.gum.round_result`).
    method : BuiltInModel or None
        The built-in viscometer model the budget is made of (``model`` is then its
        equation); None for a formula typed by the user.
    checks : sequence of Constant, or mapping of key → SI value
        Context values of the built-in model's validity checks (``method.context_keys``),
        which are not inputs of the equation; a mapping gives SI values.
    description : str
        What the measurand is, in words.

    Raises
    ------
    InputError, ModelError, CorrelationError, UnitError
        Naming the field and the value; errors about one part of the budget carry
        ``where`` (e.g. ``"inputs.r"``) and start with it.
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
    rounding: Rounding = "nearest"
    method: BuiltInModel | None = None
    checks: tuple[Constant, ...] = ()
    description: str = ""
    _correlation_matrix: np.ndarray | None = field(init=False, repr=False, compare=False)
    _scales: tuple = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        set_ = object.__setattr__
        set_(self, "inputs", tuple(self.inputs))
        set_(self, "constants", tuple(self.constants))
        set_(self, "correlations", tuple(self.correlations))
        self._check_names()
        self._check_settings()
        if self.method is not None:
            set_(self, "checks", _context(self.method, self.checks))
            self._check_method()
        elif self.checks:
            raise InputError(
                "checks: a formula model has no validity checks to run; the check context is "
                "only used with a built-in viscometer model",
                where="checks",
            )
        self._convert_units()
        self._check_si()
        set_(self, "_correlation_matrix", self._build_correlation())

    # ---------------------------------------------------------------- validation
    def _check_names(self) -> None:
        names = [q.name for q in self.inputs]
        if not names:
            raise InputError("a budget needs at least one input quantity", where="inputs")
        if len(set(names)) != len(names):
            dup = sorted({n for n in names if names.count(n) > 1})
            raise InputError(f"input names used twice: {', '.join(dup)}", where="inputs")
        cnames = [c.name for c in self.constants]
        clash = sorted(set(names) & set(cnames))
        if clash:
            raise InputError(f"{', '.join(clash)} named both as input and as constant")
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
        if (tuple(self.model.input_names), tuple(self.model.constant_names)) != (
            tuple(names),
            tuple(cnames),
        ):
            m = self.model
            object.__setattr__(
                self,
                "model",
                MeasurementModel(
                    m.expression, tuple(names), tuple(cnames), m.output_name, m.formula
                ),
            )

    def _check_settings(self) -> None:
        k = self.coverage_factor
        if k is not None and (
            isinstance(k, bool)
            or not isinstance(k, (int, float))
            or not (math.isfinite(k) and k > 0)
        ):
            raise InputError(f"coverage_factor must be a positive number, got {k!r}")
        p = self.coverage_probability
        if isinstance(p, bool) or not isinstance(p, (int, float)):
            raise InputError(f"coverage_probability must be a number, got {p!r}")
        check_probability(p)
        if self.rounding not in ROUNDINGS:
            raise InputError(
                f"rounding must be one of {', '.join(ROUNDINGS)}, got {self.rounding!r}"
            )
        for label, text in (("title", self.title), ("description", self.description)):
            if not isinstance(text, str):
                raise InputError(f"{label} must be a string, got {text!r}")

    def _check_method(self) -> None:
        assert self.method is not None
        problems = list(
            method_problems(
                self.method, self.model.expression, self.inputs, (c.name for c in self.constants)
            )
        )
        problems += list(check_context_problems(self.method, self.checks))
        if problems:
            where, text = problems[0]
            raise InputError(f"{where}: {text}", where=where)

    def _convert_units(self) -> None:
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

    def _check_si(self) -> None:
        """Refuse an estimate, uncertainty or constant that is no usable float in SI units
        (:func:`~viscometry.gum.validity.si_problem`): the engine computes in SI."""
        in_scales, c_scales, _ = self._scales
        if all(
            _kept(q.value * s + o) and _kept(q.standard_uncertainty * s)
            for q, (s, o) in zip(self.inputs, in_scales, strict=True)
        ) and all(
            _kept(k.value * s + o) for k, (s, o) in zip(self.constants, c_scales, strict=True)
        ):
            return  # (plain floats first: this runs for every what-if of a slider)
        x, u, _nu, c = self.si_arrays()
        for names, where, values, uncertainties, given in (
            (self.input_names, "inputs", x, u, self.inputs),
            (tuple(k.name for k in self.constants), "constants", c, np.zeros_like(c),
             self.constants),
        ):  # fmt: skip
            found = si_problem(names, values, uncertainties) if len(names) else None
            if found is not None:
                row, _col, text = found
                item = given[row]
                place = f"{where}.{names[row]}"
                stated = f"value {item.value!r}"
                if isinstance(item, InputQuantity):
                    stated += f", standard uncertainty {item.standard_uncertainty!r}"
                unit = f" in {item.unit}" if item.unit not in ("", "1") else ""
                raise InputError(f"{place}: {text} (given{unit}: {stated})", where=place)

    def _build_correlation(self) -> np.ndarray | None:
        if not self.correlations:
            return None
        index = {q.name: i for i, q in enumerate(self.inputs)}
        r = np.eye(len(self.inputs))
        seen: set[frozenset[str]] = set()
        for c in self.correlations:
            for nm in (c.first, c.second):
                if nm not in index:
                    raise CorrelationError(
                        f"correlation names unknown input {nm!r} (inputs: {', '.join(index)})",
                        where="correlations",
                    )
            key = frozenset((c.first, c.second))
            if key in seen:
                raise CorrelationError(
                    f"correlation between {c.first} and {c.second} given twice",
                    where="correlations",
                )
            seen.add(key)
            i, j = index[c.first], index[c.second]
            r[i, j] = r[j, i] = c.coefficient
        return validate_correlation(r, [q.name for q in self.inputs])

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
        **settings: Any,
    ) -> Budget:
        """Build a budget from a formula string (parsed by the whitelist parser).

        ``settings`` are the other fields: ``coverage_probability``, ``coverage_factor``,
        ``title``, ``rounding``, ``description``.

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
        return cls(model, inputs, unit, constants, tuple(correlations), **settings)

    @classmethod
    def from_method(
        cls,
        method: BuiltInModel,
        inputs: Iterable[InputQuantity] | Mapping[str, InputQuantity],
        unit: str | None = None,
        *,
        measurand: str | None = None,
        checks: Iterable[Constant] | Mapping[str, float] = (),
        **settings: Any,
    ) -> Budget:
        """A budget of a built-in viscometer model (see :func:`viscometry.methods.get_method`).

        Parameters
        ----------
        method : BuiltInModel
            E.g. ``get_method("glass_capillary_kinetic")``.
        inputs : iterable or mapping of InputQuantity
            One per input of the model (any units of the right kind).
        unit : str, optional
            Unit of the measurand; default the model's SI unit.
        measurand : str, optional
            Name of the measurand; default the model's.
        checks : Constants or mapping
            Context of the model's validity checks (``method.context_keys``); a mapping
            gives SI values, Constants carry their own units.
        **settings
            ``constants``, ``correlations``, ``coverage_probability``, ``coverage_factor``,
            ``title`` (default the model's title), ``rounding``, ``description``.
        """
        qs = tuple(inputs.values()) if isinstance(inputs, Mapping) else tuple(inputs)
        constants = tuple(settings.pop("constants", ()))
        problems = list(method_problems(method, method.expression, qs, (c.name for c in constants)))
        if problems and problems[0][0] in ("inputs", "constants"):
            where, text = problems[0]
            raise ModelError(f"{where}: {text}", where=where)
        model = MeasurementModel(
            method.expression,
            tuple(q.name for q in qs),
            tuple(c.name for c in constants),
            measurand or method.output_name,
        )
        settings.setdefault("title", getattr(method, "title", ""))
        return cls(
            model, qs, method.output_unit if unit is None else unit, constants,
            method=method, checks=checks, **settings,
        )  # fmt: skip

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

    @property
    def check_context(self) -> Mapping[str, float]:
        """The check context in SI (key → value in ``method.context_unit(key)``), read-only."""
        out = {}
        for c in self.checks:
            scale, offset = _units.si_conversion(c.unit or "1")
            out[c.name] = c.value * scale + offset
        return MappingProxyType(out)

    def input(self, name: str) -> InputQuantity:
        """The input quantity called ``name``."""
        for q in self.inputs:
            if q.name == name:
                return q
        raise InputError(f"no input named {name!r} (inputs: {', '.join(self.input_names)})")

    @property
    def compiled(self) -> CompiledModel:
        return compile_model(self.model)

    @property
    def input_conversions(self) -> tuple[tuple[float, float], ...]:
        """(scale, offset) per input: x_SI = scale·x + offset (the offset only for degC, degF)."""
        return self._scales[0]

    @property
    def input_scales(self) -> tuple[float, ...]:
        """Factor from each input's own unit to SI (its uncertainty's factor too)."""
        return tuple(s for s, _o in self._scales[0])

    @property
    def output_scale(self) -> float:
        """Factor from the measurand's unit to SI."""
        return self._scales[2][0]

    @property
    def output_offset(self) -> float:
        """Offset of the measurand's unit from SI (non-zero for degC only)."""
        return self._scales[2][1]

    @functools.cached_property
    def positive_measurand(self) -> bool:
        """True when the measurand cannot be negative (a built-in viscometer model, or a
        viscosity or viscometer constant by its unit)."""
        if self.method is not None:
            return True
        return any(_units.same_dimension(self.unit, u) for u in _POSITIVE_MEASURAND_UNITS)

    @functools.cached_property
    def fingerprint(self) -> str:
        """``"sha256:..."`` over the canonical form (:mod:`viscometry.gum.canonical`)."""
        from viscometry.gum.canonical import fingerprint

        return fingerprint(self)

    @functools.cached_property
    def sign_bound(self) -> tuple[str, ...]:
        """Inputs that cannot change sign (:func:`viscometry.gum.validity.sign_bound_inputs`)."""
        return sign_bound_inputs(self)

    @functools.cached_property
    def estimate_warnings(self) -> tuple[str, ...]:
        """Warnings that depend on the estimates only: unused inputs or constants and the
        built-in model's validity checks (:func:`viscometry.gum.validity.estimate_warnings`)."""
        return estimate_warnings(self)

    def correlated_with_finite_dof(self) -> tuple[str, ...]:
        """Inputs with finite νᵢ that are correlated with another input (sorted names)."""
        r = self._correlation_matrix
        if r is None:
            return ()
        n = len(self.inputs)
        return tuple(
            sorted(
                {
                    self.inputs[i].name
                    for i in range(n)
                    for j in range(n)
                    if i != j and r[i, j] != 0 and math.isfinite(self.inputs[i].dof)
                }
            )
        )

    # ---------------------------------------------------------------- what-ifs
    def with_input(self, quantity: InputQuantity) -> Budget:
        """A new budget with one input replaced (matched by name)."""
        self.input(quantity.name)
        new = tuple(quantity if q.name == quantity.name else q for q in self.inputs)
        return replace(self, inputs=new)

    def with_uncertainty(self, name: str, standard_uncertainty: float) -> Budget:
        """A new budget where ``name`` has another standard uncertainty (its own unit).

        Only what a change of uncertainty can change is checked again: the new value (a
        finite number ≥ 0, :meth:`InputQuantity.with_uncertainty`, that is a usable float in
        SI units, as when the budget is built). Names, settings, units and dimensions, the
        built-in model's refusals of estimates and the correlation matrix cannot change and
        are carried over with the unit conversions, as is what depends on the estimates only
        (the validity checks, the inputs that keep their sign). The plausibility and
        propagation checks of the new uncertainty run when the new budget is evaluated.

        Raises
        ------
        InputError
            An unknown name, or an uncertainty a budget would refuse (naming it).
        """
        q = self.input(name)
        new_q = q.with_uncertainty(standard_uncertainty)
        new = object.__new__(type(self))
        state = {key: self.__dict__[key] for key in _FIELDS}
        state["inputs"] = tuple(new_q if p is q else p for p in self.inputs)
        state.update((key, self.__dict__[key]) for key in _ESTIMATE_CACHES if key in self.__dict__)
        new.__dict__.update(state)
        new._check_si()
        return new

    def with_settings(self, **changes: Any) -> Budget:
        """A new budget with other settings (coverage_probability, coverage_factor, title,
        rounding, checks, description...)."""
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
        out = []
        for q, (s, o) in zip(self.inputs, self._scales[0], strict=True):
            out.append(
                replace(
                    q,
                    value=q.value * s + o,
                    standard_uncertainty=q.standard_uncertainty * s,
                    half_width=None if q.half_width is None else q.half_width * s,
                    readings=None,
                    unit=_units.si_unit_label(q.unit) if q.unit else "",
                    form="standard",
                    stated=(),
                )
            )
        return tuple(out)

    # ---------------------------------------------------------------- evaluation
    def evaluate(self, *, higher_order: bool = False) -> BudgetResult:
        """Evaluate the budget by the law of propagation of uncertainty.

        Parameters
        ----------
        higher_order : bool
            Add the second-order terms of JCGM 100:2008 eq. (10) (for uncorrelated, normal
            inputs; with correlated inputs a :class:`ModelError` is raised).

        Returns
        -------
        BudgetResult
            With every warning of the budget (validity checks, unused inputs, plausibility).
        """
        x, u, nu, c = self.si_arrays()
        y, grad = self._value_and_gradient(x, c)
        extra = self._higher_order_variance(x, u, c, grad) if higher_order else 0.0
        prop = propagate(
            grad, u, nu, self._correlation_matrix,
            coverage_probability=self.coverage_probability,
            coverage_factor=self.coverage_factor, extra_variance=extra,
        )  # fmt: skip
        notes = check_propagation(self, prop, u, self.underflowed_sensitivities, _at_estimates)
        if higher_order and self.compiled.higher_order_method == "finite differences":
            notes = (*notes, HIGHER_ORDER_BY_DIFFERENCES)
        return assemble(self, x, y, grad, prop, higher_order, notes)

    @functools.cached_property
    def underflowed_sensitivities(self) -> tuple[tuple[int, int, float], ...]:
        """Sensitivity coefficients that underflow at the estimates: (input index, 0,
        log10 of the exact |cᵢ|) (:func:`viscometry.gum.validity.underflow`); a model value
        that underflows is refused here."""
        x, _u, _nu, c = self.si_arrays()
        y, grad = self._value_and_gradient(x, c)
        return self._underflow(x, c, y, grad)

    def _underflow(
        self, x: np.ndarray, c: np.ndarray, y: float, grad: np.ndarray
    ) -> tuple[tuple[int, int, float], ...]:
        message, lost = underflow(self, x, c, np.array([y]), grad, _at_estimates)
        if message is not None:
            raise ModelError(message)
        return lost

    def _value_and_gradient(self, x: np.ndarray, c: np.ndarray) -> tuple[float, np.ndarray]:
        comp = self.compiled
        y = float(comp.value(*x, *c))
        if not math.isfinite(y):
            note = exact_value_note(self, self.model.expression, x, c)
            raise ModelError(
                f"the model gives {y!r} at the input estimates ({self._estimates()}){note}; "
                "check the estimates and the formula"
            )
        grad = comp.gradient(*x, *c)
        bad = [i for i, g in enumerate(grad) if not math.isfinite(g)]
        if bad:
            note = exact_value_note(self, comp.derivatives[bad[0]], x, c)
            raise ModelError(
                f"sensitivity coefficient of {', '.join(self.input_names[i] for i in bad)} is "
                f"not finite at the estimates ({self._estimates()}){note}"
            )
        if "underflowed_sensitivities" not in self.__dict__:  # once per set of estimates
            self.__dict__["underflowed_sensitivities"] = self._underflow(x, c, y, grad)
        return y, grad

    def _higher_order_variance(
        self, x: np.ndarray, u: np.ndarray, c: np.ndarray, grad: np.ndarray
    ) -> float:
        r = self._correlation_matrix
        if r is not None and np.any(r - np.eye(len(u)) != 0):
            raise ModelError(
                "higher-order terms (JCGM 100:2008 eq. 10) are defined for uncorrelated inputs; "
                "remove the correlations or use the Monte Carlo method"
            )
        h, t = self.compiled.higher_order(*x, *c, uncertainties=u)
        return higher_order_variance(u, grad, h, t)

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

        Changing standard uncertainties (an upgrade, a slider) needs no new derivative and no
        model call: :meth:`LinearisedBudget.with_uncertainty` gets u_c, ν_eff, k and U from
        the same kernel as :meth:`evaluate`. Changing an *estimate* needs a new budget.
        """
        x, _u, _nu, c = self.si_arrays()
        y, grad = self._value_and_gradient(x, c)
        scale_in = np.array(self.input_scales)
        return LinearisedBudget(
            budget=self,
            value=(y - self.output_offset) / self.output_scale,
            sensitivities=frozen_array(grad * scale_in / self.output_scale),
            uncertainties=frozen_array([q.standard_uncertainty for q in self.inputs]),
        )


#: Cached properties of a budget that depend on its estimates, model and checks only.
_ESTIMATE_CACHES = (
    "sign_bound", "estimate_warnings", "positive_measurand", "underflowed_sensitivities",
)  # fmt: skip

#: Every field of a budget, those set in ``__post_init__`` included (what a copy carries).
_FIELDS = tuple(f.name for f in fields(Budget))


def _kept(value: float) -> bool:
    """0, or a finite float of at least :data:`SMALLEST_KEPT` in size (keeps its digits)."""
    return value == 0 or SMALLEST_KEPT <= abs(value) < math.inf


def _at_estimates(_point: int) -> str:
    """Where a budget's own numbers are, for messages."""
    return "at the input estimates"


def _context(
    method: BuiltInModel, checks: Iterable[Constant] | Mapping[str, float]
) -> tuple[Constant, ...]:
    """Check-context values as Constants (a mapping gives SI values in the context unit)."""
    if isinstance(checks, Mapping):
        out = []
        for key, value in checks.items():
            if key not in method.context_keys:
                accepted = ", ".join(method.context_keys) or "none"
                raise InputError(
                    f"checks: has unknown key {key!r}; method {method.name!r} accepts: {accepted}",
                    where="checks",
                )
            out.append(Constant(key, value, method.context_unit(key)))
        return tuple(out)
    items = tuple(checks)
    for c in items:
        if not isinstance(c, Constant):
            raise InputError(f"checks must be Constants or a mapping of SI values, got {c!r}")
    return items
