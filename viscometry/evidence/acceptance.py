"""Acceptance of flow timings and of duplicate determinations (ISO 5725-6 style checks).

Three questions a laboratory asks before it reports a kinematic viscosity:

* do the **flow times of one determination** agree (the range of the timings against a limit)?
* do **duplicate determinations** agree (the difference against the determinability or the
  repeatability limit r), and if not, what next (ISO 5725-6:1994, 5.2.2)?
* do two **laboratories' results** agree (the difference against the reproducibility limit R)?

Limits for two results are ``r = 2.8 s_r`` and ``R = 2.8 s_R`` (ISO 5725-6:1994, 4.1.4, from
memory; 2.8 ≈ 1.96·√2, the 95 % quantile of the difference of two normal results rounded as
the standard prints it). For n > 2 results the critical range is ``f(n) σ`` with the factors
:data:`CRITICAL_RANGE_FACTORS` (ISO 5725-6:1994, Table 1, from memory; they are the 95 %
quantiles of the studentized range with infinite degrees of freedom, rounded to one decimal).

A verdict says what to do — ``"accept"``, ``"repeat"`` or ``"investigate"`` — never a bare
pass/fail. The limit table :data:`LIMITS` is data: each built-in limit names its source, and
callers may pass their own :class:`AcceptanceLimit` (the laboratory's procedure decides which
limit applies).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any, Literal

from viscometry._checks import finite, positive
from viscometry.errors import InputError

__all__ = [
    "ACTIONS",
    "AcceptanceLimit",
    "AcceptanceVerdict",
    "CRITICAL_RANGE_FACTORS",
    "ISO_5725_FACTOR",
    "LIMITS",
    "MAX_RESULTS",
    "check_determinations",
    "check_flow_times",
    "check_laboratories",
    "critical_range_factor",
    "repeatability_limit",
    "reproducibility_limit",
]

#: r = 2.8 s_r, R = 2.8 s_R (ISO 5725-6:1994, 4.1.4, from memory; 2.8 ≈ 1.96·√2 = 2.77).
ISO_5725_FACTOR = 2.8
#: Critical-range factors f(n) for n results at 95 % (ISO 5725-6:1994, Table 1, from memory).
CRITICAL_RANGE_FACTORS: Mapping[int, float] = MappingProxyType(
    {2: 2.8, 3: 3.3, 4: 3.6, 5: 3.9, 6: 4.0, 7: 4.2, 8: 4.3, 9: 4.4, 10: 4.5}
)
#: Most results (timings or determinations) one check takes.
MAX_RESULTS = max(CRITICAL_RANGE_FACTORS)
#: What a verdict can ask for.
ACTIONS = ("accept", "repeat", "investigate")

Action = Literal["accept", "repeat", "investigate"]
Applies = Literal["flow_time", "determination", "laboratories"]


@dataclass(frozen=True)
class AcceptanceLimit:
    """A limit for the absolute difference of two results, ``a·(y + b)^p`` (immutable).

    Parameters
    ----------
    name : str
        Key of the limit (e.g. ``"d445_base_oil_determinability"``).
    applies_to : {"flow_time", "determination", "laboratories"}
        What it compares: timings of one determination, duplicate determinations of one
        laboratory, or results of two laboratories.
    coefficient : float
        a > 0 [1 when p = 1; unit of y^(1-p) otherwise].
    offset : float
        b ≥ 0, in the unit of y (0 for a purely relative limit).
    exponent : float
        p ≥ 0 [1]; p = 0 makes an absolute limit a (in the unit of y).
    description, source : str
        What the limit is for, and where it comes from (standard and clause, or "from
        memory" / "common practice, no source").

    Notes
    -----
    The limit is stated for **two** results, at their mean y; for n results it is scaled by
    f(n)/f(2) (ISO 5725-6:1994, 5.2.2, from memory).
    """

    name: str
    applies_to: Applies
    coefficient: float
    offset: float = 0.0
    exponent: float = 1.0
    description: str = ""
    source: str = ""

    def __post_init__(self) -> None:
        if self.applies_to not in ("flow_time", "determination", "laboratories"):
            raise InputError(
                f"{self.name}.applies_to must be flow_time, determination or laboratories, "
                f"got {self.applies_to!r}"
            )
        object.__setattr__(self, "coefficient", positive(self.coefficient, "coefficient"))
        object.__setattr__(self, "offset", finite(self.offset, "offset"))
        object.__setattr__(self, "exponent", positive(self.exponent, "exponent", allow_zero=True))
        if self.offset < 0:
            raise InputError(f"{self.name}.offset must be non-negative, got {self.offset!r}")

    @classmethod
    def relative(
        cls, name: str, applies_to: Applies, fraction: float, *, source: str, description: str = ""
    ) -> AcceptanceLimit:
        """A relative limit ``fraction·y`` (e.g. 0.002 for 0.2 %)."""
        return cls(name, applies_to, fraction, description=description, source=source)

    @classmethod
    def absolute(
        cls, name: str, applies_to: Applies, limit: float, *, source: str, description: str = ""
    ) -> AcceptanceLimit:
        """An absolute limit for two results, in the unit of y."""
        return cls(name, applies_to, limit, 0.0, 0.0, description=description, source=source)

    @classmethod
    def from_precision(
        cls, name: str, applies_to: Applies, standard_deviation: float, *, source: str
    ) -> AcceptanceLimit:
        """r = 2.8 s_r (or R = 2.8 s_R) from a precision standard deviation [unit of y]
        (ISO 5725-6:1994, 4.1.4, from memory)."""
        limit = repeatability_limit(standard_deviation)
        text = f"2.8 × {standard_deviation:g} (ISO 5725-6 limit from a standard deviation)"
        return cls.absolute(name, applies_to, limit, source=source, description=text)

    def for_two(self, mean: float) -> float:
        """The limit for two results with mean ``mean`` [unit of y]."""
        y = finite(mean, "mean")
        base = abs(y) + self.offset
        return self.coefficient * base**self.exponent

    def for_results(self, mean: float, n: int) -> float:
        """The critical range for ``n`` results with mean ``mean``: limit·f(n)/f(2)."""
        return self.for_two(mean) * critical_range_factor(n) / ISO_5725_FACTOR


def _limits() -> dict[str, AcceptanceLimit]:
    d445 = "ASTM D445-21, clause 17 (precision), from memory"
    rows = [
        AcceptanceLimit.relative(
            "flow_time_range", "flow_time", 0.002,
            description="range of the timings of one determination, 0.2 % of their mean",
            source="common practice, no source",
        ),
        AcceptanceLimit.relative(
            "d445_base_oil_determinability", "determination", 0.0020,
            description="two determinations, base oils at 40 °C and 100 °C", source=d445,
        ),
        AcceptanceLimit.relative(
            "d445_formulated_oil_determinability", "determination", 0.0013,
            description="two determinations, formulated oils at 40 °C and 100 °C", source=d445,
        ),
        AcceptanceLimit.relative(
            "d445_base_oil_repeatability", "determination", 0.0011,
            description="two results of one operator, base oils at 40 °C and 100 °C",
            source=d445,
        ),
        AcceptanceLimit.relative(
            "d445_base_oil_reproducibility", "laboratories", 0.0065,
            description="results of two laboratories, base oils at 40 °C and 100 °C",
            source=d445,
        ),
        AcceptanceLimit(
            "d445_residual_fuel_80_100_determinability", "determination", 0.011, offset=8.0,
            description="two determinations, residual fuel oils at 80 °C and 100 °C, "
            "0.011·(y + 8) with y in mm²/s",
            source=d445,
        ),
    ]  # fmt: skip
    return {row.name: row for row in rows}


#: Built-in limits, each with its source. A laboratory's own limits are passed directly.
LIMITS: Mapping[str, AcceptanceLimit] = MappingProxyType(_limits())


def critical_range_factor(n: int) -> float:
    """f(n), the 95 % critical-range factor for n results (ISO 5725-6:1994, Table 1).

    Examples
    --------
    >>> critical_range_factor(2), critical_range_factor(4)
    (2.8, 3.6)
    """
    if isinstance(n, bool) or not isinstance(n, int) or n not in CRITICAL_RANGE_FACTORS:
        raise InputError(f"number of results must be 2 to {MAX_RESULTS}, got {n!r}")
    return CRITICAL_RANGE_FACTORS[n]


def repeatability_limit(repeatability_sd: float, factor: float = ISO_5725_FACTOR) -> float:
    """Repeatability limit r = 2.8·s_r (ISO 5725-6:1994, 4.1.4, from memory).

    Parameters
    ----------
    repeatability_sd : float
        s_r, repeatability standard deviation [unit of the result].
    factor : float, optional
        2.8 by default (≈ 1.96·√2).

    Examples
    --------
    >>> round(repeatability_limit(0.01), 12)
    0.028
    """
    return positive(factor, "factor") * positive(repeatability_sd, "repeatability_sd")


def reproducibility_limit(reproducibility_sd: float, factor: float = ISO_5725_FACTOR) -> float:
    """Reproducibility limit R = 2.8·s_R (ISO 5725-6:1994, 4.1.4, from memory)."""
    return positive(factor, "factor") * positive(reproducibility_sd, "reproducibility_sd")


@dataclass(frozen=True)
class AcceptanceVerdict:
    """What a check found and what to do next (immutable).

    Attributes
    ----------
    check : {"flow_time", "determination", "laboratories"}
        Which check.
    action : {"accept", "repeat", "investigate"}
        What to do: accept (report ``result``), repeat (take ``more`` further results), or
        investigate (look for the cause before reporting; ``result`` is the median ISO
        5725-6 falls back on, or None).
    reason : str
        A code for why: ``"within_limit"``, ``"first_pair_outside"``, ``"outside_after_repeat"``,
        ``"outside"``.
    values : tuple of float
        The results checked [unit of y].
    spread : float
        Their range, max − min (|y₁ − y₂| for two) [unit of y].
    limit : float
        The critical range it was compared with [unit of y].
    result : float or None
        The value to report: the mean when accepted, the median after a failed repeat.
    more : int
        How many more results ``repeat`` asks for (0 otherwise).
    limit_name, limit_source : str
        The limit used and its source.
    """

    check: Applies
    action: Action
    reason: str
    values: tuple[float, ...]
    spread: float
    limit: float
    result: float | None
    more: int
    limit_name: str
    limit_source: str

    @property
    def ratio(self) -> float:
        """spread / limit [1] (≤ 1 within the limit)."""
        return self.spread / self.limit


def _values(values: Sequence[float], field: str, least: int = 2) -> tuple[float, ...]:
    try:
        items = list(values)
    except TypeError:
        raise InputError(f"{field} must be a list of numbers, got {values!r}") from None
    if not least <= len(items) <= MAX_RESULTS:
        raise InputError(f"{field} must hold {least} to {MAX_RESULTS} numbers, got {len(items)}")
    return tuple(finite(v, f"{field}[{i}]") for i, v in enumerate(items))


def _limit_for(limit: AcceptanceLimit, applies: Applies) -> AcceptanceLimit:
    if not isinstance(limit, AcceptanceLimit):
        raise InputError(f"limit must be an AcceptanceLimit, got {limit!r}")
    if limit.applies_to != applies:
        raise InputError(f"limit {limit.name!r} applies to {limit.applies_to}, not to {applies}")
    return limit


def _median(values: Sequence[float]) -> float:
    s = sorted(values)
    m = len(s) // 2
    return s[m] if len(s) % 2 else 0.5 * (s[m - 1] + s[m])


def _verdict(
    check: Applies,
    limit: AcceptanceLimit,
    values: tuple[float, ...],
    decide: Callable[[bool, float], dict[str, Any]],
) -> AcceptanceVerdict:
    """Range of ``values`` against the critical range; ``decide(within, mean)`` says what next."""
    mean = math.fsum(values) / len(values)
    spread = max(values) - min(values)
    crit = limit.for_results(mean, len(values))
    return AcceptanceVerdict(
        check=check, values=values, spread=spread, limit=crit, limit_name=limit.name,
        limit_source=limit.source, **decide(spread <= crit, mean),
    )  # fmt: skip


def check_flow_times(
    times: Sequence[float], limit: AcceptanceLimit | None = None, *, most: int = 4
) -> AcceptanceVerdict:
    """Do the flow times of one determination agree?

    Parameters
    ----------
    times : sequence of float
        2 to 10 timings of one filling [s].
    limit : AcceptanceLimit, optional
        A ``flow_time`` limit for two timings; default :data:`LIMITS` ``["flow_time_range"]``.
    most : int, optional
        The most timings the procedure allows (default 4).

    Returns
    -------
    AcceptanceVerdict
        accept (report the mean time) when the range ≤ limit·f(n)/f(2); repeat (one more
        timing) while fewer than ``most`` were taken; investigate otherwise (clean the
        viscometer, look for particles, bubbles, temperature drift).

    Examples
    --------
    >>> check_flow_times([312.40, 312.62]).action
    'accept'
    """
    lim = _limit_for(limit or LIMITS["flow_time_range"], "flow_time")
    t = _values(times, "times")
    for i, v in enumerate(t):
        if v <= 0:
            raise InputError(f"times[{i}] must be positive (in s), got {v!r}")
    if isinstance(most, bool) or not isinstance(most, int) or not 2 <= most <= MAX_RESULTS:
        raise InputError(f"most must be an integer from 2 to {MAX_RESULTS}, got {most!r}")

    def decide(ok: bool, mean: float) -> dict[str, Any]:
        if ok:
            return {"action": "accept", "reason": "within_limit", "result": mean, "more": 0}
        if len(t) < most:
            return {"action": "repeat", "reason": "outside", "result": None, "more": 1}
        return {"action": "investigate", "reason": "outside_after_repeat", "result": None,
                "more": 0}  # fmt: skip

    return _verdict("flow_time", lim, t, decide)


def check_determinations(values: Sequence[float], limit: AcceptanceLimit) -> AcceptanceVerdict:
    """Do duplicate determinations agree? ISO 5725-6:1994, 5.2.2.1 (from memory).

    Two results within the limit (determinability or r): accept their mean. Outside: repeat
    with two more. Four (or more) results within the critical range f(n)/f(2)·limit: accept
    their mean; outside: investigate, and the median is the value the standard falls back on.

    Parameters
    ----------
    values : sequence of float
        2 to 10 determinations (e.g. kinematic viscosities) [unit of y].
    limit : AcceptanceLimit
        A ``determination`` limit for two results (:data:`LIMITS`, or the lab's own).

    Examples
    --------
    >>> lim = LIMITS["d445_base_oil_determinability"]
    >>> v = check_determinations([31.20, 31.29], lim)
    >>> v.action, v.more
    ('repeat', 2)
    """
    lim = _limit_for(limit, "determination")
    y = _values(values, "values")

    def decide(ok: bool, mean: float) -> dict[str, Any]:
        if ok:
            return {"action": "accept", "reason": "within_limit", "result": mean, "more": 0}
        if len(y) == 2:
            return {"action": "repeat", "reason": "first_pair_outside", "result": None,
                    "more": 2}  # fmt: skip
        return {"action": "investigate", "reason": "outside_after_repeat",
                "result": _median(y), "more": 0}  # fmt: skip

    return _verdict("determination", lim, y, decide)


def check_laboratories(first: float, second: float, limit: AcceptanceLimit) -> AcceptanceVerdict:
    """Do two laboratories' results agree within the reproducibility limit R?

    Within R: accept (their mean); outside: investigate (ISO 5725-6:1994, 5.3, from memory:
    the laboratories find the cause together).
    """
    lim = _limit_for(limit, "laboratories")
    y = _values([first, second], "results")

    def decide(ok: bool, mean: float) -> dict[str, Any]:
        if ok:
            return {"action": "accept", "reason": "within_limit", "result": mean, "more": 0}
        return {"action": "investigate", "reason": "outside", "result": None, "more": 0}

    return _verdict("laboratories", lim, y, decide)
