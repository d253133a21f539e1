"""Bounded time and memory: the engine's limits on Monte Carlo trials and on symbolic work.

Every limit here is refused (or worked around) before the expensive step runs, so these
tests assert behaviour (which error, which message, which path was taken), never time.
Expected messages are this package's own wording (no external source).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import sympy as sp

from viscometry.cli import main
from viscometry.errors import FormulaError, InputError, ModelError
from viscometry.gum import Budget, InputQuantity
from viscometry.gum import model as model_module
from viscometry.gum.formula import MAX_EXPRESSION_NODES, expression_size
from viscometry.gum.model import CompiledModel, MeasurementModel
from viscometry.gum.montecarlo import MAX_TRIALS, check_trials, run_adaptive, run_monte_carlo
from viscometry.gum.propagation import higher_order_variance
from viscometry.gum.simulation import simulate_budget
from viscometry.io import load_budget

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
X = [InputQuantity.normal("a", 1.0, 0.1)]


def _never_called(*_args):
    raise AssertionError("the model must not be evaluated when the trials are refused")


# ----------------------------------------------------------------------------- trials
def test_max_trials_is_ten_million_and_one_more_is_refused_before_anything_runs():
    # 10⁷ trials stay allowed (benchmarked elsewhere); the message names value and limit.
    assert MAX_TRIALS == 10**7 and check_trials(MAX_TRIALS) == MAX_TRIALS
    with pytest.raises(InputError) as info:
        run_monte_carlo(_never_called, X, trials=MAX_TRIALS + 1, seed=1)
    assert str(info.value).startswith(
        "trials = 10000001 is more than the limit of 10000000 trials of one Monte Carlo run"
    )


@pytest.mark.parametrize("trials", [10**10, 10**5000], ids=["1e10", "5001 digits"])
def test_huge_trials_are_refused_with_a_short_message(trials):
    with pytest.raises(InputError) as info:
        run_monte_carlo(_never_called, X, trials=trials)
    assert "more than the limit of 10000000 trials" in str(info.value)
    assert len(str(info.value)) < 250  # a 5000-digit number is not echoed whole


def test_adaptive_procedure_stops_at_the_same_limit():
    with pytest.raises(InputError) as info:
        run_adaptive(_never_called, X, max_trials=MAX_TRIALS + 1)
    assert "max_trials = 10000001 is more than the limit of 10000000" in str(info.value)


def test_simulate_budget_refuses_before_evaluating():
    budget = Budget.from_formula("y", "2 * a", [InputQuantity.normal("a", 1.0, 0.1, "m")], "m")
    with pytest.raises(InputError, match="trials = 10000000000 is more than the limit"):
        simulate_budget(budget, trials=10**10)
    with pytest.raises(InputError, match="max_trials = 20000000 is more than the limit"):
        simulate_budget(budget, adaptive=True, max_trials=2 * 10**7)


def test_the_panel_uses_the_engine_limit():
    from viscometry.widgets.monte_carlo_panel import MAX_TRIALS as PANEL_MAX_TRIALS

    assert PANEL_MAX_TRIALS is MAX_TRIALS


def test_command_line_refuses_too_many_trials_on_one_line(capsys):
    path = EXAMPLES / "methods" / "pressure_capillary.toml"
    assert main(["simulate", str(path), "--trials", "1e10"]) == 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err and "pressure_capillary.toml" in err
    assert "trials = 10000000000 is more than the limit of 10000000 trials" in err


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"histogram_bins": 10**9}, "histogram_bins must be at most 100000"),
        ({"trials": 1000, "seed": -(10**5000)}, "seed must be at least 0, got -an integer"),
    ],
)
def test_other_run_arguments_are_bounded(kwargs, fragment):
    with pytest.raises(InputError) as info:
        run_monte_carlo(_never_called, X, **{"trials": 1000, **kwargs})
    assert fragment in str(info.value)


# ----------------------------------------------------------------------------- symbolic
def _nested(depth: int, inner: str) -> str:
    text = inner
    for i in range(depth):
        text = f"{('exp', 'sin', 'cos', 'tan')[i % 4]}({text})"
    return text


def test_expression_size_stops_at_its_limit():
    x = sp.Symbol("x")
    assert expression_size(2 * x + sp.sin(x), 100) == 6  # Add, Mul, 2, x, sin, x
    assert expression_size(sp.Add(*sp.symbols("y0:1000")), 10) == 11


def test_nested_reference_functions_are_refused_while_parsing():
    # Before the limit this formula took over a minute to parse and derive (measured).
    with pytest.raises(FormulaError) as info:
        MeasurementModel.from_formula("water_viscosity(water_viscosity(T) * 3e5)", ["T"])
    assert f"expands into more than {MAX_EXPRESSION_NODES} terms (the limit)" in str(info.value)


def test_higher_order_terms_of_a_deep_formula_come_from_finite_differences():
    # A chain of 14 nested functions: its symbolic third derivatives took 11 s and 0.5 GB
    # (measured before the limit); now the higher-order terms are finite differences.
    names = ["r", "h", "V", "L"]
    model = MeasurementModel.from_formula(_nested(14, "r*h*V/L**3"), names)
    compiled = CompiledModel(model)
    assert compiled.higher_order_method == "finite differences"
    x, u = [0.2, 0.3, 0.4, 0.9], [0.002, 0.003, 0.004, 0.009]
    h, t = compiled.higher_order(*x, uncertainties=u)
    assert h.shape == t.shape == (4, 4) and np.all(np.isfinite(h)) and np.all(np.isfinite(t))
    # the Hessian of a smooth function is symmetric: the two difference quotients agree
    np.testing.assert_allclose(h, h.T, rtol=1e-6, atol=1e-9 * np.abs(h).max())


def test_finite_differences_agree_with_the_symbolic_terms_on_h1(monkeypatch):
    # Triangulation (STYLE habit 7): JCGM 100:2008, H.1 end gauge, higher-order variance by
    # exact third derivatives and by finite differences of the exact gradient. Tolerance:
    # the step analysis in CompiledModel.higher_order (about 1e-10 of the first-order
    # variance; measured 3e-11 relative).
    budget = load_budget(EXAMPLES / "reference" / "gum_h1_end_gauge.toml").budget
    x, u, _nu, c = budget.si_arrays()
    symbolic = CompiledModel(budget.model)
    assert symbolic.higher_order_method == "symbolic"
    monkeypatch.setattr(model_module, "SYMBOLIC_HIGHER_ORDER_NODES", 0)
    numeric = CompiledModel(budget.model)
    assert numeric.higher_order_method == "finite differences"
    g = symbolic.gradient(*x, *c)
    exact = higher_order_variance(u, g, *symbolic.higher_order(*x, *c, uncertainties=u))
    approx = higher_order_variance(u, g, *numeric.higher_order(*x, *c, uncertainties=u))
    assert approx == pytest.approx(exact, rel=1e-6)


def test_finite_differences_refuse_a_singularity_next_to_the_estimate(monkeypatch):
    monkeypatch.setattr(model_module, "SYMBOLIC_HIGHER_ORDER_NODES", 0)
    compiled = CompiledModel(MeasurementModel.from_formula("sqrt(a)", ["a"], output_name="y"))
    with pytest.raises(ModelError, match="second derivatives of the model of y are not finite"):
        compiled.higher_order(0.0, uncertainties=[1.0])


def test_first_derivatives_over_the_limit_are_refused(monkeypatch):
    monkeypatch.setattr(model_module, "MAX_DERIVATIVE_NODES", 50)
    model = MeasurementModel.from_formula(_nested(6, "a*b"), ["a", "b"], output_name="y")
    # The compiled gradient is a program of a few steps per node (no symbolic derivation);
    # the exact symbolic derivatives are derived, and bounded, when they are asked for.
    compiled = CompiledModel(model)
    with pytest.raises(ModelError) as info:
        compiled.derivatives  # noqa: B018 - the property derives them
    assert "derivatives of the model of y have" in str(info.value)
    assert "have more than 50 terms (the limit" in str(info.value)
    monkeypatch.setattr(model_module, "MAX_DERIVATIVE_NODES", 40)  # one alone has 46
    with pytest.raises(ModelError, match="derivative by a has more than 40 terms"):
        CompiledModel(model).derivative(0)


def test_display_of_a_derivative_skips_simplify_where_it_would_hang():
    # simplify() of this derivative ran past a minute (measured); the display form is
    # returned as derived, with common factors pulled out.
    names = ["a", "b", "c", "d", "f", "g", "h", "k"]
    model = MeasurementModel.from_formula("(a+b+c+d+f+g+h+k)**12/(a-b)", names)
    shown = model.derivative("a")
    assert sp.simplify(shown - sp.factor_terms(sp.diff(model.expression, model.symbol("a")))) == 0
    nested = MeasurementModel.from_formula(_nested(14, "a*b") + " * c", ["a", "b", "c"])
    assert nested.derivative("c") == sp.factor_terms(nested.expression / nested.symbol("c"))


def test_small_power_laws_are_still_simplified():
    model = MeasurementModel.from_formula(
        "pi * r**4 * dp * t / (8 * V * L)", ["r", "dp", "t", "V", "L"]
    )
    assert model.relative_sensitivity_expression("r") == 4
    assert model.relative_sensitivity_expression("L") == -1


# ----------------------------------------------------------------------------- messages
def test_a_900000_character_key_is_echoed_cut(tmp_path, capsys):
    text = (EXAMPLES / "methods" / "pressure_capillary.toml").read_text(encoding="utf-8")
    path = tmp_path / "long_key.toml"
    path.write_text(text.replace("[inputs.rho]", "[inputs." + "k" * 900_000 + "]"), "utf-8")
    assert main(["evaluate", str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert "\n" not in err and len(err) < 300 and "[inputs.kkk" in err


def test_rounding_keeps_every_digit_of_an_extreme_ratio():
    # U 303 orders of magnitude below the value, as a coverage factor of 1e-300 gives (it
    # ended in decimal.InvalidOperation); exact decimal arithmetic (no external source).
    from viscometry.gum.rounding import round_result

    r = round_result(1.0016, 4.5e-303)
    assert r.decimals == 304 and r.uncertainty.endswith("45") and r.value.startswith("1.0016")


def test_a_result_says_when_its_higher_order_terms_are_finite_differences(monkeypatch):
    # The record must show how a number was obtained (this package's own wording).
    from viscometry.gum import Budget, InputQuantity
    from viscometry.gum.budget import HIGHER_ORDER_BY_DIFFERENCES

    monkeypatch.setattr(model_module, "SYMBOLIC_HIGHER_ORDER_NODES", 0)
    a, b = InputQuantity.normal("a", 2.0, 0.1), InputQuantity.normal("b", 3.0, 0.2)
    budget = Budget.from_formula("y", "a*b + 0.1234567*a**3*b", [a, b])
    assert HIGHER_ORDER_BY_DIFFERENCES in budget.evaluate(higher_order=True).warnings
    assert HIGHER_ORDER_BY_DIFFERENCES not in budget.evaluate().warnings
