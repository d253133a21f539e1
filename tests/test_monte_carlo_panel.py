"""Tests of viscometry.widgets.monte_carlo_panel, driven from code (no kernel, no browser).

ipywidgets 8 fires ``observe`` and ``on_click`` callbacks synchronously in plain Python, so
the panel logic is tested by setting control values and calling ``run`` (or clicking).
The budget is Y = R⁴ with R normal: its verdict is known in closed form (exact analytic, see
tests/test_simulation.py): validated at u(r)/r = 0.03 %, not validated at 5 %.
"""

from __future__ import annotations

import pytest

from viscometry.errors import InputError
from viscometry.gum import Budget, InputQuantity
from viscometry.widgets.monte_carlo_panel import MonteCarloPanel, monte_carlo_panel

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

    panel.uncertainty.value = 0.05
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
    panel.trials.value = 50_000
    panel.seed.value = 3
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
    panel.seed.value = 12
    panel.seed.value = 11
    assert panel.run().to_dict() == first


def test_a_failing_run_keeps_the_last_result_and_shows_the_message():
    b = Budget.from_formula("y", "sqrt(x)", [InputQuantity.normal("x", 4.0, 0.01)])
    panel = monte_carlo_panel(b, "x", trials=20_000, seed=1)
    good = panel.simulation
    panel.uncertainty.value = 4.0  # sqrt of negative draws: non-finite model values
    assert panel.run() is None
    assert panel.simulation is good
    assert panel.error is not None and "non-finite" in panel.error
    assert "cannot simulate u(x) = 4" in panel.result_html.value


def test_bad_arguments(budget):
    with pytest.raises(InputError, match="no input named"):
        monte_carlo_panel(budget, "q", run_now=False)
    with pytest.raises(InputError, match="trials"):
        monte_carlo_panel(budget, trials=10, run_now=False)
    with pytest.raises(InputError, match="seed"):
        monte_carlo_panel(budget, seed=-1, run_now=False)
