"""Lab-manager planning: upgrade what-ifs ranked by cost, target-uncertainty solver, scope sweeps.

Core layer: pure functions on an immutable :class:`~viscometry.gum.Budget`; no files, no
printing. Every measurand number is in ``budget.unit`` and every input number in that input's
own unit, as everywhere in the package; SI floats are used inside.

* :func:`evaluate_upgrades` -- the budget after each :class:`UpgradeCandidate` alone and after
  every combination, with the reduction of the expanded uncertainty U, the reduction per unit
  cost and the cheapest set that reaches a target U.
* :func:`required_uncertainty` -- the inverse question: which u(xᵢ), all else unchanged,
  reaches a target U, or the floor that the other inputs set.
* :func:`sweep` and :func:`scope_table` -- a budget across a range of one input (with other
  inputs following it through ``adjust``), and the stated uncertainties per sub-range.

Speed
-----
Changing only standard uncertainties leaves the estimates, hence the sensitivity
coefficients cᵢ = ∂f/∂xᵢ, unchanged (JCGM 100:2008, 5.1.3). The gradient is therefore
computed once and u_c, ν_eff (Welch-Satterthwaite, JCGM 100:2008 G.4.1), k and U are
computed for all candidate sets at once as numpy arrays. Candidates that replace an estimate
are supported too: the model and its gradient are then evaluated once per set, still in one
vectorised call of the compiled model.
"""

from __future__ import annotations

import itertools
import math
import types
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from decimal import ROUND_CEILING, ROUND_HALF_EVEN, Decimal
from typing import Any, Literal

import numpy as np
from scipy import optimize

from viscometry import units as _units
from viscometry.errors import InputError
from viscometry.gum.budget import Budget, BudgetResult
from viscometry.gum.inputs import InputQuantity, coverage_factor_for
from viscometry.gum.propagation import (
    combined_variance,
    coverage_factors,
    truncate_dofs,
    welch_satterthwaite,
)

__all__ = [
    "UpgradeCandidate",
    "UpgradeOption",
    "UpgradePlan",
    "evaluate_upgrades",
    "candidates_from_mapping",
    "RequiredUncertainty",
    "required_uncertainty",
    "required_uncertainties",
    "SweepResult",
    "sweep",
    "scope_table",
    "round_up",
    "TARGET_TOLERANCE",
    "ROUND_UP_ALLOWANCE",
    "apply_candidates",
]

#: Relative distance below which :func:`round_up` treats a value as already rounded.
ROUND_UP_ALLOWANCE = 1e-9

#: Relative allowance when comparing U with a target (round-off only): U ≤ target·(1 + tol).
TARGET_TOLERANCE = 1e-12

Change = float | InputQuantity


# =============================================================================== candidates


def _number(value: object, field: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise InputError(f"{field} must be a number, got {value!r}")
    x = float(value)
    if not math.isfinite(x):
        raise InputError(f"{field} must be finite, got {x!r}")
    return x


@dataclass(frozen=True, eq=False)
class UpgradeCandidate:
    """One possible improvement of the budget (a new instrument, a re-certification...).

    Parameters
    ----------
    name : str
        Short unique label, e.g. ``"bath thermometer 2 mK"``.
    cost : float
        What the upgrade costs, ≥ 0, in the user's currency (a plain number; the currency is
        the user's and is never converted). [currency]
    changes : mapping of str to float or InputQuantity
        Input name → either the new standard uncertainty in the input's own unit (the input
        keeps its estimate, distribution and degrees of freedom, as
        :meth:`InputQuantity.with_uncertainty`), or a complete replacement
        :class:`InputQuantity` of the same name (new estimate, unit, dof... allowed; the unit
        must be of the same kind).
    description : str
        Free text (what is bought, from whom, lead time...).

    Raises
    ------
    InputError
        Empty name, negative or non-numeric cost, no changes, a negative uncertainty, or a
        replacement whose name differs from its key.

    Examples
    --------
    >>> c = UpgradeCandidate("new timer", 300.0, {"t": 0.01})
    >>> dict(c.changes), c.cost
    ({'t': 0.01}, 300.0)
    """

    name: str
    cost: float
    changes: Mapping[str, Change]
    description: str = ""

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError(
                f"upgrade candidate name must be a non-empty string, got {self.name!r}"
            )
        cost = _number(self.cost, f"candidate {self.name!r} cost")
        if cost < 0:
            raise InputError(f"candidate {self.name!r} cost must be ≥ 0, got {cost!r}")
        object.__setattr__(self, "cost", cost)
        if not isinstance(self.changes, Mapping) or not self.changes:
            raise InputError(
                f"candidate {self.name!r} changes must be a non-empty mapping of input name to "
                f"new standard uncertainty or InputQuantity, got {self.changes!r}"
            )
        clean: dict[str, Change] = {}
        for key, change in self.changes.items():
            if not isinstance(key, str):
                raise InputError(
                    f"candidate {self.name!r}: input name must be a string, got {key!r}"
                )
            if isinstance(change, InputQuantity):
                if change.name != key:
                    raise InputError(
                        f"candidate {self.name!r}: replacement for {key!r} is named {change.name!r}"
                    )
                clean[key] = change
            else:
                u = _number(change, f"candidate {self.name!r} new u({key})")
                if u < 0:
                    raise InputError(f"candidate {self.name!r} new u({key}) must be ≥ 0, got {u!r}")
                clean[key] = u
        object.__setattr__(self, "changes", types.MappingProxyType(clean))
        if not isinstance(self.description, str):
            raise InputError(
                f"candidate {self.name!r} description must be a string, got {self.description!r}"
            )


def candidates_from_mapping(
    data: Mapping[str, Any], budget: Budget, *, source: str = "candidates"
) -> tuple[tuple[UpgradeCandidate, ...], str]:
    """Build candidates from the parsed candidates-file format (see ``viscometry plan --help``).

    Parameters
    ----------
    data : mapping
        The parsed TOML document: optional ``currency`` (a label) and an array of tables
        ``candidate``, each with ``name``, ``cost``, optional ``description`` and a table
        ``changes``. A change is a number (new standard uncertainty, input's own unit) or a
        table with ``standard_uncertainty`` or ``expanded_uncertainty`` + ``coverage_factor``,
        and optionally ``value``, ``unit``, ``dof``, ``distribution``, ``source``.
    budget : Budget
        The budget the candidates apply to (for the inputs being replaced).
    source : str
        File name used in error messages.

    Returns
    -------
    candidates : tuple of UpgradeCandidate
    currency : str
        The currency label ("" when not given).

    Raises
    ------
    InputError
        Naming the file, the table (``candidate[i]`` with its name) and the key.
    """
    from viscometry.errors import BudgetFileError

    def fail(where: str, msg: str) -> BudgetFileError:
        return BudgetFileError(f"{source}: {where}: {msg}")

    if not isinstance(data, Mapping):
        raise BudgetFileError(f"{source}: expected a TOML document, got {type(data).__name__}")
    unknown = sorted(set(data) - {"currency", "candidate", "title"})
    if unknown:
        raise fail("top level", f"unknown key(s) {', '.join(map(repr, unknown))} "
                   "(allowed: title, currency, [[candidate]])")  # fmt: skip
    currency = data.get("currency", "")
    if not isinstance(currency, str):
        raise fail("key 'currency'", f"must be a text label, got {currency!r}")
    items = data.get("candidate")
    if not isinstance(items, list) or not items:
        raise fail("[[candidate]]", "no candidates; add at least one [[candidate]] table")
    out: list[UpgradeCandidate] = []
    names = set(budget.input_names)
    for i, item in enumerate(items, start=1):
        where = f"[[candidate]] #{i}"
        if not isinstance(item, Mapping):
            raise fail(where, f"must be a table, got {item!r}")
        if isinstance(item.get("name"), str):
            where += f" ({item['name']!r})"
        bad = sorted(set(item) - {"name", "cost", "description", "changes"})
        if bad:
            raise fail(where, f"unknown key(s) {', '.join(map(repr, bad))} "
                       "(allowed: name, cost, description, changes)")  # fmt: skip
        for key in ("name", "cost", "changes"):
            if key not in item:
                raise fail(where, f"missing key {key!r}")
        cost = item["cost"]
        if isinstance(cost, bool) or not isinstance(cost, (int, float)) or not cost >= 0:
            raise fail(f"{where}, key 'cost'", f"must be a number ≥ 0, got {cost!r}")
        changes_in = item["changes"]
        if not isinstance(changes_in, Mapping) or not changes_in:
            raise fail(f"{where}, key 'changes'", f"must be a non-empty table, got {changes_in!r}")
        changes: dict[str, Change] = {}
        for key, spec in changes_in.items():
            kw = f"{where}, [changes] key {key!r}"
            if key not in names:
                raise fail(
                    kw, f"no such input in the budget (inputs: {', '.join(budget.input_names)})"
                )
            try:
                changes[key] = _change_from_spec(budget.input(key), spec)
            except InputError as exc:
                raise fail(kw, str(exc)) from None
        try:
            out.append(UpgradeCandidate(item["name"], float(cost), changes,
                                        item.get("description", "")))  # fmt: skip
        except InputError as exc:
            raise fail(where, str(exc)) from None
    _check_candidates(out, budget)
    return tuple(out), currency


_SPEC_KEYS = {"standard_uncertainty", "expanded_uncertainty", "coverage_factor", "value",
              "unit", "dof", "distribution", "source"}  # fmt: skip


def _change_from_spec(q: InputQuantity, spec: object) -> Change:
    if isinstance(spec, bool):
        raise InputError(f"must be a number or a table, got {spec!r}")
    if isinstance(spec, (int, float)):
        return float(spec)
    if not isinstance(spec, Mapping):
        raise InputError(f"must be a number (new standard uncertainty) or a table, got {spec!r}")
    bad = sorted(set(spec) - _SPEC_KEYS)
    if bad:
        raise InputError(
            f"unknown key(s) {', '.join(map(repr, bad))} (allowed: {', '.join(sorted(_SPEC_KEYS))})"
        )
    has_u = "standard_uncertainty" in spec
    has_big = "expanded_uncertainty" in spec
    if has_u == has_big:
        raise InputError("give exactly one of standard_uncertainty or expanded_uncertainty")
    if has_big:
        k = spec.get("coverage_factor")
        if k is None:
            raise InputError("expanded_uncertainty needs coverage_factor")
        u = _number(spec["expanded_uncertainty"], "expanded_uncertainty") / _number(
            k, "coverage_factor"
        )
    else:
        if "coverage_factor" in spec:
            raise InputError("coverage_factor goes with expanded_uncertainty only")
        u = _number(spec["standard_uncertainty"], "standard_uncertainty")
    if set(spec) <= {"standard_uncertainty", "expanded_uncertainty", "coverage_factor"}:
        return u
    extra: dict[str, Any] = {}
    if "value" in spec:
        extra["value"] = _number(spec["value"], "value")
    if "unit" in spec:
        if not isinstance(spec["unit"], str):
            raise InputError(f"unit must be a string, got {spec['unit']!r}")
        extra["unit"] = spec["unit"]
    if "dof" in spec:
        d = spec["dof"]
        extra["dof"] = math.inf if d == "inf" else _number(d, "dof")
    if "distribution" in spec:
        extra["distribution"] = spec["distribution"]
    if "source" in spec:
        extra["source"] = str(spec["source"])
    from dataclasses import replace

    # A replaced uncertainty of a bounded distribution keeps its shape (half-width rescaled).
    new = q.with_uncertainty(u)
    if "unit" in extra and new.half_width is not None:
        extra["half_width"] = None
    return replace(new, **extra)


def _check_candidates(candidates: Sequence[UpgradeCandidate], budget: Budget) -> None:
    seen: set[str] = set()
    names = budget.input_names
    for c in candidates:
        if not isinstance(c, UpgradeCandidate):
            raise InputError(f"candidates must be UpgradeCandidate objects, got {c!r}")
        if c.name in seen:
            raise InputError(f"candidate name used twice: {c.name!r}")
        seen.add(c.name)
        for key, change in c.changes.items():
            if key not in names:
                raise InputError(
                    f"candidate {c.name!r} changes unknown input {key!r} (inputs: {', '.join(names)})"
                )
            if isinstance(change, InputQuantity):
                old = budget.input(key)
                if not _units.same_dimension(change.unit, old.unit):
                    raise InputError(
                        f"candidate {c.name!r}: replacement unit of {key!r} {change.unit!r} is not "
                        f"of the same kind as {old.unit!r}"
                    )


# =============================================================================== vectorised core


def _scales(budget: Budget) -> tuple[np.ndarray, np.ndarray, float, float]:
    s = np.array([_units.si_conversion(q.unit)[0] for q in budget.inputs])
    o = np.array([_units.si_conversion(q.unit)[1] for q in budget.inputs])
    out_s, out_o = _units.si_conversion(budget.unit)
    return s, o, out_s, out_o


def _propagate(
    budget: Budget, grad: np.ndarray, u: np.ndarray, nu: np.ndarray
) -> dict[str, np.ndarray]:
    """u_c, ν_eff, k and U for many budgets at once (SI; axis 0 = inputs, axis 1 = cases).

    The engine's own vectorised propagation (JCGM 100:2008 eq. 16, G.2b, G.6.4) on columns.
    """
    contributions = grad * u
    uc = np.sqrt(np.maximum(combined_variance(grad, u, budget.correlation_matrix), 0.0))
    nu_eff = np.asarray(welch_satterthwaite(contributions, nu, uc), dtype=float)
    used = truncate_dofs(nu_eff)
    if budget.coverage_factor is not None:
        k = np.full(nu_eff.shape, float(budget.coverage_factor))
    else:
        k = coverage_factors(budget.coverage_probability, nu_eff)
    return {"contributions": contributions, "u_c": uc, "nu_eff": nu_eff, "nu_used": used,
            "k": k, "U": k * uc}  # fmt: skip


# =============================================================================== upgrades


@dataclass(frozen=True)
class UpgradeOption:
    """One set of candidates applied together, evaluated (measurand numbers in budget.unit).

    Attributes
    ----------
    candidates : tuple of str
        Names of the candidates in the set, in the order given ( ``()`` is the baseline).
    cost : float
        Sum of their costs. [currency]
    value : float
        Estimate y (changes only when a candidate replaces an estimate). [measurand unit]
    standard_uncertainty : float
        u_c(y). [measurand unit]
    effective_dof : float
        ν_eff before truncation. [1]
    coverage_factor : float
        k. [1]
    expanded_uncertainty : float
        U = k u_c. [measurand unit]
    reduction : float
        U_baseline − U (negative when the set makes things worse). [measurand unit]
    reduction_per_cost : float
        reduction / cost; for a free set ±inf (or 0 for no reduction). [measurand unit per currency]
    dominant : str
        Input with the largest variance share after the change.
    reaches_target : bool or None
        U ≤ target (None without a target).
    """

    candidates: tuple[str, ...]
    cost: float
    value: float
    standard_uncertainty: float
    effective_dof: float
    coverage_factor: float
    expanded_uncertainty: float
    reduction: float
    reduction_per_cost: float
    dominant: str
    reaches_target: bool | None

    @property
    def relative_expanded_uncertainty(self) -> float:
        """U/|y| (NaN for y = 0)."""
        return self.expanded_uncertainty / abs(self.value) if self.value != 0 else math.nan

    @property
    def label(self) -> str:
        """The candidate names joined with " + ", or "(baseline)"."""
        return " + ".join(self.candidates) if self.candidates else "(baseline)"


@dataclass(frozen=True)
class UpgradePlan:
    """Result of :func:`evaluate_upgrades` (immutable).

    Attributes
    ----------
    baseline : BudgetResult
        The budget as it stands.
    candidates : tuple of UpgradeCandidate
    options : tuple of UpgradeOption
        Every set evaluated (all 2ⁿ subsets when exhaustive, baseline included).
    method : {"exhaustive", "greedy"}
    target : float or None
        Target U in the measurand unit.
    cheapest : UpgradeOption or None
        Cheapest set reaching the target (ties: larger reduction, then fewer candidates);
        None without a target or when no evaluated set reaches it.
    greedy_path : tuple of UpgradeOption
        The sets chosen step by step by the greedy search (empty when exhaustive).
    """

    baseline: BudgetResult
    candidates: tuple[UpgradeCandidate, ...]
    options: tuple[UpgradeOption, ...]
    method: Literal["exhaustive", "greedy"]
    target: float | None
    cheapest: UpgradeOption | None
    greedy_path: tuple[UpgradeOption, ...] = ()

    @property
    def unit(self) -> str:
        return self.baseline.unit

    @property
    def singles(self) -> tuple[UpgradeOption, ...]:
        """The options with exactly one candidate, in candidate order."""
        by = {o.candidates: o for o in self.options if len(o.candidates) == 1}
        return tuple(by[(c.name,)] for c in self.candidates if (c.name,) in by)

    @property
    def best_per_cost(self) -> UpgradeOption | None:
        """The single candidate with the largest reduction of U per unit cost (None if none helps)."""
        helpful = [o for o in self.singles if o.reduction > 0]
        if not helpful:
            return None
        return max(helpful, key=lambda o: (o.reduction_per_cost, o.reduction))

    @property
    def best(self) -> UpgradeOption:
        """The set with the smallest U (ties: the cheaper)."""
        return min(self.options, key=lambda o: (o.expanded_uncertainty, o.cost, len(o.candidates)))

    def option(self, names: Iterable[str]) -> UpgradeOption:
        """The evaluated option for a set of candidate names (order does not matter)."""
        wanted = set(names)
        for o in self.options:
            if set(o.candidates) == wanted:
                return o
        raise InputError(f"the set {sorted(wanted)} was not evaluated (method {self.method})")

    def budget_for(self, names: Iterable[str]) -> Budget:
        """The new :class:`Budget` after applying the named candidates (for a full evaluation)."""
        return apply_candidates(self.baseline.budget, self.candidates, names)

    def table(self) -> Any:
        """All evaluated sets as a DataFrame, ranked by U (then cost)."""
        import pandas as pd

        rows = [
            {
                "candidates": o.label,
                "count": len(o.candidates),
                "cost": o.cost,
                "U": o.expanded_uncertainty,
                "relative U": o.relative_expanded_uncertainty,
                "u_c": o.standard_uncertainty,
                "k": o.coverage_factor,
                "nu_eff": o.effective_dof,
                "reduction": o.reduction,
                "reduction per cost": o.reduction_per_cost,
                "dominant": o.dominant,
                "reaches target": o.reaches_target,
            }
            for o in self.options
        ]
        df = pd.DataFrame(rows)
        df = df.sort_values(["U", "cost", "count"], kind="stable").reset_index(drop=True)
        if self.target is None:
            df = df.drop(columns=["reaches target"])
        return df


def _winners(
    candidates: Sequence[UpgradeCandidate], budget: Budget
) -> list[list[tuple[int, float, float, float]]]:
    """Per input: list of (candidate index, u_SI, x_SI, dof) for each candidate touching it."""
    s, o, _, _ = _scales(budget)
    per_input: list[list[tuple[int, float, float, float]]] = [[] for _ in budget.inputs]
    index = {n: i for i, n in enumerate(budget.input_names)}
    for j, c in enumerate(candidates):
        for key, change in c.changes.items():
            i = index[key]
            q = budget.inputs[i]
            if isinstance(change, InputQuantity):
                cs, co = _units.si_conversion(change.unit)
                per_input[i].append(
                    (j, change.standard_uncertainty * cs, change.value * cs + co, change.dof)
                )
            else:
                per_input[i].append((j, change * s[i], q.value * s[i] + o[i], q.dof))
    return per_input


def apply_candidates(
    budget: Budget, candidates: Sequence[UpgradeCandidate], names: Iterable[str]
) -> Budget:
    """The budget after applying the named candidates (same combination rule as the planner).

    When several candidates in the set change the same input, the change giving the smallest
    standard uncertainty (compared in SI) wins; ties go to the candidate listed first.
    """
    wanted = list(names)
    by_name = {c.name: c for c in candidates}
    for n in wanted:
        if n not in by_name:
            raise InputError(f"no candidate named {n!r} (candidates: {', '.join(by_name)})")
    chosen = [c for c in candidates if c.name in set(wanted)]
    best: dict[str, tuple[float, Change]] = {}
    for c in chosen:
        for key, change in c.changes.items():
            q = budget.input(key)
            if isinstance(change, InputQuantity):
                u_si = change.standard_uncertainty * _units.si_conversion(change.unit)[0]
            else:
                u_si = change * _units.si_conversion(q.unit)[0]
            if key not in best or u_si < best[key][0]:
                best[key] = (u_si, change)
    out = budget
    for key, (_u, change) in best.items():
        if isinstance(change, InputQuantity):
            out = out.with_input(change)
        else:
            out = out.with_uncertainty(key, change)
    return out


def _evaluate_masks(
    budget: Budget,
    candidates: Sequence[UpgradeCandidate],
    masks: np.ndarray,
    per_input: list[list[tuple[int, float, float, float]]],
) -> dict[str, np.ndarray]:
    """Evaluate many candidate sets (boolean masks, shape (S, n)) in one vectorised pass."""
    x0, u0, nu0, const = budget.si_arrays()
    n_sets = masks.shape[0]
    n_in = len(x0)
    u = np.repeat(u0[:, None], n_sets, axis=1)
    x = np.repeat(x0[:, None], n_sets, axis=1)
    nu = np.repeat(nu0[:, None], n_sets, axis=1)
    estimate_changes = False
    for i, opts in enumerate(per_input):
        if not opts:
            continue
        cand = np.array([j for j, *_ in opts])
        u_opt = np.array([v for _, v, _, _ in opts])
        x_opt = np.array([v for _, _, v, _ in opts])
        nu_opt = np.array([v for _, _, _, v in opts])
        included = masks[:, cand]  # (S, m)
        u_masked = np.where(included, u_opt[None, :], np.inf)
        win = np.argmin(u_masked, axis=1)  # first minimum: ties go to the earlier candidate
        any_in = included.any(axis=1)
        u[i] = np.where(any_in, u_opt[win], u0[i])
        x[i] = np.where(any_in, x_opt[win], x0[i])
        nu[i] = np.where(any_in, nu_opt[win], nu0[i])
        if np.any(x_opt != x0[i]):
            estimate_changes = True
    comp = budget.compiled
    _, _, out_s, out_o = _scales(budget)
    if estimate_changes:
        # Estimates differ between sets: value and gradient per set, one vectorised call.
        y = np.broadcast_to(comp.value(*x, *const), (n_sets,))
        grad = comp.gradient(*x, *const)
        bad = ~np.isfinite(grad).all(axis=0) | ~np.isfinite(y)
        if np.any(bad):
            s = int(np.argmax(bad))
            names = [c.name for c, m in zip(candidates, masks[s], strict=True) if m]
            raise InputError(f"the model is not finite after applying {names}")
    else:
        # Estimates unchanged: sensitivities are those of the baseline (JCGM 100:2008, 5.1.3).
        y = np.full(n_sets, float(comp.value(*x0, *const)))
        grad = np.repeat(comp.gradient(*x0, *const)[:, None], n_sets, axis=1)
    res = _propagate(budget, grad, u, nu)
    res["value"] = (y - out_o) / out_s
    for key in ("u_c", "U"):
        res[key] = res[key] / out_s
    res["contributions"] = res["contributions"] / out_s
    assert res["contributions"].shape == (n_in, n_sets)
    return res


def evaluate_upgrades(
    budget: Budget,
    candidates: Sequence[UpgradeCandidate],
    target: float | None = None,
    max_exhaustive: int = 12,
) -> UpgradePlan:
    """Evaluate upgrade candidates alone and in combination, ranked by the new U.

    Parameters
    ----------
    budget : Budget
        The budget as it stands.
    candidates : sequence of UpgradeCandidate
        Unique names; every changed input must exist in the budget.
    target : float or None
        Target expanded uncertainty U in the measurand unit (``budget.unit``), > 0. [measurand unit]
    max_exhaustive : int
        Up to this many candidates every subset (2ⁿ, 4096 for 12) is evaluated; above it the
        greedy search of the Notes is used.

    Returns
    -------
    UpgradePlan
        Baseline, every evaluated set, the cheapest set reaching ``target`` and ``table()``.

    Raises
    ------
    InputError
        Duplicate or unknown names, a non-positive target, an empty candidate list.

    Notes
    -----
    For each set the standard uncertainties (and, for replacements, estimates and dofs) are
    changed and u_c² = Σᵢⱼ cᵢcⱼu(xᵢ)u(xⱼ)r(xᵢ,xⱼ) (JCGM 100:2008, eq. 16), ν_eff
    (eq. G.2b), k = t_p(ν_eff truncated, G.6.4) or the fixed k, and U = k u_c are computed
    for all sets at once. The sensitivity coefficients are those of the baseline unless a
    candidate replaces an estimate.

    *Combination rule*: when several candidates in a set change the same input, the change
    with the smallest standard uncertainty (compared in SI) is applied -- one would use the
    better of two instruments -- and ties go to the candidate listed first.

    *Greedy search* (more than ``max_exhaustive`` candidates): start from the baseline; at
    each step evaluate adding each remaining candidate and keep the one with the largest
    reduction of U per unit cost relative to the current set (a free candidate that reduces
    U counts as infinitely good; ties: the larger reduction); stop when no candidate reduces
    U. Every set tried on the way is kept. This is a heuristic: the cheapest set reaching a
    target is searched among the evaluated sets only and may not be the true optimum.

    Reduction per cost is (U_baseline − U)/cost [measurand unit per currency]; for a free set
    it is +inf (reduction > 0), −inf (< 0) or 0. "Reaches target" means
    U ≤ target·(1 + :data:`TARGET_TOLERANCE`) (round-off allowance only).

    References
    ----------
    JCGM 100:2008 (GUM), 5.1.2, 5.2.2, G.4.1, G.6.4.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "a + b", [InputQuantity.normal("a", 1.0, 3.0),
    ...                                        InputQuantity.normal("b", 1.0, 4.0)],
    ...                         coverage_factor=2.0)
    >>> plan = evaluate_upgrades(b, [UpgradeCandidate("better b", 10.0, {"b": 0.0})], target=7.0)
    >>> plan.cheapest.label, float(plan.cheapest.expanded_uncertainty), plan.cheapest.reduction_per_cost
    ('better b', 6.0, 0.4)
    """
    candidates = tuple(candidates)
    if not candidates:
        raise InputError("evaluate_upgrades needs at least one upgrade candidate")
    _check_candidates(candidates, budget)
    if target is not None:
        target = _number(target, "target")
        if target <= 0:
            raise InputError(f"target expanded uncertainty must be positive, got {target!r}")
    if (
        isinstance(max_exhaustive, bool)
        or not isinstance(max_exhaustive, int)
        or max_exhaustive < 0
    ):
        raise InputError(f"max_exhaustive must be a non-negative integer, got {max_exhaustive!r}")
    if max_exhaustive > 20:
        raise InputError(
            f"max_exhaustive above 20 would evaluate over a million sets, got {max_exhaustive}"
        )
    baseline = budget.evaluate()
    per_input = _winners(candidates, budget)
    n = len(candidates)
    costs = np.array([c.cost for c in candidates])
    u_base = baseline.expanded_uncertainty
    path: list[UpgradeOption] = []
    if n <= max_exhaustive:
        method: Literal["exhaustive", "greedy"] = "exhaustive"
        idx = np.arange(2**n)
        masks = ((idx[:, None] >> np.arange(n)[None, :]) & 1).astype(bool)
        res = _evaluate_masks(budget, candidates, masks, per_input)
        options = _options(budget, candidates, masks, res, costs, u_base, target)
    else:
        method = "greedy"
        options_by_key: dict[tuple[bool, ...], UpgradeOption] = {}
        current = np.zeros(n, dtype=bool)
        start = _evaluate_masks(budget, candidates, current[None, :], per_input)
        options_by_key[tuple(current)] = _options(
            budget, candidates, current[None, :], start, costs, u_base, target
        )[0]
        current_u = float(start["U"][0])
        while not current.all():
            remaining = np.flatnonzero(~current)
            masks = np.repeat(current[None, :], len(remaining), axis=0)
            masks[np.arange(len(remaining)), remaining] = True
            res = _evaluate_masks(budget, candidates, masks, per_input)
            step = _options(budget, candidates, masks, res, costs, u_base, target)
            for m, o in zip(masks, step, strict=True):
                options_by_key.setdefault(tuple(m), o)
            gain = current_u - res["U"]
            c = costs[remaining]
            with np.errstate(divide="ignore", invalid="ignore"):
                per_cost = np.where(c > 0, gain / np.where(c > 0, c, 1.0),
                                    np.where(gain > 0, np.inf, -np.inf))  # fmt: skip
            if not np.any(gain > 0):
                break
            per_cost = np.where(gain > 0, per_cost, -np.inf)
            order = np.lexsort((-gain, -per_cost))  # primary: per cost; ties: larger gain
            pick = int(order[0])
            current = masks[pick].copy()
            current_u = float(res["U"][pick])
            path.append(step[pick])
        options = tuple(options_by_key.values())
    cheapest = None
    if target is not None:
        reaching = [o for o in options if o.reaches_target]
        if reaching:
            cheapest = min(reaching, key=lambda o: (o.cost, -o.reduction, len(o.candidates)))
    return UpgradePlan(baseline, candidates, tuple(options), method, target, cheapest, tuple(path))


def _options(
    budget: Budget,
    candidates: Sequence[UpgradeCandidate],
    masks: np.ndarray,
    res: dict[str, np.ndarray],
    costs: np.ndarray,
    u_base: float,
    target: float | None,
) -> tuple[UpgradeOption, ...]:
    names = [c.name for c in candidates]
    cost = masks.astype(float) @ costs
    big_u = res["U"]
    reduction = u_base - big_u
    with np.errstate(divide="ignore", invalid="ignore"):
        per_cost = np.where(cost > 0, reduction / np.where(cost > 0, cost, 1.0),
                            np.sign(reduction) * np.inf)  # fmt: skip
    per_cost = np.where((cost == 0) & (reduction == 0), 0.0, per_cost)
    dom = np.argmax(np.abs(res["contributions"]), axis=0)
    inputs = budget.input_names
    reach = big_u <= target * (1 + TARGET_TOLERANCE) if target is not None else None
    out = []
    for s in range(masks.shape[0]):
        out.append(
            UpgradeOption(
                candidates=tuple(nm for nm, m in zip(names, masks[s], strict=True) if m),
                cost=float(cost[s]),
                value=float(res["value"][s]),
                standard_uncertainty=float(res["u_c"][s]),
                effective_dof=float(res["nu_eff"][s]),
                coverage_factor=float(res["k"][s]),
                expanded_uncertainty=float(big_u[s]),
                reduction=float(reduction[s]),
                reduction_per_cost=float(per_cost[s]),
                dominant=inputs[int(dom[s])],
                reaches_target=None if reach is None else bool(reach[s]),
            )
        )
    return tuple(out)


# =============================================================================== inverse question


@dataclass(frozen=True)
class RequiredUncertainty:
    """Answer of :func:`required_uncertainty` (input numbers in the input's own unit).

    Attributes
    ----------
    name, unit : str
        The input and its unit.
    target : float
        Target U. [measurand unit]
    current_uncertainty : float
        u(xᵢ) now. [input unit]
    current_expanded_uncertainty : float
        U now. [measurand unit]
    required_uncertainty : float
        The largest u(xᵢ) for which U ≤ target, all else unchanged; NaN when unreachable;
        ``inf`` when U does not depend on u(xᵢ) and the target is met anyway. [input unit]
    floor : float
        U with u(xᵢ) = 0: the part the other inputs set. [measurand unit]
    reachable, already_met : bool
    method : {"closed form", "root finding"}
    message : str
        The answer in words.
    """

    name: str
    unit: str
    target: float
    current_uncertainty: float
    current_expanded_uncertainty: float
    required_uncertainty: float
    floor: float
    reachable: bool
    already_met: bool
    method: str
    message: str


def _single_input_cases(budget: Budget, i: int, u_i_si: np.ndarray) -> dict[str, np.ndarray]:
    x, u, nu, c = budget.si_arrays()
    grad = budget.compiled.gradient(*x, *c)
    m = len(u_i_si)
    uu = np.repeat(u[:, None], m, axis=1)
    uu[i] = u_i_si
    return _propagate(budget, np.repeat(grad[:, None], m, axis=1), uu, nu[:, None])


def required_uncertainty(budget: Budget, name: str, target_U: float) -> RequiredUncertainty:
    """The standard uncertainty u(xᵢ) that, all else unchanged, makes U reach a target.

    Parameters
    ----------
    budget : Budget
    name : str
        Input whose uncertainty would change.
    target_U : float
        Target expanded uncertainty, > 0. [measurand unit]

    Returns
    -------
    RequiredUncertainty
        The largest u(xᵢ) [input's own unit] with U ≤ target, or "unreachable even with
        u(xᵢ) = 0" together with the floor that the other inputs set.

    Raises
    ------
    InputError
        Unknown input or a non-positive target.

    Notes
    -----
    With the sensitivities cⱼ fixed, u_c²(uᵢ) = a uᵢ² + 2 b uᵢ + d with a = cᵢ²,
    b = Σⱼ≠ᵢ r(xᵢ,xⱼ) cᵢ cⱼ u(xⱼ) and d the variance of the other inputs (JCGM 100:2008,
    eq. 16). When k is constant (a fixed k, or all inputs with infinite dof so that k is the
    normal quantile) the largest root of a uᵢ² + 2 b uᵢ + d = (target/k)² is the answer in
    closed form. When k = t_p(ν_eff) depends on uᵢ (through eq. G.2b, truncated per G.6.4),
    U(uᵢ) is evaluated on a grid from 0 to a bound where U surely exceeds the target (with k
    replaced by the normal quantile, a lower bound of any t quantile), the last crossing is
    bracketed and refined with Brent's method (``scipy.optimize.brentq``). k changes in steps,
    so the answer may sit on a step; a dip narrower than the grid spacing could be missed.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "a + b", [InputQuantity.normal("a", 1.0, 3.0),
    ...                                        InputQuantity.normal("b", 1.0, 4.0)],
    ...                         coverage_factor=2.0)
    >>> round(required_uncertainty(b, "b", 8.0).required_uncertainty, 12)
    2.645751311065
    >>> print(required_uncertainty(b, "b", 5.0).message)
    unreachable even with u(b) = 0: the other inputs alone give U = 6 (the floor)
    """
    q = budget.input(name)
    target = _number(target_U, "target_U")
    if target <= 0:
        raise InputError(f"target_U must be positive, got {target!r}")
    i = budget.input_names.index(name)
    s, _o, out_s, _ = _scales(budget)
    x, u, nu, c = budget.si_arrays()
    grad = budget.compiled.gradient(*x, *c)
    r = budget.correlation_matrix
    r_row = r[i] if r is not None else np.eye(len(u))[i]
    a = grad[i] ** 2
    others = grad * u
    others[i] = 0.0
    b = grad[i] * float(r_row @ others)
    if r is None:
        d = float(np.sum(others**2))
    else:
        d = float(others @ r @ others)
    t_si = target * out_s
    base = budget.evaluate()
    floor_case = _single_input_cases(budget, i, np.array([0.0]))
    floor = float(floor_case["U"][0]) / out_s
    k_constant = budget.coverage_factor is not None or bool(np.all(np.isinf(nu)))
    unit = _units.format_unit(q.unit) if q.unit else ""
    u_unit = f" {unit}" if unit else ""
    m_unit = f" {_units.format_unit(budget.unit)}" if budget.unit else ""
    if k_constant:
        method = "closed form"
        k = (
            float(budget.coverage_factor)
            if budget.coverage_factor is not None
            else coverage_factor_for(budget.coverage_probability)
        )
        rhs = (t_si / k) ** 2 - d
        if a == 0:
            req = math.inf if rhs >= 0 else math.nan
        else:
            disc = b * b + a * rhs
            root = (-b + math.sqrt(disc)) / a if disc >= 0 else -math.inf
            req = root / s[i] if root >= 0 else math.nan
    else:
        method = "root finding"
        req = _root_find(budget, i, t_si, a, b, d, s[i])
    reachable = not math.isnan(req)
    already = base.expanded_uncertainty <= target * (1 + TARGET_TOLERANCE)
    if not reachable:
        msg = (f"unreachable even with u({name}) = 0: the other inputs alone give "
               f"U = {floor:.3g}{m_unit} (the floor)")  # fmt: skip
    elif math.isinf(req):
        msg = f"U does not depend on u({name}); the target is met whatever u({name})"
    elif already:
        msg = (f"target already met; u({name}) may be as large as {req:.3g}{u_unit} "
               f"(now {q.standard_uncertainty:.3g}{u_unit})")  # fmt: skip
    else:
        msg = (f"u({name}) must be at most {req:.3g}{u_unit} (now {q.standard_uncertainty:.3g}"
               f"{u_unit}, a factor {q.standard_uncertainty / req:.3g} smaller)")  # fmt: skip
    return RequiredUncertainty(
        name=name, unit=q.unit, target=target, current_uncertainty=q.standard_uncertainty,
        current_expanded_uncertainty=base.expanded_uncertainty, required_uncertainty=float(req),
        floor=floor, reachable=reachable, already_met=already, method=method, message=msg,
    )  # fmt: skip


def _root_find(
    budget: Budget, i: int, t_si: float, a: float, b: float, d: float, scale: float
) -> float:
    """Largest u(xᵢ) (own unit) with U ≤ target when k depends on ν_eff; NaN if none."""
    z = coverage_factor_for(budget.coverage_probability)  # t_p(ν) ≥ z_p for every ν
    if a == 0:
        u_now = budget.si_arrays()[1][i]
        ok = float(_single_input_cases(budget, i, np.array([u_now]))["U"][0]) <= t_si * (
            1 + TARGET_TOLERANCE
        )
        return math.inf if ok else math.nan
    rhs = (t_si / z) ** 2 - d
    disc = b * b + a * rhs
    if disc < 0:
        return math.nan
    bound = (-b + math.sqrt(disc)) / a
    if bound < 0:
        return math.nan
    upper = 1.01 * bound + 1e-300
    grid = np.linspace(0.0, upper, 4097)

    def excess(v: np.ndarray) -> np.ndarray:
        return _single_input_cases(budget, i, v)["U"] - t_si

    f = excess(grid)
    ok = f <= t_si * TARGET_TOLERANCE
    if not ok.any():
        return math.nan
    last = int(np.flatnonzero(ok)[-1])
    if last == len(grid) - 1:  # cannot happen: U(upper) > target by construction
        return float(grid[-1]) / scale
    lo, hi = grid[last], grid[last + 1]

    def g(v: float) -> float:
        return float(excess(np.array([v]))[0])

    if g(lo) == 0:
        return float(lo) / scale
    root = optimize.brentq(g, lo, hi, xtol=1e-15 * max(hi, 1e-300), rtol=4 * np.finfo(float).eps)
    # On a step of k the root can land just above the target; step back into the feasible side.
    if g(root) > t_si * TARGET_TOLERANCE:
        root = lo + (root - lo) * (1 - 1e-12)
        if g(root) > t_si * TARGET_TOLERANCE:
            root = lo
    return float(root) / scale


def required_uncertainties(budget: Budget, target_U: float) -> Any:
    """:func:`required_uncertainty` for every input, as a DataFrame (one row per input)."""
    import pandas as pd

    rows = []
    for name in budget.input_names:
        r = required_uncertainty(budget, name, target_U)
        rows.append({"input": r.name, "unit": _units.format_unit(r.unit) if r.unit else "",
                     "current u": r.current_uncertainty, "required u": r.required_uncertainty,
                     "floor U": r.floor, "reachable": r.reachable, "message": r.message})  # fmt: skip
    return pd.DataFrame(rows)


# =============================================================================== sweeps


@dataclass(frozen=True)
class SweepResult:
    """A budget evaluated across a range of one input (arrays are read-only).

    Attributes
    ----------
    budget : Budget
    over : str
        The swept input.
    over_unit : str
    values : array
        The swept estimates. [unit of ``over``]
    value : array
        Measurand estimate per point. [measurand unit]
    standard_uncertainty, expanded_uncertainty : array
        u_c and U per point. [measurand unit]
    effective_dof, coverage_factor : array
    contributions : array, shape (points, inputs)
        Signed cᵢu(xᵢ) per point. [measurand unit]
    dominant : tuple of str
        Input with the largest |cᵢu(xᵢ)| per point.
    """

    budget: Budget
    over: str
    over_unit: str
    values: np.ndarray
    value: np.ndarray
    standard_uncertainty: np.ndarray
    effective_dof: np.ndarray
    coverage_factor: np.ndarray
    expanded_uncertainty: np.ndarray
    contributions: np.ndarray
    dominant: tuple[str, ...]
    input_names: tuple[str, ...] = field(default=())

    @property
    def unit(self) -> str:
        return self.budget.unit

    @property
    def measurand(self) -> str:
        return self.budget.measurand

    @property
    def relative_expanded_uncertainty(self) -> np.ndarray:
        """U/|y| per point (NaN where y = 0)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(self.value != 0, self.expanded_uncertainty / np.abs(self.value), np.nan)

    @property
    def variance_shares(self) -> np.ndarray:
        """(cᵢu(xᵢ))²/u_c² per point and input (shape (points, inputs))."""
        uc2 = self.standard_uncertainty[:, None] ** 2
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(uc2 > 0, self.contributions**2 / uc2, 0.0)

    def table(self) -> Any:
        """One row per point: swept value, y, u_c, ν_eff, k, U, relative U, dominant input."""
        import pandas as pd

        shares = self.variance_shares
        dom_idx = np.argmax(np.abs(self.contributions), axis=1) if len(self.input_names) else []
        return pd.DataFrame(
            {
                self.over: self.values,
                self.measurand: self.value,
                "u_c": self.standard_uncertainty,
                "nu_eff": self.effective_dof,
                "k": self.coverage_factor,
                "U": self.expanded_uncertainty,
                "relative U": self.relative_expanded_uncertainty,
                "dominant": list(self.dominant),
                "dominant share": shares[np.arange(len(self.values)), dom_idx],
            }
        )


Adjust = Callable[[np.ndarray], Mapping[str, Any]]


def sweep(
    budget: Budget,
    over: str,
    start: float,
    stop: float,
    points: int = 50,
    spacing: Literal["linear", "log"] = "linear",
    adjust: Adjust | None = None,
) -> SweepResult:
    """Evaluate a budget across a range of one input in one vectorised pass.

    Parameters
    ----------
    budget : Budget
    over : str
        Input whose estimate is swept (its standard uncertainty stays as given unless
        ``adjust`` sets it).
    start, stop : float
        Range ends, in the input's own unit (``start > stop`` sweeps downwards). [input unit]
    points : int
        Number of points, ≥ 1 (1 gives ``start`` only).
    spacing : {"linear", "log"}
        Evenly spaced or geometrically spaced (log needs both ends > 0).
    adjust : callable or None
        ``adjust(values)`` receives the swept estimates (array, own unit of ``over``) and
        returns a mapping: input name → array of new estimates (own unit), or → a mapping
        with ``"value"`` and/or ``"standard_uncertainty"`` arrays (own unit). Scalars
        broadcast. The swept input itself may only get a ``"standard_uncertainty"``. Write it
        with numpy operations so the sweep stays vectorised (e.g. the flow time and the
        viscometer constant change with the viscosity).

    Returns
    -------
    SweepResult
        Arrays per point and ``table()`` (value, u_c, U, relative U, dominant input).

    Raises
    ------
    InputError
        Unknown input, bad range or spacing, a non-finite result, or a malformed ``adjust``
        return value.

    Notes
    -----
    Each point is the first-order budget of JCGM 100:2008 (eq. 10/16, G.2b, G.6.4) with the
    inputs of that point; the model and its symbolic gradient are evaluated on arrays.

    *Sweeping the measurand itself*: a budget has no input called the measurand, so sweep
    the input that drives it (e.g. the flow time t in ν = C·t, or a viscosity-like input of
    the model) and let ``adjust`` move the inputs that follow it; the measurand value of each
    point is in ``value`` and :func:`scope_table` uses it as its axis by default.

    References
    ----------
    JCGM 100:2008 (GUM), 5.1.2, 5.2.2, G.4.1, G.6.4.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "C*t", [InputQuantity.normal("C", 0.01, 1e-5),
    ...                                      InputQuantity.normal("t", 300.0, 0.25)],
    ...                         coverage_factor=2.0)
    >>> s = sweep(b, "t", 200.0, 400.0, points=3)
    >>> [round(float(v), 3) for v in s.value], s.dominant
    ([2.0, 3.0, 4.0], ('t', 'C', 'C'))
    """
    q = budget.input(over)
    a = _number(start, "sweep start")
    z = _number(stop, "sweep stop")
    if isinstance(points, bool) or not isinstance(points, (int, np.integer)) or points < 1:
        raise InputError(f"sweep points must be a positive integer, got {points!r}")
    if spacing == "linear":
        values = np.linspace(a, z, int(points))
    elif spacing == "log":
        if a <= 0 or z <= 0:
            raise InputError(f"a log sweep needs start and stop > 0, got start={a!r}, stop={z!r}")
        values = np.geomspace(a, z, int(points))
    else:
        raise InputError(f"spacing must be 'linear' or 'log', got {spacing!r}")
    return _sweep_values(budget, q, values, adjust)


def _sweep_values(
    budget: Budget, q: InputQuantity, values: np.ndarray, adjust: Adjust | None
) -> SweepResult:
    names = budget.input_names
    s, o, out_s, out_o = _scales(budget)
    x0, u0, nu0, const = budget.si_arrays()
    p = len(values)
    x = np.repeat(x0[:, None], p, axis=1)
    u = np.repeat(u0[:, None], p, axis=1)
    i_over = names.index(q.name)
    x[i_over] = values * s[i_over] + o[i_over]
    if adjust is not None:
        changes = adjust(values.copy())
        if not isinstance(changes, Mapping):
            raise InputError(
                f"adjust must return a mapping of input name to arrays, got {type(changes).__name__}"
            )
        for key, spec in changes.items():
            if key not in names:
                raise InputError(
                    f"adjust returned unknown input {key!r} (inputs: {', '.join(names)})"
                )
            j = names.index(key)
            if isinstance(spec, Mapping):
                bad = sorted(set(spec) - {"value", "standard_uncertainty"})
                if bad:
                    raise InputError(
                        f"adjust[{key!r}] has unknown key(s) {bad}; use 'value', 'standard_uncertainty'"
                    )
                new_x, new_u = spec.get("value"), spec.get("standard_uncertainty")
            else:
                new_x, new_u = spec, None
            if new_x is not None:
                if j == i_over:
                    raise InputError(f"adjust may not set the estimate of the swept input {key!r}")
                x[j] = _array(new_x, p, f"adjust[{key!r}] value") * s[j] + o[j]
            if new_u is not None:
                uu = _array(new_u, p, f"adjust[{key!r}] standard_uncertainty")
                if np.any(uu < 0):
                    raise InputError(
                        f"adjust[{key!r}] standard_uncertainty must be ≥ 0, got {uu.min()!r}"
                    )
                u[j] = uu * s[j]
    comp = budget.compiled
    y = np.broadcast_to(comp.value(*x, *const), (p,))
    grad = comp.gradient(*x, *const)
    bad = ~(np.isfinite(y) & np.isfinite(grad).all(axis=0))
    if np.any(bad):
        first = int(np.argmax(bad))
        raise InputError(
            f"the model or a sensitivity is not finite at {q.name} = {float(values[first])!r} "
            f"(point {first + 1} of the sweep)"
        )
    res = _propagate(budget, grad, u, nu0[:, None])
    contributions = (res["contributions"] / out_s).T
    dom = np.argmax(np.abs(contributions), axis=1)
    arrays = {
        "values": np.asarray(values, dtype=float),
        "value": (y - out_o) / out_s,
        "standard_uncertainty": res["u_c"] / out_s,
        "effective_dof": res["nu_eff"],
        "coverage_factor": res["k"],
        "expanded_uncertainty": res["U"] / out_s,
        "contributions": np.ascontiguousarray(contributions),
    }
    for k, v in arrays.items():
        v = np.array(v, dtype=float)
        v.setflags(write=False)
        arrays[k] = v
    return SweepResult(
        budget=budget, over=q.name, over_unit=q.unit, dominant=tuple(names[int(d)] for d in dom),
        input_names=names, **arrays,
    )  # fmt: skip


def _array(v: Any, p: int, field: str) -> np.ndarray:
    try:
        arr = np.broadcast_to(np.asarray(v, dtype=float), (p,))
    except (TypeError, ValueError):
        raise InputError(
            f"{field} must be a number or an array of {p} numbers, got {v!r}"
        ) from None
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{field} must be finite, got {arr[~np.isfinite(arr)][0]!r}")
    return arr


# =============================================================================== scope tables


def round_up(x: float, digits: int = 2) -> float:
    """Round a positive number up to ``digits`` significant digits (decimal, exact).

    The float's shortest decimal representation is rounded towards +∞. A value within a
    relative :data:`ROUND_UP_ALLOWANCE` of a ``digits``-digit number is taken as that number,
    so binary round-off (0.0246/3 = 0.008200000000000001) does not raise the claim a step.

    Examples
    --------
    >>> round_up(0.002501), round_up(0.0025), round_up(1234.0), round_up(0.0246 / 3)
    (0.0026, 0.0025, 1300.0, 0.0082)
    """
    v = _number(x, "value to round")
    if isinstance(digits, bool) or not isinstance(digits, int) or digits < 1:
        raise InputError(f"digits must be a positive integer, got {digits!r}")
    if v <= 0:
        raise InputError(f"value to round up must be positive, got {v!r}")
    d = Decimal(repr(v))
    exponent = d.adjusted() - digits + 1
    step = Decimal(1).scaleb(exponent)
    nearest = d.quantize(step, rounding=ROUND_HALF_EVEN)
    if abs(d - nearest) <= d * Decimal(ROUND_UP_ALLOWANCE):
        return float(nearest)  # binary round-off only (e.g. 0.0246/3 = 0.008200000000000001)
    return float(d.quantize(step, rounding=ROUND_CEILING))


def scope_table(
    sweep_result: SweepResult,
    edges: Sequence[float],
    *,
    axis: Literal["value", "input"] = "value",
    digits: int = 2,
) -> Any:
    """Stated relative expanded uncertainties per sub-range (a scope-of-accreditation table).

    Parameters
    ----------
    sweep_result : SweepResult
        From :func:`sweep`.
    edges : sequence of float
        Increasing sub-range boundaries, at least two. [measurand unit for ``axis="value"``,
        unit of the swept input for ``axis="input"``]
    axis : {"value", "input"}
        Split the range by the measurand value (default) or by the swept input.
    digits : int
        Significant digits of the stated value (default 2).

    Returns
    -------
    pandas.DataFrame
        One row per sub-range [from, to] (both ends included, so a point on a shared edge
        counts in both): number of points, the largest relative U found, where it occurs, the
        stated relative U (the largest rounded up to ``digits`` significant digits) and the
        same in percent as text.

    Raises
    ------
    InputError
        Fewer than two edges, edges not increasing, or a sub-range with no sweep point.

    Notes
    -----
    The stated uncertainty of a sub-range is the largest relative U within it, rounded UP
    to two significant digits, so the claim is never smaller than any point it covers
    (common practice, no source). The claim is only as good as the sweep's resolution:
    use enough points for U to be smooth between them.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "C*t", [InputQuantity.normal("C", 0.01, 1e-5),
    ...                                      InputQuantity.normal("t", 300.0, 0.3)],
    ...                         coverage_factor=2.0)
    >>> s = sweep(b, "t", 100.0, 1000.0, points=91)
    >>> scope_table(s, [1.0, 5.0, 10.0])["stated"].tolist()
    ['0.64 %', '0.24 %']
    """
    import pandas as pd

    e = np.asarray([_number(v, "scope edge") for v in edges], dtype=float)
    if e.size < 2:
        raise InputError(f"scope_table needs at least two edges, got {list(edges)!r}")
    if np.any(np.diff(e) <= 0):
        raise InputError(f"scope edges must be strictly increasing, got {list(edges)!r}")
    if axis == "value":
        xs = np.asarray(sweep_result.value)
        label = sweep_result.measurand
    elif axis == "input":
        xs = np.asarray(sweep_result.values)
        label = sweep_result.over
    else:
        raise InputError(f"axis must be 'value' or 'input', got {axis!r}")
    rel = np.asarray(sweep_result.relative_expanded_uncertainty)
    rows = []
    for lo, hi in itertools.pairwise(e):
        inside = (xs >= lo) & (xs <= hi)
        if not inside.any():
            raise InputError(
                f"no sweep point with {label} in the sub-range [{lo:g}, {hi:g}]; widen the sweep "
                "or add points"
            )
        r = rel[inside]
        if np.any(~np.isfinite(r)):
            raise InputError(f"relative U is undefined (y = 0) in the sub-range [{lo:g}, {hi:g}]")
        j = int(np.argmax(r))
        worst = float(r[j])
        stated = round_up(worst, digits) if worst > 0 else 0.0
        rows.append(
            {
                "from": float(lo),
                "to": float(hi),
                "points": int(inside.sum()),
                "largest relative U": worst,
                "at": float(xs[inside][j]),
                "stated relative U": stated,
                "stated": f"{_percent_text(stated)} %",
            }
        )
    return pd.DataFrame(rows)


def _percent_text(fraction: float) -> str:
    d = Decimal(repr(fraction)).scaleb(2).normalize()
    text = format(d, "f")
    return text
