"""A Monte Carlo validation panel for a budget, as an ipywidgets tree.

:func:`monte_carlo_panel` shows a field for the standard uncertainty of one chosen input (by
default the one with the largest variance share), the number of trials, the seed and the
kind of coverage interval, a Run button and a progress bar; below, the validation statement
with the Monte Carlo summary and the result's warnings (HTML), and the histogram with the
first-order PDF and both coverage intervals (PNG, :func:`viscometry.mc_plots.monte_carlo_figure`).

A run builds a *new* budget with :meth:`viscometry.gum.Budget.with_uncertainty` and calls
:func:`viscometry.gum.simulation.simulate_budget`; the budget passed in is never modified.
Nothing runs when a field changes (a Monte Carlo run takes a noticeable moment): press Run,
or call :meth:`MonteCarloPanel.run` from code — which is how tests and workbooks drive it,
without a kernel or a browser.

Nothing is clamped: a field the library refuses (text that is not a number, a negative
uncertainty, a seed below 0, too few trials for a coverage interval) shows the library's
message next to it, and the last good result stays on screen. A small number of trials that
the library accepts runs, and its warning (JCGM 101:2008, 7.2.2) is shown in colour.
"""

from __future__ import annotations

import html
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import ipywidgets as widgets

from viscometry.errors import InputError, ViscometryError
from viscometry.gum.budget import Budget
from viscometry.gum.montecarlo import MAX_TRIALS, IntervalKind, check_jobs
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
from viscometry.widgets.builder_rows import NumberField
from viscometry.widgets.fields import (
    chart_image,
    controls_column,
    error_html,
    message_label,
    number_text,
    parse_number,
    warning_lines,
    wrap_row,
)

__all__ = ["MAX_TRIALS", "MonteCarloPanel", "monte_carlo_panel"]

# MAX_TRIALS (re-exported): the engine's limit on the trials of one run,
# viscometry.gum.montecarlo.MAX_TRIALS, which the command line shares; a run keeps all M
# model values in memory to find the coverage interval (8 bytes each), and the kernel is busy
# until it ends. Larger M is refused with a message saying so.
#: The fields that can refuse their text, by key of :attr:`MonteCarloPanel.messages`.
_FIELDS = ("uncertainty", "trials", "seed")


class _PanelState:
    """The one mutable part of a panel: the last simulation, its budget and any refusal."""

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
    uncertainty : ipywidgets.Text
        u of ``input_name``, in that input's own unit (four significant digits shown, the
        exact number kept until a new one is typed).
    trials : ipywidgets.Text
        Number M of Monte Carlo trials [1].
    seed : ipywidgets.Text
        Seed of the random number generator, ≥ 0 [1].
    interval : ipywidgets.Dropdown
        ``"symmetric"`` or ``"shortest"`` coverage interval to report.
    run_button : ipywidgets.Button
        Runs the simulation with the current settings.
    progress : ipywidgets.IntProgress
        Trials done in the current run (a widget, so it stays out of printed output).
    messages : mapping of str to ipywidgets.HTML
        The refusal next to each field: keys ``"uncertainty"``, ``"trials"``, ``"seed"``.
    result_html : ipywidgets.HTML
        The validation statement, the Monte Carlo summary and the warnings of the last run,
        and the message of a run that was refused.
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
    jobs : int
        Threads of a run [1] (:func:`viscometry.gum.simulation.simulate_budget`); the
        result is the same for any number.
    """

    widget: widgets.VBox
    input_name: str
    uncertainty: widgets.Text
    trials: widgets.Text
    seed: widgets.Text
    interval: widgets.Dropdown
    run_button: widgets.Button
    progress: widgets.IntProgress
    messages: Mapping[str, widgets.HTML]
    result_html: widgets.HTML
    chart: widgets.Image
    baseline: Budget
    significant_digits: int = 2
    higher_order_reference: bool = False
    chart_dpi: float = 80.0
    jobs: int = 1
    _uncertainty: NumberField = field(repr=False, default=None)  # type: ignore[assignment]
    _state: _PanelState = field(repr=False, default=None)  # type: ignore[assignment]

    @property
    def simulation(self) -> BudgetSimulation | None:
        """The result of the last successful run, or ``None`` before the first."""
        return self._state.simulation

    @property
    def error(self) -> str | None:
        """Message of the last run that was refused or failed, else ``None``."""
        return self._state.error

    def current_budget(self) -> Budget:
        """The what-if budget built from the uncertainty field (a new object).

        Raises
        ------
        InputError
            The field's text is not a number, or the budget refuses it (negative u).
        """
        q = self.baseline.input(self.input_name)
        u = self._uncertainty.get()
        assert u is not None  # the field is not optional
        if u == q.standard_uncertainty:
            return self.baseline
        return self.baseline.with_uncertainty(q.name, u)

    def run(self) -> BudgetSimulation | None:
        """Simulate the current settings, update the HTML and the chart; return the result.

        Returns
        -------
        BudgetSimulation or None
            The new result; ``None`` when a field refuses its value or the settings cannot be
            simulated (the message is shown next to the field or in the HTML and kept in
            :attr:`error`; the last good result and chart stay).
        """
        state = self._state
        refused = _refusals(self)
        if refused:
            return _refuse(self, refused)
        budget, trials = self.current_budget(), _count(self.trials.value, "trials M")
        bar = self.progress
        bar.max, bar.value = max(int(trials), 1), 0

        def on_progress(done: int, _total: int) -> None:
            bar.value = min(done, bar.max)

        try:
            sim = simulate_budget(
                budget, trials=trials, seed=_count(self.seed.value, "seed"),
                interval=self.interval.value, significant_digits=self.significant_digits,
                higher_order_reference=self.higher_order_reference, progress=on_progress,
                jobs=self.jobs,
            )  # fmt: skip
        except ViscometryError as exc:
            key = next((k for k in ("trials", "seed") if str(exc).startswith(k)), None)
            text = str(exc) if key else f"cannot simulate u({self.input_name}) = " + (
                f"{self.uncertainty.value.strip()}: {exc}"
            )  # fmt: skip
            return _refuse(self, {key or "": text})
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
    jobs: int | None = None,
) -> MonteCarloPanel:
    """Build a panel that validates ``budget`` by Monte Carlo while one input's u is varied.

    Parameters
    ----------
    budget : Budget
        The budget as given; the uncertainty field starts at its value.
    input_name : str, optional
        The input whose standard uncertainty the panel varies (its own unit); default the
        input with the largest variance share of the first-order result.
    trials : int
        Initial number M of trials, 1 to :data:`MAX_TRIALS` [1]. Fewer than JCGM 101:2008,
        7.2.2 recommends run with a warning; too few for a coverage interval are refused by
        the run (the message is shown).
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
    jobs : int, optional
        Threads that draw the trials of a run at the same time [1]; default every available
        core, 1 for none. A seeded result is the same for any number (the progress bar moves
        in the kernel's own thread).

    Returns
    -------
    MonteCarloPanel
        The widget tree and its handles.

    Raises
    ------
    InputError
        Unknown ``input_name``, a ``trials`` or ``seed`` that is not a whole number in range,
        an unknown ``interval``, or ``jobs`` below 1.
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
    >>> panel.uncertainty.value = "0.1"
    >>> panel.run().validated, "not validated" in panel.result_html.value
    (False, True)
    >>> panel.uncertainty.value = "-0.1"
    >>> panel.run() is None, panel.error
    (True, 'x.standard_uncertainty must be non-negative, got -0.1')
    """
    first = budget.evaluate()
    name = first.dominant.name if input_name is None else budget.input(input_name).name
    _check_arguments(trials, seed, interval)
    workers = check_jobs(jobs)
    c = _controls(budget.input(name), trials, seed, interval)
    title = html.escape(budget.title or f"Uncertainty budget of {budget.measurand}")
    header = widgets.HTML(
        f"<b>{title}</b><br>Monte Carlo validation (JCGM 101:2008) of the "
        f"{'higher' if higher_order_reference else 'first'}-order result:"
    )
    panel = MonteCarloPanel(
        widget=_layout(header, c),
        input_name=name,
        uncertainty=c["uncertainty"].text,
        trials=c["trials"],
        seed=c["seed"],
        interval=c["interval"],
        run_button=c["run"],
        progress=c["progress"],
        messages=MappingProxyType(c["messages"]),
        result_html=c["result"],
        chart=c["chart"],
        baseline=budget,
        significant_digits=significant_digits,
        higher_order_reference=higher_order_reference,
        chart_dpi=chart_dpi,
        jobs=workers,
        _uncertainty=c["uncertainty"],
        _state=_PanelState(budget),
    )
    for key, control in zip(_FIELDS, (panel.uncertainty, panel.trials, panel.seed), strict=True):
        control.observe(_make_changed(panel, key), names="value")
    panel.interval.observe(_make_changed(panel, None), names="value")
    panel.run_button.on_click(lambda _button: panel.run())
    if run_now:
        panel.run()
    else:
        panel.result_html.value = _result_html(panel, panel._state)
    return panel


# =============================================================================== building
def _check_arguments(trials: object, seed: object, interval: object) -> None:
    """The constructor's arguments: whole numbers in range and a known interval kind."""
    if isinstance(trials, bool) or not isinstance(trials, int) or not 1 <= trials <= MAX_TRIALS:
        raise InputError(f"trials must be a whole number from 1 to {MAX_TRIALS}, got {trials!r}")
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise InputError(f"seed must be a non-negative integer, got {seed!r}")
    if interval not in ("symmetric", "shortest"):
        raise InputError(f"interval must be 'symmetric' or 'shortest', got {interval!r}")


def _count_field(label: str, value: int, tooltip: str) -> widgets.Text:
    """A text field for a whole number, shown in full (a seed must not be rounded)."""
    text = number_text(label, None, tooltip=tooltip)
    text.value = str(value)
    return text


def _controls(q: Any, trials: int, seed: int, interval: str) -> dict[str, Any]:
    uncertainty = NumberField.make(f"u({q.name})", q.standard_uncertainty, tooltip=q.description)
    trials_w = _count_field("trials M", trials, f"number of Monte Carlo trials, 1 to {MAX_TRIALS}")
    seed_w = _count_field("seed", seed, "seed of the random number generator, ≥ 0")
    interval_w = widgets.Dropdown(
        options=[("probabilistically symmetric", "symmetric"), ("shortest", "shortest")],
        value=interval, description="interval", style={"description_width": "9em"},
        layout=widgets.Layout(width="auto", min_width="22em"),
    )  # fmt: skip
    run = widgets.Button(
        description="Run", button_style="primary", tooltip="run the Monte Carlo simulation",
        layout=widgets.Layout(width="auto", min_width="6em"),
    )  # fmt: skip
    progress = widgets.IntProgress(
        value=0, min=0, max=trials, description="trials done",
        style={"description_width": "6em"}, layout=widgets.Layout(width="16em", min_width="12em"),
    )  # fmt: skip
    result = widgets.HTML(layout=widgets.Layout(width="100%"))
    return {
        "uncertainty": uncertainty, "unit": format_unit(q.unit), "trials": trials_w,
        "seed": seed_w, "interval": interval_w, "run": run, "progress": progress,
        "messages": {k: message_label() for k in _FIELDS}, "result": result,
        "chart": chart_image("600px"),
    }  # fmt: skip


def _layout(header: widgets.HTML, c: Mapping[str, Any]) -> widgets.VBox:
    m = c["messages"]
    unit = widgets.Label(c["unit"], layout=widgets.Layout(min_width="3em"))
    column = controls_column(
        [
            wrap_row([c["uncertainty"].text, unit, m["uncertainty"]], gap="0 0.6em"),
            wrap_row([c["trials"], m["trials"]], gap="0 0.6em"),
            wrap_row([c["seed"], m["seed"]], gap="0 0.6em"),
            c["interval"],
            wrap_row([c["run"], c["progress"]], gap="0.3em 0.6em"),
        ]
    )
    return widgets.VBox(
        [header, wrap_row([column, c["chart"]]), c["result"]], layout=widgets.Layout(width="100%")
    )


# =============================================================================== reading
#: Digits grouped in thousands by commas ("100,000"), which in a count are not a decimal comma.
_GROUPED = re.compile(r"\d{1,3}(,\d{3})+")


def _count(text: str, label: str) -> int | float:
    """A whole number typed in a field (digits may be grouped: ``100 000``, ``100_000``,
    ``100,000``, or written ``1e5``); a fraction is passed on for the library to refuse.

    Examples
    --------
    >>> _count("100,000", "trials M"), _count(" 2e5 ", "trials M"), _count("1.5", "trials M")
    (100000, 200000, 1.5)
    """
    t = re.sub(r"[\s_\u202f]", "", str(text))
    if _GROUPED.fullmatch(t):
        t = t.replace(",", "")
    try:
        return int(t)
    except ValueError:
        x = parse_number(t, label) if t else parse_number(text, label)
    return int(x) if x.is_integer() else x


def _field_refusal(panel: MonteCarloPanel, key: str) -> str | None:
    """The message refusing the text of one field (before any run), or None."""
    try:
        if key == "uncertainty":
            panel.current_budget()
        elif key == "trials":
            m = _count(panel.trials.value, "trials M")
            if m > MAX_TRIALS:
                return (
                    f"trials M = {m} is more than one run may have ({MAX_TRIALS}: a run keeps "
                    "every model value in memory); use fewer trials"
                )
        else:
            _count(panel.seed.value, "seed")
    except ViscometryError as exc:
        return str(exc)
    return None


def _refusals(panel: MonteCarloPanel) -> dict[str, str]:
    out = {}
    for key in _FIELDS:
        text = _field_refusal(panel, key)
        panel.messages[key].value = error_html([text] if text else [])
        if text:
            out[key] = text
    return out


def _refuse(panel: MonteCarloPanel, refused: Mapping[str, str]) -> None:
    """Show refusals (by field key; ``""`` for the run as a whole), keep the last result."""
    state = panel._state
    for key, text in refused.items():
        if key:
            panel.messages[key].value = error_html([text])
    state.error = next(iter(refused.values()))
    state.stale = True
    panel.result_html.value = _result_html(panel, state)
    return None


def _make_changed(panel: MonteCarloPanel, key: str | None) -> Any:
    def on_change(_change: Mapping[str, Any]) -> None:
        if key is not None:
            text = _field_refusal(panel, key)
            panel.messages[key].value = error_html([text] if text else [])
        panel._state.stale = True
        panel._state.error = None  # it was about the settings before this change
        panel.result_html.value = _result_html(panel, panel._state)

    return on_change


# =============================================================================== rendering
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
        lines += warning_lines(sim.warnings)
        if state.stale:
            lines.append("<i>settings changed since this run: press Run</i>")
    if state.error is not None:
        lines.append(
            f"<span style='color:#a00'>not run: {e(state.error)}"
            + (" (the result shown is the last good one)" if sim is not None else "")
            + "</span>"
        )
    return (
        "<div class='viscometry-monte-carlo' style='line-height:1.45'>"
        + "<br>".join(lines)
        + "</div>"
    )
