"""A what-if editor for the input uncertainties of a budget, as an ipywidgets tree.

:func:`budget_editor` shows one numeric control per input (its standard uncertainty, in
the input's own unit), a live budget table, the rounded result statement and a Pareto chart
of the variance shares. Every change builds a *new* budget with
:meth:`viscometry.gum.Budget.with_uncertainty` and evaluates it with the model's cached,
lambdified derivatives (nothing is re-derived), then redraws. The budget passed in is
never modified; with the controls at their defaults the editor shows exactly that budget's
result.

The logic runs without a kernel or a browser: setting ``control.value`` from Python fires
the same callbacks synchronously, which is how the tests and the workbooks drive it.
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import ipywidgets as widgets

from viscometry.errors import ViscometryError
from viscometry.gum.budget import Budget, BudgetResult
from viscometry.plots import figure_png, pareto_figure
from viscometry.text import (
    budget_html,
    format_dof,
    format_number,
    format_unit,
    statement,
    unit_suffix,
)

__all__ = ["BudgetEditor", "budget_editor"]

#: Largest standard uncertainty a control accepts, as a multiple of max(|x|, u(x), 1).
_CONTROL_RANGE = 1.0e3


class _EditorState:
    """The one mutable part of an editor: which immutable budget/result is current."""

    __slots__ = ("budget", "result", "error", "hold")

    def __init__(self, budget: Budget, result: BudgetResult) -> None:
        self.budget = budget
        self.result = result
        self.error: str | None = None
        self.hold = False


@dataclass(frozen=True, eq=False)
class BudgetEditor:
    """Handle of a budget editor made by :func:`budget_editor`.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole tree; ``display(editor.widget)`` in a notebook.
    controls : mapping of str to ipywidgets.BoundedFloatText
        Standard uncertainty u(xᵢ) of each input, in the input's own unit, by input name.
    table_html : ipywidgets.HTML
        The live budget table (same rendering as ``BudgetResult._repr_html_``).
    statement_html : ipywidgets.HTML
        The rounded result statement (JCGM 100:2008, 7.2.6), u_c, ν_eff, k, the inputs
        changed from the budget as given, and any warnings.
    chart : ipywidgets.Image
        Pareto chart of the variance shares, as PNG.
    reset_button : ipywidgets.Button
        Restores every control to the budget as given.
    baseline : Budget
        The budget as given (never modified).
    chart_dpi : float
        Resolution of the chart image [dots per inch].
    """

    widget: widgets.VBox
    controls: Mapping[str, widgets.BoundedFloatText]
    table_html: widgets.HTML
    statement_html: widgets.HTML
    chart: widgets.Image
    reset_button: widgets.Button
    baseline: Budget
    chart_dpi: float = 80.0
    _state: _EditorState = field(repr=False, default=None)  # type: ignore[assignment]

    def current_budget(self) -> Budget:
        """The what-if budget built from the control values (a new object after each change)."""
        return self._state.budget

    def current_result(self) -> BudgetResult:
        """The evaluated :meth:`current_budget`."""
        return self._state.result

    @property
    def error(self) -> str | None:
        """Message of the last change that could not be evaluated, else None."""
        return self._state.error

    def reset(self) -> None:
        """Set every control back to the budget as given and show its result."""
        state = self._state
        state.hold = True
        try:
            for q in self.baseline.inputs:
                self.controls[q.name].value = q.standard_uncertainty
        finally:
            state.hold = False
        state.budget = self.baseline
        state.result = self.baseline.evaluate()
        state.error = None
        _redraw(self)


def budget_editor(budget: Budget, *, chart_dpi: float = 80.0) -> BudgetEditor:
    """Build a what-if editor for the input standard uncertainties of ``budget``.

    Parameters
    ----------
    budget : Budget
        The budget as given; the controls start at its standard uncertainties, so the
        editor's first result is exactly ``budget.evaluate()``.
    chart_dpi : float
        Resolution of the Pareto chart image [dots per inch].

    Returns
    -------
    BudgetEditor
        The widget tree and its handles.

    Raises
    ------
    ViscometryError
        If the budget as given cannot be evaluated.

    Notes
    -----
    After a change of u(xᵢ) the combined variance is recomputed by the law of propagation of
    uncertainty, u_c² = Σ cᵢ²u²(xᵢ) (+ correlation terms), JCGM 100:2008, 5.1.2 and 5.2.2;
    the sensitivity coefficients cᵢ do not depend on the uncertainties and come from the
    model's cache. A value that cannot be evaluated leaves the last good result in place and
    shows the message in the statement.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "a * b", [InputQuantity.normal("a", 2.0, 0.02),
    ...                                        InputQuantity.normal("b", 3.0, 0.03)])
    >>> editor = budget_editor(b)
    >>> editor.controls["a"].value = 0.0
    >>> round(editor.current_result().standard_uncertainty, 12)
    0.06
    >>> b.input("a").standard_uncertainty  # the budget as given is untouched
    0.02
    """
    result = budget.evaluate()
    state = _EditorState(budget, result)
    controls: dict[str, widgets.BoundedFloatText] = {}
    rows = []
    for q in budget.inputs:
        upper = _CONTROL_RANGE * max(abs(q.value), q.standard_uncertainty, 1.0)
        control = widgets.BoundedFloatText(
            value=q.standard_uncertainty,
            min=0.0,
            max=upper,
            description=f"u({q.name})",
            description_allow_html=False,
            tooltip=q.description or q.name,
            style={"description_width": "7em"},
            layout=widgets.Layout(width="18em"),
        )
        control.add_class(f"viscometry-u-{q.name}")  # stable hook for browser tests
        unit = format_unit(q.unit)
        controls[q.name] = control
        rows.append(widgets.HBox([control, widgets.Label(unit)]))
    reset_button = widgets.Button(description="Reset", tooltip="back to the budget as given")
    table_html = widgets.HTML()
    table_html.add_class("viscometry-budget-table")
    statement_html = widgets.HTML()
    statement_html.add_class("viscometry-statement")
    chart = widgets.Image(format="png", layout=widgets.Layout(max_width="520px"))
    title = html.escape(budget.title or f"Uncertainty budget of {budget.measurand}")
    header = widgets.HTML(f"<b>{title}</b><br>Standard uncertainties of the inputs (what-if):")
    tree = widgets.VBox(
        [
            header,
            widgets.HBox([widgets.VBox([*rows, reset_button]), chart]),
            statement_html,
            table_html,
        ]
    )
    editor = BudgetEditor(
        widget=tree,
        controls=MappingProxyType(controls),
        table_html=table_html,
        statement_html=statement_html,
        chart=chart,
        reset_button=reset_button,
        baseline=budget,
        chart_dpi=chart_dpi,
        _state=state,
    )
    for name, control in controls.items():
        control.observe(_make_callback(editor, name), names="value")
    reset_button.on_click(lambda _button: editor.reset())
    _redraw(editor)
    return editor


def _make_callback(editor: BudgetEditor, name: str) -> Any:
    def on_change(change: Mapping[str, Any]) -> None:
        state = editor._state
        if state.hold:
            return
        new_u = float(change["new"])
        if new_u == state.budget.input(name).standard_uncertainty:
            return
        try:
            budget = state.budget.with_uncertainty(name, new_u)
            result = budget.evaluate()
        except ViscometryError as exc:
            state.error = f"u({name}) = {new_u:.6g} cannot be evaluated: {exc}"
        else:
            state.budget, state.result, state.error = budget, result, None
        _redraw(editor)

    return on_change


def _redraw(editor: BudgetEditor) -> None:
    result = editor._state.result
    editor.table_html.value = budget_html(result)
    editor.statement_html.value = _statement_html(editor)
    fig = pareto_figure(result, figsize=(5.6, 3.4))
    editor.chart.value = figure_png(fig, dpi=editor.chart_dpi)


def _statement_html(editor: BudgetEditor) -> str:
    state = editor._state
    result = state.result
    e = html.escape
    unit = format_unit(result.unit)
    lines = [f"<b>{e(statement(result))}</b>"]
    lines.append(
        e(
            f"u_c = {result.standard_uncertainty:.2g} {unit}, "
            f"ν_eff = {format_dof(result.effective_dof)}, k = {result.coverage_factor:.3f}, "
            f"largest share: {result.dominant.name} "
            f"({100 * result.dominant.variance_share:.1f} %)"
        )
    )
    changed = [
        f"u({q.name}): {format_number(q.standard_uncertainty)} → "
        f"{format_number(state.budget.input(q.name).standard_uncertainty)}{unit_suffix(q.unit)}"
        for q in editor.baseline.inputs
        if state.budget.input(q.name).standard_uncertainty != q.standard_uncertainty
    ]
    if changed:
        lines.append(e("changed from the budget as given: " + "; ".join(changed)))
    else:
        lines.append("the budget as given")
    lines += [f"<span style='color:#a00'>warning: {e(w)}</span>" for w in result.warnings]
    if state.error is not None:
        lines.append(f"<span style='color:#a00'>{e(state.error)}</span>")
    return "<div class='viscometry-statement'>" + "<br>".join(lines) + "</div>"
