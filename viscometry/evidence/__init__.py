"""Lab evidence (core layer: no files, no printing): acceptance of timings and duplicate
determinations, and the calibration history of a viscometer constant.

* :mod:`viscometry.evidence.acceptance` — flow-time agreement, determinability of duplicate
  determinations, repeatability r and reproducibility R (ISO 5725-6), verdicts that say what
  to do (accept, repeat, investigate);
* :mod:`viscometry.evidence.history` — certificates of a viscometer constant, a weighted drift
  fit with its covariance, the constant predicted at a date, a stability term for a budget and
  a recommended recalibration interval;
* :mod:`viscometry.evidence.control` — the Shewhart chart of a check standard, its run rules
  and the within-lab reproducibility s_Rw;
* :mod:`viscometry.evidence.topdown` — proficiency rounds and their scores, the top-down
  uncertainty (Nordtest TR 537 / ISO 21748) and the reconciliation with a budget's U.

Files are read by :mod:`viscometry.io.history`; text comes from
:mod:`viscometry.evidence_text`, charts from :mod:`viscometry.evidence_plots`.
"""

from viscometry._lazy import lazy_names

#: Where each public name lives; imported on first use (see :mod:`viscometry._lazy`).
_LAZY = {
    "viscometry.evidence.acceptance": (
        "ACTIONS",
        "AcceptanceLimit",
        "AcceptanceVerdict",
        "CRITICAL_RANGE_FACTORS",
        "ISO_5725_FACTOR",
        "LIMITS",
        "check_determinations",
        "check_flow_times",
        "check_laboratories",
        "critical_range_factor",
        "repeatability_limit",
        "reproducibility_limit",
    ),
    "viscometry.evidence.control": (
        "ControlChart",
        "ControlPoint",
        "ControlRecord",
        "RuleViolation",
        "control_chart",
        "run_rule_violations",
    ),
    "viscometry.evidence.topdown": (
        "BudgetClaim",
        "ConsistencyTest",
        "ProficiencyHistory",
        "ProficiencyRound",
        "Reconciliation",
        "TopDown",
        "reconcile",
        "top_down",
    ),
    "viscometry.evidence.history": (
        "CalibrationHistory",
        "CalibrationRecord",
        "DriftFit",
        "Prediction",
        "RecalibrationInterval",
        "fit_drift",
    ),
}
__getattr__, __dir__ = lazy_names(globals(), _LAZY)

__all__ = [
    "ACTIONS",
    "AcceptanceLimit",
    "AcceptanceVerdict",
    "BudgetClaim",
    "CRITICAL_RANGE_FACTORS",
    "CalibrationHistory",
    "CalibrationRecord",
    "ConsistencyTest",
    "ControlChart",
    "ControlPoint",
    "ControlRecord",
    "DriftFit",
    "ISO_5725_FACTOR",
    "LIMITS",
    "Prediction",
    "ProficiencyHistory",
    "ProficiencyRound",
    "RecalibrationInterval",
    "Reconciliation",
    "RuleViolation",
    "TopDown",
    "check_determinations",
    "check_flow_times",
    "check_laboratories",
    "control_chart",
    "critical_range_factor",
    "fit_drift",
    "reconcile",
    "repeatability_limit",
    "reproducibility_limit",
    "run_rule_violations",
    "top_down",
]
