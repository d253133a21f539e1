"""Small widgets for using a result: a conformity decision and a proficiency-test score.

:func:`conformity_panel` takes an evaluated budget and asks for the tolerance limits, the
decision rule and the guard-band factor; it shows the verdict in words
(:func:`viscometry.conformity.decide`, :func:`viscometry.text.decision_statement`), the
acceptance interval and the caution that a decision rule is agreed beforehand.
:func:`score_panel` asks for the kind of score (E_n, z, z′, ζ) and the numbers it needs and
shows the score in words (:mod:`viscometry.proficiency`, :func:`viscometry.text.score_statement`).

Both are thin: every number comes from the library, every text from :mod:`viscometry.text`.
A value the library refuses (text that is not a number, lower limit above the upper, a
negative guard factor, an uncertainty that is not positive) shows the library's message next
to its field, and the last good verdict or score stays on screen. Setting a field's ``value``
(text) from Python fires the same callbacks, so tests and workbooks drive them without a
browser.
"""

from __future__ import annotations

import html
import inspect
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import ipywidgets as widgets

from viscometry.conformity import DECISION_CAUTION, ConformityDecision, decide
from viscometry.errors import InputError, ViscometryError
from viscometry.gum.budget import BudgetResult
from viscometry.proficiency import Score, en_score, z_prime_score, z_score, zeta_score
from viscometry.text import (
    decision_statement,
    format_number,
    score_statement,
    statement,
    unit_suffix,
)
from viscometry.widgets.builder_rows import NumberField
from viscometry.widgets.fields import controls_column, error_html, message_label, wrap_row

__all__ = [
    "ConformityPanel",
    "ScorePanel",
    "SCORE_KINDS",
    "conformity_panel",
    "score_panel",
]

_STYLE = {"description_width": "9em"}


class _FormState:
    """The one mutable part of a panel: the last good outcome and the refusals standing."""

    __slots__ = ("outcome", "refused")

    def __init__(self) -> None:
        self.outcome: Any = None
        self.refused: dict[str, str] = {}


def _show_refusals(messages: Mapping[str, widgets.HTML], refused: Mapping[str, str]) -> None:
    for key, label in messages.items():
        label.value = error_html([refused[key]] if key in refused else [])


def _route(exc: Exception, keys: Mapping[str, str]) -> str:
    """The field a library message is about: the parameter its text starts with, else ``""``."""
    first = str(exc).split(" ", 1)[0]
    return keys.get(first, "")


def _unit_label(unit: str) -> widgets.Label:
    """The unit beside a field (a column of its own, so fields line up)."""
    return widgets.Label(unit, layout=widgets.Layout(min_width="3em"))


def _read(
    fields: Mapping[str, NumberField], keys: list[str]
) -> tuple[dict[str, Any], dict[str, str]]:
    """The numbers of the fields ``keys`` (None for an empty optional one) and the refusals."""
    values, refused = {}, {}
    for key in keys:
        try:
            values[key] = fields[key].get()
        except ViscometryError as exc:
            refused[key] = str(exc)
    return values, refused


# =============================================================================== conformity
@dataclass(frozen=True, eq=False)
class ConformityPanel:
    """Handle of a conformity-decision panel made by :func:`conformity_panel`.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole tree; ``display(panel.widget)`` in a notebook.
    lower, upper : ipywidgets.Text
        Tolerance limits T_L, T_U in the measurand unit; empty for a one-sided limit.
    rule : ipywidgets.Dropdown
        ``"simple"`` or ``"guarded"`` acceptance.
    guard_factor : ipywidgets.Text
        r in the guard band w = r·U (guarded acceptance) [1].
    messages : mapping of str to ipywidgets.HTML
        The refusal next to each field (``"lower"``, ``"upper"``, ``"guard_factor"``) and
        ``""`` for one about the decision as a whole.
    verdict_html : ipywidgets.HTML
        The result, the verdict in words, the acceptance interval and the caution.
    result : BudgetResult
        The result decided on (value, u, k and ν_eff).
    dof : float
        Degrees of freedom of the measurand's distribution used for p_c [1].
    """

    widget: widgets.VBox
    lower: widgets.Text
    upper: widgets.Text
    rule: widgets.Dropdown
    guard_factor: widgets.Text
    messages: Mapping[str, widgets.HTML]
    verdict_html: widgets.HTML
    result: BudgetResult
    dof: float
    _fields: Mapping[str, NumberField] = field(repr=False, default_factory=dict)
    _state: _FormState = field(repr=False, default_factory=_FormState)

    @property
    def decision(self) -> ConformityDecision | None:
        """The last decision the library made (None if the first settings were refused)."""
        return self._state.outcome

    @property
    def error(self) -> str | None:
        """The latest refusal still standing, else None."""
        refused = self._state.refused
        return next(reversed(refused.values())) if refused else None

    def update(self) -> ConformityDecision | None:
        """Decide with the fields as they stand; show the verdict or the refusals."""
        state = self._state
        values, refused = _read(self._fields, ["lower", "upper", "guard_factor"])
        if not refused:
            r = self.result
            try:
                state.outcome = decide(
                    r.value, r.standard_uncertainty, values["lower"], values["upper"],
                    coverage_factor=r.coverage_factor, dof=self.dof, rule=self.rule.value,
                    guard_factor=values["guard_factor"],
                )  # fmt: skip
            except ViscometryError as exc:
                refused[_route(exc, {k: k for k in self.messages})] = str(exc)
        state.refused = refused
        _show_refusals(self.messages, refused)
        self.verdict_html.value = _verdict_html(self)
        return None if refused else state.outcome


def conformity_panel(
    result: BudgetResult,
    lower: float | None = None,
    upper: float | None = None,
    *,
    rule: str = "simple",
    guard_factor: float = 1.0,
    dof: float | None = None,
) -> ConformityPanel:
    """A panel deciding the conformity of ``result`` with tolerance limits (JCGM 106:2012).

    Parameters
    ----------
    result : BudgetResult
        The evaluated budget: its value, standard uncertainty and coverage factor are used.
    lower, upper : float or None
        Initial tolerance limits [measurand unit]; None for a one-sided specification.
    rule : {"simple", "guarded"}
        Initial decision rule.
    guard_factor : float
        Initial r of the guard band w = r·U, ≥ 0 [1].
    dof : float or None
        Degrees of freedom for the conformance probability; None takes the result's ν_eff
        (as ``viscometry decide --budget`` does) [1].

    Returns
    -------
    ConformityPanel
        The widget tree and its handles; it opens with the decision (or the refusal) shown.

    Raises
    ------
    InputError
        An unknown ``rule``.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "x", [InputQuantity.normal("x", 10.0, 0.1)],
    ...                         coverage_factor=2.0)
    >>> panel = conformity_panel(b.evaluate(), 9.0, 11.0)
    >>> panel.decision.verdict
    'accept'
    >>> panel.upper.value = "8"
    >>> panel.error, panel.decision.verdict  # refused: the last decision stays
    ('lower must be less than upper, got lower=9.0, upper=8.0', 'accept')
    """
    rules = [("simple acceptance", "simple"), ("guarded acceptance (w = r·U)", "guarded")]
    if rule not in dict((v, k) for k, v in rules):
        raise InputError(f"rule must be 'simple' or 'guarded', got {rule!r}")
    fields = {
        "lower": NumberField.make("lower limit", lower, optional=True,
                                  tooltip="lower tolerance limit; empty: none"),
        "upper": NumberField.make("upper limit", upper, optional=True,
                                  tooltip="upper tolerance limit; empty: none"),
        "guard_factor": NumberField.make("guard factor r", guard_factor,
                                         tooltip="w = r·U, used with guarded acceptance"),
    }  # fmt: skip
    rule_w = widgets.Dropdown(
        options=rules, value=rule, description="decision rule", style=_STYLE,
        layout=widgets.Layout(width="auto", min_width="22em"),
    )  # fmt: skip
    messages = {k: message_label() for k in (*fields, "")}
    unit = unit_suffix(result.unit).strip()
    rows = [wrap_row([fields[k].text, _unit_label(unit if k != "guard_factor" else ""),
                      messages[k]], gap="0 0.6em") for k in fields]  # fmt: skip
    verdict = widgets.HTML(layout=widgets.Layout(width="100%"))
    verdict.add_class("viscometry-decision")
    head = widgets.HTML(f"<b>Conformity decision</b> for {html.escape(statement(result))}")
    panel = ConformityPanel(
        widget=widgets.VBox(
            [head, wrap_row([controls_column([rule_w, *rows, messages[""]])]), verdict],
            layout=widgets.Layout(width="100%"),
        ),
        lower=fields["lower"].text, upper=fields["upper"].text, rule=rule_w,
        guard_factor=fields["guard_factor"].text, messages=MappingProxyType(messages),
        verdict_html=verdict, result=result,
        dof=result.effective_dof if dof is None else float(dof),
        _fields=MappingProxyType(fields),
    )  # fmt: skip
    for control in (rule_w, *(f.text for f in fields.values())):
        control.observe(lambda _change: panel.update(), names="value")
    panel.update()
    return panel


def _limit_text(x: float | None, unit: str) -> str:
    return "none" if x is None else f"{format_number(x, 6)}{unit}"


def _verdict_html(panel: ConformityPanel) -> str:
    e = html.escape
    d = panel.decision
    unit = unit_suffix(panel.result.unit)
    lines = []
    if d is not None:
        colour = "#060" if d.verdict == "accept" else "#a00"
        lines.append(f"<b style='color:{colour}'>{e(decision_statement(d, panel.result.unit))}</b>")
        lines.append(
            e(f"acceptance interval: lower {_limit_text(d.acceptance_lower, unit)}, upper "
              f"{_limit_text(d.acceptance_upper, unit)}")
        )  # fmt: skip
    for text in panel._state.refused.values():
        last = " (the verdict shown is the last good one)" if d is not None else ""
        lines.append(f"<span style='color:#a00'>not decided: {e(text)}{last}</span>")
    lines.append(f"<small>{e(DECISION_CAUTION)}</small>")
    return (
        "<div class='viscometry-decision' style='line-height:1.45'>" + "<br>".join(lines) + "</div>"
    )


# =============================================================================== scores
#: The scores of ISO 13528 the panel offers: kind → (label, library function).
SCORE_KINDS: Mapping[str, tuple[str, Callable[..., Score]]] = MappingProxyType(
    {
        "E_n": ("E_n number", en_score),
        "z": ("z score", z_score),
        "z'": ("z′ score", z_prime_score),
        "zeta": ("ζ score", zeta_score),
    }
)
#: The parameters of each score function, in its order.
_PARAMETERS = {k: tuple(inspect.signature(f).parameters) for k, (_l, f) in SCORE_KINDS.items()}
#: Field labels of the parameters (each field shows one parameter of the library function).
_LABELS = {
    "lab_value": "lab value x", "lab_expanded_uncertainty": "lab U",
    "lab_standard_uncertainty": "lab u", "reference_value": "reference X",
    "reference_expanded_uncertainty": "reference U", "assigned_value": "assigned x_pt",
    "sd_for_pt": "σ_pt", "assigned_value_uncertainty": "u(x_pt)",
}  # fmt: skip


@dataclass(frozen=True, eq=False)
class ScorePanel:
    """Handle of a proficiency-score panel made by :func:`score_panel`.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole tree; ``display(panel.widget)`` in a notebook.
    kind : ipywidgets.Dropdown
        ``"E_n"``, ``"z"``, ``"z'"`` or ``"zeta"``.
    fields : mapping of str to ipywidgets.Text
        One field per parameter of the score functions (named as the library names them);
        only those of the chosen kind are shown and used.
    messages : mapping of str to ipywidgets.HTML
        The refusal next to each field, and ``""`` for one about the score as a whole.
    statement_html : ipywidgets.HTML
        The score in words (:func:`viscometry.text.score_statement`).
    """

    widget: widgets.VBox
    kind: widgets.Dropdown
    fields: Mapping[str, widgets.Text]
    messages: Mapping[str, widgets.HTML]
    statement_html: widgets.HTML
    _numbers: Mapping[str, NumberField] = field(repr=False, default_factory=dict)
    _rows: Mapping[str, widgets.Box] = field(repr=False, default_factory=dict)
    _box: widgets.VBox = field(repr=False, default=None)  # type: ignore[assignment]
    _state: _FormState = field(repr=False, default_factory=_FormState)

    @property
    def score(self) -> Score | None:
        """The last score the library computed (None if the first values were refused)."""
        return self._state.outcome

    @property
    def error(self) -> str | None:
        """The latest refusal still standing, else None."""
        refused = self._state.refused
        return next(reversed(refused.values())) if refused else None

    def update(self) -> Score | None:
        """Score with the fields of the chosen kind; show the statement or the refusals."""
        state = self._state
        names = list(_PARAMETERS[self.kind.value])
        self._box.children = tuple(self._rows[n] for n in names)
        values, refused = _read(self._numbers, names)
        if not refused:
            try:
                state.outcome = SCORE_KINDS[self.kind.value][1](**values)
            except ViscometryError as exc:
                refused[_route(exc, {n: n for n in names})] = str(exc)
        state.refused = refused
        _show_refusals(self.messages, refused)
        self.statement_html.value = _score_html(self)
        return None if refused else state.outcome


def score_panel(
    kind: str = "E_n", values: Mapping[str, float] | None = None, *, unit: str = ""
) -> ScorePanel:
    """A panel computing a proficiency-test score and its class (ISO 13528:2015).

    Parameters
    ----------
    kind : {"E_n", "z", "z'", "zeta"}
        Initial kind of score.
    values : mapping of str to float, optional
        Initial numbers by the library's parameter names (``lab_value``,
        ``lab_expanded_uncertainty``, ``lab_standard_uncertainty``, ``reference_value``,
        ``reference_expanded_uncertainty``, ``assigned_value``, ``sd_for_pt``,
        ``assigned_value_uncertainty``) [measurand unit].
    unit : str
        The measurand unit, shown beside the fields.

    Returns
    -------
    ScorePanel
        The widget tree and its handles; it opens with the score (or the refusal) shown.

    Raises
    ------
    InputError
        An unknown ``kind`` or parameter name.

    Examples
    --------
    >>> panel = score_panel("z", {"lab_value": 12.5, "assigned_value": 10.0, "sd_for_pt": 1.0})
    >>> panel.score.classification
    'questionable'
    >>> panel.fields["sd_for_pt"].value = "0"
    >>> panel.error
    'sd_for_pt must be positive, got 0.0'
    """
    if kind not in SCORE_KINDS:
        raise InputError(f"kind must be one of {', '.join(SCORE_KINDS)}, got {kind!r}")
    values = dict(values or {})
    unknown = sorted(set(values) - set(_LABELS))
    if unknown:
        raise InputError(f"no score parameter named {unknown[0]!r} (parameters: "
                         f"{', '.join(_LABELS)})")  # fmt: skip
    numbers = {n: NumberField.make(label, values.get(n), tooltip=n) for n, label in _LABELS.items()}
    messages = {k: message_label() for k in (*_LABELS, "")}
    suffix = unit_suffix(unit).strip()
    rows = {n: wrap_row([f.text, _unit_label(suffix), messages[n]], gap="0 0.6em")
            for n, f in numbers.items()}  # fmt: skip
    kind_w = widgets.Dropdown(
        options=[(label, k) for k, (label, _f) in SCORE_KINDS.items()], value=kind,
        description="score", style=_STYLE, layout=widgets.Layout(width="auto", min_width="18em"),
    )  # fmt: skip
    text = widgets.HTML(layout=widgets.Layout(width="100%"))
    text.add_class("viscometry-score")
    box = widgets.VBox(layout=widgets.Layout(width="100%"))
    panel = ScorePanel(
        widget=widgets.VBox(
            [widgets.HTML("<b>Proficiency-test score</b> (ISO 13528:2015)"),
             wrap_row([controls_column([kind_w, box, messages[""]])]), text],
            layout=widgets.Layout(width="100%"),
        ),
        kind=kind_w, fields=MappingProxyType({n: f.text for n, f in numbers.items()}),
        messages=MappingProxyType(messages), statement_html=text,
        _numbers=MappingProxyType(numbers), _rows=MappingProxyType(rows), _box=box,
    )  # fmt: skip
    for control in (kind_w, *panel.fields.values()):
        control.observe(lambda _change: panel.update(), names="value")
    panel.update()
    return panel


def _score_html(panel: ScorePanel) -> str:
    e = html.escape
    s = panel.score
    lines = []
    if s is not None:
        colour = {"satisfactory": "#060", "questionable": "#a60"}.get(s.classification, "#a00")
        lines.append(f"<b style='color:{colour}'>{e(score_statement(s))}</b>")
    for text in panel._state.refused.values():
        last = " (the score shown is the last good one)" if s is not None else ""
        lines.append(f"<span style='color:#a00'>not scored: {e(text)}{last}</span>")
    return "<div class='viscometry-score' style='line-height:1.45'>" + "<br>".join(lines) + "</div>"
