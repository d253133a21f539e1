"""JSON output of evaluated budgets, for scripts and other tools.

:func:`result_to_dict` gives one flat object per result with a fixed set of keys
(:data:`RESULT_KEYS`, and :data:`INPUT_KEYS` for each budget row). Values of the measurand
are in the measurand's unit, input values in their own units. :func:`dumps` writes strict
JSON: an infinite number becomes the string ``"inf"`` (``"-inf"``) and NaN becomes ``null``,
since JSON has no such numbers. Text stays exact: control, bidirectional and zero-width
characters and lone surrogates inside strings are written as ``\\uXXXX`` escapes (so the JSON
is safe to show on a terminal and decodes to the original strings), other characters as
they are, or all non-ASCII ones as escapes with ``ascii_only``.
"""

from __future__ import annotations

import json
import math
import re
import unicodedata
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.budget import BudgetResult

__all__ = [
    "INPUT_KEYS",
    "RESULT_KEYS",
    "SCHEMA_VERSION",
    "dumps",
    "jsonable",
    "result_to_dict",
    "schema",
]

#: Version of every JSON object the package writes; each object names its kind and this
#: version in its ``schema`` key (``"viscometry.evaluate/1"``), documented in docs/json.md.
SCHEMA_VERSION = 1

#: Keys of the JSON object of a result, in order.
RESULT_KEYS = (
    "schema", "measurand", "unit", "value", "standard_uncertainty", "effective_dof",
    "coverage_probability", "coverage_factor", "expanded_uncertainty",
    "relative_expanded_uncertainty", "statement", "propagation", "inputs", "warnings",
    "fingerprint", "version",
)  # fmt: skip

#: Keys of each object in the ``inputs`` list, in order.
INPUT_KEYS = (
    "name", "value", "unit", "standard_uncertainty", "distribution", "evaluation", "dof",
    "sensitivity", "sensitivity_unit", "relative_sensitivity", "contribution", "variance_share",
)  # fmt: skip


def schema(kind: str) -> str:
    """The ``schema`` value of a JSON object of one kind: ``"viscometry.<kind>/<version>"``."""
    return f"viscometry.{kind}/{SCHEMA_VERSION}"


def result_to_dict(result: BudgetResult, kind: str = "evaluate") -> dict[str, Any]:
    """The JSON object of an evaluated budget.

    Parameters
    ----------
    result : BudgetResult
    kind : str
        The command (or report) the object is made for, named in ``schema``.

    Returns
    -------
    dict
        Keys :data:`RESULT_KEYS`; ``effective_dof`` and input ``dof`` may be ``math.inf``
        (written as ``"inf"`` by :func:`dumps`); ``fingerprint`` is the budget's.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "2*x", [InputQuantity.normal("x", 1.5, 0.1, "m")], "m")
    >>> d = result_to_dict(b.evaluate())
    >>> d["schema"], d["value"], d["effective_dof"], d["inputs"][0]["sensitivity"]
    ('viscometry.evaluate/1', 3.0, inf, 2.0)
    """
    from viscometry import __version__
    from viscometry.text import statement

    inputs = [{k: getattr(c, k) for k in INPUT_KEYS} for c in result.contributions]
    out = {
        "schema": schema(kind),
        "measurand": result.measurand,
        "unit": result.unit,
        "value": result.value,
        "standard_uncertainty": result.standard_uncertainty,
        "effective_dof": result.effective_dof,
        "coverage_probability": result.coverage_probability,
        "coverage_factor": result.coverage_factor,
        "expanded_uncertainty": result.expanded_uncertainty,
        "relative_expanded_uncertainty": result.relative_expanded_uncertainty,
        "statement": statement(result),
        "propagation": result.propagation,
        "inputs": inputs,
        "warnings": list(result.warnings),
        "fingerprint": result.fingerprint,
        "version": __version__,
    }
    return {k: jsonable(out[k]) for k in RESULT_KEYS}


def jsonable(obj: Any) -> Any:
    """Plain Python data for :mod:`json`: numpy scalars and arrays unwrapped, tuples as lists.

    Infinite floats and NaN are kept here; :func:`dumps` writes them.
    """
    if isinstance(obj, Mapping):
        return {str(k): jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [jsonable(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return [jsonable(v) for v in obj.tolist()]
    if isinstance(obj, np.generic):
        return obj.item()
    return obj


def _strict(obj: Any) -> Any:
    if isinstance(obj, float):
        if math.isnan(obj):
            return None
        if math.isinf(obj):
            return "inf" if obj > 0 else "-inf"
        return obj
    if isinstance(obj, dict):
        return {k: _strict(v) for k, v in obj.items()}
    if isinstance(obj, list):
        return [_strict(v) for v in obj]
    return obj


# Characters json.dumps(ensure_ascii=False) leaves raw that a terminal would act on: C1
# controls, format characters (bidirectional, zero-width), separators, lone surrogates. They
# can only occur inside JSON strings, so escaping them keeps the JSON exact.
_UNSAFE = re.compile(r"[^\x00-\x7e]")
_UNSAFE_CATEGORIES = frozenset({"Cc", "Cf", "Zl", "Zp", "Cs"})


def _escape(match: re.Match[str]) -> str:
    char = match.group()
    if unicodedata.category(char) not in _UNSAFE_CATEGORIES:
        return char
    c = ord(char)
    if c > 0xFFFF:  # a UTF-16 surrogate pair, as JSON writes it
        c -= 0x10000
        return f"\\u{0xD800 + (c >> 10):04x}\\u{0xDC00 + (c & 0x3FF):04x}"
    return f"\\u{c:04x}"


def dumps(obj: Any, *, indent: int | None = 2, ascii_only: bool = False) -> str:
    """Strict JSON text: ``inf`` → ``"inf"``, ``-inf`` → ``"-inf"``, NaN → ``null``.

    Control, bidirectional and zero-width characters in strings are escaped (``\\u202e``);
    with ``ascii_only`` every non-ASCII character is (for a stream that cannot encode it).
    Either way ``json.loads`` gives back the same strings.

    Examples
    --------
    >>> dumps({"dof": float("inf"), "r": float("nan"), "x": 1.5}, indent=None)
    '{"dof": "inf", "r": null, "x": 1.5}'
    >>> print(dumps(["η ± 1", "\\u202eKO\\x85"], indent=None))
    ["η ± 1", "\\u202eKO\\u0085"]
    >>> print(dumps(["η ± 1"], indent=None, ascii_only=True))
    ["\\u03b7 \\u00b1 1"]
    """
    text = json.dumps(
        _strict(jsonable(obj)), indent=indent, ensure_ascii=ascii_only, allow_nan=False
    )
    return text if ascii_only else _UNSAFE.sub(_escape, text)
