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

from viscometry._lazy import lazy_names

#: Where each public name lives; imported on first use (see :mod:`viscometry._lazy`).
#: ``working_range`` is the function, also once its submodule is imported.
_LAZY = {
    "viscometry.planning.target": (
        "RequiredUncertainty",
        "required_uncertainties",
        "required_uncertainty",
    ),
    "viscometry.planning.upgrades": (
        "MAX_CANDIDATES",
        "MAX_EXHAUSTIVE",
        "TARGET_TOLERANCE",
        "UpgradeCandidate",
        "UpgradeOption",
        "UpgradePlan",
        "apply_candidates",
        "cheapest_reaching",
        "evaluate_upgrades",
        "frontier",
    ),
    "viscometry.planning.working_range": (
        "MAX_POINTS",
        "ROUND_UP_ALLOWANCE",
        "WorkingRange",
        "round_up",
        "scope_table",
        "working_range",
    ),
}
__getattr__, __dir__ = lazy_names(globals(), _LAZY)


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
