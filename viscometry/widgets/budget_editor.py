"""A what-if editor for the input uncertainties of a budget, as an ipywidgets tree.

:func:`budget_editor` shows one text field per input (its standard uncertainty, in the
input's own unit, to about four significant digits while the exact number is kept), a live
budget table, the rounded result statement with the budget's warnings, and a Pareto chart of
the variance shares. Every accepted change builds a *new* budget with
:meth:`viscometry.gum.Budget.with_uncertainty` and evaluates it with the model's cached,
lambdified derivatives (nothing is re-derived), then redraws. The budget passed in is never
modified; with the fields at their defaults the editor shows exactly that budget's result.

A field the budget refuses (text that is not a number, a negative uncertainty) shows the
library's message next to it and in the statement, and the last good result stays on screen;
nothing is clamped or ignored. Plausibility warnings of the result (an uncertainty as large
as a sign-bound estimate, an interval reaching below zero) are shown in colour.

The logic runs without a kernel or a browser: setting ``control.value`` (text) or calling
:meth:`BudgetEditor.set_uncertainty` from Python fires the same callbacks synchronously,
which is how the tests and the workbooks drive it.
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import ipywidgets as widgets

from viscometry.errors import InputError, ViscometryError
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
from viscometry.widgets.builder_rows import NumberField
from viscometry.widgets.fields import (
    SCROLL_STYLE,
    chart_image,
    controls_column,
    error_html,
    message_label,
    scrolling_html,
    warning_lines,
    wrap_row,
)

__all__ = ["BudgetEditor", "budget_editor"]


class _EditorState:
    """The one mutable part of an editor: which immutable budget/result is current, and the
    refusals still standing (input name → message), in the order they happened."""

    __slots__ = ("budget", "result", "refused", "hold")

    def __init__(self, budget: Budget, result: BudgetResult) -> None:
        self.budget = budget
        self.result = result
        self.refused: dict[str, str] = {}
        self.hold = False


@dataclass(frozen=True, eq=False)
class BudgetEditor:
    """Handle of a budget editor made by :func:`budget_editor`.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole tree; ``display(editor.widget)`` in a notebook.
    controls : mapping of str to ipywidgets.Text
        The field of the standard uncertainty u(xᵢ) of each input, in the input's own unit,
        by input name; it shows about four significant digits. Setting its ``value`` to a
        text applies it as a person typing it would.
    messages : mapping of str to ipywidgets.HTML
        The refusal shown next to each field (empty when the field's value is applied).
    table_html : ipywidgets.HTML
        The live budget table (:func:`viscometry.text.budget_html`).
    statement_html : ipywidgets.HTML
        The rounded result statement (JCGM 100:2008, 7.2.6), u_c, ν_eff, the inputs changed
        from the budget as given, the result's warnings and any refusal.
    chart : ipywidgets.Image
        Pareto chart of the variance shares, as PNG.
    reset_button : ipywidgets.Button
        Restores every field to the budget as given.
    baseline : Budget
        The budget as given (never modified).
    chart_dpi : float
        Resolution of the chart image [dots per inch].
    """

    widget: widgets.VBox
    controls: Mapping[str, widgets.Text]
    messages: Mapping[str, widgets.HTML]
    table_html: widgets.HTML
    statement_html: widgets.HTML
    chart: widgets.Image
    reset_button: widgets.Button
    baseline: Budget
    chart_dpi: float = 80.0
    _fields: Mapping[str, NumberField] = field(repr=False, default_factory=dict)
    _state: _EditorState = field(repr=False, default=None)  # type: ignore[assignment]

    def current_budget(self) -> Budget:
        """The what-if budget of the accepted field values (a new object after each change)."""
        return self._state.budget

    def current_result(self) -> BudgetResult:
        """The evaluated :meth:`current_budget` (the last good result)."""
        return self._state.result

    @property
    def error(self) -> str | None:
        """Message of the latest refusal still standing, else None."""
        refused = self._state.refused
        return next(reversed(refused.values())) if refused else None

    def set_uncertainty(self, name: str, standard_uncertainty: float) -> bool:
        """Set u(``name``) to an exact number from code, as if typed; True when applied.

        A refused value shows its message next to the field (and returns False), exactly as
        a typed one would; the last good result stays.
        """
        if name not in self._fields:
            raise InputError(
                f"no input named {name!r} (inputs: {', '.join(self.baseline.input_names)})"
            )
        state = self._state
        state.hold = True
        try:
            self._fields[name].set(standard_uncertainty)
        finally:
            state.hold = False
        return _apply(self, name)

    def reset(self) -> None:
        """Set every field back to the budget as given and show its result."""
        state = self._state
        state.hold = True
        try:
            for q in self.baseline.inputs:
                self._fields[q.name].set(q.standard_uncertainty)
        finally:
            state.hold = False
        state.budget = self.baseline
        state.result = self.baseline.evaluate()
        state.refused.clear()
        for message in self.messages.values():
            message.value = ""
        _redraw(self)


def budget_editor(budget: Budget, *, chart_dpi: float = 80.0) -> BudgetEditor:
    """Build a what-if editor for the input standard uncertainties of ``budget``.

    Parameters
    ----------
    budget : Budget
        The budget as given; the fields start at its standard uncertainties, so the
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
    model's cache. A value that is refused or cannot be evaluated leaves the last good result
    in place and shows the message next to its field and in the statement.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "a * b", [InputQuantity.normal("a", 2.0, 0.02),
    ...                                        InputQuantity.normal("b", 3.0, 0.03)])
    >>> editor = budget_editor(b)
    >>> editor.controls["a"].value = "0"
    >>> round(editor.current_result().standard_uncertainty, 12)
    0.06
    >>> editor.controls["a"].value = "-0.5"
    >>> editor.error
    'a.standard_uncertainty must be non-negative, got -0.5'
    >>> round(editor.current_result().standard_uncertainty, 12)  # the last good result stays
    0.06
    >>> b.input("a").standard_uncertainty  # the budget as given is untouched
    0.02
    """
    result = budget.evaluate()
    fields, messages, rows = _fields(budget)
    reset_button = widgets.Button(
        description="Reset", tooltip="back to the budget as given",
        layout=widgets.Layout(width="auto", min_width="6em"),
    )  # fmt: skip
    table_html = scrolling_html()
    table_html.add_class("viscometry-budget-table")
    statement_html = widgets.HTML(layout=widgets.Layout(width="100%"))
    statement_html.add_class("viscometry-statement")
    chart = chart_image("560px")
    title = html.escape(budget.title or f"Uncertainty budget of {budget.measurand}")
    header = widgets.HTML(f"<b>{title}</b><br>Standard uncertainties of the inputs (what-if):")
    tree = widgets.VBox(
        [
            header,
            wrap_row([controls_column([*rows, wrap_row([reset_button])]), chart]),
            statement_html,
            table_html,
        ],
        layout=widgets.Layout(width="100%"),
    )
    editor = BudgetEditor(
        widget=tree,
        controls=MappingProxyType({n: f.text for n, f in fields.items()}),
        messages=MappingProxyType(messages),
        table_html=table_html,
        statement_html=statement_html,
        chart=chart,
        reset_button=reset_button,
        baseline=budget,
        chart_dpi=chart_dpi,
        _fields=MappingProxyType(fields),
        _state=_EditorState(budget, result),
    )
    for name, f in fields.items():
        f.text.observe(_make_callback(editor, name), names="value")
    reset_button.on_click(lambda _button: editor.reset())
    _redraw(editor)
    return editor


def _fields(
    budget: Budget,
) -> tuple[dict[str, NumberField], dict[str, widgets.HTML], list[widgets.Box]]:
    """One number field, unit label and message per input, each row wrapping when narrow."""
    fields: dict[str, NumberField] = {}
    messages: dict[str, widgets.HTML] = {}
    rows = []
    for q in budget.inputs:
        f = NumberField.make(f"u({q.name})", q.standard_uncertainty, tooltip=q.description)
        f.text.add_class(f"viscometry-u-{q.name}")  # stable hook for browser tests
        unit = widgets.Label(format_unit(q.unit), layout=widgets.Layout(min_width="3em"))
        messages[q.name] = message_label()
        fields[q.name] = f
        rows.append(wrap_row([f.text, unit, messages[q.name]], gap="0 0.6em"))
    return fields, messages, rows


def _make_callback(editor: BudgetEditor, name: str) -> Any:
    def on_change(_change: Mapping[str, Any]) -> None:
        if not editor._state.hold:
            _apply(editor, name)

    return on_change


def _apply(editor: BudgetEditor, name: str) -> bool:
    """Read the field of ``name``, build and evaluate the new budget, or show the refusal."""
    state = editor._state
    f = editor._fields[name]
    try:
        new_u = f.get()
        assert new_u is not None  # the fields are not optional
        if new_u == state.budget.input(name).standard_uncertainty:
            budget, result = state.budget, state.result
        else:
            budget = state.budget.with_uncertainty(name, new_u)
            try:
                result = budget.evaluate()
            except ViscometryError as exc:
                raise InputError(
                    f"u({name}) = {f.text.value.strip()} cannot be evaluated: {exc}"
                ) from exc
    except ViscometryError as exc:
        state.refused.pop(name, None)  # re-insert: the latest refusal comes last
        state.refused[name] = str(exc)
        editor.messages[name].value = error_html([str(exc)])
        editor.statement_html.value = _statement_html(editor)
        return False
    state.refused.pop(name, None)
    editor.messages[name].value = ""
    changed = budget is not state.budget
    state.budget, state.result = budget, result
    state.hold = True
    try:
        f.set(new_u)  # show four digits of the accepted number, keep it exactly
    finally:
        state.hold = False
    if changed:
        _redraw(editor)
    else:
        editor.statement_html.value = _statement_html(editor)
    return True


def _redraw(editor: BudgetEditor) -> None:
    result = editor._state.result
    editor.table_html.value = SCROLL_STYLE + budget_html(result)
    editor.statement_html.value = _statement_html(editor)
    fig = pareto_figure(result, figsize=(5.6, 3.4))
    editor.chart.value = figure_png(fig, dpi=editor.chart_dpi)


def _statement_html(editor: BudgetEditor) -> str:
    state = editor._state
    result = state.result
    e = html.escape
    dom = result.dominant
    lines = [f"<b>{e(statement(result))}</b>"]
    lines.append(
        e(
            f"u_c = {format_number(result.standard_uncertainty, 2)}{unit_suffix(result.unit)}, "
            f"ν_eff = {format_dof(result.effective_dof)}, largest share: {dom.name} "
            f"({format_number(100 * dom.variance_share, 3)} %)"
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
    lines += warning_lines(result.warnings)
    for text in state.refused.values():
        lines.append(
            f"<span style='color:#a00'>not applied: {e(text)} (the result shown is the last "
            "good one)</span>"
        )
    return (
        "<div class='viscometry-statement' style='line-height:1.45'>"
        + "<br>".join(lines)
        + "</div>"
    )
