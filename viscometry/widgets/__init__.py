"""Jupyter widgets over the engine (edge layer): each is a function returning a handle.

A handle holds the ipywidgets tree (``.widget``, for ``display``) and the controls and
outputs by name, so the same logic is driven by a person in JupyterLab and by code in
plain pytest. Widgets only wire controls to library functions; every change builds new,
immutable budgets and results.
"""

from viscometry._lazy import lazy_names

#: Where each public name lives; imported on first use (see :mod:`viscometry._lazy`). A
#: panel's function (``budget_editor``) stays the package's attribute once its submodule
#: (``viscometry.widgets.budget_editor``) is imported, as with eager imports.
_LAZY = {
    "viscometry.widgets.audit_panel": ("AuditPanel", "audit_panel"),
    "viscometry.widgets.budget_editor": ("BudgetEditor", "budget_editor"),
    "viscometry.widgets.builder": ("BudgetBuilder", "budget_builder"),
    "viscometry.widgets.chain_panel": ("ChainPanel", "chain_panel"),
    "viscometry.widgets.decisions": (
        "ConformityPanel",
        "ScorePanel",
        "conformity_panel",
        "score_panel",
    ),
    "viscometry.widgets.evidence_panel": ("EvidencePanel", "evidence_panel"),
    "viscometry.widgets.monte_carlo_panel": ("MonteCarloPanel", "monte_carlo_panel"),
    "viscometry.widgets.upgrade_explorer": ("UpgradeExplorer", "upgrade_explorer"),
}
__getattr__, __dir__ = lazy_names(globals(), _LAZY)


__all__ = [
    "AuditPanel",
    "audit_panel",
    "BudgetBuilder",
    "BudgetEditor",
    "ChainPanel",
    "ConformityPanel",
    "EvidencePanel",
    "MonteCarloPanel",
    "ScorePanel",
    "UpgradeExplorer",
    "budget_builder",
    "budget_editor",
    "chain_panel",
    "conformity_panel",
    "evidence_panel",
    "monte_carlo_panel",
    "score_panel",
    "upgrade_explorer",
]
