"""Conformity decisions with measurement uncertainty (JCGM 106:2012, ILAC G8:09/2019).

A result ``y`` with standard uncertainty ``u`` is compared with a tolerance interval
``[T_L, T_U]`` (one limit may be absent). Two decision rules are offered:

=====================  ====================================  ===============================
rule                   acceptance interval                   reference
=====================  ====================================  ===============================
``"simple"``           ``[T_L, T_U]``  (guard band w = 0)    ILAC G8:09/2019, 4.2.1
``"guarded"``          ``[T_L + w, T_U - w]``, ``w = r U``   JCGM 106:2012, 8.3.2; ILAC G8, 4.2.2
=====================  ====================================  ===============================

The conformance probability ``p_c`` is the probability, given the result, that the true
value of the measurand lies in the tolerance interval (JCGM 106:2012, clause 7). The
*specific risk* of a decision is ``1 - p_c`` for an accepted item (false accept) and ``p_c``
for a rejected one (false reject) (JCGM 106:2012, clause 9).

Clause numbers of JCGM 106:2012 and ILAC G8:09/2019 below are cited from memory.

All functions are pure and unit-agnostic: every value, limit and uncertainty passed to one
call must be in the same unit (SI inside the package, e.g. [m²/s]). The decision is put in
words by :func:`viscometry.text.decision_statement`.

.. caution:: :data:`DECISION_CAUTION` -- the decision rule is agreed with the customer and
   follows the laboratory's own procedures and accredited practice.

Examples
--------
>>> d = decide(9.88, 0.06, None, 10.0, rule="guarded")
>>> d.verdict, round(d.conformance_probability, 4), d.risk_kind
('accept', 0.9772, 'false accept')
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

from scipy import special

from viscometry._checks import degrees_of_freedom as _dof
from viscometry._checks import finite as _finite
from viscometry._checks import non_negative as _non_negative
from viscometry._checks import positive as _positive
from viscometry.errors import InputError

__all__ = [
    "DECISION_CAUTION",
    "DecisionRule",
    "ConformityDecision",
    "conformance_probability",
    "guard_band",
    "acceptance_limits",
    "decide",
]

DecisionRule = Literal["simple", "guarded"]

#: Caution to show wherever a conformity decision is reported.
DECISION_CAUTION: str = (
    "The decision rule (simple or guarded acceptance, guard-band factor, coverage factor) "
    "must be agreed with the customer before the work and must follow the laboratory's own "
    "procedures and accredited practice (ILAC G8:09/2019; ISO/IEC 17025:2017, 7.1.3 and "
    "7.8.6). A computed decision supports, and does not replace, the laboratory's judgement."
)


# --------------------------------------------------------------------------- validation


def _limits(lower: object, upper: object) -> tuple[float | None, float | None]:
    if lower is None and upper is None:
        raise InputError("lower and upper tolerance limits are both None; give at least one")
    lo = None if lower is None else _finite(lower, "lower")
    up = None if upper is None else _finite(upper, "upper")
    if lo is not None and up is not None and lo >= up:
        raise InputError(f"lower must be less than upper, got lower={lo!r}, upper={up!r}")
    return lo, up


# --------------------------------------------------------------------------- probability


def _in_and_out(
    value: float, u: float, lower: float | None, upper: float | None, dof: float
) -> tuple[float, float]:
    """Return ``(p_c, 1 - p_c)``, each computed without cancellation where it is small."""

    # Normal or Student t distribution functions from scipy.special (no distribution objects:
    # scipy.stats costs about a second to import). Both are symmetric: sf(x) = cdf(-x).
    def cdf(x: float) -> float:
        return float(special.ndtr(x) if math.isinf(dof) else special.stdtr(dof, x))

    def sf(x: float) -> float:
        return cdf(-x)

    # Standardised distances of the limits from the result.
    z_lo = -math.inf if lower is None else (lower - value) / u
    z_up = math.inf if upper is None else (upper - value) / u
    below = cdf(z_lo)  # P(Y < T_L)
    above = sf(z_up)  # P(Y > T_U)
    if z_lo >= 0.0:  # result at or below T_L: p_c is a small upper-tail difference
        p_in = max(sf(z_lo) - above, 0.0)
        return p_in, 1.0 - p_in
    if z_up <= 0.0:  # result at or above T_U: p_c is a small lower-tail difference
        p_in = max(cdf(z_up) - below, 0.0)
        return p_in, 1.0 - p_in
    p_out = below + above
    return 1.0 - p_out, p_out


def conformance_probability(
    value: float,
    standard_uncertainty: float,
    lower: float | None = None,
    upper: float | None = None,
    dof: float = math.inf,
) -> float:
    """Probability that the measurand lies within the tolerance interval.

    Parameters
    ----------
    value : float
        Measured value (best estimate) ``y`` of the measurand. [unit of the measurand]
    standard_uncertainty : float
        Standard uncertainty ``u(y)``, positive. [unit of the measurand]
    lower : float or None, optional
        Lower tolerance limit ``T_L``; ``None`` for an upper limit only. [unit of the measurand]
    upper : float or None, optional
        Upper tolerance limit ``T_U``; ``None`` for a lower limit only. [unit of the measurand]
    dof : float, optional
        Degrees of freedom ``nu`` (effective, GUM G.4); ``math.inf`` (default) gives a normal
        PDF, a finite positive value a scaled-and-shifted t PDF. Non-integer values are
        accepted. [1]

    Returns
    -------
    float
        Conformance probability ``p_c`` in [0, 1]. [1]

    Raises
    ------
    InputError
        If ``value`` or a limit is not finite, ``standard_uncertainty`` is not positive and
        finite, both limits are ``None``, ``lower >= upper``, or ``dof`` is not positive.

    Notes
    -----
    For a normal PDF for the measurand, N(y, u²) (JCGM 106:2012, clause 7 -- from memory),

    .. math:: p_c = \\Phi\\left(\\frac{T_U - y}{u}\\right) - \\Phi\\left(\\frac{T_L - y}{u}\\right),

    with ``Phi(+inf) = 1`` and ``Phi(-inf) = 0`` for a missing limit. With finite ``nu`` the
    standardised variable ``(Y - y)/u`` follows Student's t with ``nu`` degrees of freedom
    (JCGM 100:2008, G.3; JCGM 106:2012, clause 7), so ``Phi`` is replaced by the t CDF ``F_nu``.
    The scale of that t PDF is ``u``, so its standard deviation is ``u sqrt(nu/(nu - 2))``
    (for ``nu > 2``), larger than ``u``: the GUM convention.

    Tails are evaluated with the survival function, so that small probabilities of
    conformity (or of non-conformity) keep their relative accuracy.

    References
    ----------
    JCGM 106:2012, *Evaluation of measurement data -- The role of measurement uncertainty in
    conformity assessment*, clause 7.

    Examples
    --------
    >>> round(conformance_probability(10.0, 0.5, lower=9.0, upper=11.0), 4)  # Phi(2) - Phi(-2)
    0.9545
    >>> round(conformance_probability(10.0, 0.5, upper=11.0, dof=4), 4)
    0.9419
    """
    y = _finite(value, "value")
    u = _positive(standard_uncertainty, "standard_uncertainty")
    lo, up = _limits(lower, upper)
    nu = _dof(dof)
    return _in_and_out(y, u, lo, up, nu)[0]


# --------------------------------------------------------------------------- guard bands


def guard_band(expanded_uncertainty: float, r: float = 1.0) -> float:
    """Guard band ``w = r U`` for guarded acceptance.

    Parameters
    ----------
    expanded_uncertainty : float
        Expanded uncertainty ``U = k u``, non-negative. [unit of the measurand]
    r : float, optional
        Guard-band factor, non-negative; ``r = 1`` (default) is the common choice
        ``w = U``, ``r = 0`` gives simple acceptance. [1]

    Returns
    -------
    float
        Guard band ``w``. [unit of the measurand]

    Raises
    ------
    InputError
        If ``expanded_uncertainty`` or ``r`` is negative or not finite.

    Notes
    -----
    Guarded acceptance limits are ``A_L = T_L + w`` and ``A_U = T_U - w``
    (see :func:`acceptance_limits`). Guarded *rejection* (``A`` outside the tolerance
    interval) is not offered here.

    References
    ----------
    JCGM 106:2012, 8.3.2; ILAC G8:09/2019, 4.2.2 (clause numbers from memory).

    Examples
    --------
    >>> guard_band(0.12)
    0.12
    >>> guard_band(0.12, r=0.0)
    0.0
    """
    big_u = _non_negative(expanded_uncertainty, "expanded_uncertainty")
    factor = _non_negative(r, "r")
    return factor * big_u


def acceptance_limits(
    lower: float | None, upper: float | None, guard: float = 0.0
) -> tuple[float | None, float | None]:
    """Acceptance limits ``A_L = T_L + w``, ``A_U = T_U - w`` from tolerance limits.

    Parameters
    ----------
    lower : float or None
        Lower tolerance limit ``T_L``, or ``None`` if absent. [unit of the measurand]
    upper : float or None
        Upper tolerance limit ``T_U``, or ``None`` if absent. [unit of the measurand]
    guard : float, optional
        Guard band ``w`` from :func:`guard_band`, non-negative; 0 (default) gives the
        tolerance limits themselves (simple acceptance). [unit of the measurand]

    Returns
    -------
    tuple of (float or None, float or None)
        ``(A_L, A_U)``; a missing tolerance limit stays ``None``. [unit of the measurand]

    Raises
    ------
    InputError
        If a limit is not finite, both are ``None``, ``lower >= upper``, ``guard`` is
        negative or not finite, or the guard band leaves no acceptance interval
        (``A_L >= A_U``, i.e. ``2 w >= T_U - T_L``): no result could then be accepted, so the
        measurement is not capable of the decision asked of it.

    References
    ----------
    JCGM 106:2012, 8.3.2; ILAC G8:09/2019, 4.2.2 (clause numbers from memory).

    Examples
    --------
    >>> acceptance_limits(9.0, 11.0, 0.25)
    (9.25, 10.75)
    >>> acceptance_limits(None, 11.0, 0.25)
    (None, 10.75)
    """
    lo, up = _limits(lower, upper)
    w = _non_negative(guard, "guard")
    a_lo = None if lo is None else lo + w
    a_up = None if up is None else up - w
    if a_lo is not None and a_up is not None and a_lo >= a_up:
        raise InputError(
            f"guard band w={w!r} leaves no acceptance interval between lower={lo!r} and "
            f"upper={up!r} (A_L={a_lo!r} >= A_U={a_up!r}); the uncertainty is too large "
            "for this tolerance"
        )
    return a_lo, a_up


# --------------------------------------------------------------------------- decision


@dataclass(frozen=True)
class ConformityDecision:
    """Outcome of a conformity decision (immutable snapshot of inputs and results).

    Attributes
    ----------
    verdict : {"accept", "reject"}
        The decision.
    rule : {"simple", "guarded"}
        Decision rule applied.
    value : float
        Measured value ``y``. [unit of the measurand]
    standard_uncertainty : float
        ``u(y)``. [unit of the measurand]
    coverage_factor : float
        ``k`` used for ``U = k u``. [1]
    dof : float
        Degrees of freedom of the PDF for the measurand (``inf`` for normal). [1]
    expanded_uncertainty : float
        ``U = k u``. [unit of the measurand]
    guard_factor : float
        ``r`` in ``w = r U`` (0 under simple acceptance). [1]
    guard_band : float
        ``w``. [unit of the measurand]
    lower, upper : float or None
        Tolerance limits ``T_L``, ``T_U``. [unit of the measurand]
    acceptance_lower, acceptance_upper : float or None
        Acceptance limits ``A_L``, ``A_U``. [unit of the measurand]
    conformance_probability : float
        ``p_c``. [1]
    specific_risk : float
        Probability of a wrong decision for this item: ``1 - p_c`` if accepted (false
        accept), ``p_c`` if rejected (false reject). [1]
    risk_kind : {"false accept", "false reject"}
        Which risk ``specific_risk`` is.
    """

    verdict: Literal["accept", "reject"]
    rule: DecisionRule
    value: float
    standard_uncertainty: float
    coverage_factor: float
    dof: float
    expanded_uncertainty: float
    guard_factor: float
    guard_band: float
    lower: float | None
    upper: float | None
    acceptance_lower: float | None
    acceptance_upper: float | None
    conformance_probability: float
    specific_risk: float
    risk_kind: Literal["false accept", "false reject"]


def decide(
    value: float,
    standard_uncertainty: float,
    lower: float | None,
    upper: float | None,
    *,
    coverage_factor: float = 2.0,
    dof: float = math.inf,
    rule: DecisionRule = "simple",
    guard_factor: float = 1.0,
) -> ConformityDecision:
    """Decide conformity of a result with a tolerance interval under a decision rule.

    Parameters
    ----------
    value : float
        Measured value ``y``. [unit of the measurand]
    standard_uncertainty : float
        Standard uncertainty ``u(y)``, positive. [unit of the measurand]
    lower : float or None
        Lower tolerance limit ``T_L``, or ``None`` for an upper limit only.
        [unit of the measurand]
    upper : float or None
        Upper tolerance limit ``T_U``, or ``None`` for a lower limit only.
        [unit of the measurand]
    coverage_factor : float, optional
        ``k`` in ``U = k u`` (default 2), positive. [1]
    dof : float, optional
        Degrees of freedom of the PDF for the measurand; ``math.inf`` (default) for normal.
        Used for ``p_c`` only; ``k`` is taken as given. [1]
    rule : {"simple", "guarded"}, optional
        ``"simple"`` accepts when ``T_L <= y <= T_U``; ``"guarded"`` when
        ``A_L <= y <= A_U`` with ``w = r U`` (default ``"simple"``).
    guard_factor : float, optional
        ``r`` in ``w = r U`` for ``rule="guarded"`` (default 1), non-negative; ignored (set
        to 0) under simple acceptance. [1]
    Returns
    -------
    ConformityDecision
        Verdict, limits, conformance probability and specific risk.

    Raises
    ------
    InputError
        On any invalid input (see :func:`conformance_probability`, :func:`guard_band`,
        :func:`acceptance_limits`), an unknown ``rule``, or a non-positive
        ``coverage_factor``.

    Notes
    -----
    The acceptance interval is closed: a result exactly on an acceptance limit is accepted.
    ``p_c`` is from :func:`conformance_probability` with the *tolerance* limits; the
    specific risk is ``1 - p_c`` when accepted and ``p_c`` when rejected
    (JCGM 106:2012, clause 9 -- from memory). Show :data:`DECISION_CAUTION` with the result.

    References
    ----------
    JCGM 106:2012, clauses 7-9; ILAC G8:09/2019, clause 4; ISO/IEC 17025:2017, 7.8.6.

    Examples
    --------
    >>> d = decide(10.9, 0.1, 9.0, 11.0)
    >>> d.verdict, d.risk_kind, round(d.specific_risk, 3)
    ('accept', 'false accept', 0.159)
    >>> decide(10.9, 0.1, 9.0, 11.0, rule="guarded").verdict
    'reject'
    """
    if rule not in ("simple", "guarded"):
        raise InputError(f"rule must be 'simple' or 'guarded', got {rule!r}")
    y = _finite(value, "value")
    u = _positive(standard_uncertainty, "standard_uncertainty")
    k = _positive(coverage_factor, "coverage_factor")
    nu = _dof(dof)
    lo, up = _limits(lower, upper)

    big_u = k * u
    r = _non_negative(guard_factor, "guard_factor") if rule == "guarded" else 0.0
    w = guard_band(big_u, r)
    a_lo, a_up = acceptance_limits(lo, up, w)
    inside = (a_lo is None or y >= a_lo) and (a_up is None or y <= a_up)

    p_in, p_out = _in_and_out(y, u, lo, up, nu)
    verdict: Literal["accept", "reject"] = "accept" if inside else "reject"
    risk_kind: Literal["false accept", "false reject"] = (
        "false accept" if inside else "false reject"
    )
    risk = p_out if inside else p_in

    return ConformityDecision(
        verdict=verdict,
        rule=rule,
        value=y,
        standard_uncertainty=u,
        coverage_factor=k,
        dof=nu,
        expanded_uncertainty=big_u,
        guard_factor=r,
        guard_band=w,
        lower=lo,
        upper=up,
        acceptance_lower=a_lo,
        acceptance_upper=a_up,
        conformance_probability=p_in,
        specific_risk=risk,
        risk_kind=risk_kind,
    )
