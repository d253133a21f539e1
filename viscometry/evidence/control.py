"""Control chart of a check standard: Shewhart limits, run rules, within-lab reproducibility.

A laboratory measures a check standard (a stable oil) in routine conditions, once per day or
per batch, and keeps the values (:class:`ControlRecord`). :func:`control_chart` draws the
Shewhart chart of individual values:

* centre line x̄ (the mean of the values, or a fixed value given, e.g. from an earlier
  period), σ the sample standard deviation s (n − 1 in the denominator) unless given;
* warning limits x̄ ± 2σ and action limits x̄ ± 3σ (ISO 7870-2:2013, from memory; the
  Nordtest internal-quality-control handbook TR 569 draws the same two pairs of lines, from
  memory);
* the eight tests for special causes (run rules) of ISO 7870-2:2013, Annex B (the Nelson
  tests; numbering and counts from memory), in zones of σ around the centre line:

  ====  ===========================================================================
  rule  signal at a point when
  ====  ===========================================================================
  1     the point lies beyond 3σ
  2     9 points in a row lie on the same side of the centre line
  3     6 points in a row steadily increase or steadily decrease
  4     14 points in a row alternate up and down
  5     2 of 3 points in a row lie beyond 2σ on the same side (this point among them)
  6     4 of 5 points in a row lie beyond 1σ on the same side (this point among them)
  7     15 points in a row lie within 1σ (both sides)
  8     8 points in a row lie beyond 1σ (either side)
  ====  ===========================================================================

The within-lab reproducibility s_Rw is the sample standard deviation of the values over the
period (Nordtest TR 537, 4th ed. 2017, section on u(Rw) from a control sample, from memory):
the check standard sees the day-to-day changes of operator, bath, timing and cleaning that
routine samples see. Relative values (s_Rw / x̄) carry it to samples of another viscosity.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from viscometry._checks import finite, positive
from viscometry.errors import InputError

__all__ = [
    "ACTION_SIGMA",
    "MAX_CONTROL_POINTS",
    "RULES",
    "WARNING_SIGMA",
    "ControlChart",
    "ControlPoint",
    "ControlRecord",
    "RuleViolation",
    "control_chart",
    "run_rule_violations",
]

#: Most values a control record may hold.
MAX_CONTROL_POINTS = 10_000
#: Warning limits at centre ± this many σ.
WARNING_SIGMA = 2.0
#: Action limits at centre ± this many σ.
ACTION_SIGMA = 3.0
#: The run rules (ISO 7870-2:2013, Annex B, from memory), by number.
RULES = (1, 2, 3, 4, 5, 6, 7, 8)


@dataclass(frozen=True)
class ControlPoint:
    """One value of the check standard (immutable).

    Attributes
    ----------
    date : datetime.date
    value : float
        The result, in the record's unit.
    note : str
        Operator, batch or remark.
    """

    date: _dt.date
    value: float
    note: str = ""

    def __post_init__(self) -> None:
        if not isinstance(self.date, _dt.date) or isinstance(self.date, _dt.datetime):
            raise InputError(f"date must be a datetime.date, got {self.date!r}")
        object.__setattr__(self, "value", positive(self.value, "value"))
        if not isinstance(self.note, str):
            raise InputError(f"note must be text, got {self.note!r}")


@dataclass(frozen=True)
class ControlRecord:
    """The check standard's values, oldest first (immutable).

    Raises
    ------
    InputError
        Fewer than two values, more than :data:`MAX_CONTROL_POINTS`, or a date before the one
        above it (the message names the position, from 1).
    """

    check_standard: str
    unit: str
    points: tuple[ControlPoint, ...]

    def __post_init__(self) -> None:
        points = tuple(self.points)
        if len(points) < 2:
            raise InputError(f"a control record needs at least two values, got {len(points)}")
        if len(points) > MAX_CONTROL_POINTS:
            raise InputError(f"a control record holds at most {MAX_CONTROL_POINTS} values")
        for i, p in enumerate(points):
            if not isinstance(p, ControlPoint):
                raise InputError(f"points[{i}] must be a ControlPoint, got {p!r}")
            if i and p.date < points[i - 1].date:
                raise InputError(
                    f"value {i + 1}: date {p.date} is before {points[i - 1].date}; sort by date"
                )
        object.__setattr__(self, "points", points)

    @property
    def values(self) -> np.ndarray:
        """The values as a read-only array."""
        out = np.array([p.value for p in self.points], dtype=float)
        out.setflags(write=False)
        return out


@dataclass(frozen=True)
class RuleViolation:
    """A run rule's signal (immutable).

    Attributes
    ----------
    rule : int
        1 … 8 (see the module notes).
    index : int
        The point (from 0) at which the rule signals: the last point of the run.
    points : tuple of int
        The points of the run (from 0).
    """

    rule: int
    index: int
    points: tuple[int, ...]


@dataclass(frozen=True, eq=False)
class ControlChart:
    """A Shewhart chart of individual values with its signals (immutable).

    Attributes
    ----------
    record : ControlRecord
    centre : float
        Centre line, in the record's unit.
    sigma : float
        σ of the chart, in the record's unit.
    centre_given, sigma_given : bool
        Whether the centre line and σ were fixed by the user (else from the values).
    violations : tuple of RuleViolation
        Every signal, in the order of the points.
    """

    record: ControlRecord
    centre: float
    sigma: float
    centre_given: bool
    sigma_given: bool
    violations: tuple[RuleViolation, ...]

    @property
    def count(self) -> int:
        """n, the number of values."""
        return len(self.record.points)

    @property
    def mean(self) -> float:
        """x̄, the mean of the values."""
        return float(np.mean(self.record.values))

    @property
    def reproducibility_sd(self) -> float:
        """s_Rw: the sample standard deviation of the values (n − 1), in the record's unit."""
        return float(np.std(self.record.values, ddof=1))

    @property
    def relative_reproducibility_sd(self) -> float:
        """s_Rw / x̄ [1]."""
        return self.reproducibility_sd / self.mean

    @property
    def degrees_of_freedom(self) -> int:
        """ν = n − 1 of s_Rw."""
        return self.count - 1

    @property
    def warning_limits(self) -> tuple[float, float]:
        """centre ∓ 2σ."""
        return (self.centre - WARNING_SIGMA * self.sigma, self.centre + WARNING_SIGMA * self.sigma)

    @property
    def action_limits(self) -> tuple[float, float]:
        """centre ∓ 3σ."""
        return (self.centre - ACTION_SIGMA * self.sigma, self.centre + ACTION_SIGMA * self.sigma)

    @property
    def in_control(self) -> bool:
        """True when no run rule signals."""
        return not self.violations

    def rules_violated(self) -> tuple[int, ...]:
        """The rules that signal at least once, sorted."""
        return tuple(sorted({v.rule for v in self.violations}))


def control_chart(
    record: ControlRecord,
    *,
    centre: float | None = None,
    sigma: float | None = None,
    rules: Sequence[int] = RULES,
) -> ControlChart:
    """The Shewhart chart of individual values of a check standard (module notes).

    Parameters
    ----------
    record : ControlRecord
    centre : float, optional
        A fixed centre line (e.g. from an earlier period); default the mean of the values.
    sigma : float, optional
        A fixed σ; default the sample standard deviation of the values.
    rules : sequence of int, optional
        The run rules to apply (default all eight).

    Returns
    -------
    ControlChart

    Raises
    ------
    InputError
        All values equal (σ = 0) with no σ given, or an unknown rule.

    References
    ----------
    ISO 7870-2:2013, Shewhart control charts, limits and Annex B tests (from memory).

    Examples
    --------
    >>> import datetime as dt
    >>> pts = [ControlPoint(dt.date(2025, 1, 1 + i), v) for i, v in enumerate([10.0, 10.2, 9.8])]
    >>> chart = control_chart(ControlRecord("oil", "mm^2/s", tuple(pts)))
    >>> round(chart.centre, 6), round(chart.sigma, 6), chart.action_limits[1].__round__(6)
    (10.0, 0.2, 10.6)
    """
    if not isinstance(record, ControlRecord):
        raise InputError(f"record must be a ControlRecord, got {record!r}")
    x = record.values
    c = float(np.mean(x)) if centre is None else finite(centre, "centre")
    if sigma is None:
        s = float(np.std(x, ddof=1))
        if not s > 0:
            raise InputError("the control values are all equal: σ = 0; give sigma")
    else:
        s = positive(sigma, "sigma")
    unknown = [r for r in rules if r not in RULES]
    if unknown:
        raise InputError(f"rules must be among 1 … 8, got {unknown[0]!r}")
    found = run_rule_violations(x, c, s, rules)
    return ControlChart(record, c, s, centre is not None, sigma is not None, found)


def run_rule_violations(
    values: Sequence[float] | np.ndarray, centre: float, sigma: float, rules: Sequence[int] = RULES
) -> tuple[RuleViolation, ...]:
    """The run rules' signals for values around ``centre`` with ``sigma`` (module table).

    Each signal is reported at the last point of its run; a rule signals again at each later
    point for which its condition still holds.

    Examples
    --------
    >>> [(v.rule, v.index) for v in run_rule_violations([0, 0.5, 3.5, 0], 0.0, 1.0)]
    [(1, 2)]
    """
    z = (np.asarray(values, dtype=float) - centre) / sigma
    out: list[RuleViolation] = []
    for i in range(len(z)):
        for rule in rules:
            run = _RULE_TESTS[rule](z, i)
            if run is not None:
                out.append(RuleViolation(rule, i, run))
    return tuple(out)


def _window(z: np.ndarray, i: int, length: int) -> np.ndarray | None:
    return z[i - length + 1 : i + 1] if i + 1 >= length else None


def _span(i: int, length: int) -> tuple[int, ...]:
    return tuple(range(i - length + 1, i + 1))


def _rule1(z: np.ndarray, i: int) -> tuple[int, ...] | None:
    return (i,) if abs(z[i]) > ACTION_SIGMA else None


def _rule2(z: np.ndarray, i: int) -> tuple[int, ...] | None:
    w = _window(z, i, 9)
    return _span(i, 9) if w is not None and (np.all(w > 0) or np.all(w < 0)) else None


def _rule3(z: np.ndarray, i: int) -> tuple[int, ...] | None:
    w = _window(z, i, 6)
    if w is None:
        return None
    d = np.diff(w)
    return _span(i, 6) if np.all(d > 0) or np.all(d < 0) else None


def _rule4(z: np.ndarray, i: int) -> tuple[int, ...] | None:
    w = _window(z, i, 14)
    if w is None:
        return None
    d = np.sign(np.diff(w))
    alternate = np.all(d != 0) and np.all(d[1:] == -d[:-1])
    return _span(i, 14) if alternate else None


def _k_of_m(z: np.ndarray, i: int, k: int, m: int, bound: float) -> tuple[int, ...] | None:
    w = _window(z, i, m)
    if w is None:
        return None
    for side in (1.0, -1.0):
        beyond = side * w > bound
        if beyond[-1] and int(np.sum(beyond)) >= k:
            return tuple(j for j, b in zip(_span(i, m), beyond, strict=True) if b)
    return None


def _rule5(z: np.ndarray, i: int) -> tuple[int, ...] | None:
    return _k_of_m(z, i, 2, 3, WARNING_SIGMA)


def _rule6(z: np.ndarray, i: int) -> tuple[int, ...] | None:
    return _k_of_m(z, i, 4, 5, 1.0)


def _rule7(z: np.ndarray, i: int) -> tuple[int, ...] | None:
    w = _window(z, i, 15)
    return _span(i, 15) if w is not None and np.all(np.abs(w) < 1.0) else None


def _rule8(z: np.ndarray, i: int) -> tuple[int, ...] | None:
    w = _window(z, i, 8)
    return _span(i, 8) if w is not None and np.all(np.abs(w) > 1.0) else None


_RULE_TESTS = {1: _rule1, 2: _rule2, 3: _rule3, 4: _rule4, 5: _rule5, 6: _rule6, 7: _rule7,
               8: _rule8}  # fmt: skip
