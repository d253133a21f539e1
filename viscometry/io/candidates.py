"""The upgrade-candidates file of a lab manager (TOML), read onto :class:`UpgradeCandidate`.

Format (read with :mod:`tomllib`; nothing in it is run)::

    title = "Upgrades considered for 2025"      # optional
    currency = "EUR"                            # optional label, never converted

    [[candidate]]
    name = "bath thermometer 2 mK"              # unique
    cost = 4200                                 # number >= 0
    description = "SPRT readout, fictional quote"   # optional
    [candidate.changes]
    T = 0.002                                   # new standard uncertainty, input's own unit

    [[candidate]]
    name = "re-certify constant"
    cost = 900
    [candidate.changes]
    C = { expanded_uncertainty = 2e-6, coverage_factor = 2, dof = 50 }

A change is a number (the new standard uncertainty u(xᵢ) in the input's own unit; estimate,
distribution and dof stay) or a table with ``standard_uncertainty`` or
``expanded_uncertainty`` + ``coverage_factor``, optionally ``value``, ``unit``, ``dof``
(a number or "inf"), ``distribution``, ``source`` (a replacement of the input). When two
candidates of a set change the same input, the smaller standard uncertainty is applied.
"""

from __future__ import annotations

import math
import os
from collections.abc import Mapping
from dataclasses import replace
from typing import TYPE_CHECKING, Any

from viscometry._checks import finite as _number
from viscometry.errors import BudgetFileError, InputError

# The engine and the reader are imported where they are used, so that importing this module
# (for its docstring, which ``viscometry plan --help`` shows) costs nothing.
if TYPE_CHECKING:
    from viscometry.gum.budget import Budget
    from viscometry.gum.inputs import InputQuantity
    from viscometry.planning.upgrades import Change, UpgradeCandidate

__all__ = ["MAX_CANDIDATES_BYTES", "candidates_from_mapping", "load_candidates"]

#: Largest candidates file accepted, in bytes.
MAX_CANDIDATES_BYTES = 1_000_000
#: Largest cost accepted (a float must hold sums of costs).
_LARGEST_COST = 1e300

_SPEC_KEYS = {"standard_uncertainty", "expanded_uncertainty", "coverage_factor", "value",
              "unit", "dof", "distribution", "source"}  # fmt: skip


def load_candidates(
    path: str | os.PathLike[str], budget: Budget
) -> tuple[tuple[UpgradeCandidate, ...], str]:
    """Read a candidates file for ``budget``: the candidates and the currency label.

    Raises
    ------
    BudgetFileError
        Naming the file, the candidate and the key.
    """
    from viscometry.io.reader import parse_toml, read_text_file

    text = read_text_file(path, "a candidates file", MAX_CANDIDATES_BYTES)
    return candidates_from_mapping(parse_toml(text, str(path)), budget, source=str(path))


def candidates_from_mapping(
    data: Mapping[str, Any], budget: Budget, *, source: str = "candidates"
) -> tuple[tuple[UpgradeCandidate, ...], str]:
    """Build candidates from a parsed candidates document (format in the module docstring).

    Returns
    -------
    candidates : tuple of UpgradeCandidate
    currency : str
        The currency label ("" when not given).

    Raises
    ------
    BudgetFileError
        Naming the file, the table (``[[candidate]] #i`` with its name) and the key.
    """
    from viscometry.io.reader import show_names, show_value
    from viscometry.planning.upgrades import MAX_CANDIDATES

    def fail(where: str, msg: str) -> BudgetFileError:
        return BudgetFileError(f"{source}: {where}: {msg}")

    if not isinstance(data, Mapping):
        raise BudgetFileError(f"{source}: expected a TOML document, got {type(data).__name__}")
    unknown = sorted(set(data) - {"currency", "candidate", "title"})
    if unknown:
        raise fail("top level", f"unknown key(s) {show_names(unknown)} "
                   "(allowed: title, currency, [[candidate]])")  # fmt: skip
    currency = data.get("currency", "")
    if not isinstance(currency, str):
        raise fail("key 'currency'", f"must be a text label, got {show_value(currency)}")
    items = data.get("candidate")
    if not isinstance(items, list) or not items:
        raise fail("[[candidate]]", "no candidates; add at least one [[candidate]] table")
    if len(items) > MAX_CANDIDATES:
        raise fail("[[candidate]]", f"{len(items)} candidates; at most {MAX_CANDIDATES} are taken")
    out = [_candidate(fail, i, item, budget) for i, item in enumerate(items, start=1)]
    return tuple(out), currency


def _candidate(fail: Any, i: int, item: Any, budget: Budget) -> UpgradeCandidate:
    from viscometry.io.reader import show_names, show_value
    from viscometry.planning.upgrades import UpgradeCandidate

    where = f"[[candidate]] #{i}"
    if not isinstance(item, Mapping):
        raise fail(where, f"must be a table, got {show_value(item)}")
    if isinstance(item.get("name"), str):
        where += f" ({show_value(item['name'])})"
    bad = sorted(set(item) - {"name", "cost", "description", "changes"})
    if bad:
        raise fail(where, f"unknown key(s) {show_names(bad)} "
                   "(allowed: name, cost, description, changes)")  # fmt: skip
    for key in ("name", "cost", "changes"):
        if key not in item:
            raise fail(where, f"missing key {key!r}")
    cost = item["cost"]
    if isinstance(cost, bool) or not isinstance(cost, (int, float)) or not cost >= 0:
        raise fail(f"{where}, key 'cost'", f"must be a number ≥ 0, got {show_value(cost)}")
    if not cost <= _LARGEST_COST:
        raise fail(f"{where}, key 'cost'", f"must be at most 1e300, got {show_value(cost)}")
    changes_in = item["changes"]
    if not isinstance(changes_in, Mapping) or not changes_in:
        raise fail(
            f"{where}, key 'changes'", f"must be a non-empty table, got {show_value(changes_in)}"
        )
    changes: dict[str, Change] = {}
    for key, spec in changes_in.items():
        kw = f"{where}, [changes] key {show_value(key, 40)}"
        if key not in budget.input_names:
            raise fail(
                kw, f"no such input in the budget (inputs: {show_names(budget.input_names)})"
            )
        try:
            changes[key] = _change(budget.input(key), spec)
        except InputError as exc:
            raise fail(kw, str(exc)) from None
    try:
        return UpgradeCandidate(item["name"], float(cost), changes, item.get("description", ""))
    except InputError as exc:
        raise fail(where, str(exc)) from None


def _change(q: InputQuantity, spec: object) -> Change:
    """A number (new standard uncertainty) or a replacement input from a change table."""
    from viscometry.io.reader import show_names, show_value

    if isinstance(spec, bool):
        raise InputError(f"must be a number or a table, got {show_value(spec)}")
    if isinstance(spec, (int, float)):
        return _number(spec, "new standard uncertainty")
    if not isinstance(spec, Mapping):
        raise InputError(
            f"must be a number (new standard uncertainty) or a table, got {show_value(spec)}"
        )
    bad = sorted(set(spec) - _SPEC_KEYS)
    if bad:
        raise InputError(
            f"unknown key(s) {show_names(bad)} (allowed: {', '.join(sorted(_SPEC_KEYS))})"
        )
    if ("standard_uncertainty" in spec) == ("expanded_uncertainty" in spec):
        raise InputError("give exactly one of standard_uncertainty or expanded_uncertainty")
    if "expanded_uncertainty" in spec:
        if "coverage_factor" not in spec:
            raise InputError("expanded_uncertainty needs coverage_factor")
        u = _number(spec["expanded_uncertainty"], "expanded_uncertainty") / _number(
            spec["coverage_factor"], "coverage_factor"
        )
    else:
        if "coverage_factor" in spec:
            raise InputError("coverage_factor goes with expanded_uncertainty only")
        u = _number(spec["standard_uncertainty"], "standard_uncertainty")
    if set(spec) <= {"standard_uncertainty", "expanded_uncertainty", "coverage_factor"}:
        return u
    return _replacement(q, u, spec)


def _replacement(q: InputQuantity, u: float, spec: Mapping[str, Any]) -> InputQuantity:
    from viscometry.gum.inputs import DISTRIBUTIONS
    from viscometry.io.reader import show_value

    extra: dict[str, Any] = {}
    if "value" in spec:
        extra["value"] = _number(spec["value"], "value")
    if "unit" in spec:
        if not isinstance(spec["unit"], str):
            raise InputError(f"unit must be a string, got {show_value(spec['unit'])}")
        extra["unit"] = spec["unit"]
    if "dof" in spec:
        d = spec["dof"]
        extra["dof"] = math.inf if d == "inf" else _number(d, "dof")
    if "distribution" in spec:
        if spec["distribution"] not in DISTRIBUTIONS:
            raise InputError(
                f"distribution must be one of {', '.join(DISTRIBUTIONS)}, "
                f"got {show_value(spec['distribution'])}"
            )
        extra["distribution"] = spec["distribution"]
    if "source" in spec:
        extra["source"] = str(spec["source"])
    # A replaced uncertainty of a bounded distribution keeps its shape (half-width rescaled).
    new = q.with_uncertainty(u)
    if "unit" in extra and new.half_width is not None:
        extra["half_width"] = None
    return replace(new, **extra)
