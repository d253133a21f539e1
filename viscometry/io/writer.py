"""Writing budget files: a :class:`~viscometry.gum.Budget` back onto the file format.

:func:`budget_to_document` maps a budget onto the nested tables of ``viscometry-budget/1``
(each input in the form its uncertainty was stated in, with the stated numbers), so that
file → budget → file gives the same budget (same fingerprint) and writing it again gives the
same text. :func:`dumps_budget` prints a document as TOML and :func:`save_budget` writes it
through the package's one atomic writer. :func:`recorded_from` makes the ``[recorded]``
table of an evaluated budget.
"""

from __future__ import annotations

import datetime as _dt
import math
import os
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import sympy as sp

from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.gum.budget import Budget, BudgetResult
from viscometry.gum.inputs import InputQuantity
from viscometry.gum.model import MeasurementModel
from viscometry.gum.propagation import DEFAULT_COVERAGE_PROBABILITY
from viscometry.io.atomic import atomic_write_text
from viscometry.io.reader import BudgetFile
from viscometry.io.schema import FORMAT, TOP_KEYS, Recorded

__all__ = [
    "budget_to_document",
    "dumps_budget",
    "recorded_from",
    "recorded_table",
    "save_budget",
]


def _strip_empty(d: dict[str, Any]) -> dict[str, Any]:
    return {k: v for k, v in d.items() if v not in ("", None)}


def _input_spec(q: InputQuantity) -> dict[str, Any]:
    """One ``[inputs.NAME]`` table, in the form the uncertainty was stated in."""
    spec: dict[str, Any] = {}
    stated = dict(q.stated)
    if q.form not in ("readings", "pooled") and not ("lower" in stated and "upper" in stated):
        spec["value"] = q.value
    spec["unit"] = q.unit or "1"
    if q.form in ("readings", "pooled"):
        spec["readings"] = list(q.readings or ())
    spec.update(stated)
    spec.update(description=q.description, source=q.source)
    return _strip_empty(spec)


def _measurand(budget: Budget) -> dict[str, Any]:
    m: dict[str, Any] = {"name": budget.measurand, "unit": budget.unit or "1"}
    if _registered(budget):
        m["method"] = budget.method.name  # type: ignore[union-attr]
    else:
        m["model"] = _model_text(budget.model)
    if budget.coverage_factor is not None:
        m["coverage_factor"] = float(budget.coverage_factor)
    elif budget.coverage_probability != DEFAULT_COVERAGE_PROBABILITY:
        m["coverage_probability"] = float(budget.coverage_probability)
    if budget.rounding != "nearest":
        m["rounding"] = budget.rounding
    if budget.description:
        m["description"] = budget.description
    return m


def _registered(budget: Budget) -> bool:
    """Whether the budget's built-in model is the registry's model of that name (a file can
    name it); a model made in code (a step-up chain) is written as its formula instead."""
    if budget.method is None:
        return False
    from viscometry.methods import METHODS

    return METHODS.get(budget.method.name) is budget.method


def budget_to_document(budget: Budget, *, recorded: Recorded | None = None) -> dict[str, Any]:
    """The budget-file document (nested dicts) that describes ``budget``.

    Settings at their defaults are left out (coverage probability 0.9545, rounding
    "nearest"), as a person would write the file. A built-in model that is not in the
    registry (a step-up chain made in code) is written as its formula, without its checks.

    Raises
    ------
    BudgetFileError
        When a formula model has no formula text and cannot be printed as one.
    """
    doc: dict[str, Any] = {"format": FORMAT}
    if budget.title:
        doc["title"] = budget.title
    doc["measurand"] = _measurand(budget)
    if budget.constants:
        doc["constants"] = {
            c.name: _strip_empty(
                {
                    "value": c.value,
                    "unit": c.unit or "1",
                    "description": c.description,
                    "source": c.source,
                }
            )  # fmt: skip
            for c in budget.constants
        }
    doc["inputs"] = {q.name: _input_spec(q) for q in budget.inputs}
    if budget.correlations:
        doc["correlations"] = [
            {"between": [c.first, c.second], "coefficient": c.coefficient}
            for c in budget.correlations
        ]
    if budget.checks and _registered(budget):
        doc["checks"] = {
            c.name: _strip_empty({"value": c.value, "unit": c.unit or "1", "source": c.source})
            for c in budget.checks
        }
    if recorded is not None:
        doc["recorded"] = _strip_empty(
            {k: getattr(recorded, k) for k in recorded.__slots__}  # type: ignore[attr-defined]
        )
    return doc


def recorded_from(result: BudgetResult, *, date: str | None = None, note: str = "") -> Recorded:
    """The ``[recorded]`` table of an evaluated budget: the rounded value and U (JCGM 100:2008,
    7.2.6, with the budget's rounding rule), k, the statement, the fingerprint and version."""
    from viscometry import __version__
    from viscometry.text import statement

    if result.expanded_uncertainty > 0:
        r = result.rounded()
        value, big_u = float(r.value), float(r.uncertainty)
    else:
        value, big_u = result.value, 0.0
    return Recorded(
        value=value, expanded_uncertainty=big_u,
        coverage_factor=float(f"{result.coverage_factor:.2f}"),
        propagation=None if result.propagation == "first-order" else result.propagation,
        statement=statement(result), fingerprint=result.fingerprint, version=__version__,
        date=date, note=note or None,
    )  # fmt: skip


class _FormulaPrinter(sp.printing.str.StrPrinter):
    """Prints a sympy expression in the syntax of the whitelist parser."""

    def _print_Exp1(self, expr: Any) -> str:  # noqa: N802 - sympy's naming
        return "e"

    def _print_Abs(self, expr: Any) -> str:  # noqa: N802
        return f"abs({self._print(expr.args[0])})"

    def _print_Float(self, expr: Any) -> str:  # noqa: N802
        return repr(float(expr))


def _model_text(model: MeasurementModel) -> str:
    if model.formula:
        return model.formula
    text = _FormulaPrinter().doprint(model.expression)
    names = list(model.input_names) + list(model.constant_names)
    try:
        again = MeasurementModel.from_formula(
            text, model.input_names, model.constant_names
        ).expression
    except ViscometryError:
        again = None
    if again is None or sp.simplify(again - model.expression) != 0:
        raise BudgetFileError(
            f"the model {model.expression} cannot be written as a formula over "
            f"{', '.join(names)}; give the budget a formula text"
        )
    return text


# --------------------------------------------------------------------------- TOML writer
_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")
_ESCAPES = {
    "\b": "\\b",
    "\t": "\\t",
    "\n": "\\n",
    "\f": "\\f",
    "\r": "\\r",
    '"': '\\"',
    "\\": "\\\\",
}


def _key(k: str) -> str:
    return k if _BARE_KEY.match(k) else _string(k)


def _string(s: str) -> str:
    out = []
    for ch in s:
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif ord(ch) < 0x20 or 0x7F <= ord(ch) <= 0x9F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _scalar(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return _string(v)
    if isinstance(v, _dt.datetime | _dt.date):
        return v.isoformat()
    if isinstance(v, Mapping):
        return "{ " + ", ".join(f"{_key(k)} = {_scalar(w)}" for k, w in v.items()) + " }"
    if isinstance(v, list | tuple):
        return "[" + ", ".join(_scalar(w) for w in v) + "]"
    raise BudgetFileError(
        f"cannot write a value of type {type(v).__name__} to a budget file: {v!r}"
    )


def _table_lines(header: str, table: Mapping[str, Any]) -> list[str]:
    return [header] + [f"{_key(k)} = {_scalar(v)}" for k, v in table.items()]


def dumps_budget(document: Mapping[str, Any], *, header: str | None = None) -> str:
    """TOML text of a budget document (the structure :func:`~viscometry.io.loads_budget` reads).

    Parameters
    ----------
    document : mapping
        ``format``, ``title``, and the tables ``measurand``, ``constants`` (written as
        inline tables), ``inputs`` (one ``[inputs.NAME]`` table each), ``correlations``
        (``[[correlations]]``), ``checks`` (entries as inline tables) and ``recorded``.
    header : str, optional
        A comment placed on the first lines (``#`` is added).
    """
    unknown = [k for k in document if k not in TOP_KEYS]
    if unknown:
        raise BudgetFileError(f"cannot write unknown top-level key(s) {', '.join(unknown)}")
    lines: list[str] = []
    if header:
        lines += [f"# {line}".rstrip() for line in header.splitlines()]
    lines.append(f"format = {_scalar(document.get('format', FORMAT))}")
    if document.get("title"):
        lines.append(f"title = {_scalar(document['title'])}")
    sections: list[tuple[str, Mapping[str, Any]]] = [("[measurand]", document["measurand"])]
    if document.get("constants"):
        sections.append(("[constants]", document["constants"]))
    sections += [(f"[inputs.{_key(n)}]", spec) for n, spec in document["inputs"].items()]
    sections += [("[[correlations]]", c) for c in document.get("correlations", ())]
    for key in ("checks", "recorded"):
        if document.get(key):
            sections.append((f"[{key}]", document[key]))
    for head, table in sections:
        lines += ["", *_table_lines(head, table)]
    return "\n".join(lines) + "\n"


def recorded_table(recorded: Recorded) -> str:
    """The ``[recorded]`` table alone, as TOML text (for adding to a file)."""
    doc = {k: getattr(recorded, k) for k in recorded.__slots__}  # type: ignore[attr-defined]
    return "\n".join(_table_lines("[recorded]", _strip_empty(doc))) + "\n"


def save_budget(
    budget: Budget | BudgetFile,
    path: str | os.PathLike[str],
    *,
    recorded: Recorded | None = None,
    overwrite: bool = True,
) -> Path:
    """Write a budget file atomically (temporary file in the same folder, then rename).

    Parameters
    ----------
    budget : Budget or BudgetFile
        The budget; a :class:`BudgetFile` also gives its ``[recorded]`` table.
    path : path-like
        Target file; an existing file is replaced only when the new one is complete. A
        symbolic link is followed (its target is replaced, the link kept).
    recorded : Recorded, optional
        The ``[recorded]`` table to write (e.g. :func:`recorded_from` of a fresh result).
    overwrite : bool
        False refuses to replace an existing file.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    BudgetFileError
        When the target exists and ``overwrite`` is False, or cannot be written (the message
        names it and the reason).
    OutputError
        When the target is write-protected, lies in a write-protected folder, is not a file
        (folder, pipe, device) or is a dangling symbolic link
        (:func:`viscometry.io.atomic.check_output_path`); nothing is written.

    Notes
    -----
    Saving over the file a budget was loaded from is allowed (with ``overwrite``): that is
    how an edited budget is kept.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from viscometry.gum import Budget, InputQuantity
    >>> from viscometry.io import load_budget
    >>> b = Budget.from_formula("y", "2*x", [InputQuantity.normal("x", 1.5, 0.1, "m")], "m")
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = save_budget(b, pathlib.Path(d) / "y.toml")
    ...     load_budget(p).fingerprint == b.fingerprint
    True
    """
    if isinstance(budget, BudgetFile):
        recorded = recorded if recorded is not None else budget.recorded
        budget = budget.budget
    if not isinstance(budget, Budget):
        raise BudgetFileError(f"save_budget needs a Budget, got {type(budget).__name__}")
    from viscometry import __version__

    document = budget_to_document(budget, recorded=recorded)
    text = dumps_budget(document, header=f"Uncertainty budget written by viscometry {__version__}")
    target = Path(path)
    if not overwrite and (target.exists() or target.is_symlink()):
        raise BudgetFileError(
            f"{target}: exists already; it is replaced only when overwriting is asked for"
        )
    try:
        return atomic_write_text(target, text, what="budget file")
    except OSError as exc:
        raise BudgetFileError(f"{target}: cannot write the file: {exc.strerror or exc}") from exc
