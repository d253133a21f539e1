"""An upgrade explorer for a budget, as an ipywidgets tree (lab-manager planning).

:func:`upgrade_explorer` shows one checkbox per :class:`~viscometry.planning.UpgradeCandidate`
and a target for the expanded uncertainty U; below, a verdict for the ticked set (U before and
after, cost, whether the target is reached, the cheapest set that reaches it), a ranked table
and a chart of U before/after (:func:`viscometry.planning_plots.plot_upgrades`).

Every combination of candidates is evaluated **once**, when the explorer is built, with
:func:`viscometry.planning.evaluate_upgrades` (one vectorised pass; 2ⁿ sets up to 12
candidates). Ticking a box or changing the target only looks results up; nothing is
re-derived or re-evaluated, except a set that a greedy plan (more than ``max_exhaustive``
candidates) did not visit, which is evaluated once on first use and cached.

The budget and the candidates passed in are never modified. The handle is driven the same
way by a person in JupyterLab and by code in plain pytest (setting ``checkbox.value`` or
``target.value`` fires the observers synchronously).
"""

from __future__ import annotations

import html
import math
import textwrap
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from types import MappingProxyType
from typing import Any

import ipywidgets as widgets

from viscometry.errors import InputError
from viscometry.gum.budget import Budget
from viscometry.planning import UpgradeCandidate, UpgradeOption, UpgradePlan, evaluate_upgrades
from viscometry.planning_plots import plot_upgrades
from viscometry.plots import figure_png
from viscometry.text import format_cost, format_unit, per_cost_text, percent_change

__all__ = ["UpgradeExplorer", "upgrade_explorer", "format_u"]


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


class _ExplorerState:
    """The one mutable part of an explorer: options evaluated on demand and the last view."""

    __slots__ = ("plan", "view")

    def __init__(self, plan: UpgradePlan) -> None:
        self.plan = plan
        self.view: UpgradePlan | None = None


@dataclass(frozen=True, eq=False)
class UpgradeExplorer:
    """Handle of an upgrade explorer made by :func:`upgrade_explorer`.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole tree; ``display(explorer.widget)`` in a notebook.
    checkboxes : mapping of str to ipywidgets.Checkbox
        One per candidate, by candidate name, in the order given.
    target : ipywidgets.FloatText
        Target expanded uncertainty in the measurand unit; a value ≤ 0 means no target.
    summary_html : ipywidgets.HTML
        The verdict for the ticked set.
    table_html : ipywidgets.HTML
        The candidates alone (ranked by reduction of U per unit cost) and the best sets
        (ranked by U, then cost).
    chart : ipywidgets.Image
        U before and after (PNG), for each candidate alone, the ticked set and the cheapest
        set reaching the target.
    plan : UpgradePlan
        Every evaluated set (made once; the target in it is the initial one).
    currency : str
        Label of the cost unit (never converted).
    top : int
        Number of sets in the "best sets" part of the table.
    chart_dpi : float
        Resolution of the chart [dots per inch].
    show_chart : bool
        Draw the chart on every change (drawing, not the numbers, is the slow part: a few
        tenths of a second per redraw).
    """

    widget: widgets.VBox
    checkboxes: Mapping[str, widgets.Checkbox]
    target: widgets.FloatText
    summary_html: widgets.HTML
    table_html: widgets.HTML
    chart: widgets.Image
    plan: UpgradePlan
    currency: str = ""
    top: int = 10
    chart_dpi: float = 80.0
    show_chart: bool = True
    _state: _ExplorerState = field(repr=False, default=None)  # type: ignore[assignment]

    # ------------------------------------------------------------------ queries
    @property
    def budget(self) -> Budget:
        """The budget as given (never modified)."""
        return self.plan.baseline.budget

    def selected(self) -> tuple[str, ...]:
        """Names of the ticked candidates, in candidate order."""
        return tuple(name for name, box in self.checkboxes.items() if box.value)

    def current_target(self) -> float | None:
        """The target U from the control, or ``None`` when it is ≤ 0 or not finite."""
        t = float(self.target.value)
        return t if math.isfinite(t) and t > 0 else None

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

    def cheapest(self) -> UpgradeOption | None:
        """The cheapest evaluated set reaching the current target (None without a target)."""
        return self.current_plan().cheapest

    def current_plan(self) -> UpgradePlan:
        """The plan as the explorer shows it: judged against the current target by
        :meth:`viscometry.planning.UpgradePlan.with_target` (no re-evaluation)."""
        return self._state.plan.with_target(self.current_target())

    # ------------------------------------------------------------------ updates
    def refresh(self) -> None:
        """Recompute the verdict, the table and the chart from the controls (look-ups only)."""
        chosen = self.option_for(self.selected())  # first: may add an on-demand option
        view = self.current_plan()
        self._state.view = view
        self.summary_html.value = _summary_html(self, view, chosen)
        self.table_html.value = _table_html(self, view, chosen)
        if self.show_chart:
            self.chart.value = figure_png(_chart(view, chosen), dpi=self.chart_dpi)


# =============================================================================== rendering


def _units_text(plan: UpgradePlan) -> str:
    return format_unit(plan.unit)


def _money(explorer: UpgradeExplorer, cost: float) -> str:
    return f"{format_cost(cost)} {explorer.currency}".rstrip()


def _summary_html(explorer: UpgradeExplorer, view: UpgradePlan, chosen: UpgradeOption) -> str:
    e = html.escape
    unit = _units_text(view)
    u_unit = f" {unit}" if unit else ""
    before = view.baseline.expanded_uncertainty
    after = chosen.expanded_uncertainty
    lines = [
        f"<b>ticked:</b> {e(chosen.label)}",
        f"<b>U before:</b> {format_u(before)}{e(u_unit)} &rarr; <b>U after:</b> "
        f"{format_u(after)}{e(u_unit)}{e(percent_change(before, after))}",
        f"<b>cost:</b> {e(_money(explorer, chosen.cost))}",
        f"<b>dominant input after:</b> {e(chosen.dominant)}",
    ]
    t = view.target
    if t is None:
        lines.append("<b>target:</b> none set (enter a target U &gt; 0)")
    else:
        if chosen.reaches_target:
            lines.append(
                f"<b style='color:#060'>target U &le; {format_u(t)}{e(u_unit)}: reached</b>"
            )
        else:
            lines.append(
                f"<b style='color:#a00'>target U &le; {format_u(t)}{e(u_unit)}: not reached</b>"
            )
        c = view.cheapest
        if c is None:
            best = view.best
            lines.append(
                "<b>cheapest set reaching the target:</b> none of the evaluated sets reaches it "
                f"(smallest U = {format_u(best.expanded_uncertainty)}{e(u_unit)}, with "
                f"{e(best.label)})"
            )
        else:
            lines.append(
                f"<b>cheapest set reaching the target:</b> {e(c.label)}, cost "
                f"{e(_money(explorer, c.cost))}, U = {format_u(c.expanded_uncertainty)}{e(u_unit)}"
            )
    if view.search == "greedy":
        lines.append(
            "<i>more candidates than the exhaustive limit: sets were searched greedily, so the "
            "cheapest set is the cheapest among the sets evaluated</i>"
        )
    return "<div class='viscometry-upgrade-summary'>" + "<br>".join(lines) + "</div>"


def _row(cells: Sequence[str], header: bool = False, mark: str = "") -> str:
    tag = "th" if header else "td"
    style = f" style='{mark}'" if mark else ""
    return f"<tr{style}>" + "".join(f"<{tag}>{c}</{tag}>" for c in cells) + "</tr>"


def _table_html(explorer: UpgradeExplorer, view: UpgradePlan, chosen: UpgradeOption) -> str:
    e = html.escape
    unit = _units_text(view)
    ub = f" [{e(unit)}]" if unit else ""
    cur = f" [{e(explorer.currency)}]" if explorer.currency else ""
    per = f" [{e(unit)} per {e(explorer.currency)}]" if unit and explorer.currency else ""
    cheapest = view.cheapest
    chosen_key = frozenset(chosen.candidates)

    def mark(o: UpgradeOption) -> str:
        if frozenset(o.candidates) == chosen_key:
            return "background:#dde8ff"
        if cheapest is not None and frozenset(o.candidates) == frozenset(cheapest.candidates):
            return "background:#ddf5dd"
        return ""

    def reach(o: UpgradeOption) -> str:
        return "" if o.reaches_target is None else ("yes" if o.reaches_target else "no")

    header = ["#", "set", f"cost{cur}", f"U{ub}", "relative U", f"reduction{ub}",
              f"reduction per cost{per}", "dominant"]  # fmt: skip
    if view.target is not None:
        header.append("reaches target")

    def cells(i: int, o: UpgradeOption) -> list[str]:
        row = [str(i), e(o.label), e(format_cost(o.cost)), format_u(o.expanded_uncertainty),
               f"{100 * o.relative_expanded_uncertainty:.3g} %", f"{o.reduction:.3g}",
               per_cost_text(o.reduction_per_cost), e(o.dominant)]  # fmt: skip
        if view.target is not None:
            row.append(reach(o))
        return row

    singles = [o for o in view.options if len(o.candidates) == 1]
    by_name = {c.name: i for i, c in enumerate(view.candidates)}
    singles.sort(key=lambda o: (-o.reduction_per_cost, -o.reduction, by_name[o.candidates[0]]))
    ranked = list(view.ranked)
    shown = ranked[: max(int(explorer.top), 1)]
    keys = {frozenset(o.candidates) for o in shown}
    extra = [o for o in (chosen, cheapest) if o is not None and frozenset(o.candidates) not in keys]
    parts = [
        "<div class='viscometry-upgrade-table'>",
        f"<p>baseline U = {format_u(view.baseline.expanded_uncertainty)}{e(' ' + unit if unit else '')}"
        f"; {len(view.options)} sets evaluated ({view.search})</p>",
        "<b>candidates alone, ranked by reduction of U per unit cost</b>",
        "<table>", _row(header, header=True),
        *(_row(cells(i, o), mark=mark(o)) for i, o in enumerate(singles, 1)),
        "</table>",
        f"<b>sets ranked by U (best {len(shown)} of {len(view.options)})</b>",
        "<table>", _row(header, header=True),
        *(_row(cells(ranked.index(o) + 1, o), mark=mark(o)) for o in shown + extra),
        "</table>",
        "<small>blue: the ticked set; green: the cheapest set reaching the target</small>",
        "</div>",
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
    top: int = 10,
    max_exhaustive: int = 12,
    chart_dpi: float = 80.0,
    show_chart: bool = True,
) -> UpgradeExplorer:
    """Build an explorer: tick upgrade candidates, set a target U, see the ranked sets.

    Parameters
    ----------
    budget : Budget
        The budget as it stands (never modified).
    candidates : sequence of UpgradeCandidate
        Unique names; see :func:`viscometry.planning.evaluate_upgrades`.
    target : float or None
        Initial target expanded uncertainty, > 0, in the measurand unit (``budget.unit``);
        None leaves the target control at 0 (no target). [measurand unit]
    ticked : iterable of str
        Candidates ticked when the explorer opens.
    currency : str
        Label of the costs, shown beside them (never converted).
    top : int
        Number of best sets listed in the ranked table, ≥ 1.
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
    set reaching a target is chosen among the evaluated sets with the rule of
    :func:`viscometry.planning.cheapest_reaching`; a change of target re-ranks without
    re-evaluating.

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
    """
    if isinstance(top, bool) or not isinstance(top, int) or top < 1:
        raise InputError(f"top must be a positive integer, got {top!r}")
    if not isinstance(currency, str):
        raise InputError(f"currency must be a text label, got {currency!r}")
    plan = evaluate_upgrades(budget, candidates, target=target, max_exhaustive=max_exhaustive)
    ticked = tuple(ticked)
    names = [c.name for c in plan.candidates]
    for n in ticked:
        if n not in names:
            raise InputError(f"ticked candidate {n!r} is not one of: {', '.join(names)}")
    unit = format_unit(budget.unit)
    money = f" {currency}" if currency else ""
    boxes = {
        c.name: widgets.Checkbox(
            value=c.name in ticked,
            description=f"{c.name} ({format_cost(c.cost)}{money})",
            description_allow_html=False,
            indent=False,
            tooltip=c.description or c.name,
            layout=widgets.Layout(width="auto"),
        )
        for c in plan.candidates
    }
    target_w = widgets.FloatText(
        value=float(target) if target is not None else 0.0,
        description="target U",
        tooltip=f"target expanded uncertainty [{unit}]; 0 = no target",
        style={"description_width": "5em"},
        layout=widgets.Layout(width="16em"),
    )
    summary = widgets.HTML()
    table = widgets.HTML()
    chart = widgets.Image(format="png", layout=widgets.Layout(max_width="620px"))
    title = html.escape(budget.title or f"Uncertainty budget of {budget.measurand}")
    header = widgets.HTML(
        f"<b>{title}</b><br>Which upgrade? Tick candidates and set a target U "
        f"(all {len(plan.options)} sets were evaluated once; JCGM 100:2008):"
    )
    tree = widgets.VBox(
        [
            header,
            widgets.HBox(
                [
                    widgets.VBox(
                        [*boxes.values(), widgets.HBox([target_w, widgets.Label(unit)]), summary]
                    ),
                    chart,
                ]
            ),
            table,
        ]
    )
    explorer = UpgradeExplorer(
        widget=tree,
        checkboxes=MappingProxyType(boxes),
        target=target_w,
        summary_html=summary,
        table_html=table,
        chart=chart,
        plan=plan,
        currency=currency,
        top=top,
        chart_dpi=chart_dpi,
        show_chart=show_chart,
        _state=_ExplorerState(plan),
    )

    def on_change(_change: Mapping[str, Any]) -> None:
        explorer.refresh()

    for box in boxes.values():
        box.observe(on_change, names="value")
    target_w.observe(on_change, names="value")
    explorer.refresh()
    return explorer
