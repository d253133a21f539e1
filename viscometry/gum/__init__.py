"""The GUM engine: inputs, whitelist formula parser, models, propagation, rounding, budgets."""

from viscometry.gum.budget import (
    DEFAULT_COVERAGE_PROBABILITY,
    Budget,
    BudgetResult,
    Constant,
    Correlation,
    CrossTerm,
    InputContribution,
    LinearisedBudget,
)
from viscometry.gum.canonical import canonical_form, fingerprint
from viscometry.gum.formula import parse_formula
from viscometry.gum.inputs import (
    DISTRIBUTIONS,
    InputQuantity,
    coverage_factor_for,
    dof_from_relative_uncertainty,
)
from viscometry.gum.model import CompiledModel, MeasurementModel, compile_model
from viscometry.gum.montecarlo import (
    MonteCarloResult,
    ValidationResult,
    coverage_interval,
    draw_inputs,
    numerical_tolerance,
    run_adaptive,
    run_monte_carlo,
    validate_against,
)
from viscometry.gum.propagation import (
    Propagation,
    combined_variance,
    higher_order_variance,
    propagate,
    truncate_dof,
    validate_correlation,
    welch_satterthwaite,
)
from viscometry.gum.rounding import RoundedResult, round_result
from viscometry.gum.simulation import BudgetSimulation, simulate_budget

__all__ = [
    "DEFAULT_COVERAGE_PROBABILITY",
    "DISTRIBUTIONS",
    "Budget",
    "BudgetResult",
    "CompiledModel",
    "Constant",
    "Correlation",
    "CrossTerm",
    "InputContribution",
    "InputQuantity",
    "LinearisedBudget",
    "MeasurementModel",
    "Propagation",
    "RoundedResult",
    "canonical_form",
    "fingerprint",
    "propagate",
    "combined_variance",
    "compile_model",
    "coverage_factor_for",
    "dof_from_relative_uncertainty",
    "higher_order_variance",
    "parse_formula",
    "round_result",
    "truncate_dof",
    "validate_correlation",
    "welch_satterthwaite",
    "BudgetSimulation",
    "MonteCarloResult",
    "ValidationResult",
    "coverage_interval",
    "draw_inputs",
    "numerical_tolerance",
    "run_adaptive",
    "run_monte_carlo",
    "simulate_budget",
    "validate_against",
]
