"""Proficiency rounds, the top-down uncertainty, and whether a budget's U holds up.

**Proficiency rounds.** Each :class:`ProficiencyRound` holds the laboratory's result x with
its stated U (k = 2), the assigned value x_pt with its standard uncertainty u(x_pt), and the
standard deviation for proficiency assessment σ_pt. Its scores come from
:mod:`viscometry.proficiency` (ISO 13528:2015, 9.4–9.7): z, z′, ζ (u_lab = U/2) and E_n
(U_ref = 2·u(x_pt)).

**Top-down uncertainty** (:func:`top_down`), in relative terms so that a check standard and
samples of other viscosities share it (Nordtest TR 537, 4th ed. 2017, "Handbook for
calculation of measurement uncertainty in environmental laboratories", sections on u(Rw) and
u(bias) from proficiency tests; equations from memory; the structure u² = s_R² + u²(bias) +
… is that of ISO 21748:2017, clause 7, from memory)::

    u_c      = √(u(Rw)² + u(bias)²)
    u(Rw)    = s_Rw / x̄                      (control chart of a check standard)
    u(bias)  = √(RMS_bias² + u(Cref)²)
    RMS_bias = √(Σ b_i² / n),  b_i = (x_i − x_pt,i) / x_pt,i
    u(Cref)  = Σ (u(x_pt,i) / x_pt,i) / n    (the mean of the rounds' relative u(x_pt))
    U        = k·u_c                          (k = 2)

**Reconciliation** (:func:`reconcile`) against a bottom-up budget with relative standard
uncertainty w = u_c/y (:class:`BudgetClaim`):

* ratio = U_top-down / U_budget (both relative, each with its own k);
* test A — does the check standard scatter more than the budget allows? H0: σ_Rw ≤ w·x̄.
  χ² = (n − 1)·s_Rw² / (w·x̄)², one-sided p = P(χ²_{n−1} ≥ χ²). Assumes the values are
  independent and normal, the chart in control, and the budget's u covers every effect that
  varies between days (common practice, no source; the χ² distribution of (n − 1)s²/σ² is
  exact for normal data);
* test B — do the proficiency deviations exceed what the budget allows? ζ_i with
  u_lab = w·x_i, T = Σ ζ_i², p = P(χ²_n ≥ T). Assumes the rounds are independent, the
  deviations normal with mean zero under H0, and the budget's relative u applies at each
  round's value (common practice, no source);
* verdict: ``"does_not_hold"`` when a test rejects at α (default 0.05), else ``"borderline"``
  when the top-down U exceeds the budget's U (not significantly), else ``"holds"``. The
  budget's inputs with the largest variance shares come with it: where to look first.

The verdict supports the laboratory's own review under its accredited procedures; it does not
replace it.
"""

from __future__ import annotations

import datetime as _dt
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

from viscometry._checks import finite, positive
from viscometry.errors import InputError
from viscometry.evidence.control import ControlChart
from viscometry.proficiency import Score, en_score, z_prime_score, z_score, zeta_score

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.result import BudgetResult

__all__ = [
    "MAX_ROUNDS",
    "VERDICTS",
    "BudgetClaim",
    "ConsistencyTest",
    "ProficiencyHistory",
    "ProficiencyRound",
    "Reconciliation",
    "TopDown",
    "reconcile",
    "same_quantity",
    "top_down",
]

#: Most rounds a proficiency history may hold.
MAX_ROUNDS = 1000
#: The verdicts of :func:`reconcile`.
VERDICTS = ("holds", "borderline", "does_not_hold")
Verdict = Literal["holds", "borderline", "does_not_hold"]
#: The coverage factor of the laboratory's U in a round, and of 2·u(x_pt) in E_n [1].
ROUND_COVERAGE_FACTOR = 2.0
#: Flags a reconciliation may carry (put in words by :mod:`viscometry.evidence_qc_text`).
FLAGS = ("chart_out_of_control", "few_control_values", "few_rounds")


@dataclass(frozen=True)
class ProficiencyRound:
    """One proficiency-testing round (immutable; values in the history's unit).

    Attributes
    ----------
    name : str
        The round (scheme and number).
    date : datetime.date
    value : float
        x, the laboratory's result (> 0).
    expanded_uncertainty : float
        U the laboratory reported, k = 2 (> 0).
    assigned_value : float
        x_pt (> 0).
    assigned_uncertainty : float
        u(x_pt), standard uncertainty (> 0).
    sd_for_pt : float
        σ_pt (> 0).
    """

    name: str
    date: _dt.date
    value: float
    expanded_uncertainty: float
    assigned_value: float
    assigned_uncertainty: float
    sd_for_pt: float

    def __post_init__(self) -> None:
        if not isinstance(self.name, str):
            raise InputError(f"name must be text, got {self.name!r}")
        if not isinstance(self.date, _dt.date) or isinstance(self.date, _dt.datetime):
            raise InputError(f"date must be a datetime.date, got {self.date!r}")
        for key in ("value", "expanded_uncertainty", "assigned_value", "assigned_uncertainty",
                    "sd_for_pt"):  # fmt: skip
            object.__setattr__(self, key, positive(getattr(self, key), key))

    @property
    def relative_bias(self) -> float:
        """b = (x − x_pt) / x_pt [1]."""
        return (self.value - self.assigned_value) / self.assigned_value

    @property
    def relative_assigned_uncertainty(self) -> float:
        """u(x_pt) / x_pt [1]."""
        return self.assigned_uncertainty / self.assigned_value

    def scores(self) -> dict[str, Score]:
        """z, z′, ζ and E_n of the round (ISO 13528:2015, 9.4–9.7, via proficiency.py)."""
        x, xpt, upt = self.value, self.assigned_value, self.assigned_uncertainty
        u_lab = self.expanded_uncertainty / ROUND_COVERAGE_FACTOR
        return {
            "z": z_score(x, xpt, self.sd_for_pt),
            "z'": z_prime_score(x, xpt, self.sd_for_pt, upt),
            "zeta": zeta_score(x, u_lab, xpt, upt),
            "E_n": en_score(x, self.expanded_uncertainty, xpt, ROUND_COVERAGE_FACTOR * upt),
        }


@dataclass(frozen=True)
class ProficiencyHistory:
    """A laboratory's proficiency rounds, oldest first (immutable).

    Raises
    ------
    InputError
        No round, more than :data:`MAX_ROUNDS`, or a date before the one above it.
    """

    unit: str
    rounds: tuple[ProficiencyRound, ...]

    def __post_init__(self) -> None:
        rounds = tuple(self.rounds)
        if not rounds:
            raise InputError("a proficiency history needs at least one round, got none")
        if len(rounds) > MAX_ROUNDS:
            raise InputError(f"a proficiency history holds at most {MAX_ROUNDS} rounds")
        for i, r in enumerate(rounds):
            if not isinstance(r, ProficiencyRound):
                raise InputError(f"rounds[{i}] must be a ProficiencyRound, got {r!r}")
            if i and r.date < rounds[i - 1].date:
                raise InputError(
                    f"round {i + 1}: date {r.date} is before {rounds[i - 1].date}; sort by date"
                )
        object.__setattr__(self, "rounds", rounds)


@dataclass(frozen=True)
class BudgetClaim:
    """What a bottom-up budget claims (immutable).

    Attributes
    ----------
    value : float
        y, in ``unit`` (≠ 0).
    standard_uncertainty : float
        u_c(y) (> 0).
    coverage_factor : float
        k of the budget's U.
    unit : str
    shares : tuple of (str, float)
        Each input's variance share (cᵢu(xᵢ))²/u_c², largest first.
    source : str
        Where the budget came from (file, title).
    """

    value: float
    standard_uncertainty: float
    coverage_factor: float = 2.0
    unit: str = ""
    shares: tuple[tuple[str, float], ...] = ()
    source: str = ""

    def __post_init__(self) -> None:
        y = finite(self.value, "value")
        if y == 0:
            raise InputError("value must not be zero: a relative uncertainty needs y ≠ 0")
        object.__setattr__(self, "value", y)
        u = positive(self.standard_uncertainty, "standard_uncertainty")
        object.__setattr__(self, "standard_uncertainty", u)
        object.__setattr__(
            self, "coverage_factor", positive(self.coverage_factor, "coverage_factor")
        )
        shares = tuple((str(n), float(s)) for n, s in self.shares)
        object.__setattr__(self, "shares", tuple(sorted(shares, key=lambda p: -p[1])))

    @classmethod
    def from_result(cls, result: BudgetResult, source: str = "") -> BudgetClaim:
        """The claim of an evaluated budget (its value, u_c, k, unit and variance shares)."""
        return cls(
            value=result.value, standard_uncertainty=result.standard_uncertainty,
            coverage_factor=result.coverage_factor, unit=result.unit,
            shares=tuple((c.name, c.variance_share) for c in result.contributions),
            source=source,
        )  # fmt: skip

    @property
    def relative_standard_uncertainty(self) -> float:
        """w = u_c / |y| [1]."""
        return self.standard_uncertainty / abs(self.value)

    @property
    def relative_expanded_uncertainty(self) -> float:
        """k·w [1]."""
        return self.coverage_factor * self.relative_standard_uncertainty


@dataclass(frozen=True)
class TopDown:
    """The top-down uncertainty, relative (immutable; equations in the module notes).

    Attributes
    ----------
    reproducibility : float
        u(Rw) = s_Rw / x̄ [1].
    rms_bias : float
        RMS of the rounds' relative biases [1].
    reference_uncertainty : float
        u(Cref), the mean relative u(x_pt) [1].
    coverage_factor : float
        k [1].
    control_values, rounds : int
        How many values and rounds it rests on.
    """

    reproducibility: float
    rms_bias: float
    reference_uncertainty: float
    coverage_factor: float
    control_values: int
    rounds: int

    @property
    def bias_uncertainty(self) -> float:
        """u(bias) = √(RMS_bias² + u(Cref)²) [1]."""
        return math.hypot(self.rms_bias, self.reference_uncertainty)

    @property
    def standard_uncertainty(self) -> float:
        """u_c = √(u(Rw)² + u(bias)²) [1]."""
        return math.hypot(self.reproducibility, self.bias_uncertainty)

    @property
    def expanded_uncertainty(self) -> float:
        """U = k·u_c [1]."""
        return self.coverage_factor * self.standard_uncertainty


@dataclass(frozen=True)
class ConsistencyTest:
    """A one-sided χ² test of the records against the budget's u (immutable).

    Attributes
    ----------
    name : str
        ``"reproducibility"`` (test A) or ``"proficiency"`` (test B).
    statistic : float
        χ².
    degrees_of_freedom : int
    p_value : float
        P(χ²_ν ≥ statistic).
    alpha : float
        Significance level.
    """

    name: str
    statistic: float
    degrees_of_freedom: int
    p_value: float
    alpha: float

    @property
    def rejected(self) -> bool:
        """True when p < α: the records are not consistent with the budget's u."""
        return self.p_value < self.alpha


@dataclass(frozen=True, eq=False)
class Reconciliation:
    """Does the bottom-up U cover what the records show? (immutable).

    Attributes
    ----------
    top_down : TopDown
    claim : BudgetClaim
    tests : tuple of ConsistencyTest
        Test A (reproducibility) and test B (proficiency).
    verdict : {"holds", "borderline", "does_not_hold"}
    flags : tuple of str
        See :data:`FLAGS`.
    """

    top_down: TopDown
    claim: BudgetClaim
    tests: tuple[ConsistencyTest, ...]
    verdict: Verdict
    flags: tuple[str, ...]

    @property
    def ratio(self) -> float:
        """U_top-down / U_budget (relative expanded uncertainties) [1]."""
        return self.top_down.expanded_uncertainty / self.claim.relative_expanded_uncertainty

    @property
    def top_down_expanded_uncertainty(self) -> float:
        """The top-down U at the budget's value, in the budget's unit."""
        return self.top_down.expanded_uncertainty * abs(self.claim.value)

    def dominant(self, count: int = 3) -> tuple[tuple[str, float], ...]:
        """The budget's ``count`` inputs with the largest variance shares."""
        return self.claim.shares[: max(int(count), 0)]


def top_down(
    chart: ControlChart, history: ProficiencyHistory, coverage_factor: float = 2.0
) -> TopDown:
    """The top-down relative uncertainty from a control chart and proficiency rounds.

    Parameters
    ----------
    chart : ControlChart
        The check standard's chart (gives s_Rw / x̄).
    history : ProficiencyHistory
        The rounds (give RMS_bias and u(Cref)).
    coverage_factor : float, optional
        k (default 2).

    Returns
    -------
    TopDown

    References
    ----------
    Nordtest TR 537, 4th ed. (2017); ISO 21748:2017, clause 7 (both from memory).

    Examples
    --------
    >>> import datetime as dt
    >>> from viscometry.evidence.control import ControlPoint, ControlRecord, control_chart
    >>> d = dt.date(2025, 1, 1)
    >>> chart = control_chart(ControlRecord("oil", "mm^2/s", (ControlPoint(d, 99.7),
    ...                                                      ControlPoint(d, 100.3))))
    >>> r = ProficiencyRound("R1", d, 100.4, 1.0, 100.0, 0.3, 1.0)
    >>> td = top_down(chart, ProficiencyHistory("mm^2/s", (r,)))
    >>> f"{td.reproducibility:.6f} {td.bias_uncertainty:.6f}"
    '0.004243 0.005000'
    """
    if not isinstance(chart, ControlChart):
        raise InputError(f"chart must be a ControlChart, got {chart!r}")
    if not isinstance(history, ProficiencyHistory):
        raise InputError(f"history must be a ProficiencyHistory, got {history!r}")
    k = positive(coverage_factor, "coverage_factor")
    rounds = history.rounds
    rms = math.sqrt(math.fsum(r.relative_bias**2 for r in rounds) / len(rounds))
    u_ref = math.fsum(r.relative_assigned_uncertainty for r in rounds) / len(rounds)
    return TopDown(
        reproducibility=chart.relative_reproducibility_sd, rms_bias=rms,
        reference_uncertainty=u_ref, coverage_factor=k, control_values=chart.count,
        rounds=len(rounds),
    )  # fmt: skip


def same_quantity(chart: ControlChart, history: ProficiencyHistory, claim: BudgetClaim) -> None:
    """Refuse records and a budget of different kinds of quantity.

    The comparison is relative, so it would run on a kinematic chart and a dynamic budget
    alike; a record or a budget without a unit is not checked.

    Raises
    ------
    InputError
        Two of the units are not of the same dimension (names both, and what to give).
    """
    from viscometry import units

    given = [
        (what, unit)
        for what, unit in (
            ("the control chart", chart.record.unit),
            ("the proficiency rounds", history.unit),
            ("the budget", claim.unit),
        )
        if unit
    ]
    for (first, u1), (second, u2) in zip(given, given[1:], strict=False):
        if not units.same_dimension(u1, u2):
            raise InputError(
                f"{second} is in {u2!r} but {first} in {u1!r}: not the same kind of quantity "
                "(a kinematic and a dynamic viscosity cannot be compared); give records and a "
                "budget of one measurand"
            )


def reconcile(
    chart: ControlChart,
    history: ProficiencyHistory,
    claim: BudgetClaim,
    *,
    coverage_factor: float = 2.0,
    alpha: float = 0.05,
) -> Reconciliation:
    """Compare the records with a budget's claim: ratio, two χ² tests, verdict.

    Parameters
    ----------
    chart, history
        The check standard's chart and the proficiency rounds.
    claim : BudgetClaim
        The budget (see :meth:`BudgetClaim.from_result`).
    coverage_factor : float, optional
        k of the top-down U (default 2).
    alpha : float, optional
        Significance level of the tests, 0 < α < 1 (default 0.05).

    Returns
    -------
    Reconciliation

    Notes
    -----
    Tests, assumptions and the verdict rule are in the module notes.
    """
    from scipy.stats import chi2

    if not isinstance(claim, BudgetClaim):
        raise InputError(f"claim must be a BudgetClaim, got {claim!r}")
    a = finite(alpha, "alpha")
    if not 0 < a < 1:
        raise InputError(f"alpha must lie between 0 and 1, got {alpha!r}")
    same_quantity(chart, history, claim)
    td = top_down(chart, history, coverage_factor)
    w = claim.relative_standard_uncertainty
    nu = chart.degrees_of_freedom
    stat_a = nu * (chart.reproducibility_sd / (w * chart.mean)) ** 2
    zetas = [
        zeta_score(r.value, w * r.value, r.assigned_value, r.assigned_uncertainty).value
        for r in history.rounds
    ]
    stat_b = math.fsum(z * z for z in zetas)
    tests = (
        ConsistencyTest("reproducibility", stat_a, nu, float(chi2.sf(stat_a, nu)), a),
        ConsistencyTest("proficiency", stat_b, len(zetas), float(chi2.sf(stat_b, len(zetas))), a),
    )
    ratio = td.expanded_uncertainty / claim.relative_expanded_uncertainty
    verdict: Verdict
    if any(t.rejected for t in tests):
        verdict = "does_not_hold"
    else:
        verdict = "borderline" if ratio > 1 else "holds"
    flags = [] if chart.in_control else ["chart_out_of_control"]
    if chart.count < 20:
        flags.append("few_control_values")
    if len(history.rounds) < 3:
        flags.append("few_rounds")
    return Reconciliation(td, claim, tests, verdict, tuple(flags))
