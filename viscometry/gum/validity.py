"""What a budget must satisfy to be built, and the warnings it carries when it is legal but doubtful.

Three kinds of finding, all owned by the budget so that every path (evaluate, Monte Carlo,
planning, working ranges, reports, widgets) reports the same ones:

* **refusals** of a built-in viscometer model (:class:`BuiltInModel`): an input missing or
  of the wrong kind of unit, a radius or flow time that is not positive, a check-context value
  that does not fit. :func:`method_problems` lists them as ``(where, text)`` pairs; the budget
  raises the first, a file reader points at the file's table instead.
* **estimate warnings**, which depend on the estimates only and are computed once per budget
  (:func:`estimate_warnings`): an input or constant the model does not use, and the built-in
  model's validity checks (flow time, kinetic-energy term, Reynolds number, gravity ...).
* **plausibility warnings**, which depend on the uncertainties too and are computed at each
  evaluation (:func:`uncertainty_warnings`): an input that cannot change sign
  (:func:`sign_bound_inputs`) whose uncertainty reaches past zero, a coverage interval of a
  positive measurand that reaches below zero.

Warnings are plain sentences with the numbers in them; nothing here prints.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Iterator, Mapping, Sequence
from typing import TYPE_CHECKING, Protocol, runtime_checkable

import numpy as np
import sympy as sp

from viscometry import units as _units

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.budget import Budget, Constant
    from viscometry.gum.inputs import InputQuantity

__all__ = [
    "BuiltInModel",
    "sign_bound_inputs",
    "method_problems",
    "check_context_problems",
    "estimate_warnings",
    "uncertainty_warnings",
]


@runtime_checkable
class BuiltInModel(Protocol):
    """What the budget needs of a built-in viscometer model (see :class:`viscometry.methods.Method`).

    A registry entry: its ``name``, the measurement equation ``expression`` over
    ``input_names`` (and ``constant_names``), the SI unit of each input, which estimates must
    be positive, the optional context keys of its validity checks, and ``check``.
    """

    name: str
    expression: sp.Expr
    input_names: tuple[str, ...]
    constant_names: tuple[str, ...]
    input_units: Mapping[str, str]
    output_name: str
    output_unit: str
    positive_inputs: tuple[str, ...]
    context_keys: Mapping[str, str]

    def context_unit(self, key: str) -> str: ...  # pragma: no cover - protocol

    def estimate_problem(
        self, name: str, value_si: float, unit_given: str = ""
    ) -> str | None: ...  # pragma: no cover - protocol

    def check(self, values_si: Mapping[str, float]) -> list[str]: ...  # pragma: no cover


def method_problems(
    method: BuiltInModel,
    expression: sp.Expr,
    inputs: Sequence[InputQuantity],
    constant_names: Iterable[str],
) -> Iterator[tuple[str, str]]:
    """Why these inputs cannot make a budget of ``method``: ``(where, text)`` pairs.

    ``where`` names the part as a budget file does (``"inputs"``, ``"inputs.r"``,
    ``"constants"``, ``"measurand"``); ``text`` is the reason with the value.
    """
    name = method.name
    given = {q.name: q for q in inputs}
    missing = [n for n in method.input_names if n not in given]
    extra = [n for n in given if n not in method.input_names]
    if missing or extra:
        text = f"method {name!r}"
        text += f" needs input(s) {', '.join(missing)}" if missing else ""
        text += f"{';' if missing else ''} does not use {', '.join(extra)}" if extra else ""
        yield "inputs", f"{text} (it uses: {', '.join(method.input_names)})"
        return
    missing_c = [n for n in method.constant_names if n not in set(constant_names)]
    if missing_c:
        yield "constants", f"method {name!r} needs constant(s) {', '.join(missing_c)}"
        return
    if expression != method.expression:
        yield "measurand", f"the model is not the equation of method {name!r}"
    for n in method.input_names:
        q = given[n]
        want = method.input_units.get(n)
        if want is not None and not _units.same_dimension(q.unit, want):
            yield (
                f"inputs.{n}",
                f"unit {q.unit!r} does not fit method {name!r}, which expects a quantity "
                f"measured in units like {want!r}",
            )
            continue
        scale, offset = _units.si_conversion(q.unit)
        problem = method.estimate_problem(n, q.value * scale + offset, q.unit)
        if problem:
            what = "value (the mean of the readings)" if q.readings else "value"
            yield f"inputs.{n}", f"{what} {problem}, got {q.value!r} {q.unit}".rstrip()


def check_context_problems(
    method: BuiltInModel, checks: Sequence[Constant]
) -> Iterator[tuple[str, str]]:
    """Why check-context values do not fit ``method``: ``(where, text)`` pairs.

    Each key must be one of the model's ``context_keys``, in a unit of the right kind (an
    absolute temperature, not a difference, where a temperature is meant) and positive:
    every context key is a size, a time, an acceleration, an absolute temperature or a molar
    mass.
    """
    accepted = tuple(method.context_keys)
    for c in checks:
        if c.name not in accepted:
            allowed = ", ".join(accepted) if accepted else "none (it has no optional checks)"
            yield "checks", f"has unknown key {c.name!r}; method {method.name!r} accepts: {allowed}"
            continue
        where = f"checks.{c.name}"
        want = method.context_unit(c.name)
        if not _units.same_dimension(c.unit or "1", want):
            yield (
                where,
                (
                    f"unit {c.unit!r} does not fit method {method.name!r}: {c.name} is measured in "
                    f"units like {want!r}"
                ),
            )
            continue
        if "delta_" in c.unit and _units.same_dimension(want, "K"):
            yield (
                where,
                (
                    f"unit {c.unit!r} is a temperature difference, but {c.name} is an absolute "
                    'temperature; write unit = "K" or "degC"'
                ),
            )
            continue
        scale, offset = _units.si_conversion(c.unit or "1")
        value_si = c.value * scale + offset
        if not (math.isfinite(value_si) and value_si > 0):
            yield where, f"value must be positive and finite, got {c.value!r} {c.unit}".rstrip()


def estimate_warnings(budget: Budget) -> tuple[str, ...]:
    """Warnings that depend on the estimates only (computed once per budget).

    An input or constant the model does not use, and, for a built-in viscometer model, its
    validity checks at the input estimates with the budget's check context (in SI).
    """
    out: list[str] = []
    used = set(budget.model.used_inputs)
    for q in budget.inputs:
        if q.name not in used:
            out.append(
                f"input {q.name} is not used by the model; its sensitivity coefficient is zero"
            )
    free = {s.name for s in budget.model.expression.free_symbols}
    for c in budget.constants:
        if c.name not in free:
            out.append(f"constant {c.name} is not used by the model")
    if budget.method is not None:
        x, _u, _nu, c_si = budget.si_arrays()
        values = dict(zip(budget.input_names, map(float, x), strict=True))
        values.update(zip((c.name for c in budget.constants), map(float, c_si), strict=True))
        values.update(budget.check_context)
        out += [str(w) for w in budget.method.check(values)]
    return tuple(out)


def sign_bound_inputs(budget: Budget) -> tuple[str, ...]:
    """Inputs that cannot change sign: a built-in model's ``positive_inputs``; in a formula,
    the inputs that enter as a power-law factor (relative sensitivity (x/y)·∂y/∂x the same,
    and non-zero, at x and at 2x), whose sign change would flip or void the measurand.
    A signed deviation that enters a sum (a temperature offset) is not one of them."""
    if budget.method is not None:
        return tuple(budget.method.positive_inputs)
    x, _u, _nu, c = budget.si_arrays()
    comp = budget.compiled
    n = len(x)
    # column j: the estimates with x_j doubled (one vectorised call for every input)
    doubled = np.repeat(x[:, None], n, axis=1)
    doubled[np.arange(n), np.arange(n)] *= 2.0
    with np.errstate(all="ignore"):
        y1, g1 = float(comp.value(*x, *c)), comp.gradient(*x, *c)
        y2 = np.broadcast_to(comp.value(*doubled, *c), (n,))
        g2 = np.diagonal(comp.gradient(*doubled, *c))
        rel1 = x * g1 / y1 if y1 != 0 else np.full(n, np.nan)
        rel2 = 2.0 * x * g2 / y2
    same = np.isfinite(rel1) & (rel1 != 0) & (np.abs(rel2 - rel1) <= 1e-6 * np.abs(rel1))
    return tuple(
        name for name, keep, xi in zip(budget.input_names, same, x, strict=True) if keep and xi != 0
    )


def uncertainty_warnings(
    inputs: Sequence[InputQuantity],
    measurand: str,
    value: float,
    expanded_uncertainty: float,
    positive_measurand: bool,
    sign_bound: Iterable[str] = (),
    unit: str = "",
) -> list[str]:
    """Plausibility warnings that depend on the uncertainties (cheap; at every evaluation).

    * u(xᵢ) ≥ |xᵢ| for an input that cannot change sign (``sign_bound``, see
      :func:`sign_bound_inputs`): its distribution reaches past zero, which a radius, a time
      or a volume cannot do; the linear budget no longer describes it.
    * y − U < 0 < y for a measurand that cannot be negative (a viscosity, a viscometer
      constant; ``positive_measurand``): the first-order interval is not adequate.
    """
    out = []
    bound = set(sign_bound)
    for q in inputs:
        if q.name in bound and q.value != 0 and q.standard_uncertainty >= abs(q.value):
            q_unit = f" {_units.format_unit(q.unit)}" if q.unit not in ("", "1") else ""
            out.append(
                f"u({q.name}) = {q.standard_uncertainty:.3g}{q_unit} is at least |{q.name}| = "
                f"{abs(q.value):.3g}{q_unit}: its distribution reaches past zero, which "
                f"{q.name} cannot (it enters the model as a factor that keeps its sign); check "
                "the value, or state the uncertainty with a bounded distribution and use the "
                "Monte Carlo method (JCGM 101)"
            )
    if positive_measurand and value > 0 and value - expanded_uncertainty < 0:
        u = f" {_units.format_unit(unit)}" if unit not in ("", "1") else ""
        out.append(
            f"the coverage interval {measurand} ± U reaches below zero "
            f"(U = {expanded_uncertainty:.3g}{u} > {measurand} = {value:.3g}{u}); {measurand} "
            "cannot be negative, so the first-order budget is not adequate here: check the "
            "uncertainties and use the Monte Carlo method (JCGM 101)"
        )
    return out
