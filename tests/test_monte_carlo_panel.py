"""Tests of viscometry.widgets.monte_carlo_panel, driven from code (no kernel, no browser).

ipywidgets 8 fires ``observe`` and ``on_click`` callbacks synchronously in plain Python, so
the panel logic is tested by setting control values and calling ``run`` (or clicking).
The budget is Y = R⁴ with R normal: its verdict is known in closed form (exact analytic, see
tests/test_simulation.py): validated at u(r)/r = 0.03 %, not validated at 5 %.
"""

from __future__ import annotations

import html
import re

import ipywidgets as widgets
import pytest

from viscometry.errors import InputError
from viscometry.gum import Budget, InputQuantity
from viscometry.gum.simulation import simulate_budget
from viscometry.widgets.monte_carlo_panel import MAX_TRIALS, MonteCarloPanel, monte_carlo_panel

M = 100_000


@pytest.fixture
def budget():
    return Budget.from_formula(
        "y", "r**4 * k",
        [InputQuantity.normal("r", 1.0, 3e-4, "mm"), InputQuantity.normal("k", 1.0, 1e-6)],
        "mm^4",
    )  # fmt: skip


def test_run_changes_the_html_and_states_the_verdict(budget):
    panel = monte_carlo_panel(budget, "r", trials=M, seed=7)
    assert isinstance(panel, MonteCarloPanel)
    before = panel.result_html.value
    assert "first-order budget validated at δ = 0.00005 mm⁴" in before
    assert panel.progress.value == M
    png = panel.chart.value
    assert png[:8] == b"\x89PNG\r\n\x1a\n"

    panel.uncertainty.value = "0.05"
    assert "settings changed since this run" in panel.result_html.value
    sim = panel.run()
    after = panel.result_html.value
    assert after != before
    assert "first-order budget not validated at δ = 0.005 mm⁴" in after
    assert "with u(r) = 0.05 mm" in after
    assert "settings changed" not in after
    assert sim is panel.simulation and sim.validated is False
    assert panel.chart.value != png
    assert budget.input("r").standard_uncertainty == 3e-4  # the budget as given is untouched
    assert panel.current_budget().input("r").standard_uncertainty == 0.05


def test_default_input_is_the_dominant_one_and_controls_reach_the_run(budget):
    panel = monte_carlo_panel(budget, trials=M, run_now=False)
    assert panel.input_name == "r"
    assert "no Monte Carlo run yet" in panel.result_html.value
    panel.trials.value = "50000"
    panel.seed.value = "3"
    panel.interval.value = "shortest"
    panel.run_button.click()  # the same path as a click in the browser
    sim = panel.simulation
    assert sim is not None
    assert sim.mc.trials == 50_000 and sim.mc.seed == 3
    assert sim.mc.interval_kind == "shortest"
    assert panel.progress.value == 50_000


def test_seeded_runs_repeat(budget):
    panel = monte_carlo_panel(budget, "r", trials=M, seed=11)
    first = panel.simulation.to_dict()
    panel.seed.value = "12"
    panel.seed.value = "11"
    assert panel.run().to_dict() == first


def test_a_failing_run_keeps_the_last_result_and_shows_the_message():
    b = Budget.from_formula("y", "sqrt(x)", [InputQuantity.normal("x", 4.0, 0.01)])
    panel = monte_carlo_panel(b, "x", trials=20_000, seed=1)
    good = panel.simulation
    panel.uncertainty.value = "4"  # sqrt of negative draws: non-finite model values
    assert panel.run() is None
    assert panel.simulation is good
    assert panel.error is not None and "non-finite" in panel.error
    assert "cannot simulate u(x) = 4" in panel.result_html.value


def test_bad_arguments(budget):
    with pytest.raises(InputError, match="no input named"):
        monte_carlo_panel(budget, "q", run_now=False)
    with pytest.raises(InputError, match="trials must be a whole number from 1 to 10000000, got 0"):
        monte_carlo_panel(budget, trials=0, run_now=False)
    with pytest.raises(InputError, match="trials"):
        monte_carlo_panel(budget, trials=10**8, run_now=False)
    with pytest.raises(InputError, match="trials"):
        monte_carlo_panel(budget, trials=2.5, run_now=False)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="seed"):
        monte_carlo_panel(budget, seed=-1, run_now=False)
    with pytest.raises(InputError, match="jobs must be a whole number of at least 1, got 0"):
        monte_carlo_panel(budget, jobs=0, run_now=False)


def test_threads_change_nothing_but_the_speed(budget):
    # A seeded result is the same for any number of threads (viscometry.gum.montecarlo);
    # the progress bar is moved from the calling thread, chunk by chunk.
    one = monte_carlo_panel(budget, "r", trials=M, seed=9, jobs=1)
    two = monte_carlo_panel(budget, "r", trials=M, seed=9, jobs=2)
    assert one.jobs == 1 and two.jobs == 2
    assert two.simulation.mc == one.simulation.mc
    assert two.progress.value == one.progress.value == M
    assert monte_carlo_panel(budget, "r", trials=M, seed=9).simulation.mc == one.simulation.mc


# ------------------------------------------------------------------------ refusals are shown
def library_message(budget, **kw):
    """What simulate_budget says when it refuses these settings."""
    with pytest.raises(InputError) as caught:
        simulate_budget(budget, **kw)
    return str(caught.value)


@pytest.fixture
def opened(budget):
    """A panel that ran once with good settings (a small M: these tests are about refusals)."""
    return monte_carlo_panel(budget, "r", trials=2_000, seed=5, chart_dpi=40)


def assert_refused(panel, key, expected, good, chart):
    assert panel.run() is None
    assert panel.error == expected
    assert html.escape(expected) in panel.messages[key].value  # next to the field
    assert f"not run: {html.escape(expected)}" in panel.result_html.value
    assert "the result shown is the last good one" in panel.result_html.value
    assert panel.simulation is good and panel.chart.value == chart  # the last good result stays


def test_a_negative_u_is_refused_with_the_library_message(opened, budget):
    good, chart = opened.simulation, opened.chart.value
    opened.uncertainty.value = "-0.5"
    with pytest.raises(InputError) as caught:
        budget.with_uncertainty("r", -0.5)
    expected = str(caught.value)
    assert "must be non-negative, got -0.5" in expected  # the library's wording
    # shown as soon as it is typed, before any run
    assert html.escape(expected) in opened.messages["uncertainty"].value
    assert_refused(opened, "uncertainty", expected, good, chart)
    assert opened.uncertainty.value == "-0.5"  # not clamped to 0


@pytest.mark.parametrize(
    ("key", "text", "expected"),
    [
        ("uncertainty", "abc", "u(r): 'abc' is not a number"),
        ("trials", "abc", "trials M: 'abc' is not a number"),
        ("seed", "1e-3x", "seed: '1e-3x' is not a number"),
    ],
)
def test_text_that_is_not_a_number_is_refused(opened, key, text, expected):
    # the messages of viscometry.widgets.fields.parse_number
    good, chart = opened.simulation, opened.chart.value
    getattr(opened, key).value = text
    assert html.escape(expected) in opened.messages[key].value
    assert_refused(opened, key, expected, good, chart)


@pytest.mark.parametrize(
    ("key", "text", "arguments"),
    [
        ("trials", "0", {"trials": 0, "seed": 5}),  # below the library's minimum of 1
        ("trials", "10", {"trials": 10, "seed": 5}),  # too few for p = 95.45 %
        ("trials", "1.5", {"trials": 1.5, "seed": 5}),
        ("seed", "-1", {"trials": 2_000, "seed": -1}),
    ],
)
def test_settings_the_library_refuses_show_its_message(opened, budget, key, text, arguments):
    good, chart = opened.simulation, opened.chart.value
    getattr(opened, key).value = text
    expected = library_message(budget, **arguments)
    assert_refused(opened, key, expected, good, chart)


def test_library_minimum_of_trials_is_in_its_messages(opened, budget):
    # The messages name the limits: at least 1 trial; round(p·M) between 1 and M − 1.
    assert library_message(budget, trials=0, seed=5) == "trials must be at least 1, got 0"
    message = library_message(budget, trials=10, seed=5)
    assert message.startswith("trials = 10 is too few for coverage_probability = 0.9545")
    assert "1 ≤ round(p·M) ≤ M − 1" in message


def test_more_trials_than_the_panel_runs_are_refused_with_the_maximum(opened):
    good, chart = opened.simulation, opened.chart.value
    opened.trials.value = "1e8"
    expected = (
        f"trials M = 100000000 is more than one run may have ({MAX_TRIALS}: a run keeps every "
        "model value in memory); use fewer trials"
    )
    assert html.escape(expected) in opened.messages["trials"].value  # at once, before Run
    assert_refused(opened, "trials", expected, good, chart)


def test_few_trials_run_with_the_jcgm_101_warning_in_colour(opened):
    opened.trials.value = "50"  # accepted by the library; not silently raised to 1000
    sim = opened.run()
    assert sim is not None and sim.mc.trials == 50
    assert opened.error is None and opened.messages["trials"].value == ""
    # JCGM 101:2008, 7.2.2: M ≥ 10⁴/(1 − p) = 219781 for p = 0.9545 (exact arithmetic, rounded up)
    (warning,) = [w for w in sim.warnings if "7.2.2" in w]
    assert warning.startswith("M = 50 Monte Carlo trials is fewer than 10⁴/(1 − p) = 219781")
    shown = re.findall(r"<span style='color:#a60'>warning: (.*?)</span>", opened.result_html.value)
    assert [html.unescape(w) for w in shown] == list(sim.warnings)


def test_a_fixed_field_clears_its_message(opened):
    opened.trials.value = "abc"
    assert opened.messages["trials"].value
    opened.trials.value = "3,000"  # digits grouped in thousands: a count, not a decimal comma
    assert opened.messages["trials"].value == "" and opened.error is None
    assert opened.run().mc.trials == 3000


def _tree(w):
    out = [w]
    for child in getattr(w, "children", ()):
        out += _tree(child)
    return out


def test_layout_wraps_and_nothing_is_squeezed(budget):
    panel = monte_carlo_panel(budget, "r", trials=2_000, run_now=False)
    row = panel.widget.children[1]
    assert row.layout.flex_flow == "row wrap"  # controls stack above the chart when narrow
    column, chart = row.children
    assert column.layout.min_width == "22em" and chart is panel.chart
    assert (chart.layout.width, chart.layout.height) == ("100%", "auto")  # aspect kept
    assert chart.layout.max_width
    for w in _tree(panel.widget):
        if isinstance(w, widgets.Text | widgets.Dropdown | widgets.Button | widgets.IntProgress):
            assert w.layout.min_width not in (None, "", "0", "0px"), w
    assert panel.run_button.layout.width == "auto"  # "Run" is never cut to "R"
    buttons_row = next(w for w in _tree(column) if panel.run_button in getattr(w, "children", ()))
    assert buttons_row.layout.flex_flow == "row wrap"
