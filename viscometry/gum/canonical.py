"""The audit fingerprint of a budget: SHA-256 over a canonical form of the :class:`Budget`.

The fingerprint belongs to the budget, not to a text: the same budget built in code, in a
workbook or read from a file has the same fingerprint. The canonical form keeps everything
that decides the budget's numbers and warnings, and drops what cannot change them:

kept
    the measurand's name and unit; the model (its sympy expression, and the name of the
    built-in viscometer model whose validity checks it runs, if any); the coverage settings and the rounding
    rule; every constant (value, unit); every input (unit, estimate, how its uncertainty was
    stated with every stated number, the readings, and the derived standard uncertainty,
    degrees of freedom, distribution and evaluation type); the correlations; the context
    values of a built-in model's validity checks.
dropped
    the title, descriptions and sources (prose for people), the order of inputs, constants,
    correlations and checks, and how units were spelt.

Rules: a unit becomes :func:`viscometry.units.canonical_unit` (dimension, SI scale and offset:
``mm^2/s``, ``mm² / s`` and ``cSt`` agree); a number becomes ``repr(float(x))`` (``2`` and
``2.0`` agree; ``-0.0`` is ``0.0``; ``inf`` stays ``inf``); a formula becomes
``sympy.srepr`` of its parsed expression (``C*t`` and ``t * C`` agree). The form is
serialised as JSON with sorted keys and no whitespace, and hashed with SHA-256
(FIPS PUB 180-4). The result is ``"sha256:<64 hex digits>"``; any change of a number, unit
or setting changes it. The scheme is named in the form (:data:`SCHEME`), so it can evolve.
"""

from __future__ import annotations

import hashlib
import json
from typing import TYPE_CHECKING, Any

import sympy as sp

from viscometry import units as _units

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.budget import Budget
    from viscometry.gum.inputs import InputQuantity

__all__ = [
    "SCHEME",
    "PREFIX",
    "canonical_form",
    "canonical_json",
    "canonical_expression",
    "fingerprint",
]

#: Name and version of the canonical form (part of what is hashed).
SCHEME = "viscometry-fingerprint/2"
#: Prefix of every fingerprint string (names the hash).
PREFIX = "sha256:"


def _number(x: float) -> str:
    f = float(x)
    return repr(0.0 if f == 0.0 else f)


def _item(v: float | str) -> str:
    return v if isinstance(v, str) else _number(v)


def _input(q: InputQuantity) -> dict[str, Any]:
    out: dict[str, Any] = {
        "unit": _units.canonical_unit(q.unit),
        "value": _number(q.value),
        "form": q.form,
        "stated": {k: _item(v) for k, v in q.stated},
        "standard_uncertainty": _number(q.standard_uncertainty),
        "dof": _number(q.dof),
        "distribution": q.distribution,
        "evaluation": q.evaluation,
    }
    if q.readings is not None:
        out["readings"] = [_number(r) for r in q.readings]
    return out


def _expression(expr: sp.Expr) -> str:
    """``srepr`` of an expression with every float at one precision (17 digits), so a model
    built in code with ``sympy.Float(0.1)`` and the same formula parsed from a file agree."""
    floats = {f: sp.Float(float(f), 17) for f in expr.atoms(sp.Float)}
    return sp.srepr(expr.xreplace(floats) if floats else expr)


def canonical_expression(expr: sp.Expr) -> str:
    """The canonical text of a model expression (as in the fingerprint): ``sympy.srepr`` with
    every float at 17 digits. Equal expressions give equal texts.

    Examples
    --------
    >>> x = sp.Symbol("x", real=True)
    >>> canonical_expression(2 * x) == canonical_expression(x * 2)
    True
    """
    return _expression(expr)


def canonical_form(budget: Budget) -> dict[str, Any]:
    """The canonical form of a budget (plain JSON-ready data; see the module docstring).

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "2*a", [InputQuantity.normal("a", 1, 0.1, "mm")], "mm")
    >>> form = canonical_form(b)
    >>> form["model"], form["inputs"]["a"]["value"], form["inputs"]["a"]["unit"]
    ({'formula': "Mul(Integer(2), Symbol('a', real=True))"}, '1.0', '[length]*0.001')
    """
    model = {"formula": _expression(budget.model.expression)}
    if budget.method is not None:
        model["method"] = budget.method.name
    settings: dict[str, str] = {"rounding": budget.rounding}
    if budget.coverage_factor is not None:
        settings["coverage_factor"] = _number(budget.coverage_factor)
    else:
        settings["coverage_probability"] = _number(budget.coverage_probability)
    correlations = sorted(
        ({"between": sorted((c.first, c.second)), "coefficient": _number(c.coefficient)}
         for c in budget.correlations),
        key=lambda c: c["between"],
    )  # fmt: skip
    return {
        "scheme": SCHEME,
        "measurand": {"name": budget.measurand, "unit": _units.canonical_unit(budget.unit)},
        "model": model,
        "settings": settings,
        "constants": {
            c.name: {"value": _number(c.value), "unit": _units.canonical_unit(c.unit)}
            for c in budget.constants
        },
        "inputs": {q.name: _input(q) for q in budget.inputs},
        "correlations": correlations,
        "checks": {
            c.name: {"value": _number(c.value), "unit": _units.canonical_unit(c.unit)}
            for c in budget.checks
        },
    }


def canonical_json(budget: Budget) -> str:
    """The canonical form as compact JSON with sorted keys (the exact text that is hashed)."""
    return json.dumps(
        canonical_form(budget), sort_keys=True, separators=(",", ":"), ensure_ascii=True
    )


def fingerprint(budget: Budget) -> str:
    """SHA-256 fingerprint of a budget, ``"sha256:<hex>"`` (FIPS PUB 180-4).

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> a = Budget.from_formula("y", "2*x", [InputQuantity.normal("x", 2, 0.5, "mm")], "mm")
    >>> b = Budget.from_formula("y", "x * 2", [InputQuantity.normal("x", 2.0, 0.5, "mm")],
    ...                         "millimeter", title="another title")
    >>> fingerprint(a) == fingerprint(b), fingerprint(a).startswith("sha256:")
    (True, True)
    """
    digest = hashlib.sha256(canonical_json(budget).encode("ascii")).hexdigest()
    return PREFIX + digest
