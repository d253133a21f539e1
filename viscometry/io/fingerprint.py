"""The audit fingerprint of a budget: SHA-256 over a canonical form of what it computes.

The canonical form keeps everything that can change a reported number — the measurand's
name and unit, the model (formula or built-in method), the constants, the inputs as
written (values, units, uncertainty forms, readings, degrees of freedom), the correlations
and the settings (coverage probability or factor, rounding) — and drops what cannot:
the title, descriptions, sources, the ``[recorded]`` table and the ``[checks]`` table
(context values for validity warnings, which change no number). It is serialised as JSON with
sorted keys and no whitespace, so the fingerprint does not depend on key order, comments,
whitespace or how a number was typed:

* every number becomes ``repr(float(x))`` (``2``, ``2.0`` and ``2.000`` agree; ``-0.0``
  is ``0.0``; ``inf`` stays ``inf``);
* unit text loses its whitespace (``"mm^2 / s"`` is ``"mm^2/s"``);
* the formula is re-printed from its syntax tree (:func:`ast.parse` only parses, nothing is
  run), so ``C*t`` and ``C * t`` agree;
* settings take their defaults when omitted (coverage probability 0.9545, rounding
  ``"nearest"``), so an explicit default does not change the fingerprint;
* correlations are keyed by their sorted pair of names.

Any change of a number changes the fingerprint. The result is ``"sha256:<64 hex digits>"``.
"""

from __future__ import annotations

import ast
import hashlib
import json
import math
from collections.abc import Mapping, Sequence
from typing import Any

from viscometry.gum.budget import DEFAULT_COVERAGE_PROBABILITY

__all__ = ["FREE_TEXT_KEYS", "canonical_form", "canonical_json", "fingerprint"]

#: Keys whose values are prose for people; they never enter the fingerprint.
FREE_TEXT_KEYS = frozenset({"description", "source", "note"})

#: Prefix of every fingerprint string (names the hash, so the scheme can evolve).
PREFIX = "sha256:"


def _number(x: float | int) -> str:
    f = float(x)
    if f == 0.0:
        f = 0.0  # -0.0 and 0.0 describe the same estimate
    return repr(f)


def _unit(text: str) -> str:
    return "".join(text.split())


def _formula(text: str) -> str:
    try:
        return ast.unparse(ast.parse(text.strip(), mode="eval"))
    except (SyntaxError, ValueError, RecursionError):  # validated earlier; keep it robust
        return " ".join(text.split())


def _value(key: str, v: Any) -> Any:
    if isinstance(v, bool) or v is None:
        return v
    if isinstance(v, (int, float)):
        return _number(v)
    if isinstance(v, str):
        return _unit(v) if key == "unit" else v
    if isinstance(v, Mapping):
        return {str(k): _value(str(k), w) for k, w in v.items() if k not in FREE_TEXT_KEYS}
    if isinstance(v, Sequence):
        return [_value(key, w) for w in v]
    return str(v)  # dates and the like: their text form


def canonical_form(document: Mapping[str, Any]) -> dict[str, Any]:
    """The canonical form of a budget document (the dict read from a budget file).

    Parameters
    ----------
    document : mapping
        A validated budget document with the tables ``measurand``, ``inputs`` and optionally
        ``constants`` and ``correlations``.

    Returns
    -------
    dict
        Plain JSON-ready data; see the module docstring for the rules.

    Examples
    --------
    >>> doc = {"format": "viscometry-budget/1",
    ...        "measurand": {"name": "y", "unit": "m", "model": "a*2"},
    ...        "inputs": {"a": {"value": 1, "unit": " m", "standard_uncertainty": 0.1}}}
    >>> sorted(canonical_form(doc)["inputs"]["a"].items())
    [('standard_uncertainty', '0.1'), ('unit', 'm'), ('value', '1.0')]
    >>> canonical_form(doc)["measurand"]["model"]
    'a * 2'
    """
    m = document.get("measurand", {})
    measurand: dict[str, Any] = {
        "name": m.get("name"),
        "unit": _unit(str(m.get("unit", ""))),
    }
    if "model" in m:
        measurand["model"] = _formula(str(m["model"]))
    if "method" in m:
        measurand["method"] = str(m["method"])
    settings: dict[str, Any] = {"rounding": str(m.get("rounding", "nearest"))}
    if "coverage_factor" in m:
        settings["coverage_factor"] = _number(m["coverage_factor"])
    else:
        settings["coverage_probability"] = _number(
            m.get("coverage_probability", DEFAULT_COVERAGE_PROBABILITY)
        )
    inputs = {
        str(name): _value("", spec) for name, spec in dict(document.get("inputs", {})).items()
    }
    constants = {
        str(name): _value("", spec) for name, spec in dict(document.get("constants", {})).items()
    }
    correlations = []
    for c in document.get("correlations", ()):
        pair = sorted(str(n) for n in c.get("between", ()))
        correlations.append(
            {"between": pair, "coefficient": _number(c.get("coefficient", math.nan))}
        )
    correlations.sort(key=lambda c: c["between"])
    return {
        "format": document.get("format"),
        "measurand": measurand,
        "settings": settings,
        "constants": constants,
        "inputs": inputs,
        "correlations": correlations,
    }


def canonical_json(document: Mapping[str, Any]) -> str:
    """The canonical form as compact JSON with sorted keys (the exact text that is hashed)."""
    return json.dumps(
        canonical_form(document), sort_keys=True, separators=(",", ":"), ensure_ascii=True
    )


def fingerprint(document: Mapping[str, Any]) -> str:
    """SHA-256 fingerprint of a budget document, ``"sha256:<hex>"``.

    Parameters
    ----------
    document : mapping
        A validated budget document (see :func:`canonical_form`).

    Returns
    -------
    str
        ``"sha256:"`` followed by 64 lowercase hexadecimal digits.

    References
    ----------
    FIPS PUB 180-4 (SHA-256).

    Examples
    --------
    >>> a = {"measurand": {"name": "y", "unit": "m", "model": "x"},
    ...      "inputs": {"x": {"value": 2, "unit": "m", "standard_uncertainty": 0.5}}}
    >>> b = {"inputs": {"x": {"standard_uncertainty": 0.5, "unit": "m", "value": 2.0}},
    ...      "measurand": {"model": " x ", "unit": "m", "name": "y"}}
    >>> fingerprint(a) == fingerprint(b)
    True
    >>> fingerprint(a).startswith("sha256:")
    True
    """
    digest = hashlib.sha256(canonical_json(document).encode("ascii")).hexdigest()
    return PREFIX + digest
