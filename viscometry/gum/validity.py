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

import functools
import math
import re
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from typing import TYPE_CHECKING, Any, NamedTuple, Protocol, runtime_checkable

import numpy as np
import sympy as sp

from viscometry import units as _units
from viscometry.gum.propagation import (
    SMALLEST_KEPT,
    SMALLEST_NORMAL,
    Propagation,
    magnitude,
    propagate,
    representation_problem,
)

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.budget import Budget, Constant
    from viscometry.gum.inputs import InputQuantity

__all__ = [
    "BuiltInModel",
    "flow_time_warnings",
    "sign_bound_inputs",
    "method_problems",
    "check_context_problems",
    "estimate_warnings",
    "uncertainty_warnings",
    "si_problem",
    "check_points",
    "group_notes",
    "reaches_past_zero",
    "interval_below_zero",
    "point_plausibility",
    "underflow",
    "lost_contributions",
    "check_propagation",
    "exact_value_note",
    "propagate_points",
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
        out += flow_time_warnings(budget)
    return tuple(out)


def flow_time_warnings(budget: Budget) -> list[str]:
    """Whether the readings of each flow time of a glass-viscometer model agree.

    For every input a built-in model names in ``flow_time_inputs`` that is stated as 2 to 10
    readings, their range is compared with the ``flow_time_range`` limit
    (:func:`viscometry.evidence.acceptance.check_flow_times`: 0.2 % of the mean for two
    timings, common practice); readings outside it give a warning that says what to do
    (one more timing while fewer than four were taken, else investigate).
    """
    from viscometry.evidence.acceptance import MAX_RESULTS, check_flow_times

    if budget.method is None or not budget.method.flow_time_inputs:
        return []
    out = []
    for q in budget.inputs:
        readings = q.readings or ()
        if q.name not in budget.method.flow_time_inputs or not 2 <= len(readings) <= MAX_RESULTS:
            continue
        scale, offset = _units.si_conversion(q.unit or "s")
        times = [r * scale + offset for r in readings]
        if not all(math.isfinite(t) and t > 0 for t in times):
            continue  # refused or warned about elsewhere
        v = check_flow_times(times, most=max(4, len(times)))
        if v.action == "accept":
            continue
        todo = (
            "take one more timing"
            if v.action == "repeat"
            else "investigate before reporting (cleanliness, particles, bubbles, temperature)"
        )
        out.append(
            f"the {len(times)} readings of flow time {q.name} span {v.spread:.3g} s, more than "
            f"the {v.limit:.3g} s their agreement allows ({v.limit_name}, "
            f"{v.limit_source}): {todo}"
        )
    return out


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
        if q.name in bound and reaches_past_zero(q.value, q.standard_uncertainty):
            q_unit = f" {_units.format_unit(q.unit)}" if q.unit not in ("", "1") else ""
            out.append(
                f"u({q.name}) = {q.standard_uncertainty:.3g}{q_unit} is at least |{q.name}| = "
                f"{abs(q.value):.3g}{q_unit}: its distribution reaches past zero, which "
                f"{q.name} cannot (it enters the model as a factor that keeps its sign); check "
                "the value, or state the uncertainty with a bounded distribution and use the "
                "Monte Carlo method (JCGM 101)"
            )
    if positive_measurand and interval_below_zero(value, expanded_uncertainty):
        u = f" {_units.format_unit(unit)}" if unit not in ("", "1") else ""
        out.append(
            f"the coverage interval {measurand} ± U reaches below zero "
            f"(U = {expanded_uncertainty:.3g}{u} > {measurand} = {value:.3g}{u}); {measurand} "
            "cannot be negative, so the first-order budget is not adequate here: check the "
            "uncertainties and use the Monte Carlo method (JCGM 101)"
        )
    return out


# =============================================================================== changed inputs
# Every path that builds budgets from changed estimates or uncertainties without building a
# Budget for each (a working range, the sets of an upgrade plan) asks the functions below,
# so that it refuses and warns as loading the same budget would.

#: Points of a range (or sets of a plan) whose model value or sensitivities are checked
#: with exact-exponent arithmetic when they come out 0 or subnormal (see :func:`underflow`).
EXACT_CHECKS = 16

Label = Callable[[int], str]


def si_problem(
    names: Sequence[str], x_si: np.ndarray, u_si: np.ndarray
) -> tuple[int, int, str] | None:
    """The first estimate or standard uncertainty that is not a usable float in SI units.

    A non-zero value below :data:`SMALLEST_KEPT` (about 3e-316) has lost most of its digits
    (it is 0 below 4.9e-324); an infinite one overflowed. The engine works in SI units, so
    such a value cannot be evaluated whatever unit it was given in.

    Parameters
    ----------
    names : sequence of str
        Input names (rows).
    x_si, u_si : (N,) or (N, P) arrays
        Estimates and standard uncertainties in SI units.

    Returns
    -------
    (int, int, str) or None
        Row, column (0 for a 1-d array) and the reason, e.g. ``"the standard uncertainty of
        r is 9.88e-324 in SI units, too small for a floating-point number to keep its digits
        (below 3e-316)"``.

    Examples
    --------
    >>> si_problem(["r", "t"], np.array([1e-4, 200.0]), np.array([1e-323, 0.1]))[2]
    'the standard uncertainty of r is 9.88e-324 in SI units, too small for a floating-point number to keep its digits (below 3e-316)'
    """
    for what, arr in (("estimate", x_si), ("standard uncertainty", u_si)):
        a = np.asarray(arr, dtype=float).reshape(len(names), -1)
        if a.size < 64:  # one budget (a slider): plain floats are faster than array masks
            if all(v == 0 or SMALLEST_KEPT <= abs(v) < math.inf for v in a.flat):
                continue
        bad = ~np.isfinite(a) | ((a != 0) & (np.abs(a) < SMALLEST_KEPT))
        if np.any(bad):
            col = int(np.argmax(bad.any(axis=0)))
            row = int(np.argmax(bad[:, col]))
            v = float(a[row, col])
            why = (
                "too large for a floating-point number (overflow)"
                if not math.isfinite(v)
                else "too small for a floating-point number to keep its digits "
                f"(below {SMALLEST_KEPT:.1g})"
            )
            return row, col, f"the {what} of {names[row]} is {v:.3g} in SI units, {why}"
    return None


def check_points(
    budget: Budget, x_si: np.ndarray, u_si: np.ndarray, label: Label, noun: str = "points"
) -> tuple[str, ...]:
    """Refuse the first point a budget would refuse; return the validity warnings of the rest.

    Each column of ``x_si``/``u_si`` (inputs × points, SI units) is a budget with changed
    estimates or uncertainties. The estimates and uncertainties must be usable floats in SI
    (:func:`si_problem`), and a built-in model's ``estimate_problem`` (a radius, a time, a
    volume that must be positive) and ``check`` (its validity warnings) run at every
    distinct point — the very calls a budget makes when it is loaded.

    Parameters
    ----------
    budget : Budget
        The budget the points are variations of (its model, constants and check context).
    x_si, u_si : (N, P) arrays
        Estimates and standard uncertainties per point, SI units.
    label : callable
        ``label(j)`` says where point j is, with its preposition, e.g. ``"at r = -0.1
        (point 1 of the range)"`` or ``"with candidate 'new timer'"``.
    noun : str
        What the columns are, for the warnings (``"points"``, ``"sets"``).

    Returns
    -------
    tuple of str
        Validity warnings that hold at some points but not at the budget's own estimates,
        each naming the first such point and how many there are.

    Raises
    ------
    InputError
        At the first refused point, naming it, the input and the value; ``where`` is
        ``"inputs.NAME"``.
    """
    from viscometry.errors import InputError

    names = budget.input_names
    found = si_problem(names, x_si, u_si)
    if found is not None:
        row, col, text = found
        raise InputError(f"{label(col)}: {text}", where=f"inputs.{names[row]}")
    method = budget.method
    if method is None:
        return ()
    x = np.asarray(x_si, dtype=float)
    distinct, first, inverse = np.unique(x, axis=1, return_index=True, return_inverse=True)
    context = dict(zip((c.name for c in budget.constants), budget.si_arrays()[3], strict=True))
    context.update(budget.check_context)
    refused: list[tuple[int, str, str]] = []
    found: dict[int, list[str]] = {}
    for k, (col, j) in enumerate(zip(distinct.T, first.tolist(), strict=True)):
        values = dict(zip(names, col.tolist(), strict=True))
        bad = [(n, p) for n in method.input_names if (p := method.estimate_problem(n, values[n]))]
        if bad:
            refused.append((j, *bad[0]))
            continue
        values.update(context)
        found[k] = method.check(values)
    if refused:
        j, name, problem = min(refused)
        i = names.index(name)
        scale, offset = budget.input_conversions[i]
        own = (float(x[i, j]) - offset) / scale
        raise InputError(
            f"{label(j)}: {name} {problem}, got {own!r} {budget.inputs[i].unit}".rstrip(),
            where=f"inputs.{name}",
        )
    notes = [(j, w) for j, k in enumerate(np.ravel(inverse).tolist()) for w in found.get(k, ())]
    return group_notes(notes, x.shape[1], label, noun, budget.estimate_warnings)


def group_notes(
    notes: Sequence[tuple[int, str]],
    count: int,
    label: Label,
    noun: str,
    known: Iterable[str] = (),
) -> tuple[str, ...]:
    """One warning per kind of finding: the first point's text, with where and how often.

    Findings of the same kind differ only in their numbers; they are grouped by their text
    with the numbers masked. A kind the budget itself already warns about (``known``) is
    left out: the budget's own warnings are shown anyway.
    """
    known_kinds = {_kind(w) for w in known}
    groups: dict[str, list[tuple[int, str]]] = {}
    for j, text in sorted(notes, key=lambda item: item[0]):
        groups.setdefault(_kind(text), []).append((j, text))
    out = []
    for kind, items in groups.items():
        if kind in known_kinds:
            continue
        j, text = items[0]
        points = sorted({i for i, _t in items})
        more = f" and {len(points) - 1} more of the {count} {noun}" if len(points) > 1 else ""
        out.append(f"{label(j)}{more}: {text}")
    return tuple(out)


def _kind(text: str) -> str:
    """A warning's text with its numbers masked (what kind of finding it is); digits inside
    a name (``x1``, ``u(x2)``) are kept."""
    return _NUMBER.sub("#", text)


_NUMBER = re.compile(r"(?<![A-Za-z_\d.])[-+]?\d[\d.]*(?:e[-+]?\d+)?")


def reaches_past_zero(values: np.ndarray, uncertainties: np.ndarray) -> np.ndarray:
    """u(x) ≥ |x| for a non-zero x: the distribution of an input reaches past zero.

    Arrays give a boolean array; two floats a bool (the cheap path of a single budget,
    which every what-if of a slider takes)."""
    if isinstance(values, float) and isinstance(uncertainties, float):
        return values != 0 and uncertainties >= abs(values)  # type: ignore[return-value]
    v = np.asarray(values, dtype=float)
    return (v != 0) & (np.asarray(uncertainties, dtype=float) >= np.abs(v))


def interval_below_zero(value: np.ndarray, expanded_uncertainty: np.ndarray) -> np.ndarray:
    """y − U < 0 < y: the coverage interval of a positive measurand reaches below zero
    (arrays give a boolean array; two floats a bool)."""
    if isinstance(value, float) and isinstance(expanded_uncertainty, float):
        return value > 0 and value - expanded_uncertainty < 0  # type: ignore[return-value]
    y = np.asarray(value, dtype=float)
    return (y > 0) & (y - np.asarray(expanded_uncertainty, dtype=float) < 0)


def point_plausibility(
    budget: Budget,
    x_si: np.ndarray,
    u_si: np.ndarray,
    value: np.ndarray,
    expanded_uncertainty: np.ndarray,
    label: Label,
    noun: str = "points",
    known: Iterable[str] = (),
) -> tuple[str, ...]:
    """The plausibility warnings of :func:`uncertainty_warnings` at many points at once.

    ``x_si``, ``u_si`` are inputs × points (SI), ``value`` and ``expanded_uncertainty`` the
    measurand per point in ``budget.unit``. The rules are tested on the whole grid; the
    sentence of the first point of each rule is written by :func:`uncertainty_warnings`.
    Kinds of warning already in ``known`` (the budget's own) are left out.
    """
    x, u = np.asarray(x_si, dtype=float), np.asarray(u_si, dtype=float)
    bound = set(budget.sign_bound)
    rows = [i for i, n in enumerate(budget.input_names) if n in bound]
    conv = budget.input_conversions
    shape = (len(rows), x.shape[1])
    own_x = np.array([(x[i] - conv[i][1]) / conv[i][0] for i in rows]).reshape(shape)
    own_u = np.array([u[i] / conv[i][0] for i in rows]).reshape(shape)
    flags = reaches_past_zero(own_x, own_u)
    below = budget.positive_measurand & interval_below_zero(value, expanded_uncertainty)
    notes: list[tuple[int, str]] = []
    columns = set(np.flatnonzero(flags.any(axis=0) | below).tolist())
    for j in sorted(columns):
        qs = [_Quantity(budget.input_names[i], float(own_x[k, j]), budget.inputs[i].unit,
                        float(own_u[k, j])) for k, i in enumerate(rows)]  # fmt: skip
        texts = uncertainty_warnings(
            qs, budget.measurand, float(np.ravel(value)[j]),
            float(np.ravel(expanded_uncertainty)[j]), budget.positive_measurand, bound,
            budget.unit,
        )  # fmt: skip
        notes += [(j, t) for t in texts]
    return group_notes(notes, x.shape[1], label, noun, known)


class _Quantity(NamedTuple):
    """What a plausibility check needs of an input at one point."""

    name: str
    value: float
    unit: str
    standard_uncertainty: float


def underflow(
    budget: Budget,
    x_si: np.ndarray,
    constants_si: np.ndarray,
    value: np.ndarray,
    gradient: np.ndarray,
    label: Label,
) -> tuple[str | None, tuple[tuple[int, int, float], ...]]:
    """Find model values and sensitivity coefficients that underflowed.

    A model value or a sensitivity coefficient that comes out 0 or below the smallest
    normal float (2.2e-308) at non-zero inputs may be a true zero or an underflow (r⁴ with
    r = 1e-90 m is 1e-360, which no float holds; an intermediate value may also underflow).
    Such entries — at most :data:`EXACT_CHECKS` points per quantity — are evaluated again
    with the same formula in arbitrary-exponent arithmetic (mpmath, 80 bits), which tells
    the two apart. Plain floats are not trusted here: numpy's error state only sees numpy
    operations, and the model's lambdified code may run on Python floats.

    Parameters
    ----------
    budget : Budget
    x_si : (N, P) array
        Estimates per point, SI.
    constants_si : (K,) array
    value : (P,) array
        The model value per point, SI.
    gradient : (N, P) array
        The sensitivity coefficients per point, SI.
    label : callable
        ``label(j)`` says where point j is (``"at the input estimates"``).

    Returns
    -------
    message : str or None
        Why the model value cannot be represented at the first such point (the caller
        raises it as a :class:`~viscometry.errors.ModelError`).
    lost : tuple of (input index, point, log10 |cᵢ|)
        Sensitivity coefficients that underflowed, with their exact size; see
        :func:`lost_contributions` for what they mean for the result.
    """
    x = np.asarray(x_si, dtype=float)
    x = x.reshape(len(budget.inputs), -1)
    y = np.ravel(np.asarray(value, dtype=float))
    g = np.asarray(gradient, dtype=float).reshape(x.shape[0], -1)
    model = budget.model
    message = None
    for j in np.flatnonzero(np.abs(y) < SMALLEST_NORMAL)[:EXACT_CHECKS].tolist():
        exact = _exact_log10(model, model.expression, x[:, j], constants_si)
        if exact is None or exact == -math.inf or _agrees(float(y[j]), exact):
            continue
        size = magnitude(exact)
        if exact < math.log10(SMALLEST_KEPT):
            message = (
                f"the model value {model.output_name} {label(j)} is about {size} in SI units, "
                f"too small for a floating-point number (underflow below {SMALLEST_KEPT:.1g}); "
                "the engine works in SI units, so check the estimates"
            )
        else:
            message = (
                f"an intermediate value of the model underflows {label(j)}: "
                f"{model.output_name} is about {size} in SI units but evaluates to "
                f"{float(y[j])!r}; check the estimates, or write the formula so that no "
                f"intermediate value falls below {SMALLEST_NORMAL:.2g}"
            )
        break
    lost = []
    for i in range(g.shape[0]):
        small = np.flatnonzero(np.abs(g[i]) < SMALLEST_NORMAL)[:EXACT_CHECKS].tolist()
        if not small:
            continue  # (the exact derivative is derived only where it is needed)
        d = budget.compiled.derivative(i)
        if d == 0:  # an input the model does not use: its zero is exact
            continue
        for j in small:
            exact = _exact_log10(model, d, x[:, j], constants_si)
            if exact is not None and exact > -math.inf and not _agrees(float(g[i, j]), exact):
                lost.append((i, j, exact))
    return message, tuple(lost)


def _agrees(value: float, exact_log10: float) -> bool:
    """Whether a float holds a number of size 10**exact_log10 to 1 part in 10⁶ (a subnormal
    above :data:`SMALLEST_KEPT` does; an underflowed 0 or a subnormal far below does not)."""
    return value != 0 and abs(math.log10(abs(value)) - exact_log10) < 4e-7


def lost_contributions(
    budget: Budget,
    lost: Sequence[tuple[int, int, float]],
    u_si: np.ndarray,
    log10_uncertainty: np.ndarray,
    label: Label,
) -> tuple[str | None, tuple[str, ...]]:
    """What underflowed sensitivity coefficients (from :func:`underflow`) mean for u_c.

    The contribution |cᵢ|·u(xᵢ) of such an input is counted as (almost) 0. When its exact
    size is below 2⁻²⁷ of u_c, its square is below the resolution of u_c²: the result stays
    right and only the input's share is lost (a warning). Otherwise u_c would be wrong: an
    error message naming the input.

    Returns
    -------
    message : str or None
    warnings : tuple of str
    """
    if not lost:
        return None, ()
    u = np.asarray(u_si, dtype=float).reshape(len(budget.inputs), -1)
    log_uc = np.ravel(np.asarray(log10_uncertainty, dtype=float))
    notes = []
    for i, j, log_c in lost:
        if u[i, j] == 0:
            continue
        name = budget.input_names[i]
        size = log_c + math.log10(u[i, j])
        ratio = size - float(log_uc[j])
        what = (
            f"the sensitivity coefficient of {name} {label(j)} is about {magnitude(log_c)} "
            f"in SI units, too small for a floating-point number (underflow)"
        )
        if not ratio < 27 * math.log10(0.5):
            return (
                f"{what}; its contribution c·u({name}) ≈ {magnitude(size)} cannot be "
                "counted, so u_c would be wrong; the engine works in SI units, so check the "
                "estimates"
            ), ()
        notes.append(
            f"{what}; its contribution ≈ {magnitude(size)} is counted as 0 and its share is "
            f"lost, but it is below 10^{ratio:.0f} of u_c, so u_c is not affected"
        )
    return None, tuple(notes)


@functools.lru_cache(maxsize=128)
def _exact_function(expression: sp.Expr, symbols: tuple[sp.Symbol, ...]) -> Callable[..., Any]:
    return sp.lambdify(symbols, expression, modules="mpmath")


def _exact_log10(
    model: Any, expression: sp.Expr, x: np.ndarray, constants: np.ndarray
) -> float | None:
    """log10 |expression| at x (SI) in arbitrary-exponent arithmetic; None if it fails."""
    import mpmath

    symbols = tuple(model.symbol(n) for n in (*model.input_names, *model.constant_names))
    try:
        fn = _exact_function(expression, symbols)
        with mpmath.workprec(80):
            v = fn(*(mpmath.mpf(float(a)) for a in (*x, *constants)))
            if isinstance(v, mpmath.mpc):
                if v.imag != 0:
                    return None
                v = v.real
            v = mpmath.mpf(v)
            if not mpmath.isfinite(v):
                return None
            return -math.inf if v == 0 else float(mpmath.log10(abs(v)))
    except Exception:  # noqa: BLE001 - a second opinion only: no answer means no finding
        return None


def check_propagation(
    budget: Budget,
    prop: Propagation,
    u_si: np.ndarray,
    lost: Sequence[tuple[int, int, float]],
    label: Label,
    *,
    units: str = "SI units",
    log10_to_si: float = 0.0,
) -> tuple[str, ...]:
    """Refuse a propagation whose u_c or U cannot be represented; notes of lost shares.

    Called after :func:`~viscometry.gum.propagation.propagate` on every path (a budget's
    evaluation, the fast what-if, working ranges, upgrade sets, the target solver).

    Parameters
    ----------
    budget : Budget
    prop : Propagation
        One budget or one column per point.
    u_si : (N,) or (N, P) array
        The standard uncertainties, SI units.
    lost : sequence
        Underflowed sensitivity coefficients from :func:`underflow`.
    label : callable
        ``label(j)`` says where point j is (``"at the input estimates"``).
    units : str
        The units ``prop`` is in, for the message.
    log10_to_si : float
        log₁₀ of the factor from those units to SI (0 for SI).

    Returns
    -------
    tuple of str
        Warnings about sensitivity coefficients whose (negligible) share is lost.

    Raises
    ------
    ModelError
        Naming the point, the size of u_c and the input with the largest contribution.
    """
    from viscometry.errors import ModelError

    problem = representation_problem(prop)
    if problem is not None:
        j, text = problem
        shares = np.asarray(prop.variance_shares, dtype=float).reshape(len(budget.inputs), -1)
        top = budget.input_names[int(np.argmax(np.nan_to_num(shares[:, j], nan=np.inf)))]
        raise ModelError(
            f"the combined standard uncertainty cannot be computed {label(j)}: in {units}, "
            f"{text}; the largest contribution is from {top}; the engine works in SI units, "
            "so check the estimates and uncertainties"
        )
    if not lost:
        return ()
    log_uc = np.asarray(prop.log10_uncertainty, dtype=float) + log10_to_si
    message, notes = lost_contributions(budget, lost, u_si, log_uc, label)
    if message is not None:
        raise ModelError(message)
    return notes


def exact_value_note(
    budget: Budget, expression: sp.Expr, x_si: np.ndarray, constants_si: np.ndarray
) -> str:
    """``"; its exact value is about 2e-210 in SI units: an intermediate value under- or
    overflows in floating point"`` when ``expression`` (the model or a derivative), which
    gave a non-finite float at ``x_si``, is finite in exact-exponent arithmetic; else ``""``.
    """
    exact = _exact_log10(budget.model, expression, np.ravel(x_si), constants_si)
    if exact is None:
        return ""
    return (
        f"; its exact value is about {magnitude(exact)} in SI units: an intermediate value "
        "under- or overflows in floating point"
    )


def propagate_points(
    budget: Budget,
    x_si: np.ndarray,
    u_si: np.ndarray,
    dofs: np.ndarray,
    value: np.ndarray,
    gradient: np.ndarray,
    label: Label,
) -> tuple[Propagation, tuple[str, ...]]:
    """The propagation kernel on many variations of one budget, checked as its evaluation is.

    Columns of ``x_si``, ``u_si`` (inputs × points, SI), ``value`` (SI) and ``gradient``
    (SI) are the points of a working range or the sets of an upgrade plan; ``dofs`` are νᵢ
    (per input, or inputs × points). A model value or sensitivity that underflowed
    (:func:`underflow`), a u_c or U no float holds (:func:`check_propagation`) is refused
    naming the point; the notes about lost, negligible shares are returned.
    """
    from viscometry.errors import ModelError

    constants = budget.si_arrays()[3]
    message, lost = underflow(budget, x_si, constants, value, gradient, label)
    if message is not None:
        raise ModelError(message)
    prop = propagate(
        gradient, u_si, dofs, budget.correlation_matrix,
        coverage_probability=budget.coverage_probability, coverage_factor=budget.coverage_factor,
    )  # fmt: skip
    return prop, check_propagation(budget, prop, u_si, lost, label)
