"""Which upgrade? Candidates with their costs, evaluated alone and in every combination.

Core layer: pure functions on an immutable :class:`~viscometry.gum.Budget`. Every measurand
number is in ``budget.unit``, every input number in that input's own unit; SI inside.

Changing only standard uncertainties leaves the estimates, hence the sensitivity
coefficients cᵢ = ∂f/∂xᵢ, unchanged (JCGM 100:2008, 5.1.3). The gradient is computed once
and u_c, ν_eff, k and U of every candidate set come from one call of the propagation kernel
(:func:`viscometry.gum.propagation.propagate`) on columns — the function every budget
evaluation uses. A candidate that replaces an estimate is checked like any budget (a radius
of zero is refused) and the model and its gradient are evaluated once per set, in one
vectorised call. The sets stay columns of numbers (:class:`UpgradeOptions`); an
:class:`UpgradeOption` row is built only for a set that is shown or asked for.
"""

from __future__ import annotations

import types
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any, Literal

import numpy as np

from viscometry import units as _units
from viscometry._checks import finite as _number
from viscometry.errors import InputError, ViscometryError
from viscometry.gum.budget import Budget, BudgetResult
from viscometry.gum.inputs import InputQuantity
from viscometry.gum.validity import check_points, point_plausibility, propagate_points
from viscometry.planning.options import (
    TARGET_TOLERANCE,
    UpgradeOption,
    UpgradeOptions,
    cheapest_index,
    concatenated,
    evaluated_sets,
    frontier_indices,
)

__all__ = [
    "TARGET_TOLERANCE",
    "MAX_CANDIDATES",
    "MAX_EXHAUSTIVE",
    "Change",
    "UpgradeCandidate",
    "UpgradeOption",
    "UpgradeOptions",
    "UpgradePlan",
    "apply_candidates",
    "cheapest_reaching",
    "evaluate_upgrades",
    "frontier",
]

#: Most candidates a plan takes (a greedy search above ``max_exhaustive``).
MAX_CANDIDATES = 200
#: Largest ``max_exhaustive``: 2¹⁶ = 65 536 sets, a few seconds and about 0.2 GB; every
#: further candidate doubles both (20 took 40 s and 1.2 GB on a laptop-class CPU).
MAX_EXHAUSTIVE = 16

Change = float | InputQuantity
Search = Literal["exhaustive", "greedy"]


@dataclass(frozen=True, eq=False)
class UpgradeCandidate:
    """One possible improvement of the budget (a new instrument, a re-certification...).

    Parameters
    ----------
    name : str
        Short unique label, e.g. ``"bath thermometer 2 mK"``.
    cost : float
        What the upgrade costs, ≥ 0, in the user's currency (never converted). [currency]
    changes : mapping of str to float or InputQuantity
        Input name → the new standard uncertainty in the input's own unit (estimate,
        distribution and degrees of freedom stay, as :meth:`InputQuantity.with_uncertainty`),
        or a complete replacement :class:`InputQuantity` of the same name.
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

    def new_uncertainty(self, name: str) -> float:
        """The standard uncertainty this candidate gives input ``name`` (its own unit)."""
        change = self.changes[name]
        return change.standard_uncertainty if isinstance(change, InputQuantity) else float(change)


def _columns(options: Iterable[UpgradeOption]) -> tuple[Sequence[UpgradeOption], dict]:
    """The options as a sequence and their columns (cost, U, reduction, count)."""
    if isinstance(options, UpgradeOptions):
        cols = {k: options.column(k) for k in ("cost", "expanded_uncertainty", "reduction",
                                                "count")}  # fmt: skip
        return options, cols
    rows = tuple(options)
    cols = {k: np.array([getattr(o, k) for o in rows], dtype=float)
            for k in ("cost", "expanded_uncertainty", "reduction")}  # fmt: skip
    cols["count"] = np.array([len(o.candidates) for o in rows], dtype=np.int64)
    return rows, cols


def cheapest_reaching(options: Iterable[UpgradeOption], target: float) -> UpgradeOption | None:
    """The cheapest option with U ≤ target (ties: the larger reduction, then fewer
    candidates); None when none reaches it. Round-off allowance :data:`TARGET_TOLERANCE`."""
    rows, c = _columns(options)
    reaching = c["expanded_uncertainty"] <= target * (1 + TARGET_TOLERANCE)
    at = cheapest_index(c["cost"], c["reduction"], c["count"], reaching)
    return None if at is None else rows[at]


def frontier(options: Iterable[UpgradeOption]) -> tuple[UpgradeOption, ...]:
    """The cost–U frontier: the sets that no other set beats (none cheaper or as cheap with a
    smaller or equal U), ordered by cost. A set that adds a candidate without lowering U for
    more money is never on it.

    Examples
    --------
    >>> def o(c, u):
    ...     return UpgradeOption((), c, 1.0, u, float("inf"), 2.0, 2 * u, 0.0, 0.0, "a", None)
    >>> [(x.cost, x.standard_uncertainty) for x in frontier([o(0, 5), o(10, 3), o(20, 3), o(15, 4)])]
    [(0, 5), (10, 3)]
    """
    rows, c = _columns(options)
    return tuple(
        rows[i] for i in frontier_indices(c["cost"], c["expanded_uncertainty"], c["count"])
    )


@dataclass(frozen=True)
class UpgradePlan:
    """Result of :func:`evaluate_upgrades` (immutable).

    Attributes
    ----------
    baseline : BudgetResult
        The budget as it stands (its warnings are the plan's).
    candidates : tuple of UpgradeCandidate
    options : UpgradeOptions
        Every set evaluated (all 2ⁿ subsets when exhaustive, baseline included): a
        read-only sequence of :class:`UpgradeOption` that keeps the numbers as arrays and
        builds a row when it is read (a tuple of options given here is turned into one).
    search : {"exhaustive", "greedy"}
    target : float or None
        Target U in the measurand unit.
    cheapest : UpgradeOption or None
        Cheapest set reaching the target (:func:`cheapest_reaching`); None without a target
        or when no evaluated set reaches it.
    greedy_path : tuple of UpgradeOption
        The sets chosen step by step by the greedy search (empty when exhaustive).
    warnings : tuple of str
        The baseline's warnings and those of every budget a candidate's new estimates make.
    """

    baseline: BudgetResult
    candidates: tuple[UpgradeCandidate, ...]
    options: UpgradeOptions
    search: Search
    target: float | None
    cheapest: UpgradeOption | None
    greedy_path: tuple[UpgradeOption, ...] = ()
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if not isinstance(self.options, UpgradeOptions):
            names = [c.name for c in self.candidates]
            object.__setattr__(self, "options", UpgradeOptions.from_rows(self.options, names))

    @property
    def unit(self) -> str:
        return self.baseline.unit

    @property
    def singles(self) -> tuple[UpgradeOption, ...]:
        """The options with exactly one candidate, in candidate order."""
        opts = self.options
        masks = opts.column("masks")
        by = {}
        for k in np.flatnonzero(opts.column("count") == 1).tolist():
            by[int(np.argmax(masks[k]))] = k  # the last of equal sets, as a dict keeps it
        return tuple(opts[by[j]] for j in range(len(self.candidates)) if j in by)

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
        return self.ranked[0]

    @property
    def ranked(self) -> UpgradeOptions:
        """Every evaluated set, by U, then cost, then number of candidates (a sequence whose
        rows are built when read; ties keep the order of :attr:`options`)."""
        opts = self.options
        order = np.lexsort(
            (opts.column("count"), opts.column("cost"), opts.column("expanded_uncertainty"))
        )
        return opts.taken(order)

    @property
    def frontier(self) -> tuple[UpgradeOption, ...]:
        """The cost–U frontier of the evaluated sets (:func:`frontier`)."""
        return frontier(self.options)

    def option(self, names: Iterable[str]) -> UpgradeOption:
        """The evaluated option for a set of candidate names (order does not matter); a set a
        greedy search did not visit is evaluated now (same combination rule)."""
        wanted = set(names)
        unknown = wanted - {c.name for c in self.candidates}
        if unknown:
            raise InputError(f"no candidate named {sorted(unknown)[0]!r} (candidates: "
                             f"{', '.join(c.name for c in self.candidates)})")  # fmt: skip
        found = self.options.lookup(wanted)
        if found is not None:
            return found
        masks = np.array([[c.name in wanted for c in self.candidates]])
        base = self.baseline
        sets = _evaluate(
            base.budget, self.candidates, masks, self.target, base.expanded_uncertainty
        )
        return UpgradeOptions(sets)[0]

    def with_target(self, target: float | None) -> UpgradePlan:
        """The same plan judged against another target (no re-evaluation)."""
        if target is not None:
            target = _positive_target(target)
        options = self.options.judged(target)
        cheapest = cheapest_reaching(options, target) if target is not None else None
        return replace(self, options=options, target=target, cheapest=cheapest)

    def budget_for(self, names: Iterable[str]) -> Budget:
        """The new :class:`Budget` after applying the named candidates (for a full evaluation)."""
        return apply_candidates(self.baseline.budget, self.candidates, names)

    def table(self) -> Any:
        """All evaluated sets as a DataFrame of numbers (snake_case columns), ranked by U."""
        import pandas as pd

        rows = [
            {
                "candidates": o.label, "count": len(o.candidates), "cost": o.cost,
                "expanded_uncertainty": o.expanded_uncertainty,
                "relative_expanded_uncertainty": o.relative_expanded_uncertainty,
                "standard_uncertainty": o.standard_uncertainty,
                "coverage_factor": o.coverage_factor, "effective_dof": o.effective_dof,
                "reduction": o.reduction, "reduction_per_cost": o.reduction_per_cost,
                "dominant": o.dominant, "reaches_target": o.reaches_target,
            }
            for o in self.ranked
        ]  # fmt: skip
        df = pd.DataFrame(rows)
        return df.drop(columns=["reaches_target"]) if self.target is None else df


# =============================================================================== building
def _positive_target(target: object) -> float:
    t = _number(target, "target")
    if t <= 0:
        raise InputError(f"target expanded uncertainty must be positive, got {t!r}")
    return t


def _check_candidates(candidates: Sequence[UpgradeCandidate], budget: Budget) -> list[str]:
    """Refuse duplicate names, unknown inputs and replacements the budget refuses (each is
    built as a budget). The warnings of the sets are found by :func:`_evaluate`, which
    checks every set at once; none are returned here."""
    seen: set[str] = set()
    notes: list[str] = []
    for c in candidates:
        if not isinstance(c, UpgradeCandidate):
            raise InputError(f"candidates must be UpgradeCandidate objects, got {c!r}")
        if c.name in seen:
            raise InputError(f"candidate name used twice: {c.name!r}")
        seen.add(c.name)
        for key, change in c.changes.items():
            if key not in budget.input_names:
                raise InputError(
                    f"candidate {c.name!r} changes unknown input {key!r} "
                    f"(inputs: {', '.join(budget.input_names)})"
                )
            if not isinstance(change, InputQuantity):
                continue
            old = budget.input(key)
            if not _units.same_dimension(change.unit, old.unit):
                raise InputError(
                    f"candidate {c.name!r}: replacement unit of {key!r} {change.unit!r} is not "
                    f"of the same kind as {old.unit!r}"
                )
            try:
                budget.with_input(change)
            except ViscometryError as exc:
                raise InputError(f"candidate {c.name!r}: {exc}") from None
    return notes


def apply_candidates(
    budget: Budget, candidates: Sequence[UpgradeCandidate], names: Iterable[str]
) -> Budget:
    """The budget after applying the named candidates (same combination rule as the planner).

    When several candidates in the set change the same input, the change giving the smallest
    standard uncertainty (compared in SI) wins; ties go to the candidate listed first.
    """
    wanted = set(names)
    by_name = {c.name: c for c in candidates}
    for n in wanted:
        if n not in by_name:
            raise InputError(f"no candidate named {n!r} (candidates: {', '.join(by_name)})")
    best: dict[str, tuple[float, Change]] = {}
    for c in candidates:
        if c.name not in wanted:
            continue
        for key, change in c.changes.items():
            unit = change.unit if isinstance(change, InputQuantity) else budget.input(key).unit
            u_si = c.new_uncertainty(key) * _units.si_conversion(unit)[0]
            if key not in best or u_si < best[key][0]:
                best[key] = (u_si, change)
    out = budget
    for key, (_u, change) in best.items():
        if isinstance(change, InputQuantity):
            out = out.with_input(change)
        else:
            out = out.with_uncertainty(key, change)
    return out


def _per_input(candidates: Sequence[UpgradeCandidate], budget: Budget) -> list[np.ndarray]:
    """Per input: rows (candidate index, u_SI, x_SI, dof) of each candidate touching it."""
    x0, _u, _nu, _c = budget.si_arrays()
    index = {n: i for i, n in enumerate(budget.input_names)}
    rows: list[list[tuple[float, float, float, float]]] = [[] for _ in budget.inputs]
    for j, c in enumerate(candidates):
        for key, change in c.changes.items():
            i = index[key]
            if isinstance(change, InputQuantity):
                s, o = _units.si_conversion(change.unit)
                rows[i].append(
                    (j, change.standard_uncertainty * s, change.value * s + o, change.dof)
                )
            else:
                s = budget.input_scales[i]
                rows[i].append((j, float(change) * s, x0[i], budget.inputs[i].dof))
    return [np.array(r, dtype=float).reshape(-1, 4) for r in rows]


def _evaluate(
    budget: Budget,
    candidates: Sequence[UpgradeCandidate],
    masks: np.ndarray,
    target: float | None,
    u_base: float,
    notes: list[str] | None = None,
    known: tuple[str, ...] = (),
) -> Any:
    """Evaluate many candidate sets (boolean masks, shape (S, n)) in one vectorised pass:
    their columns (see :mod:`viscometry.planning.options`).

    Every set is checked as a budget with its estimates and uncertainties would be (the
    built-in model's refusals and validity checks, numbers a float cannot hold, the
    plausibility rules); warnings not already in ``known`` are added to ``notes``.
    """
    x0, u0, nu0, const = budget.si_arrays()
    n_sets = masks.shape[0]
    x, u, nu = (np.repeat(a[:, None], n_sets, axis=1) for a in (x0, u0, nu0))
    for i, opts in enumerate(_per_input(candidates, budget)):
        if not len(opts):
            continue
        included = masks[:, opts[:, 0].astype(int)]  # (S, m)
        win = np.argmin(np.where(included, opts[None, :, 1], np.inf), axis=1)  # ties: first
        on = included.any(axis=1)
        u[i], x[i], nu[i] = (
            np.where(on, opts[win, col], base[i]) for col, base in ((1, u0), (2, x0), (3, nu0))
        )

    def label(j: int) -> str:
        chosen = [repr(c.name) for c, m in zip(candidates, masks[j], strict=True) if m]
        if not chosen:
            return "for the baseline"
        return f"with candidate{'s' if len(chosen) > 1 else ''} {' + '.join(chosen)}"

    found = list(check_points(budget, x, u, label, noun="sets"))
    comp = budget.compiled
    if np.any(x != x0[:, None]):  # estimates differ between sets: value and gradient per set
        y = np.broadcast_to(comp.value(*x, *const), (n_sets,))
        grad = comp.gradient(*x, *const)
        bad = ~np.isfinite(grad).all(axis=0) | ~np.isfinite(y)
        if np.any(bad):
            s = int(np.argmax(bad))
            names = [c.name for c, m in zip(candidates, masks[s], strict=True) if m]
            raise InputError(f"the model is not finite after applying {names}")
    else:  # sensitivities are those of the baseline (JCGM 100:2008, 5.1.3)
        y = np.full(n_sets, float(comp.value(*x0, *const)))
        grad = np.repeat(comp.gradient(*x0, *const)[:, None], n_sets, axis=1)
    prop, lost = propagate_points(budget, x, u, nu, y, grad, label)
    found += lost
    out_s = budget.output_scale
    found += point_plausibility(
        budget, x, u, (y - budget.output_offset) / out_s, prop.expanded_uncertainty / out_s,
        label, noun="sets", known=known,
    )  # fmt: skip
    if notes is not None:
        notes += [n for n in found if n not in notes]
    return _sets(budget, candidates, masks, prop, y, target, u_base)


def _sets(budget, candidates, masks, prop, y_si, target, u_base):  # type: ignore[no-untyped-def]
    """The columns of the evaluated sets (measurand numbers in ``budget.unit``)."""
    out_s, out_o = budget.output_scale, budget.output_offset
    cost = masks.astype(float) @ np.array([c.cost for c in candidates])
    big_u = prop.expanded_uncertainty / out_s
    reduction = u_base - big_u
    with np.errstate(divide="ignore", invalid="ignore"):
        per_cost = np.where(
            cost > 0, reduction / np.where(cost > 0, cost, 1.0), np.sign(reduction) * np.inf
        )
    per_cost = np.where((cost == 0) & (reduction == 0), 0.0, per_cost)
    numbers = {
        "cost": cost, "value": (y_si - out_o) / out_s,
        "standard_uncertainty": prop.standard_uncertainty / out_s,
        "effective_dof": prop.effective_dof, "coverage_factor": prop.coverage_factor,
        "expanded_uncertainty": big_u, "reduction": reduction, "reduction_per_cost": per_cost,
    }  # fmt: skip
    dominant = np.argmax(prop.variance_shares, axis=0)
    return evaluated_sets(
        [c.name for c in candidates], masks, numbers, dominant, budget.input_names, target
    )


def _check_search(candidates: Sequence[UpgradeCandidate], max_exhaustive: int) -> None:
    if not candidates:
        raise InputError("evaluate_upgrades needs at least one upgrade candidate")
    if len(candidates) > MAX_CANDIDATES:
        raise InputError(f"at most {MAX_CANDIDATES} upgrade candidates, got {len(candidates)}")
    if (
        isinstance(max_exhaustive, bool)
        or not isinstance(max_exhaustive, int)
        or max_exhaustive < 0
    ):
        raise InputError(f"max_exhaustive must be a non-negative integer, got {max_exhaustive!r}")
    if max_exhaustive > MAX_EXHAUSTIVE:
        raise InputError(
            f"max_exhaustive must be at most {MAX_EXHAUSTIVE} (2**{MAX_EXHAUSTIVE} sets; each "
            f"further candidate doubles time and memory), got {max_exhaustive}"
        )


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
        Target expanded uncertainty U in the measurand unit, > 0. [measurand unit]
    max_exhaustive : int
        Up to this many candidates every subset (2ⁿ, 4096 for 12) is evaluated; above it the
        greedy search of the Notes is used.

    Returns
    -------
    UpgradePlan

    Raises
    ------
    InputError
        Duplicate or unknown names, a replacement the budget refuses (a radius of zero...), a
        non-positive target, an empty candidate list.

    Notes
    -----
    For each set the standard uncertainties (and, for replacements, estimates and dofs) are
    changed and u_c² = Σᵢⱼ cᵢcⱼu(xᵢ)u(xⱼ)r(xᵢ,xⱼ) (JCGM 100:2008, eq. 16), ν_eff
    (eq. G.2b), k = t_p(ν_eff truncated, G.6.4) or the fixed k, and U = k u_c are computed
    for all sets at once by the propagation kernel.

    *Combination rule*: when several candidates in a set change the same input, the change
    with the smallest standard uncertainty (compared in SI) is applied — one would use the
    better of two instruments — and ties go to the candidate listed first.

    *Greedy search* (more than ``max_exhaustive`` candidates): from the baseline, add at each
    step the remaining candidate with the largest reduction of U per unit cost (a free
    candidate that reduces U counts as infinitely good; ties: the larger reduction); stop when
    none reduces U. Every set tried is kept; the cheapest set reaching a target is searched
    among them and may not be the true optimum.

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
    _check_search(candidates, max_exhaustive)
    notes = _check_candidates(candidates, budget)
    if target is not None:
        target = _positive_target(target)
    baseline = budget.evaluate()
    n = len(candidates)
    path: tuple[UpgradeOption, ...] = ()
    known = baseline.warnings + tuple(notes)
    if n <= max_exhaustive:
        search: Search = "exhaustive"
        idx = np.arange(2**n)
        masks = ((idx[:, None] >> np.arange(n)[None, :]) & 1).astype(bool)
        sets = _evaluate(
            budget, candidates, masks, target, baseline.expanded_uncertainty, notes, known
        )
    else:
        search = "greedy"
        sets, path = _greedy(
            budget, candidates, target, baseline.expanded_uncertainty, notes, known
        )
    plan = UpgradePlan(baseline, candidates, UpgradeOptions(sets), search, target, None, path,
                       baseline.warnings + tuple(notes))  # fmt: skip
    return plan.with_target(target)


def _greedy(
    budget: Budget,
    candidates: Sequence[UpgradeCandidate],
    target: float | None,
    u_base: float,
    notes: list[str],
    known: tuple[str, ...],
) -> tuple[Any, tuple[UpgradeOption, ...]]:
    """The sets the greedy search tries (columns, each set once, in the order first tried)
    and the rows of the sets it chooses, step by step."""
    n = len(candidates)
    costs = np.array([c.cost for c in candidates])
    current = np.zeros(n, dtype=bool)
    start = _evaluate(budget, candidates, current[None, :], target, u_base, notes, known)
    parts = [(start, np.zeros(1, dtype=np.int64))]
    seen = {current.tobytes()}
    current_u = float(start.numbers["expanded_uncertainty"][0])
    path: list[UpgradeOption] = []
    while not current.all():
        remaining = np.flatnonzero(~current)
        masks = np.repeat(current[None, :], len(remaining), axis=0)
        masks[np.arange(len(remaining)), remaining] = True
        step = _evaluate(budget, candidates, masks, target, u_base, notes, known)
        new = [k for k, m in enumerate(masks) if m.tobytes() not in seen]
        seen.update(masks[k].tobytes() for k in new)
        parts.append((step, np.array(new, dtype=np.int64)))
        big_u = step.numbers["expanded_uncertainty"]
        gain = current_u - big_u
        if not np.any(gain > 0):
            break
        c = costs[remaining]
        with np.errstate(divide="ignore", invalid="ignore"):
            per_cost = np.where(c > 0, gain / np.where(c > 0, c, 1.0), np.inf)
        per_cost = np.where(gain > 0, per_cost, -np.inf)
        pick = int(np.lexsort((-gain, -per_cost))[0])  # primary: per cost; ties: larger gain
        current = masks[pick].copy()
        current_u = float(big_u[pick])
        path.append(step.row(pick))
    return concatenated(parts), tuple(path)
