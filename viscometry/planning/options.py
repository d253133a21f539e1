"""The evaluated sets of an upgrade plan, kept as arrays; a row object only when one is asked for.

Core layer, used by :mod:`viscometry.planning.upgrades`. An exhaustive plan of 12 candidates
evaluates 4096 sets at once (one call of the propagation kernel); a person looks at a few
dozen of them (the candidates alone, the cost–U frontier, the cheapest set reaching a
target, the top of a ranking). :class:`UpgradeOptions` therefore holds the numbers of every
set as columns — costs, U, u_c, ν_eff, k, the candidate masks — and is a read-only sequence
of :class:`UpgradeOption` whose rows are built on first access and then kept, so the same
set is the same object however it is reached. Rankings, the frontier and the cheapest set
are found on the columns (:func:`frontier_indices`, :func:`cheapest_index`) by the very
comparisons a Python loop over the rows would make, so they give the same rows in the same
order.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass, replace
from typing import overload

import numpy as np

from viscometry.errors import InputError

__all__ = [
    "TARGET_TOLERANCE",
    "UpgradeOption",
    "UpgradeOptions",
    "cheapest_index",
    "frontier_indices",
]

#: Relative allowance when comparing U with a target (round-off only): U ≤ target·(1 + tol).
TARGET_TOLERANCE = 1e-12


@dataclass(frozen=True)
class UpgradeOption:
    """One set of candidates applied together, evaluated (measurand numbers in budget.unit).

    Attributes
    ----------
    candidates : tuple of str
        Names of the candidates in the set, in the order given (``()`` is the baseline).
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

    def reaches(self, target: float | None) -> bool | None:
        """U ≤ target·(1 + :data:`TARGET_TOLERANCE`), or None without a target."""
        return (
            None if target is None else self.expanded_uncertainty <= target * (1 + TARGET_TOLERANCE)
        )


#: The number columns of a table, named like the fields of :class:`UpgradeOption`.
_NUMBERS = (
    "cost", "value", "standard_uncertainty", "effective_dof", "coverage_factor",
    "expanded_uncertainty", "reduction", "reduction_per_cost",
)  # fmt: skip


@dataclass(frozen=True, eq=False)
class _Sets:
    """Columns of evaluated sets: one entry per set (internal; read-only arrays).

    ``masks[s, j]`` says whether candidate ``names[j]`` is in set s; ``dominant`` indexes
    ``labels``; ``reaches`` is 1, 0 or −1 for True, False or None; ``given`` holds the
    candidate tuples of rows that were given as objects (None: from the masks).
    """

    names: tuple[str, ...]
    masks: np.ndarray
    numbers: dict[str, np.ndarray]
    dominant: np.ndarray
    labels: tuple[str, ...]
    reaches: np.ndarray
    given: tuple[tuple[str, ...], ...] | None = None

    @property
    def size(self) -> int:
        return int(self.masks.shape[0])

    @functools.cached_property
    def counts(self) -> np.ndarray:
        """Number of candidates per set."""
        return self.masks.sum(axis=1)

    def candidates(self, s: int) -> tuple[str, ...]:
        """The names of the candidates in set ``s``, in candidate order."""
        if self.given is not None:
            return self.given[s]
        return tuple(nm for nm, m in zip(self.names, self.masks[s].tolist(), strict=True) if m)

    def row(self, s: int) -> UpgradeOption:
        """A new :class:`UpgradeOption` for set ``s``."""
        col = self.numbers
        flag = int(self.reaches[s])
        return UpgradeOption(
            self.candidates(s), *(col[k][s].item() for k in _NUMBERS),
            dominant=self.labels[int(self.dominant[s])],
            reaches_target=None if flag < 0 else bool(flag),
        )  # fmt: skip

    def judged(self, target: float | None) -> _Sets:
        """The same sets with ``reaches`` for another target (U ≤ target·(1 + tol))."""
        if target is None:
            flags = np.full(self.size, -1, dtype=np.int8)
        else:
            big_u = self.numbers["expanded_uncertainty"]
            flags = (big_u <= target * (1 + TARGET_TOLERANCE)).astype(np.int8)
        out = replace(self, reaches=flags)
        for key in ("counts",):  # it does not depend on the target
            if key in self.__dict__:
                out.__dict__[key] = self.__dict__[key]
        return out

    def find(self, mask: np.ndarray) -> np.ndarray:
        """Indices of the sets with exactly these candidates."""
        return np.flatnonzero((self.masks == mask[None, :]).all(axis=1))


def evaluated_sets(
    names: Sequence[str],
    masks: np.ndarray,
    numbers: dict[str, np.ndarray],
    dominant: np.ndarray,
    labels: tuple[str, ...],
    target: float | None,
) -> _Sets:
    """Columns of sets evaluated by the planner (``numbers`` keyed like :data:`_NUMBERS`)."""
    cols = {k: _frozen(np.asarray(numbers[k], dtype=float)) for k in _NUMBERS}
    sets = _Sets(tuple(names), _frozen(np.asarray(masks, dtype=bool)), cols,
                 _frozen(np.asarray(dominant, dtype=np.int64)), labels,
                 np.full(masks.shape[0], -1, dtype=np.int8))  # fmt: skip
    return sets.judged(target)


def concatenated(parts: Sequence[tuple[_Sets, np.ndarray]]) -> _Sets:
    """The chosen sets (indices) of several tables of evaluated sets, in this order (the
    tables share their candidates and labels, as the steps of one greedy search do)."""
    first = parts[0][0]
    pick = [(t, np.asarray(i, dtype=np.int64)) for t, i in parts]
    return _Sets(
        first.names,
        _frozen(np.concatenate([t.masks[i] for t, i in pick])),
        {k: _frozen(np.concatenate([t.numbers[k][i] for t, i in pick])) for k in _NUMBERS},
        _frozen(np.concatenate([t.dominant[i] for t, i in pick])),
        first.labels,
        np.concatenate([t.reaches[i] for t, i in pick]),
    )


def _frozen(a: np.ndarray) -> np.ndarray:
    a.setflags(write=False)
    return a


class UpgradeOptions(Sequence[UpgradeOption]):
    """The evaluated sets of a plan: a read-only sequence of :class:`UpgradeOption`.

    It behaves like the tuple it stands for (length, indexing and slicing, iteration,
    ``in``, ``==`` with a tuple, ``+`` with a tuple) but keeps the numbers as arrays; a row
    is built when it is first read and then kept. Built by the planner; a tuple of options
    given to :class:`~viscometry.planning.UpgradePlan` is turned into one.
    """

    __slots__ = ("_sets", "_order", "_rows")

    def __init__(
        self,
        sets: _Sets,
        order: np.ndarray | None = None,
        rows: dict[int, UpgradeOption] | None = None,
    ) -> None:
        self._sets = sets
        self._order = None if order is None else np.asarray(order, dtype=np.int64)
        self._rows = {} if rows is None else rows

    # ------------------------------------------------------------------ constructors
    @classmethod
    def from_rows(cls, rows: Iterable[UpgradeOption], names: Sequence[str]) -> UpgradeOptions:
        """The options given as objects (kept as they are), for candidates ``names``.

        Raises
        ------
        InputError
            A row that is not an :class:`UpgradeOption`, or whose candidates are not
            distinct names of ``names``.
        """
        given = tuple(rows)
        index = {n: j for j, n in enumerate(names)}
        masks = np.zeros((len(given), len(names)), dtype=bool)
        for s, o in enumerate(given):
            if not isinstance(o, UpgradeOption):
                raise InputError(f"plan options must be UpgradeOption objects, got {o!r}")
            for n in o.candidates:
                if n not in index or masks[s, index[n]]:
                    raise InputError(
                        f"plan option {o.label!r}: {n!r} is not one of the plan's candidates "
                        "or is named twice"
                    )
                masks[s, index[n]] = True
        labels = tuple(dict.fromkeys(o.dominant for o in given))
        at = {d: i for i, d in enumerate(labels)}
        numbers = {k: np.array([getattr(o, k) for o in given], dtype=float) for k in _NUMBERS}
        flags = np.array(
            [-1 if o.reaches_target is None else int(bool(o.reaches_target)) for o in given],
            dtype=np.int8,
        )
        sets = _Sets(tuple(names), _frozen(masks), {k: _frozen(v) for k, v in numbers.items()},
                     _frozen(np.array([at[o.dominant] for o in given], dtype=np.int64)), labels,
                     flags, tuple(o.candidates for o in given))  # fmt: skip
        return cls(sets, rows=dict(enumerate(given)))

    # ------------------------------------------------------------------ columns
    @property
    def indices(self) -> np.ndarray:
        """Positions of these options in the table they were taken from."""
        if self._order is None:
            return np.arange(self._sets.size)
        return self._order

    def column(self, name: str) -> np.ndarray:
        """One column in the order of this sequence: a field of :class:`UpgradeOption`
        (``"cost"``, ``"expanded_uncertainty"``...), ``"count"`` (candidates per set) or
        ``"masks"`` (sets × candidates, bool)."""
        sets = self._sets
        full = {"count": sets.counts, "masks": sets.masks}.get(name)
        if full is None:
            full = sets.numbers[name]
        return full if self._order is None else full[self._order]

    def taken(self, order: Sequence[int] | np.ndarray) -> UpgradeOptions:
        """The options at these positions of this sequence (sharing the rows built)."""
        return UpgradeOptions(self._sets, self.indices[np.asarray(order, dtype=np.int64)],
                              self._rows)  # fmt: skip

    def judged(self, target: float | None) -> UpgradeOptions:
        """The same options with ``reaches_target`` for another target (new rows)."""
        return UpgradeOptions(self._sets.judged(target), self._order)

    def lookup(self, wanted: Iterable[str]) -> UpgradeOption | None:
        """The first option whose candidates are exactly the names ``wanted``; else None."""
        sets = self._sets
        names = set(wanted)
        if not names <= set(sets.names):
            return None
        mask = np.array([n in names for n in sets.names], dtype=bool)
        at = sets.find(mask)
        if self._order is not None:
            at = np.flatnonzero(np.isin(self._order, at))
            return self[int(at[0])] if at.size else None
        return self._row(int(at[0])) if at.size else None

    def _row(self, s: int) -> UpgradeOption:
        o = self._rows.get(s)
        if o is None:
            o = self._rows[s] = self._sets.row(s)
        return o

    # ------------------------------------------------------------------ sequence
    def __len__(self) -> int:
        return self._sets.size if self._order is None else len(self._order)

    @overload
    def __getitem__(self, i: int) -> UpgradeOption: ...

    @overload
    def __getitem__(self, i: slice) -> tuple[UpgradeOption, ...]: ...

    def __getitem__(self, i: int | slice) -> UpgradeOption | tuple[UpgradeOption, ...]:
        positions = self.indices
        if isinstance(i, slice):
            return tuple(self._row(s) for s in positions[i].tolist())
        return self._row(int(positions[i]))

    def __iter__(self) -> Iterator[UpgradeOption]:
        for s in self.indices.tolist():
            yield self._row(s)

    def __contains__(self, item: object) -> bool:
        if not isinstance(item, UpgradeOption):
            return False
        return any(o == item for o in self._same_sets(item.candidates))

    def _same_sets(self, names: tuple[str, ...]) -> Iterator[UpgradeOption]:
        sets = self._sets
        if not set(names) <= set(sets.names):
            return
        mask = np.array([n in names for n in sets.names], dtype=bool)
        found = set(sets.find(mask).tolist())
        for k, s in enumerate(self.indices.tolist()):
            if s in found:
                yield self[k]

    def __eq__(self, other: object) -> bool:
        if isinstance(other, UpgradeOptions | tuple):
            return len(self) == len(other) and tuple(self) == tuple(other)
        return NotImplemented

    def __hash__(self) -> int:
        return hash(tuple(self))

    def __add__(self, other: object) -> UpgradeOptions:
        if not isinstance(other, UpgradeOptions | tuple):
            return NotImplemented
        return UpgradeOptions.from_rows((*self, *other), self._sets.names)

    def __radd__(self, other: object) -> UpgradeOptions:
        if not isinstance(other, tuple):
            return NotImplemented
        return UpgradeOptions.from_rows((*other, *self), self._sets.names)

    def __repr__(self) -> str:
        return repr(tuple(self))


def frontier_indices(cost: np.ndarray, expanded: np.ndarray, count: np.ndarray) -> list[int]:
    """Positions on the cost–U frontier, by cost (see :func:`viscometry.planning.frontier`).

    The rule of the frontier: order the sets by (cost, U, number of candidates), ties kept
    in their order (a stable sort, as Python's ``sorted``), and keep a set when its U lies
    below that of the last kept one by more than :data:`TARGET_TOLERANCE`. Every set before
    a kept one has a U at least that of the last kept one less the tolerance, so a kept set
    has a U below that of every set before it, and in particular of every cheaper set:
    the rule is applied, in a loop, only to the few sets that pass this test on the columns.
    """
    cost = np.asarray(cost, dtype=float)
    u = np.asarray(expanded, dtype=float)
    if not u.size:
        return []
    by_cost = np.argsort(cost, kind="stable")
    c, us = cost[by_cost], u[by_cost]
    start = np.concatenate(([True], c[1:] != c[:-1]))  # first set of each cost
    group = np.maximum.accumulate(np.where(start, np.arange(c.size), 0))
    cheaper = np.concatenate(([np.inf], np.minimum.accumulate(us)))[group]  # min U of cheaper sets
    maybe = np.sort(by_cost[us < cheaper])
    keys = {int(i): (float(cost[i]), float(u[i]), int(count[i])) for i in maybe}
    best: list[int] = []
    last = math.inf
    for i in sorted(keys, key=keys.__getitem__):
        if not best or keys[i][1] < last * (1 - TARGET_TOLERANCE):
            best.append(i)
            last = keys[i][1]
    return best


def cheapest_index(
    cost: np.ndarray, reduction: np.ndarray, count: np.ndarray, reaching: np.ndarray
) -> int | None:
    """Position of the cheapest set among ``reaching`` ones (ties: the larger reduction, then
    fewer candidates, then the first); None when none reaches."""
    at = np.flatnonzero(reaching)
    for key in (np.asarray(cost, dtype=float), -np.asarray(reduction, dtype=float), count):
        if at.size < 2:
            break
        values = key[at]
        at = at[values == values.min()]
    return int(at[0]) if at.size else None
