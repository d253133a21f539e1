"""The budget editor widget and the Pareto chart, driven from Python (no kernel, no browser).

Setting ``control.value`` fires the ipywidgets observers synchronously, so the tests assert on
the HTML table, the statement and the what-if result exactly as a user would see them.

Check values are recomputed independently here from the demo budget's (invented) inputs:
the Poiseuille model is a pure power law, so its relative combined variance is the sum of
squared exponents times squared relative uncertainties (JCGM 100:2008, 5.1.6), ν_eff follows
JCGM 100:2008, G.4.1 (truncated per G.6.4), k is a t quantile from scipy, and the statement
rounds per JCGM 100:2008, 7.2.6. The invented inputs are demo data, not check values: only
the recomputation is compared with the widget.
"""

from __future__ import annotations

import html
import math
import re
from decimal import ROUND_HALF_EVEN, Decimal

import ipywidgets as widgets
import matplotlib
import pytest
from matplotlib._pylab_helpers import Gcf
from matplotlib.figure import Figure
from scipy import stats

from viscometry.demo import pressure_capillary_demo_budget
from viscometry.errors import ModelError
from viscometry.gum import Budget, Correlation, InputQuantity
from viscometry.gum import model as model_module
from viscometry.io import loads_budget
from viscometry.plots import figure_png, pareto_data, pareto_figure
from viscometry.text import budget_html, statement
from viscometry.widgets import BudgetEditor, budget_editor

# Exponents of the inputs in eta = pi r^4 rho_m g h t / (8 V L): the relative sensitivities.
EXPONENTS = {"r": 4, "L": -1, "V": -1, "h": 1, "rho_m": 1, "g": 1, "t": 1}


@pytest.fixture(scope="module")
def budget() -> Budget:
    return pressure_capillary_demo_budget()


@pytest.fixture()
def editor(budget: Budget) -> BudgetEditor:
    return budget_editor(budget)


def closed_form(budget: Budget, u_override: dict[str, float] | None = None) -> dict[str, float]:
    """Independent recomputation for the power-law model (JCGM 100:2008, 5.1.6, G.4.1, G.6.4)."""
    u_override = u_override or {}
    q = {x.name: x for x in budget.inputs}
    # SI values (mm -> m, mL -> m^3) for the estimate; relative terms are unit-free.
    r = q["r"].value * 1e-3
    length = q["L"].value * 1e-3
    volume = q["V"].value * 1e-6
    h = q["h"].value * 1e-3
    eta_si = (
        math.pi * r**4 * q["rho_m"].value * q["g"].value * h * q["t"].value / (8 * volume * length)
    )
    eta = eta_si * 1e3  # Pa s -> mPa s
    rel_terms = {
        n: EXPONENTS[n] * u_override.get(n, q[n].standard_uncertainty) / q[n].value
        for n in EXPONENTS
    }
    rel_var = sum(v**2 for v in rel_terms.values())
    uc = eta * math.sqrt(rel_var)
    contributions = {n: eta * v for n, v in rel_terms.items()}
    dof = {n: q[n].dof for n in EXPONENTS}
    denominator = sum(c**4 / dof[n] for n, c in contributions.items() if math.isfinite(dof[n]))
    nu_eff = uc**4 / denominator if denominator > 0 else math.inf
    p = budget.coverage_probability
    k = (
        float(stats.t.ppf((1 + p) / 2, math.floor(nu_eff)))
        if math.isfinite(nu_eff)
        else float(stats.norm.ppf((1 + p) / 2))
    )
    shares = {n: v**2 / rel_var for n, v in rel_terms.items()}
    return {
        "eta": eta,
        "uc": uc,
        "nu_eff": nu_eff,
        "k": k,
        "U": k * uc,
        **{f"share_{n}": s for n, s in shares.items()},
    }


def rounded_statement_numbers(value: float, expanded: float) -> tuple[str, str]:
    """U to two significant digits, value to the same decimal place (JCGM 100:2008, 7.2.6)."""
    decimals = 1 - math.floor(math.log10(expanded))
    quantum = Decimal(1).scaleb(-decimals)
    u_text = f"{Decimal(repr(expanded)).quantize(quantum, rounding=ROUND_HALF_EVEN):f}"
    v_text = f"{Decimal(repr(value)).quantize(quantum, rounding=ROUND_HALF_EVEN):f}"
    return v_text, u_text


def table_row(table: str, name: str) -> list[str]:
    """Cells of the row of input ``name`` in the editor's HTML budget table."""
    match = re.search(rf"<tr><td>{re.escape(name)}</td>(.*?)</tr>", table)
    assert match, f"no row for {name} in the table"
    return [name, *re.findall(r"<td>(.*?)</td>", match.group(1))]


# ------------------------------------------------------------------------ defaults
def test_defaults_reproduce_the_budget_as_given(budget: Budget, editor: BudgetEditor) -> None:
    expected = budget.evaluate()
    got = editor.current_result()
    assert editor.current_budget() is budget
    assert got.value == expected.value
    assert got.standard_uncertainty == expected.standard_uncertainty
    assert got.expanded_uncertainty == expected.expanded_uncertainty
    assert editor.table_html.value == budget_html(expected)
    assert html.escape(statement(expected)) in editor.statement_html.value
    assert "the budget as given" in editor.statement_html.value
    for q in budget.inputs:
        assert editor.controls[q.name].value == q.standard_uncertainty
    assert editor.chart.value[:8] == b"\x89PNG\r\n\x1a\n"


def test_defaults_agree_with_the_closed_form(budget: Budget, editor: BudgetEditor) -> None:
    # Independent recomputation, JCGM 100:2008, 5.1.6 (power law) and G.4.1.
    cf = closed_form(budget)
    result = editor.current_result()
    assert result.value == pytest.approx(cf["eta"], rel=1e-12)
    assert result.standard_uncertainty == pytest.approx(cf["uc"], rel=1e-12)
    assert result.effective_dof == pytest.approx(cf["nu_eff"], rel=1e-9)
    assert result.coverage_factor == pytest.approx(cf["k"], rel=1e-9)


def test_widget_tree_shows_every_part(editor: BudgetEditor) -> None:
    def walk(w: widgets.Widget) -> list[widgets.Widget]:
        out = [w]
        for child in getattr(w, "children", ()):
            out += walk(child)
        return out

    shown = walk(editor.widget)
    for part in (editor.table_html, editor.statement_html, editor.chart, editor.reset_button):
        assert any(part is w for w in shown)
    for control in editor.controls.values():
        assert any(control is w for w in shown)
        assert isinstance(control, widgets.BoundedFloatText)


# ------------------------------------------------------------------------ what-ifs
def test_halving_u_r_lowers_uc_as_the_closed_form_says(
    budget: Budget, editor: BudgetEditor
) -> None:
    u_r = budget.input("r").standard_uncertainty
    editor.controls["r"].value = u_r / 2
    cf = closed_form(budget, {"r": u_r / 2})
    result = editor.current_result()
    # JCGM 100:2008, 5.1.6: (u_c/eta)^2 = sum (p_i u_i / x_i)^2 with p_r = 4.
    assert result.standard_uncertainty == pytest.approx(cf["uc"], rel=1e-12)
    assert result.standard_uncertainty < budget.evaluate().standard_uncertainty
    # Same thing written as a change of one variance term: u_c'^2 = u_c^2 - (3/4)(c_r u_r)^2.
    before = budget.evaluate()
    c_u = before.contribution("r").contribution
    assert result.standard_uncertainty**2 == pytest.approx(
        before.standard_uncertainty**2 - 0.75 * c_u**2, rel=1e-12
    )
    assert result.effective_dof == pytest.approx(cf["nu_eff"], rel=1e-9)
    assert result.contribution("r").variance_share == pytest.approx(cf["share_r"], rel=1e-12)


def test_table_and_statement_text_follow_the_change(budget: Budget, editor: BudgetEditor) -> None:
    u_r = budget.input("r").standard_uncertainty
    editor.controls["r"].value = u_r / 2
    cf = closed_form(budget, {"r": u_r / 2})
    row = table_row(editor.table_html.value, "r")
    assert row[3] == f"{u_r / 2:.3g}"  # u(x) column, in mm
    assert row[-1] == f"{100 * cf['share_r']:.1f} %"  # variance share column
    value_text, u_text = rounded_statement_numbers(cf["eta"], cf["U"])
    statement = html.unescape(editor.statement_html.value)
    # the measurand eta is written with its symbol η
    assert f"η = ({value_text} ± {u_text}) mPa·s" in statement
    assert f"k = {cf['k']:.2f}" in statement
    assert f"u(r): {u_r:.6g} → {u_r / 2:.6g} mm" in statement
    # Other rows keep their uncertainties.
    assert (
        table_row(editor.table_html.value, "h")[3]
        == f"{budget.input('h').standard_uncertainty:.3g}"
    )


def test_each_change_builds_a_new_budget_and_never_mutates(
    budget: Budget, editor: BudgetEditor
) -> None:
    seen = [editor.current_budget()]
    for u in (0.0005, 0.0004, 0.0003):
        editor.controls["r"].value = u
        current = editor.current_budget()
        assert all(current is not b for b in seen)
        seen.append(current)
        assert current.input("r").standard_uncertainty == u
    assert budget.input("r").standard_uncertainty == 0.0006
    assert editor.baseline is budget
    editor.controls["h"].value = 0.1
    assert editor.current_budget().input("r").standard_uncertainty == 0.0003
    assert editor.current_budget().input("h").standard_uncertainty == 0.1
    with pytest.raises(AttributeError):
        editor.baseline = budget  # type: ignore[misc]


def test_callbacks_never_re_derive(editor: BudgetEditor, monkeypatch: pytest.MonkeyPatch) -> None:
    def forbidden(*args: object, **kwargs: object) -> None:
        raise AssertionError("a callback re-derived or re-lambdified the model")

    monkeypatch.setattr(model_module.CompiledModel, "__init__", forbidden)
    monkeypatch.setattr(model_module.sp, "lambdify", forbidden)
    monkeypatch.setattr(model_module.sp, "diff", forbidden)
    editor.controls["V"].value = 0.002
    editor.controls["t"].value = 0.1
    assert editor.current_result().contribution("V").standard_uncertainty == 0.002
    assert editor.error is None


def test_chart_image_changes_and_reset_restores(budget: Budget, editor: BudgetEditor) -> None:
    original = editor.chart.value
    editor.controls["r"].value = 0.0001
    assert editor.chart.value != original
    editor.reset_button.click()
    assert editor.chart.value == original  # Agg rendering is deterministic on one installation
    assert editor.current_budget() is budget
    assert editor.controls["r"].value == 0.0006
    assert "the budget as given" in editor.statement_html.value


@pytest.fixture()
def small_editor() -> BudgetEditor:
    # A two-input product y = a b: fewer bars to redraw than the demo budget.
    b = Budget.from_formula(
        "y", "a * b", [InputQuantity.normal("a", 2.0, 0.02), InputQuantity.normal("b", 3.0, 0.03)]
    )
    return budget_editor(b, chart_dpi=40)


def test_negative_input_is_clamped_to_zero(small_editor: BudgetEditor) -> None:
    small_editor.controls["a"].value = -0.001  # BoundedFloatText(min=0) clamps
    assert small_editor.controls["a"].value == 0.0
    result = small_editor.current_result()
    assert result.contribution("a").variance_share == 0.0
    # Only b left: u_c = |a| u(b) = 2 * 0.03 (JCGM 100:2008, 5.1.2, exact).
    assert result.standard_uncertainty == pytest.approx(0.06, rel=1e-12)
    assert table_row(small_editor.table_html.value, "a")[-1] == "0.0 %"


def test_all_uncertainties_zero_is_shown_not_raised(small_editor: BudgetEditor) -> None:
    for control in small_editor.controls.values():
        control.value = 0.0
    result = small_editor.current_result()
    assert result.standard_uncertainty == 0.0
    assert "exactly known inputs" in small_editor.statement_html.value
    assert "combined standard uncertainty is zero" in small_editor.statement_html.value


def test_a_failed_evaluation_keeps_the_last_result(
    small_editor: BudgetEditor, monkeypatch: pytest.MonkeyPatch
) -> None:
    editor = small_editor
    good = editor.current_result()

    def fail(self: Budget, **kwargs: object) -> None:
        raise ModelError("the model gives nan at the input estimates")

    monkeypatch.setattr(Budget, "evaluate", fail)
    editor.controls["a"].value = 0.005
    assert editor.current_result() is good
    assert editor.error is not None and "u(a) = 0.005" in editor.error
    assert "cannot be evaluated" in editor.statement_html.value


# ------------------------------------------------------------------------ Pareto chart
def test_pareto_data_sorted_and_complete(budget: Budget) -> None:
    data = pareto_data(budget.evaluate())
    shares = [s for _, s in data]
    assert shares == sorted(shares, reverse=True)
    assert {n for n, _ in data} == set(budget.input_names)
    assert sum(shares) == pytest.approx(1.0, rel=1e-12)  # shares add to 1 (JCGM 100:2008, 5.1.2)
    assert data[0][0] == "r"


def test_pareto_figure_standalone_is_not_tracked_by_pyplot(budget: Budget) -> None:
    before = Gcf.get_num_fig_managers()
    fig = pareto_figure(budget.evaluate())
    assert isinstance(fig, Figure)
    assert Gcf.get_num_fig_managers() == before
    (ax,) = fig.axes
    heights = [p.get_height() for p in ax.patches]
    assert heights == sorted(heights, reverse=True)
    cumulative = ax.lines[0].get_ydata()
    assert cumulative[-1] == pytest.approx(100.0, rel=1e-12)
    assert [t.get_text() for t in ax.get_xticklabels()][0] == "r"
    assert figure_png(fig)[:4] == b"\x89PNG"
    assert matplotlib.get_backend()  # any backend: nothing above depended on it


def test_pareto_figure_into_given_axes(budget: Budget) -> None:
    fig = Figure()
    ax = fig.add_subplot()
    assert pareto_figure(budget.evaluate(), ax=ax) is fig
    assert len(fig.axes) == 1


def test_pareto_shows_correlation_cross_terms() -> None:
    # y = a + b with r = +1: u_c = u_a + u_b (JCGM 100:2008, 5.2.2 note 1), the cross term
    # 2 u_a u_b is its own bar. Exact case: u_a = 0.3, u_b = 0.4 -> u_c^2 = 0.49.
    b = Budget.from_formula(
        "y", "a + b",
        [InputQuantity.normal("a", 1.0, 0.3), InputQuantity.normal("b", 2.0, 0.4)],
        correlations=[Correlation("a", "b", 1.0)],
    )  # fmt: skip
    data = dict(pareto_data(b.evaluate()))
    assert data["r(a, b)"] == pytest.approx(0.24 / 0.49, rel=1e-12)
    assert data["b"] == pytest.approx(0.16 / 0.49, rel=1e-12)
    fig = pareto_figure(b.evaluate())
    assert "r(a, b)" in [t.get_text() for t in fig.axes[0].get_xticklabels()]


# ------------------------------------------------------------------------ one budget, one path
#: A glass-viscometer budget (built-in model) whose flow time, 149.98 s, is below the minimum;
#: the same budget as in tests/test_cli.py, which checks the same warning on every other path.
GLASS_BUDGET = """format = "viscometry-budget/1"
title = "short flow time"
[measurand]
name = "nu"
unit = "mm^2/s"
method = "glass_capillary_kinetic"
[inputs.C]
value = 0.10012
unit = "mm^2/s^2"
expanded_uncertainty = 0.00018
coverage_factor = 2
[inputs.t]
unit = "s"
readings = [149.82, 150.11, 149.95, 150.04]
[inputs.E]
value = 0.0
unit = "mm^2*s"
distribution = "rectangular"
half_width = 2.0
"""
#: 200 s: minimum flow time of a manually timed glass capillary viscometer, ISO 3104 /
#: ASTM D445 (from memory); 150 s: the mean of the readings, 599.92/4 = 149.98 s (exact
#: arithmetic), printed to 4 significant digits.
FLOW_TIME_WARNING = (
    "flow time 150 s is below the minimum 200 s (ISO 3104 / ASTM D445, manual timing)"
)


def _warnings_shown(statement_html: str) -> list[str]:
    """The warning lines of the editor's statement, as a person reads them."""
    lines = re.split(r"<br\s*/?>", statement_html)
    texts = [html.unescape(re.sub(r"<[^>]+>", "", line)) for line in lines]
    return [t for t in texts if t.startswith("warning: ")]


def test_flow_time_warning_in_the_budget_editor_statement() -> None:
    editor = budget_editor(loads_budget(GLASS_BUDGET, "glass.toml").budget, chart_dpi=40)
    assert editor.current_result().warnings == (FLOW_TIME_WARNING,)
    assert _warnings_shown(editor.statement_html.value) == [f"warning: {FLOW_TIME_WARNING}"]
    # a what-if on an uncertainty keeps the estimate, hence the warning
    editor.controls["C"].value = 0.00005
    assert _warnings_shown(editor.statement_html.value) == [f"warning: {FLOW_TIME_WARNING}"]
    assert "ν = (" in html.unescape(editor.statement_html.value)
