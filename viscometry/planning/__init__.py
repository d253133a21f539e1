"""Lab-manager planning on an immutable budget (core layer: no files, no printing).

* :mod:`viscometry.planning.upgrades` — upgrade candidates with costs, evaluated alone and in
  every combination (:func:`evaluate_upgrades`), the cost–U frontier and the cheapest set that
  reaches a target U;
* :mod:`viscometry.planning.target` — the inverse question: which u(xᵢ) reaches a target
  (:func:`required_uncertainty`);
* :mod:`viscometry.planning.working_range` — the budget across its working range
  (:func:`working_range`) and the stated uncertainty per sub-range of the scope
  (:func:`scope_table`).

Every U comes from the one propagation kernel, :func:`viscometry.gum.propagation.propagate`.
The upgrade-candidates file is read by :mod:`viscometry.io.candidates`.
"""

from viscometry.planning.target import (
    RequiredUncertainty,
    required_uncertainties,
    required_uncertainty,
)
from viscometry.planning.upgrades import (
    MAX_CANDIDATES,
    MAX_EXHAUSTIVE,
    TARGET_TOLERANCE,
    UpgradeCandidate,
    UpgradeOption,
    UpgradePlan,
    apply_candidates,
    cheapest_reaching,
    evaluate_upgrades,
    frontier,
)
from viscometry.planning.working_range import (
    MAX_POINTS,
    ROUND_UP_ALLOWANCE,
    WorkingRange,
    round_up,
    scope_table,
    working_range,
)

__all__ = [
    "MAX_CANDIDATES",
    "MAX_EXHAUSTIVE",
    "MAX_POINTS",
    "ROUND_UP_ALLOWANCE",
    "TARGET_TOLERANCE",
    "RequiredUncertainty",
    "UpgradeCandidate",
    "UpgradeOption",
    "UpgradePlan",
    "WorkingRange",
    "apply_candidates",
    "cheapest_reaching",
    "evaluate_upgrades",
    "frontier",
    "required_uncertainties",
    "required_uncertainty",
    "round_up",
    "scope_table",
    "working_range",
]
