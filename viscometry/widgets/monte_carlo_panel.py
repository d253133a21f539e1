"""A Monte Carlo validation panel for a budget, as an ipywidgets tree.

:func:`monte_carlo_panel` shows a control for the standard uncertainty of one chosen input
(by default the one with the largest variance share), the number of trials, the seed and
the kind of coverage interval, a Run button and a progress bar; below, the validation
statement with the Monte Carlo summary (HTML) and the histogram with the first-order PDF and
both coverage intervals (PNG, :func:`viscometry.mc_plots.monte_carlo_figure`).

A run builds a *new* budget with :meth:`viscometry.gum.Budget.with_input` and calls
:func:`viscometry.gum.simulation.simulate_budget`; the budget passed in is never modified.
Nothing runs when a control changes (a Monte Carlo run takes a noticeable moment): press Run,
or call :meth:`MonteCarloPanel.run` from code — which is how tests and workbooks drive it,
without a kernel or a browser.
"""

from __future__ import annotations

import html
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import ipywidgets as widgets

from viscometry.errors import InputError, ViscometryError
from viscometry.gum.budget import Budget
from viscometry.gum.montecarlo import IntervalKind
from viscometry.gum.simulation import BudgetSimulation, simulate_budget
from viscometry.mc_plots import monte_carlo_figure
from viscometry.plots import figure_png
from viscometry.text import (
    format_number,
    format_unit,
    simulation_lines,
    unit_suffix,
    validation_statement,
)

__all__ = ["MonteCarloPanel", "monte_carlo_panel"]

#: Largest standard uncertainty the control accepts, as a multiple of max(|x|, u(x), 1).
_CONTROL_RANGE = 1.0e3
#: Bounds of the trials control [1].
_MIN_TRIALS, _MAX_TRIALS = 1_000, 10**7


class _PanelState:
    """The one mutable part of a panel: the last simulation, its budget and any error."""

    __slots__ = ("simulation", "budget", "error", "stale")

    def __init__(self, budget: Budget) -> None:
        self.simulation: BudgetSimulation | None = None
        self.budget = budget
        self.error: str | None = None
        self.stale = True


@dataclass(frozen=True, eq=False)
class MonteCarloPanel:
    """Handle of a Monte Carlo panel made by :func:`monte_carlo_panel`.

    Attributes
    ----------
    widget : ipywidgets.VBox
        The whole tree; ``display(panel.widget)`` in a notebook.
    input_name : str
        The input whose standard uncertainty ``uncertainty`` sets.
    uncertainty : ipywidgets.BoundedFloatText
        u of ``input_name``, in that input's own unit.
    trials : ipywidgets.BoundedIntText
        Number M of Monte Carlo trials [1].
    seed : ipywidgets.BoundedIntText
        Seed of the random number generator [1].
    interval : ipywidgets.Dropdown
        ``"symmetric"`` or ``"shortest"`` coverage interval to report.
    run_button : ipywidgets.Button
        Runs the simulation with the current settings.
    progress : ipywidgets.IntProgress
        Trials done in the current run (a widget, so it stays out of printed output).
    result_html : ipywidgets.HTML
        The validation statement and the Monte Carlo summary of the last run.
    chart : ipywidgets.Image
        The histogram figure of the last run, as PNG.
    baseline : Budget
        The budget as given (never modified).
    significant_digits : int
        n_dig of the numerical tolerance δ [1].
    higher_order_reference : bool
        Validate the higher-order instead of the first-order result.
    chart_dpi : float
        Resolution of the chart image [dots per inch].
    """

    widget: widgets.VBox
    input_name: str
    uncertainty: widgets.BoundedFloatText
    trials: widgets.BoundedIntText
    seed: widgets.BoundedIntText
    interval: widgets.Dropdown
    run_button: widgets.Button
    progress: widgets.IntProgress
    result_html: widgets.HTML
    chart: widgets.Image
    baseline: Budget
    significant_digits: int = 2
    higher_order_reference: bool = False
    chart_dpi: float = 80.0
    _state: _PanelState = field(repr=False, default=None)  # type: ignore[assignment]

    @property
    def simulation(self) -> BudgetSimulation | None:
        """The result of the last successful run, or ``None`` before the first."""
        return self._state.simulation

    @property
    def error(self) -> str | None:
        """Message of the last run that failed, else ``None``."""
        return self._state.error

    def current_budget(self) -> Budget:
        """The what-if budget built from the uncertainty control (a new object)."""
        q = self.baseline.input(self.input_name)
        u = float(self.uncertainty.value)
        if u == q.standard_uncertainty:
            return self.baseline
        return self.baseline.with_input(q.with_uncertainty(u))

    def run(self) -> BudgetSimulation | None:
        """Simulate the current settings, update the HTML and the chart; return the result.

        Returns
        -------
        BudgetSimulation or None
            The new result; ``None`` when the settings cannot be simulated (the message is
            shown in the HTML and kept in :attr:`error`; the last good chart stays).
        """
        state = self._state
        bar = self.progress
        total = int(self.trials.value)
        bar.max = max(total, 1)
        bar.value = 0

        def on_progress(done: int, _total: int) -> None:
            bar.value = min(done, bar.max)

        try:
            budget = self.current_budget()
            sim = simulate_budget(
                budget,
                trials=total,
                seed=int(self.seed.value),
                interval=self.interval.value,
                significant_digits=self.significant_digits,
                higher_order_reference=self.higher_order_reference,
                progress=on_progress,
            )
        except ViscometryError as exc:
            state.error = (
                f"cannot simulate u({self.input_name}) = {self.uncertainty.value:.6g}: {exc}"
            )
            state.stale = True
            self.result_html.value = _result_html(self, state)
            return None
        state.simulation, state.budget, state.error, state.stale = sim, budget, None, False
        self.result_html.value = _result_html(self, state)
        fig = monte_carlo_figure(sim, figsize=(6.4, 3.8))
        self.chart.value = figure_png(fig, dpi=self.chart_dpi)
        return sim


def monte_carlo_panel(
    budget: Budget,
    input_name: str | None = None,
    *,
    trials: int = 100_000,
    seed: int = 1,
    interval: IntervalKind = "symmetric",
    significant_digits: int = 2,
    higher_order_reference: bool = False,
    run_now: bool = True,
    chart_dpi: float = 80.0,
) -> MonteCarloPanel:
    """Build a panel that validates ``budget`` by Monte Carlo while one input's u is varied.

    Parameters
    ----------
    budget : Budget
        The budget as given; the uncertainty control starts at its value.
    input_name : str, optional
        The input whose standard uncertainty the panel varies (its own unit); default the
        input with the largest variance share of the first-order result.
    trials : int
        Initial number M of trials [1] (the control accepts 10³ to 10⁷).
    seed : int
        Initial seed, ≥ 0 [1].
    interval : {"symmetric", "shortest"}
        Initial kind of the reported Monte Carlo coverage interval.
    significant_digits : int
        n_dig for δ (JCGM 101:2008, 7.9.2) [1].
    higher_order_reference : bool
        Validate the result with the terms of JCGM 100:2008 eq. (10).
    run_now : bool
        Run once with the initial settings, so the panel opens with a result.
    chart_dpi : float
        Resolution of the chart [dots per inch].

    Returns
    -------
    MonteCarloPanel
        The widget tree and its handles.

    Raises
    ------
    InputError
        Unknown ``input_name``, or initial values outside the controls' ranges.
    ViscometryError
        If the budget as given cannot be evaluated.

    Notes
    -----
    Validation per JCGM 101:2008, 8.2: the first-order interval y ± U_p is validated when
    |y − U_p − y_low| ≤ δ and |y + U_p − y_high| ≤ δ. See
    :func:`viscometry.gum.simulation.simulate_budget`.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "x**4", [InputQuantity.normal("x", 1.0, 0.001)])
    >>> panel = monte_carlo_panel(b, trials=20_000, run_now=False)
    >>> panel.uncertainty.value = 0.1
    >>> panel.run().validated, "not validated" in panel.result_html.value
    (False, True)
    """
    first = budget.evaluate()
    name = first.dominant.name if input_name is None else budget.input(input_name).name
    q = budget.input(name)
    if not (_MIN_TRIALS <= trials <= _MAX_TRIALS):
        raise InputError(f"trials must lie between {_MIN_TRIALS} and {_MAX_TRIALS}, got {trials!r}")
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise InputError(f"seed must be a non-negative integer, got {seed!r}")
    if interval not in ("symmetric", "shortest"):
        raise InputError(f"interval must be 'symmetric' or 'shortest', got {interval!r}")
    unit = format_unit(q.unit)
    upper = _CONTROL_RANGE * max(abs(q.value), q.standard_uncertainty, 1.0)
    style = {"description_width": "7em"}
    uncertainty = widgets.BoundedFloatText(
        value=q.standard_uncertainty,
        min=0.0,
        max=upper,
        description=f"u({name})",
        description_allow_html=False,
        tooltip=q.description or name,
        style=style,
        layout=widgets.Layout(width="18em"),
    )
    trials_w = widgets.BoundedIntText(
        value=trials, min=_MIN_TRIALS, max=_MAX_TRIALS, step=10_000,
        description="trials M", style=style, layout=widgets.Layout(width="18em"),
    )  # fmt: skip
    seed_w = widgets.BoundedIntText(
        value=seed, min=0, max=2**31 - 1, description="seed", style=style,
        layout=widgets.Layout(width="18em"),
    )  # fmt: skip
    interval_w = widgets.Dropdown(
        options=[("probabilistically symmetric", "symmetric"), ("shortest", "shortest")],
        value=interval, description="MC interval", style=style,
        layout=widgets.Layout(width="24em"),
    )  # fmt: skip
    run_button = widgets.Button(description="Run", button_style="primary", tooltip="run")
    progress = widgets.IntProgress(
        value=0, min=0, max=trials, description="trials done", style=style,
        layout=widgets.Layout(width="18em"),
    )  # fmt: skip
    result_html = widgets.HTML()
    chart = widgets.Image(format="png", layout=widgets.Layout(max_width="560px"))
    title = html.escape(budget.title or f"Uncertainty budget of {budget.measurand}")
    header = widgets.HTML(
        f"<b>{title}</b><br>Monte Carlo validation (JCGM 101:2008) of the "
        f"{'higher' if higher_order_reference else 'first'}-order result:"
    )
    tree = widgets.VBox(
        [
            header,
            widgets.HBox(
                [
                    widgets.VBox(
                        [
                            widgets.HBox([uncertainty, widgets.Label(unit)]),
                            trials_w,
                            seed_w,
                            interval_w,
                            widgets.HBox([run_button, progress]),
                        ]
                    ),
                    chart,
                ]
            ),
            result_html,
        ]
    )
    panel = MonteCarloPanel(
        widget=tree,
        input_name=name,
        uncertainty=uncertainty,
        trials=trials_w,
        seed=seed_w,
        interval=interval_w,
        run_button=run_button,
        progress=progress,
        result_html=result_html,
        chart=chart,
        baseline=budget,
        significant_digits=significant_digits,
        higher_order_reference=higher_order_reference,
        chart_dpi=chart_dpi,
        _state=_PanelState(budget),
    )
    for control in (uncertainty, trials_w, seed_w, interval_w):
        control.observe(_make_stale(panel), names="value")
    run_button.on_click(lambda _button: panel.run())
    if run_now:
        panel.run()
    else:
        result_html.value = _result_html(panel, panel._state)
    return panel


def _make_stale(panel: MonteCarloPanel) -> Any:
    def on_change(_change: Mapping[str, Any]) -> None:
        state = panel._state
        if not state.stale:
            state.stale = True
            panel.result_html.value = _result_html(panel, state)

    return on_change


def _result_html(panel: MonteCarloPanel, state: _PanelState) -> str:
    e = html.escape
    sim = state.simulation
    lines: list[str] = []
    if sim is None:
        lines.append("no Monte Carlo run yet: press Run")
    else:
        colour = "#060" if sim.validated else "#a00"
        lines.append(
            f"<b style='color:{colour}'>{e(validation_statement(sim.validation, sim.unit))}</b>"
        )
        q = sim.budget.input(panel.input_name)
        lines.append(
            e(f"with u({q.name}) = {format_number(q.standard_uncertainty)}{unit_suffix(q.unit)}")
        )
        lines += [e(line) for line in simulation_lines(sim)[:5]]
        lines += [f"<span style='color:#a00'>warning: {e(w)}</span>" for w in sim.warnings]
        if state.stale:
            lines.append("<i>settings changed since this run: press Run</i>")
    if state.error is not None:
        lines.append(f"<span style='color:#a00'>{e(state.error)}</span>")
    return "<div class='viscometry-monte-carlo'>" + "<br>".join(lines) + "</div>"
