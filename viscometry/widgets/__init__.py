"""Jupyter widgets over the engine (edge layer): each is a function returning a handle.

A handle holds the ipywidgets tree (``.widget``, for ``display``) and the controls and
outputs by name, so the same logic is driven by a person in JupyterLab and by code in
plain pytest. Widgets only wire controls to library functions; every change builds new,
immutable budgets and results.
"""

from viscometry.widgets.audit_panel import AuditPanel, audit_panel
from viscometry.widgets.budget_editor import BudgetEditor, budget_editor
from viscometry.widgets.builder import BudgetBuilder, budget_builder
from viscometry.widgets.chain_panel import ChainPanel, chain_panel
from viscometry.widgets.decisions import ConformityPanel, ScorePanel, conformity_panel, score_panel
from viscometry.widgets.monte_carlo_panel import MonteCarloPanel, monte_carlo_panel
from viscometry.widgets.upgrade_explorer import UpgradeExplorer, upgrade_explorer

__all__ = [
    "AuditPanel",
    "audit_panel",
    "BudgetBuilder",
    "BudgetEditor",
    "ChainPanel",
    "ConformityPanel",
    "MonteCarloPanel",
    "ScorePanel",
    "UpgradeExplorer",
    "budget_builder",
    "budget_editor",
    "chain_panel",
    "conformity_panel",
    "monte_carlo_panel",
    "score_panel",
    "upgrade_explorer",
]
