"""Monte Carlo simulation of a whole uncertainty budget, validated against its first-order result.

:func:`simulate_budget` takes a :class:`~viscometry.gum.budget.Budget`, propagates the
distributions of its inputs through the budget's cached, lambdified model with the Monte
Carlo method of JCGM 101:2008 (:mod:`viscometry.gum.montecarlo`), and compares the result
with the budget's own first-order (or higher-order) evaluation per JCGM 101:2008, clause 8.
The answer is an immutable :class:`BudgetSimulation`.

Everything runs in SI inside (the inputs from :meth:`Budget.si_inputs`, the constants from
:meth:`Budget.si_arrays`); each model value is converted to the measurand's unit as it is
computed, so every number of the result (estimate, u, intervals, histogram, δ, d_low,
d_high) is in ``budget.unit``.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from viscometry.errors import CorrelationWarning, InputError
from viscometry.gum.budget import Budget, BudgetResult
from viscometry.gum.montecarlo import (
    MAX_TRIALS,
    IntervalKind,
    MonteCarloResult,
    ProgressCallback,
    ValidationResult,
    check_jobs,
    check_trials,
    run_adaptive,
    run_monte_carlo,
    validate_against,
)
from viscometry.gum.result import OfBudget

__all__ = [
    "BudgetSimulation",
    "ProgressCallback",
    "simulate_budget",
    "DEFAULT_TRIALS",
    "recommended_trials",
    "trial_warnings",
]

#: Number of trials of a fixed-M run when none is given (JCGM 101:2008, 7.2.1 suggests
#: M = 10⁶ as a value that can often be expected to deliver a 95 % interval correct to one
#: or two significant decimal digits).
DEFAULT_TRIALS = 10**6


@dataclass(frozen=True)
class BudgetSimulation(OfBudget):
    """A budget's Monte Carlo result and its validation of the first-order result (immutable).

    Attributes
    ----------
    budget : Budget
        The simulated budget.
    first_order : BudgetResult
        The law-of-propagation result that was validated (``propagation`` says whether the
        higher-order terms of JCGM 100:2008 eq. (10) were included).
    mc : MonteCarloResult
        The Monte Carlo result, every figure in the measurand's unit ``budget.unit``.
    validation : ValidationResult
        δ, d_low, d_high and the verdict (JCGM 101:2008, 8.2), in the measurand's unit.
    significant_digits : int
        n_dig used for the numerical tolerance δ (JCGM 101:2008, 7.9.2) [1].
    notes : tuple of str
        What the run itself had to say (a correlated input drawn as a normal, JCGM 101:2008,
        6.4.8); part of :attr:`warnings`.
    """

    budget: Budget = field(repr=False)
    first_order: BudgetResult = field(repr=False)
    mc: MonteCarloResult
    validation: ValidationResult
    significant_digits: int = 2
    notes: tuple[str, ...] = ()

    # ------------------------------------------------------------------ accessors
    @property
    def validated(self) -> bool:
        """``True`` when the first-order (or higher-order) result is validated."""
        return self.validation.validated

    @property
    def first_order_interval(self) -> tuple[float, float]:
        """The first-order coverage interval (y − U_p, y + U_p) [measurand unit]."""
        y, big_u = self.first_order.value, self.first_order.expanded_uncertainty
        return (y - big_u, y + big_u)

    @property
    def warnings(self) -> tuple[str, ...]:
        """The budget's warnings (as its first-order result has them) and the run's own."""
        return (
            self.first_order.warnings
            + self.notes
            + trial_warnings(
                self.mc.trials, self.mc.coverage_probability, adaptive=self.mc.batches is not None
            )
        )

    def to_dict(self) -> dict[str, Any]:
        """The result as plain data for JSON (measurand unit; no fingerprint or version).

        Returns
        -------
        dict
            Keys ``trials``, ``seed``, ``adaptive``, ``converged``, ``value``,
            ``standard_uncertainty``, ``coverage_probability``, ``interval`` {``low``,
            ``high``, ``kind``}, ``validation`` {``reference``, ``tolerance``, ``d_low``,
            ``d_high``, ``validated``, ``not_applicable``} and ``first_order`` {``value``,
            ``standard_uncertainty``, ``coverage_factor``, ``expanded_uncertainty``,
            ``propagation``}.
        """
        mc, v, fo = self.mc, self.validation, self.first_order
        low, high = mc.interval
        return {
            "trials": int(mc.trials),
            "seed": mc.seed,
            "adaptive": mc.batches is not None,
            "converged": bool(mc.converged),
            "value": float(mc.value),
            "standard_uncertainty": float(mc.standard_uncertainty),
            "coverage_probability": float(mc.coverage_probability),
            "interval": {"low": float(low), "high": float(high), "kind": mc.interval_kind},
            "validation": {
                "reference": v.reference,
                "tolerance": float(v.tolerance),
                "d_low": float(v.d_low),
                "d_high": float(v.d_high),
                "validated": bool(v.validated),
                "not_applicable": v.not_applicable or None,
            },
            "first_order": {
                "value": float(fo.value),
                "standard_uncertainty": float(fo.standard_uncertainty),
                "coverage_factor": float(fo.coverage_factor),
                "expanded_uncertainty": float(fo.expanded_uncertainty),
                "propagation": fo.propagation,
            },
        }


# ---------------------------------------------------------------------------- trials
#: Ratio of M to 1/(1 − p) below which a fixed-M run is flagged (JCGM 101:2008, 7.2.2:
#: M should be large compared with 1/(1 − p), "e.g. at least 10⁴ times greater"; from memory).
TRIALS_PER_TAIL = 10_000


def recommended_trials(coverage_probability: float) -> int:
    """The M that JCGM 101:2008, 7.2.2 suggests at least: 10⁴/(1 − p), rounded up.

    Examples
    --------
    >>> recommended_trials(0.95), recommended_trials(0.9545)
    (200000, 219781)
    """
    return math.ceil(round(TRIALS_PER_TAIL / (1.0 - coverage_probability), 6))


def trial_warnings(trials: int, coverage_probability: float, *, adaptive: bool) -> tuple[str, ...]:
    """A warning when a fixed number of trials is small for the coverage probability."""
    need = recommended_trials(coverage_probability)
    if adaptive or trials >= need:
        return ()
    return (
        f"M = {trials} Monte Carlo trials is fewer than 10⁴/(1 − p) = {need} for "
        f"p = {100 * coverage_probability:.2f} % (JCGM 101:2008, 7.2.2): the coverage interval "
        "and the validation may not be correct to the requested digits; use more trials or "
        "the adaptive procedure (7.9)",
    )


# ---------------------------------------------------------------------------- simulation
def simulate_budget(
    budget: Budget,
    *,
    trials: int | None = None,
    adaptive: bool = False,
    significant_digits: int = 2,
    seed: int | None = None,
    rng: np.random.Generator | None = None,
    interval: IntervalKind = "symmetric",
    higher_order_reference: bool = False,
    progress: ProgressCallback | None = None,
    max_trials: int = MAX_TRIALS,
    jobs: int | None = None,
) -> BudgetSimulation:
    """Propagate a budget's input distributions by Monte Carlo and validate its first-order result.

    Parameters
    ----------
    budget : Budget
        The budget; its inputs, constants, validated correlation matrix and coverage
        probability are used as they are.
    trials : int, optional
        Number M of trials of a fixed-M run [1]; default :data:`DEFAULT_TRIALS` (10⁶), at
        most :data:`~viscometry.gum.montecarlo.MAX_TRIALS` (10⁷). Not allowed with
        ``adaptive=True``.
    adaptive : bool
        Use the adaptive procedure of JCGM 101:2008, 7.9.4 instead of a fixed M.
    significant_digits : int
        n_dig: significant digits of u(y) for the numerical tolerance δ of the validation
        and, in an adaptive run, of the stopping rule [1].
    seed : int, optional
        Seed of the run's random streams (recorded in the result; the streams are laid out
        in :mod:`viscometry.gum.montecarlo`).
    rng : numpy.random.Generator, optional
        A generator to draw from instead of ``seed`` (then ``mc.seed`` is ``None``).
    interval : {"symmetric", "shortest"}
        The Monte Carlo coverage interval reported as ``mc.interval``. Validation always uses
        the probabilistically symmetric interval (JCGM 101:2008, 8.2).
    higher_order_reference : bool
        Validate the result with the higher-order terms of JCGM 100:2008 eq. (10) instead of
        the first-order one (uncorrelated inputs only).
    progress : callable, optional
        ``progress(trials_done, trials_total)`` is called in the calling thread after every
        chunk of :data:`~viscometry.gum.montecarlo.CHUNK_TRIALS` trials, in order (for a
        progress bar in a notebook); it must not print. In an adaptive run ``trials_total``
        is ``max_trials``, an upper bound. An exception it raises stops the run and is
        passed on.
    max_trials : int
        Upper bound on the trials of an adaptive run [1], at most (and by default)
        :data:`~viscometry.gum.montecarlo.MAX_TRIALS`; a run that reaches it without
        stabilising says so in ``mc.note`` and is not validated.
    jobs : int, optional
        Threads that draw and evaluate chunks of trials at the same time [1]; default every
        available core (:func:`~viscometry.gum.montecarlo.available_cores`), 1 for no
        threads, capped at :data:`~viscometry.gum.montecarlo.MAX_JOBS`. A seeded result is
        bit-identical whatever ``jobs`` is.

    Returns
    -------
    BudgetSimulation
        The Monte Carlo result and the validation, in the measurand's unit.

    Raises
    ------
    InputError
        Invalid arguments (``trials`` together with ``adaptive``, too few trials for the
        coverage probability, ``trials`` or ``max_trials`` above
        :data:`~viscometry.gum.montecarlo.MAX_TRIALS`, ``jobs`` below 1, both ``seed`` and
        ``rng``, an unknown ``interval``).
    ModelError
        The model gives non-finite values in some trials, or (``higher_order_reference``)
        the inputs are correlated.
    CorrelationError
        The budget's correlation matrix cannot be factorised.

    Notes
    -----
    A correlated input that is not normal is drawn as a normal (JCGM 101:2008, 6.4.8); the
    result says so in :attr:`BudgetSimulation.warnings` (no Python warning is emitted).

    The model values y_r = f(x_r; c) are computed in SI and converted to the measurand's
    unit, (y_r − offset)/scale, so the Monte Carlo estimate, u(y) and the coverage
    intervals are those of the measurand as reported. The first-order result y ± U_p
    (U_p = k u_c, k from t_p(ν_eff) or the budget's fixed k) is validated when
    d_low = |y − U_p − y_low| and d_high = |y + U_p − y_high| are both at most δ, the
    numerical tolerance of the Monte Carlo u(y) at n_dig significant digits. With a fixed
    coverage factor, U_p stands for the budget's coverage probability as stated.

    Inputs are drawn from their stated distributions (JCGM 101:2008, 6.4): a Type A input
    with ν degrees of freedom from a scaled and shifted t distribution (6.4.9); the
    degrees of freedom of a normal Type B input (from the reliability of its uncertainty)
    do not enter the draws, while they do enter ν_eff and hence k of the first-order
    result.

    References
    ----------
    JCGM 101:2008, 5.9, 7 (M, intervals, adaptive procedure) and 8 (validation);
    JCGM 100:2008, 5.1.2, G.4.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("A", "a * b", [InputQuantity.normal("a", 2.0, 0.002, "m"),
    ...                                        InputQuantity.normal("b", 3.0, 0.003, "m")],
    ...                         "cm^2")
    >>> sim = simulate_budget(b, trials=100_000, seed=1, significant_digits=1)
    >>> round(sim.mc.value, -1), sim.validated  # 6 m² = 60 000 cm², u(A) = 85 cm²
    (60000.0, True)
    >>> sorted(sim.to_dict())  # doctest: +NORMALIZE_WHITESPACE
    ['adaptive', 'converged', 'coverage_probability', 'first_order', 'interval', 'seed',
     'standard_uncertainty', 'trials', 'validation', 'value']
    """
    _check_arguments(budget, trials, adaptive, interval, progress)
    if adaptive:
        check_trials(max_trials, "max_trials")
    workers = check_jobs(jobs)
    first_order = budget.evaluate(higher_order=bool(higher_order_reference))
    total = DEFAULT_TRIALS if trials is None else trials
    model = _measurand_model(budget)
    inputs = budget.si_inputs()
    common = {"correlation": budget.correlation_matrix, "rng": rng, "seed": seed,
              "coverage_probability": budget.coverage_probability, "jobs": workers,
              "progress": progress}  # fmt: skip
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", CorrelationWarning)
        if adaptive:
            mc = run_adaptive(model, inputs, significant_digits=significant_digits,
                              max_trials=max_trials, interval=interval, **common)  # fmt: skip
        else:
            mc = run_monte_carlo(model, inputs, trials=total, **common)
            if interval == "shortest":
                mc = replace(mc, interval_kind="shortest", interval=mc.shortest_interval)
    notes = tuple(dict.fromkeys(str(w.message) for w in caught if w.category is CorrelationWarning))
    for w in caught:
        if w.category is not CorrelationWarning:  # not ours to keep: pass it on
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    validation = validate_against(
        first_order.value, first_order.expanded_uncertainty, mc,
        significant_digits=significant_digits, reference=first_order.propagation,
    )  # fmt: skip
    reason = _validation_not_applicable(inputs, first_order, mc, adaptive)
    if reason:
        validation = replace(validation, validated=False, not_applicable=reason)
    return BudgetSimulation(
        budget=budget, first_order=first_order, mc=mc, validation=validation,
        significant_digits=int(significant_digits), notes=notes,
    )  # fmt: skip


def _check_arguments(
    budget: object, trials: object, adaptive: object, interval: object, progress: object
) -> None:
    if not isinstance(budget, Budget):
        raise InputError(f"budget must be a Budget, got {budget!r}")
    if interval not in ("symmetric", "shortest"):
        raise InputError(f"interval must be 'symmetric' or 'shortest', got {interval!r}")
    if adaptive not in (True, False):
        raise InputError(f"adaptive must be True or False, got {adaptive!r}")
    if adaptive and trials is not None:
        raise InputError(
            f"give trials or adaptive=True, not both; got trials = {trials!r} with adaptive=True"
        )
    if trials is not None:
        check_trials(trials, "trials")  # before anything is evaluated or allocated
    if progress is not None and not callable(progress):
        raise InputError(
            f"progress must be a callable(trials_done, trials_total), got {progress!r}"
        )


def _measurand_model(budget: Budget) -> Callable[..., np.ndarray]:
    """The budget's compiled model on SI draws, giving the measurand in its own unit (a pure
    function of its arguments, so threads may call it at once)."""
    constants = tuple(float(c) for c in budget.si_arrays()[3])
    scale, offset = budget.output_scale, budget.output_offset
    value = budget.compiled.value

    def model(*x: np.ndarray) -> np.ndarray:
        y = value(*x, *constants)
        if offset != 0.0:
            y = y - offset
        return y / scale if scale != 1.0 else y

    return model


def _validation_not_applicable(
    inputs: tuple, first_order: BudgetResult, mc: MonteCarloResult, adaptive: bool
) -> str:
    """Why JCGM 101 clause 8 validation cannot be made here, or ``""``."""
    heavy = [
        q.name
        for q in inputs
        if q.distribution == "student_t" and q.standard_uncertainty > 0 and q.dof <= 2
    ]
    if heavy:
        return (
            f"input(s) {', '.join(heavy)} are t-distributed with ν ≤ 2, which has no finite "
            "variance (JCGM 101:2008, 6.4.9), so the Monte Carlo u(y) and the tolerance δ "
            "are undefined; use more readings or a pooled standard deviation"
        )
    if first_order.expanded_uncertainty == 0 or mc.standard_uncertainty == 0:
        return "every input is exactly known, so there is nothing to validate"
    if adaptive and not mc.converged:
        return "the adaptive Monte Carlo run did not stabilise within its trial limit"
    return ""
