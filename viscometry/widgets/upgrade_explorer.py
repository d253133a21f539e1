"""An upgrade explorer for a budget, as an ipywidgets tree (lab-manager planning).

:func:`upgrade_explorer` shows one tick box per :class:`~viscometry.planning.UpgradeCandidate`
(its name and cost as a label that wraps, never cut) and a target for the expanded
uncertainty U; beside them, a verdict for the ticked set (U before and after, cost, whether the
target is reached, the cheapest set that reaches it, the plan's warnings) and a chart of U
before/after (:func:`viscometry.planning_plots.plot_upgrades`); below, the candidates alone
and the cost–U frontier — the sets that no cheaper set beats — with a tick box to list every
set instead.

Every combination of candidates is evaluated **once**, when the explorer is built, with
:func:`viscometry.planning.evaluate_upgrades` (one vectorised pass; 2ⁿ sets up to 12
candidates). Ticking a box or changing the target only asks the plan
(:meth:`~viscometry.planning.UpgradePlan.with_target`, ``.cheapest``, ``.frontier``,
``.option``); nothing is re-derived or re-evaluated, except a set that a greedy plan (more
than ``max_exhaustive`` candidates) did not visit, which is evaluated once on first use and
kept.

A target the plan refuses (zero, negative, not a number) shows the library's message next to
the field and the last good target stays; an empty field means no target. The budget and the
candidates passed in are never modified. The handle is driven the same way by a person in
JupyterLab and by code in plain pytest (setting ``checkbox.value`` or ``target.value`` fires
the observers synchronously).
"""

from __future__ import annotations

import html
import textwrap
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from types import MappingProxyType
from typing import Any

import ipywidgets as widgets

from viscometry.errors import InputError, ViscometryError
from viscometry.gum.budget import Budget
from viscometry.planning import UpgradeCandidate, UpgradeOption, UpgradePlan, evaluate_upgrades
from viscometry.planning_plots import plot_upgrades
from viscometry.plots import figure_png
from viscometry.text import format_cost, format_unit, per_cost_text, percent_change
from viscometry.widgets.builder_rows import NumberField
from viscometry.widgets.fields import (
    SCROLL_STYLE,
    chart_image,
    controls_column,
    error_html,
    message_label,
    warning_lines,
    wrap_row,
)

__all__ = ["UpgradeExplorer", "upgrade_explorer", "format_u", "tick_row"]


def format_u(x: float) -> str:
    """An expanded uncertainty as the explorer shows it: 4 significant digits (``.4g``).

    Four digits, not the two of a result statement, because options are compared with each
    other here and often differ only in the third digit.

    Examples
    --------
    >>> format_u(0.0040592), format_u(1.0)
    ('0.004059', '1')
    """
    return f"{x:.4g}"


def tick_row(label_html: str, value: bool = False, tooltip: str = "") -> tuple[Any, Any]:
    """A tick box with a label that wraps onto more lines instead of being cut.

    Returns the :class:`ipywidgets.Checkbox` (its ``value`` is the tick) and the row to show.
    """
    box = widgets.Checkbox(
        value=value, description="", indent=False, tooltip=tooltip,
        layout=widgets.Layout(width="2em", min_width="2em", flex="0 0 auto", margin="0"),
    )  # fmt: skip
    label = widgets.HTML(
        f"<div style='line-height:1.35;white-space:normal;padding-top:0.3em'>{label_html}</div>",
        layout=widgets.Layout(flex="1 1 12em", min_width="10em", width="auto"),
    )
    row = widgets.HBox([box, label], layout=widgets.Layout(width="100%", align_items="flex-start"))
    return box, row


class _ExplorerState:
    """The one mutable part of an explorer: options evaluated on demand, the accepted
    target, the last refusal and the last view."""

    __slots__ = ("plan", "target", "error", "view", "hold")

    def __init__(self, plan: UpgradePlan) -> None:
        self.plan = plan
        self.target = plan.target
        self.error: str | None = None
        self.view: UpgradePlan | None = None
        self.hold = False


@dataclass(frozen=True, eq=False)
class UpgradeExplorer:
    """Handle of an upgrade explorer made by :func:`upgrade_explorer`.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole tree; ``display(explorer.widget)`` in a notebook.
    checkboxes : mapping of str to ipywidgets.Checkbox
        One per candidate, by candidate name, in the order given.
    target : ipywidgets.Text
        Target expanded uncertainty in the measurand unit (four significant digits shown,
        the exact number kept); empty for no target.
    target_message : ipywidgets.HTML
        The refusal of a target (next to the field), empty when the target is applied.
    show_all : ipywidgets.Checkbox
        List every evaluated set (ranked by U) instead of the cost–U frontier only.
    summary_html : ipywidgets.HTML
        The verdict for the ticked set, and the plan's warnings.
    table_html : ipywidgets.HTML
        The candidates alone (ranked by reduction of U per unit cost) and the cost–U
        frontier (or every set).
    chart : ipywidgets.Image
        U before and after (PNG), for each candidate alone, the ticked set and the cheapest
        set reaching the target.
    plan : UpgradePlan
        Every evaluated set (made once; the target in it is the initial one).
    currency : str
        Label of the cost unit (never converted).
    top : int or None
        Most sets listed when every set is shown (None: all of them).
    chart_dpi : float
        Resolution of the chart [dots per inch].
    show_chart : bool
        Draw the chart on every change (drawing, not the numbers, is the slow part: a few
        tenths of a second per redraw).
    """

    widget: widgets.VBox
    checkboxes: Mapping[str, widgets.Checkbox]
    target: widgets.Text
    target_message: widgets.HTML
    show_all: widgets.Checkbox
    summary_html: widgets.HTML
    table_html: widgets.HTML
    chart: widgets.Image
    plan: UpgradePlan
    currency: str = ""
    top: int | None = None
    chart_dpi: float = 80.0
    show_chart: bool = True
    _target: NumberField = field(repr=False, default=None)  # type: ignore[assignment]
    _state: _ExplorerState = field(repr=False, default=None)  # type: ignore[assignment]

    # ------------------------------------------------------------------ queries
    @property
    def budget(self) -> Budget:
        """The budget as given (never modified)."""
        return self.plan.baseline.budget

    @property
    def error(self) -> str | None:
        """Message of the last target refused, while it stands; else None."""
        return self._state.error

    def selected(self) -> tuple[str, ...]:
        """Names of the ticked candidates, in candidate order."""
        return tuple(name for name, box in self.checkboxes.items() if box.value)

    def current_target(self) -> float | None:
        """The target U in use (the last one the plan accepted), or ``None``."""
        return self._state.target

    def option_for(self, names: Iterable[str]) -> UpgradeOption:
        """The evaluated option for a set of candidate names, judged against the current
        target (looked up; a set a greedy plan did not visit is evaluated once and kept)."""
        state = self._state
        option = state.plan.option(names)
        if option not in state.plan.options:
            state.plan = replace(state.plan, options=state.plan.options + (option,))
        return replace(option, reaches_target=option.reaches(self.current_target()))

    def selected_result(self) -> UpgradeOption:
        """The option of the ticked set (the baseline when nothing is ticked), with
        ``reaches_target`` for the current target."""
        return self.option_for(self.selected())

    def selected_budget(self) -> Budget:
        """The new :class:`Budget` with the ticked candidates applied (for a full evaluation)."""
        return self.plan.budget_for(self.selected())

    def current_plan(self) -> UpgradePlan:
        """The plan as the explorer shows it: judged against the current target by
        :meth:`viscometry.planning.UpgradePlan.with_target` (no re-evaluation)."""
        return self._state.plan.with_target(self.current_target())

    def cheapest(self) -> UpgradeOption | None:
        """The cheapest evaluated set reaching the current target (None without a target)."""
        return self.current_plan().cheapest

    def frontier(self) -> tuple[UpgradeOption, ...]:
        """The cost–U frontier of the evaluated sets (``UpgradePlan.frontier``), by cost."""
        return self.current_plan().frontier

    # ------------------------------------------------------------------ updates
    def set_target(self, target: float | None) -> bool:
        """Set the target from code (None: no target), as if typed; True when applied."""
        state = self._state
        state.hold = True
        try:
            self._target.set(target)
        finally:
            state.hold = False
        return _apply_target(self)

    def refresh(self) -> None:
        """Recompute the verdict, the table and the chart from the controls (look-ups only)."""
        chosen = self.option_for(self.selected())  # first: may add an on-demand option
        view = self.current_plan()
        self._state.view = view
        self.summary_html.value = _summary_html(self, view, chosen)
        self.table_html.value = _table_html(self, view, chosen)
        if self.show_chart:
            self.chart.value = figure_png(_chart(view, chosen), dpi=self.chart_dpi)


def _apply_target(explorer: UpgradeExplorer) -> bool:
    """Read the target field: apply an accepted target, or show the plan's refusal."""
    state = explorer._state
    try:
        t = explorer._target.get()
        state.plan.with_target(t)  # the plan refuses a target ≤ 0
    except ViscometryError as exc:
        state.error = str(exc)
        explorer.target_message.value = error_html([str(exc)])
        explorer.summary_html.value = _summary_html(
            explorer, explorer.current_plan(), explorer.selected_result()
        )
        return False
    state.target, state.error = t, None
    explorer.target_message.value = ""
    state.hold = True
    try:
        explorer._target.set(t)  # four digits shown, the exact number kept
    finally:
        state.hold = False
    explorer.refresh()
    return True


# =============================================================================== rendering


def _money(explorer: UpgradeExplorer, cost: float) -> str:
    return f"{format_cost(cost)} {explorer.currency}".rstrip()


def _target_lines(explorer: UpgradeExplorer, view: UpgradePlan, chosen: UpgradeOption) -> list[str]:
    e = html.escape
    u_unit = e(f" {format_unit(view.unit)}".rstrip())
    t = view.target
    if t is None:
        return ["<b>target:</b> none set (enter a target U &gt; 0)"]
    word, colour = ("reached", "#060") if chosen.reaches_target else ("not reached", "#a00")
    lines = [f"<b style='color:{colour}'>target U &le; {format_u(t)}{u_unit}: {word}</b>"]
    c = view.cheapest
    if c is None:
        best = view.best
        lines.append(
            "<b>cheapest set reaching the target:</b> none of the evaluated sets reaches it "
            f"(smallest U = {format_u(best.expanded_uncertainty)}{u_unit}, with {e(best.label)})"
        )
    else:
        lines.append(
            f"<b>cheapest set reaching the target:</b> {e(c.label)}, cost "
            f"{e(_money(explorer, c.cost))}, U = {format_u(c.expanded_uncertainty)}{u_unit}"
        )
    return lines


def _summary_html(explorer: UpgradeExplorer, view: UpgradePlan, chosen: UpgradeOption) -> str:
    e = html.escape
    u_unit = e(f" {format_unit(view.unit)}".rstrip())
    before = view.baseline.expanded_uncertainty
    after = chosen.expanded_uncertainty
    lines = [
        f"<b>ticked:</b> {e(chosen.label)}",
        f"<b>U before:</b> {format_u(before)}{u_unit} &rarr; <b>U after:</b> "
        f"{format_u(after)}{u_unit}{e(percent_change(before, after))}",
        f"<b>cost:</b> <span style='white-space:nowrap'>{e(_money(explorer, chosen.cost))}</span>",
        f"<b>dominant input after:</b> {e(chosen.dominant)}",
        *_target_lines(explorer, view, chosen),
    ]
    if view.search == "greedy":
        lines.append(
            "<i>more candidates than the exhaustive limit: sets were searched greedily, so the "
            "cheapest set is the cheapest among the sets evaluated</i>"
        )
    lines += warning_lines(view.warnings)
    if explorer.error is not None:
        lines.append(f"<span style='color:#a00'>target not applied: {e(explorer.error)}</span>")
    return (
        "<div class='viscometry-upgrade-summary' style='line-height:1.45'>"
        + "<br>".join(lines)
        + "</div>"
    )


def _row(cells: Sequence[str], header: bool = False, mark: str = "") -> str:
    tag = "th" if header else "td"
    style = f" style='{mark}'" if mark else ""
    return f"<tr{style}>" + "".join(f"<{tag}>{c}</{tag}>" for c in cells) + "</tr>"


#: Table cells stay on one line (costs and numbers are never cut), except the set's name.
_TABLE_STYLE = (
    "<style>.viscometry-upgrade-table td{white-space:nowrap;padding:0 0.5em}"
    ".viscometry-upgrade-table td:nth-child(2){white-space:normal;min-width:12em}</style>"
    + SCROLL_STYLE
)


def _header(explorer: UpgradeExplorer, view: UpgradePlan) -> list[str]:
    e = html.escape
    unit = format_unit(view.unit)
    ub = f" [{e(unit)}]" if unit else ""
    cur = f" [{e(explorer.currency)}]" if explorer.currency else ""
    per = f" [{e(unit)} per {e(explorer.currency)}]" if unit and explorer.currency else ""
    header = ["#", "set", f"cost{cur}", f"U{ub}", "relative U", f"reduction{ub}",
              f"reduction per cost{per}", "dominant"]  # fmt: skip
    return header + (["reaches target"] if view.target is not None else [])


def _cells(view: UpgradePlan, number: str, o: UpgradeOption) -> list[str]:
    e = html.escape
    row = [number, e(o.label), e(format_cost(o.cost)), format_u(o.expanded_uncertainty),
           f"{100 * o.relative_expanded_uncertainty:.3g} %", f"{o.reduction:.3g}",
           per_cost_text(o.reduction_per_cost), e(o.dominant)]  # fmt: skip
    if view.target is not None:
        row.append("" if o.reaches_target is None else ("yes" if o.reaches_target else "no"))
    return row


def _sets_part(explorer: UpgradeExplorer, view: UpgradePlan) -> tuple[str, list[UpgradeOption]]:
    """The title and the sets of the lower table: the frontier, or every set by U."""
    n = len(view.options)
    if explorer.show_all.value:
        shown = list(view.ranked[: explorer.top or n])  # rows built only for these
        return f"<b>every set, ranked by U ({len(shown)} of {n} shown)</b>", shown
    shown = list(view.frontier)
    return (
        f"<b>cost–U frontier: the {len(shown)} sets that no cheaper set beats, by cost</b> "
        f"(of {n} sets evaluated; tick “show all sets” for the rest)",
        shown,
    )


def _table_html(explorer: UpgradeExplorer, view: UpgradePlan, chosen: UpgradeOption) -> str:
    cheapest = view.cheapest
    keys = {"chosen": frozenset(chosen.candidates),
            "cheapest": frozenset(cheapest.candidates) if cheapest else None}  # fmt: skip

    def mark(o: UpgradeOption) -> str:
        if frozenset(o.candidates) == keys["chosen"]:
            return "background:#dde8ff"
        return "background:#ddf5dd" if frozenset(o.candidates) == keys["cheapest"] else ""

    by_name = {c.name: i for i, c in enumerate(view.candidates)}
    singles = sorted(view.singles, key=lambda o: (-o.reduction_per_cost, -o.reduction,
                                                  by_name[o.candidates[0]]))  # fmt: skip
    title, shown = _sets_part(explorer, view)
    listed = {frozenset(o.candidates) for o in shown}
    extra = [
        o for o in (chosen, cheapest) if o is not None and frozenset(o.candidates) not in listed
    ]
    extra = list({frozenset(o.candidates): o for o in extra}.values())
    header = _row(_header(explorer, view), header=True)
    parts = [
        _TABLE_STYLE, "<div class='viscometry-upgrade-table' style='overflow-x:auto;line-height:1.35'>",
        f"<p>baseline U = {format_u(view.baseline.expanded_uncertainty)}"
        f"{html.escape(' ' + format_unit(view.unit) if view.unit else '')}"
        f"; {len(view.options)} sets evaluated ({view.search})</p>",
        "<b>candidates alone, ranked by reduction of U per unit cost</b>", "<table>", header,
        *(_row(_cells(view, str(i), o), mark=mark(o)) for i, o in enumerate(singles, 1)),
        "</table>", title, "<table>", header,
        *(_row(_cells(view, str(i), o), mark=mark(o)) for i, o in enumerate(shown, 1)),
        *(_row(_cells(view, "·", o), mark=mark(o)) for o in extra),
        "</table>",
        "<small>blue: the ticked set; green: the cheapest set reaching the target; "
        "· a set outside this list</small>", "</div>",
    ]  # fmt: skip
    return "\n".join(parts)


#: Width of a line of a bar label in the chart [characters]; longer labels are wrapped.
_LABEL_WIDTH = 44


def _wrapped_label(o: UpgradeOption) -> str:
    """A set's label wrapped to lines of at most :data:`_LABEL_WIDTH` characters."""
    return textwrap.fill(o.label, _LABEL_WIDTH, break_on_hyphens=False)


def _chart(view: UpgradePlan, chosen: UpgradeOption) -> Any:
    """:func:`plot_upgrades` for the singles, the ticked set and the cheapest set, with the
    bar labels wrapped so that long combinations do not squeeze the axes away."""
    names: list[frozenset[str]] = [frozenset(o.candidates) for o in view.singles]
    for o in (chosen, view.cheapest):
        if o is not None and o.candidates and frozenset(o.candidates) not in names:
            names.append(frozenset(o.candidates))
    options = [view.option(n) for n in names]
    wrapped = {o.label: _wrapped_label(o) for o in options}
    most = max(w.count("\n") + 1 for w in wrapped.values())
    per_bar = max(0.45, 0.14 * most + 0.12)  # [inch] room for the tallest label
    fig = plot_upgrades(view, names, figsize=(7.5, 1.3 + per_bar * len(options)))
    ax = fig.axes[0]
    ax.set_yticks(
        ax.get_yticks(),
        [wrapped.get(t.get_text(), t.get_text()) for t in ax.get_yticklabels()],
        fontsize="small",
    )
    return fig


# =============================================================================== constructor


def upgrade_explorer(
    budget: Budget,
    candidates: Sequence[UpgradeCandidate],
    target: float | None = None,
    *,
    ticked: Iterable[str] = (),
    currency: str = "",
    top: int | None = None,
    show_all: bool = False,
    max_exhaustive: int = 12,
    chart_dpi: float = 80.0,
    show_chart: bool = True,
) -> UpgradeExplorer:
    """Build an explorer: tick upgrade candidates, set a target U, see the cost–U frontier.

    Parameters
    ----------
    budget : Budget
        The budget as it stands (never modified).
    candidates : sequence of UpgradeCandidate
        Unique names; see :func:`viscometry.planning.evaluate_upgrades`.
    target : float or None
        Initial target expanded uncertainty, > 0, in the measurand unit (``budget.unit``);
        None leaves the target field empty (no target). [measurand unit]
    ticked : iterable of str
        Candidates ticked when the explorer opens.
    currency : str
        Label of the costs, shown beside them (never converted).
    top : int or None
        Most sets listed when every set is shown, ≥ 1 (None: all).
    show_all : bool
        Open with every set listed instead of the cost–U frontier.
    max_exhaustive : int
        Passed to :func:`~viscometry.planning.evaluate_upgrades` (every subset up to this
        many candidates, a greedy search above).
    chart_dpi : float
        Resolution of the chart [dots per inch].
    show_chart : bool
        Draw the chart (False leaves the image empty; the numbers are unaffected).

    Returns
    -------
    UpgradeExplorer
        The widget tree and its handles.

    Raises
    ------
    InputError
        Bad candidates or target (as ``evaluate_upgrades``), an unknown ticked name, or
        ``top`` < 1.

    Notes
    -----
    All sets are evaluated once (JCGM 100:2008, 5.1.2, G.4.1, G.6.4; see
    :func:`~viscometry.planning.evaluate_upgrades` for the combination rule). The cheapest
    set reaching a target and the frontier come from the plan
    (:func:`viscometry.planning.cheapest_reaching`, :func:`viscometry.planning.frontier`); a
    change of target re-ranks without re-evaluating.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> from viscometry.planning import UpgradeCandidate
    >>> b = Budget.from_formula("y", "a + b", [InputQuantity.normal("a", 1.0, 3.0),
    ...                                        InputQuantity.normal("b", 1.0, 4.0)],
    ...                         coverage_factor=2.0)
    >>> ex = upgrade_explorer(b, [UpgradeCandidate("better b", 10.0, {"b": 0.0})], target=7.0)
    >>> ex.checkboxes["better b"].value = True
    >>> ex.selected_result().expanded_uncertainty, ex.selected_result().reaches_target
    (6.0, True)
    >>> ex.target.value = "-1"
    >>> ex.error, ex.current_target()
    ('target expanded uncertainty must be positive, got -1.0', 7.0)
    """
    _check_arguments(top, currency)
    plan = evaluate_upgrades(budget, candidates, target=target, max_exhaustive=max_exhaustive)
    ticked = tuple(ticked)
    names = [c.name for c in plan.candidates]
    for n in ticked:
        if n not in names:
            raise InputError(f"ticked candidate {n!r} is not one of: {', '.join(names)}")
    c = _controls(plan, ticked, currency, show_all)
    explorer = UpgradeExplorer(
        widget=_layout(budget, plan, c),
        checkboxes=MappingProxyType(c["boxes"]),
        target=c["target"].text,
        target_message=c["target_message"],
        show_all=c["show_all"],
        summary_html=c["summary"],
        table_html=c["table"],
        chart=c["chart"],
        plan=plan,
        currency=currency,
        top=top,
        chart_dpi=chart_dpi,
        show_chart=show_chart,
        _target=c["target"],
        _state=_ExplorerState(plan),
    )
    _wire(explorer)
    explorer.refresh()
    return explorer


def _check_arguments(top: object, currency: object) -> None:
    if top is not None and (isinstance(top, bool) or not isinstance(top, int) or top < 1):
        raise InputError(f"top must be a positive integer, got {top!r}")
    if not isinstance(currency, str):
        raise InputError(f"currency must be a text label, got {currency!r}")


def _controls(
    plan: UpgradePlan, ticked: tuple[str, ...], currency: str, show_all: bool
) -> dict[str, Any]:
    e = html.escape
    money = f" {currency}" if currency else ""
    boxes, rows = {}, []
    for cand in plan.candidates:
        cost = f"<span style='white-space:nowrap'>({e(format_cost(cand.cost) + money)})</span>"
        boxes[cand.name], row = tick_row(
            f"{e(cand.name)} {cost}", cand.name in ticked, cand.description or cand.name
        )
        rows.append(row)
    unit = format_unit(plan.unit)
    target = NumberField.make(
        "target U", plan.target, optional=True,
        tooltip=f"target expanded uncertainty [{unit}]; empty: no target",
    )  # fmt: skip
    show_all_box, show_all_row = tick_row("show all sets (not only the cost–U frontier)", show_all)
    chart = chart_image("640px")
    table = widgets.HTML(layout=widgets.Layout(width="100%"))
    table.add_class("viscometry-scroll-x")
    chart.layout.flex = "2 1 22em"  # long bar labels: the chart takes the larger share of a row
    return {
        "boxes": boxes, "rows": rows, "target": target, "unit": unit,
        "target_message": message_label(), "show_all": show_all_box,
        "show_all_row": show_all_row, "summary": widgets.HTML(layout=widgets.Layout(width="100%")),
        "table": table, "chart": chart,
    }  # fmt: skip


def _layout(budget: Budget, plan: UpgradePlan, c: Mapping[str, Any]) -> widgets.VBox:
    title = html.escape(budget.title or f"Uncertainty budget of {budget.measurand}")
    header = widgets.HTML(
        f"<b>{title}</b><br>Which upgrade? Tick candidates and set a target U "
        f"(all {len(plan.options)} sets were evaluated once; JCGM 100:2008):"
    )
    unit = widgets.Label(c["unit"], layout=widgets.Layout(min_width="3em"))
    column = controls_column(
        [
            *c["rows"],
            wrap_row([c["target"].text, unit, c["target_message"]], gap="0 0.6em"),
            c["summary"],
        ]
    )
    return widgets.VBox(
        [header, wrap_row([column, c["chart"]]), c["show_all_row"], c["table"]],
        layout=widgets.Layout(width="100%"),
    )


def _wire(explorer: UpgradeExplorer) -> None:
    def on_change(_change: Mapping[str, Any]) -> None:
        explorer.refresh()

    def on_target(_change: Mapping[str, Any]) -> None:
        if not explorer._state.hold:
            _apply_target(explorer)

    for box in explorer.checkboxes.values():
        box.observe(on_change, names="value")
    explorer.show_all.observe(on_change, names="value")
    explorer.target.observe(on_target, names="value")
