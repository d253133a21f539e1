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
from pathlib import Path

import ipywidgets as widgets
import matplotlib
import pytest
from matplotlib._pylab_helpers import Gcf
from matplotlib.figure import Figure
from scipy import stats

from viscometry.conformity import DECISION_CAUTION
from viscometry.demo import pressure_capillary_demo_budget
from viscometry.errors import InputError, ModelError
from viscometry.gum import Budget, Correlation, InputQuantity
from viscometry.gum import model as model_module
from viscometry.gum.budget import BudgetResult
from viscometry.io import loads_budget
from viscometry.plots import figure_png, pareto_data, pareto_figure
from viscometry.text import budget_html, decision_statement, score_statement, statement
from viscometry.widgets import BudgetEditor, budget_editor, conformity_panel, score_panel
from viscometry.widgets.fields import show_number

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
    assert editor.table_html.value.endswith(budget_html(expected))  # after a scrolling style
    assert html.escape(statement(expected)) in editor.statement_html.value
    assert "the budget as given" in editor.statement_html.value
    for q in budget.inputs:
        # the field shows about four significant digits; the budget keeps the exact number
        assert editor.controls[q.name].value == show_number(q.standard_uncertainty)
        assert editor.messages[q.name].value == ""
    assert editor.error is None
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
    for name, control in editor.controls.items():
        assert any(control is w for w in shown)
        assert any(editor.messages[name] is w for w in shown)  # a refusal shows beside it
        # a text field (nothing clamped), not a bounded numeric widget
        assert isinstance(control, widgets.Text)
        assert not isinstance(control, widgets.BoundedFloatText)


# ------------------------------------------------------------------------ what-ifs
def test_halving_u_r_lowers_uc_as_the_closed_form_says(
    budget: Budget, editor: BudgetEditor
) -> None:
    u_r = budget.input("r").standard_uncertainty
    editor.controls["r"].value = repr(u_r / 2)  # typed, as a person would
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
    assert editor.set_uncertainty("r", u_r / 2)  # from code: the exact number
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
        editor.controls["r"].value = str(u)
        current = editor.current_budget()
        assert all(current is not b for b in seen)
        seen.append(current)
        assert current.input("r").standard_uncertainty == u
    assert budget.input("r").standard_uncertainty == 0.0006
    assert editor.baseline is budget
    editor.set_uncertainty("h", 0.1)
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
    editor.controls["V"].value = "0.002"
    editor.set_uncertainty("t", 0.1)
    assert editor.current_result().contribution("V").standard_uncertainty == 0.002
    assert editor.error is None


def test_chart_image_changes_and_reset_restores(budget: Budget, editor: BudgetEditor) -> None:
    original = editor.chart.value
    editor.controls["r"].value = "0.0001"
    editor.controls["h"].value = "abc"  # refused; reset clears the refusal too
    assert editor.chart.value != original
    editor.reset_button.click()
    assert editor.chart.value == original  # Agg rendering is deterministic on one installation
    assert editor.current_budget() is budget
    assert editor.controls["r"].value == "0.0006"
    assert editor.controls["h"].value == show_number(budget.input("h").standard_uncertainty)
    assert editor.error is None and editor.messages["h"].value == ""
    assert "the budget as given" in editor.statement_html.value


@pytest.fixture()
def small_editor() -> BudgetEditor:
    # A two-input product y = a b: fewer bars to redraw than the demo budget.
    b = Budget.from_formula(
        "y", "a * b", [InputQuantity.normal("a", 2.0, 0.02), InputQuantity.normal("b", 3.0, 0.03)]
    )
    return budget_editor(b, chart_dpi=40)


def test_zero_uncertainty_is_accepted(small_editor: BudgetEditor) -> None:
    small_editor.controls["a"].value = "0"
    result = small_editor.current_result()
    assert result.contribution("a").variance_share == 0.0
    # Only b left: u_c = |a| u(b) = 2 * 0.03 (JCGM 100:2008, 5.1.2, exact).
    assert result.standard_uncertainty == pytest.approx(0.06, rel=1e-12)
    assert table_row(small_editor.table_html.value, "a")[-1] == "0.0 %"
    assert small_editor.error is None


def test_all_uncertainties_zero_is_shown_not_raised(small_editor: BudgetEditor) -> None:
    for control in small_editor.controls.values():
        control.value = "0"
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
    editor.controls["a"].value = "0.005"
    assert editor.current_result() is good
    assert editor.error is not None and "u(a) = 0.005" in editor.error
    assert "cannot be evaluated" in editor.statement_html.value
    assert "the model gives nan" in editor.messages["a"].value  # next to the field too


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
GLASS_BUDGET = (Path(__file__).parent / "data" / "short_flow_time_glass.toml").read_text(
    encoding="utf-8"
)
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
    editor.controls["C"].value = "0.00005"
    assert _warnings_shown(editor.statement_html.value) == [f"warning: {FLOW_TIME_WARNING}"]
    assert "ν = (" in html.unescape(editor.statement_html.value)


# ------------------------------------------------------------------------ refusals are shown
def _library_message(budget: Budget, name: str, u: float) -> str:
    """What the library says when the budget refuses u(name) = u."""
    with pytest.raises(InputError) as caught:
        budget.with_uncertainty(name, u)
    return str(caught.value)


def test_a_negative_u_is_refused_with_the_library_message(small_editor: BudgetEditor) -> None:
    editor = small_editor
    good = editor.current_result()
    editor.controls["a"].value = "-0.5"
    expected = _library_message(editor.baseline, "a", -0.5)
    assert "must be non-negative, got -0.5" in expected  # the library's wording
    assert editor.error == expected
    assert html.escape(expected) in editor.messages["a"].value  # next to the field
    assert "color:#a00" in editor.messages["a"].value
    assert f"not applied: {html.escape(expected)}" in editor.statement_html.value
    # nothing clamped: the text stays as typed, the last good result stays on screen
    assert editor.controls["a"].value == "-0.5"
    assert editor.current_result() is good
    assert editor.current_budget().input("a").standard_uncertainty == 0.02
    assert html.escape(statement(good)) in editor.statement_html.value
    # a good value clears the message
    editor.controls["a"].value = "0.01"
    assert editor.error is None and editor.messages["a"].value == ""
    assert "not applied" not in editor.statement_html.value
    assert editor.current_budget().input("a").standard_uncertainty == 0.01


def test_text_that_is_not_a_number_is_refused_not_ignored(small_editor: BudgetEditor) -> None:
    editor = small_editor
    good = editor.current_result()
    editor.controls["b"].value = "abc"
    assert editor.error == "u(b): 'abc' is not a number"  # viscometry.widgets.fields.parse_number
    assert "is not a number" in html.unescape(editor.messages["b"].value)
    assert editor.current_result() is good
    # two refusals stand side by side; the latest is the editor's error
    editor.controls["a"].value = "-1"
    assert editor.error == _library_message(editor.baseline, "a", -1.0)
    assert "is not a number" in html.unescape(editor.messages["b"].value)
    editor.controls["b"].value = "0.03"  # back to the value as given: accepted
    assert editor.messages["b"].value == ""
    assert editor.error == _library_message(editor.baseline, "a", -1.0)


def test_the_field_shows_four_digits_and_keeps_the_exact_number(small_editor: BudgetEditor) -> None:
    editor = small_editor
    assert editor.set_uncertainty("a", 0.0123456789)
    assert editor.controls["a"].value == "0.01235"  # format_number, 4 significant digits
    assert editor.current_budget().input("a").standard_uncertainty == 0.0123456789
    # y = a b: u_c² = (b u_a)² + (a u_b)² (JCGM 100:2008, 5.1.2, exact analytic)
    expected = math.hypot(3.0 * 0.0123456789, 2.0 * 0.03)
    assert editor.current_result().standard_uncertainty == pytest.approx(expected, rel=1e-12)
    assert not editor.set_uncertainty("a", -1.0)  # refused from code as from the keyboard
    with pytest.raises(InputError, match="no input named 'q'"):
        editor.set_uncertainty("q", 0.1)


def test_a_huge_u_is_not_capped_and_the_plausibility_warnings_show(budget: Budget) -> None:
    editor = budget_editor(budget, chart_dpi=40)
    assert editor.current_result().warnings == ()  # the demo budget as given is plausible
    editor.controls["t"].value = "1e9"
    assert editor.error is None
    assert editor.current_budget().input("t").standard_uncertainty == 1e9  # not capped
    warnings = editor.current_result().warnings
    # u(t) = 1e9 s ≥ |t| ≈ 118.5 s for a flow time (a sign-bound input), and U > η, so the
    # first-order interval reaches below zero for a viscosity (exact arithmetic).
    assert any(w.startswith("u(t) = 1e+09 s is at least |t|") for w in warnings)
    assert any("reaches below zero" in w for w in warnings)
    assert _warnings_shown(editor.statement_html.value) == [f"warning: {w}" for w in warnings]
    assert editor.statement_html.value.count("<span style='color:#a60'>warning: ") == len(warnings)


# ------------------------------------------------------------------------ layout
def _tree(w: widgets.Widget) -> list[widgets.Widget]:
    out = [w]
    for child in getattr(w, "children", ()):
        out += _tree(child)
    return out


def assert_responsive(root: widgets.Widget) -> None:
    """Rows wrap, control columns keep a minimum width, charts keep their aspect ratio, and
    no control is left to shrink to nothing (the findings at 1024 px, NOTEBOOKS.md)."""
    tree = _tree(root)
    for w in tree:
        kids = getattr(w, "children", ())
        if isinstance(w, widgets.Image):
            assert (w.layout.width, w.layout.height) == ("100%", "auto")
            assert w.layout.max_width and w.layout.min_width
        elif isinstance(w, widgets.Box) and not isinstance(w, widgets.VBox):
            side_by_side = any(isinstance(k, widgets.Image | widgets.VBox) for k in kids)
            if side_by_side or len(kids) > 2:
                assert w.layout.flex_flow == "row wrap", w
        if isinstance(w, widgets.Text | widgets.Dropdown | widgets.Button | widgets.IntProgress
                      | widgets.Checkbox | widgets.Label):  # fmt: skip
            assert w.layout.min_width not in (None, "", "0", "0px"), w
    columns = [w for w in tree if isinstance(w, widgets.VBox) and w.layout.min_width]
    assert columns, "no control column with a minimum width"


def test_editor_layout_wraps_and_keeps_the_chart_aspect(editor: BudgetEditor) -> None:
    assert_responsive(editor.widget)
    row = editor.widget.children[1]
    assert row.layout.flex_flow == "row wrap"
    column, chart = row.children
    assert column.layout.min_width == "22em"  # controls_column: never squeezed to nothing
    assert chart is editor.chart


# ------------------------------------------------------------------------ decisions
@pytest.fixture()
def lot() -> BudgetResult:
    # y = x = 10.9 with u = 0.1 and k = 2 (fixed), ν = ∞: a normal PDF for the measurand.
    b = Budget.from_formula("y", "x", [InputQuantity.normal("x", 10.9, 0.1, "mm")], "mm",
                            coverage_factor=2.0)  # fmt: skip
    return b.evaluate()


def test_conformity_panel_decides_and_states(lot: BudgetResult) -> None:
    panel = conformity_panel(lot, 9.0, 11.0)
    d = panel.decision
    assert d is not None and d.verdict == "accept" and panel.error is None
    # P(true value > 11) = 1 − Φ((11 − 10.9)/0.1) = 1 − Φ(1) = 0.1587 (exact analytic, normal)
    assert d.specific_risk == pytest.approx(0.15865525393145707, rel=1e-9)
    assert html.escape(decision_statement(d, "mm")) in panel.verdict_html.value
    assert html.escape(DECISION_CAUTION) in panel.verdict_html.value
    panel.rule.value = "guarded"  # w = 1·U = 0.2 mm: acceptance limit 10.8 < 10.9
    assert panel.decision.verdict == "reject" and panel.decision.acceptance_upper == pytest.approx(
        10.8
    )
    assert "Rejected under guarded acceptance" in html.unescape(panel.verdict_html.value)
    assert "upper 10.8 mm" in html.unescape(panel.verdict_html.value)
    panel.guard_factor.value = "0.25"  # w = 0.05 mm: acceptance limit 10.95 ≥ 10.9
    assert panel.decision.verdict == "accept"


@pytest.mark.parametrize(
    ("key", "typed", "expected"),
    [
        ("upper", "8", "lower must be less than upper, got lower=9.0, upper=8.0"),
        ("guard_factor", "-1", "guard_factor must be non-negative, got -1.0"),
        ("lower", "abc", "lower limit: 'abc' is not a number"),
    ],
)
def test_conformity_panel_shows_each_refusal(
    lot: BudgetResult, key: str, typed: str, expected: str
) -> None:
    panel = conformity_panel(lot, 9.0, 11.0, rule="guarded")
    good = panel.decision
    getattr(panel, key).value = typed
    assert panel.error == expected  # the library's message (viscometry.conformity.decide)
    shown = [k for k, m in panel.messages.items() if html.escape(expected) in m.value]
    assert len(shown) == 1 and shown[0] in (key, "lower")  # beside the field it is about
    assert panel.decision is good  # the last good verdict stays
    assert "the verdict shown is the last good one" in panel.verdict_html.value


def test_conformity_panel_refuses_two_empty_limits(lot: BudgetResult) -> None:
    panel = conformity_panel(lot, None, 11.0)
    assert panel.decision.upper == 11.0 and panel.decision.lower is None  # one-sided
    panel.upper.value = ""
    assert panel.error == "lower and upper tolerance limits are both None; give at least one"
    with pytest.raises(InputError, match="rule must be"):
        conformity_panel(lot, 9.0, 11.0, rule="lenient")


def test_score_panel_scores_and_switches_kind() -> None:
    panel = score_panel("E_n", {"lab_value": 15.0, "lab_expanded_uncertainty": 3.0,
                                "reference_value": 10.0, "reference_expanded_uncertainty": 4.0})  # fmt: skip
    # E_n = (15 − 10)/√(3² + 4²) = 1 (exact analytic): satisfactory, ISO 13528 |E_n| ≤ 1
    assert panel.score.value == 1.0 and panel.score.classification == "satisfactory"
    assert html.escape(score_statement(panel.score)) in panel.statement_html.value
    shown = {w for w in _tree(panel.widget)}
    assert panel.fields["lab_value"] in shown and panel.fields["sd_for_pt"] not in shown
    panel.fields["assigned_value"].value = "10"
    panel.fields["sd_for_pt"].value = "2"
    panel.kind.value = "z"  # z = (15 − 10)/2 = 2.5 (exact analytic): 2 < |z| < 3
    assert panel.score.kind == "z" and panel.score.value == 2.5
    assert panel.score.classification == "questionable"
    shown = {w for w in _tree(panel.widget)}
    assert panel.fields["sd_for_pt"] in shown and panel.fields["reference_value"] not in shown


@pytest.mark.parametrize(
    ("name", "typed", "expected"),
    [
        ("sd_for_pt", "0", "sd_for_pt must be positive, got 0.0"),
        ("sd_for_pt", "-2", "sd_for_pt must be positive, got -2.0"),
        ("lab_value", "abc", "lab value x: 'abc' is not a number"),
    ],
)
def test_score_panel_shows_each_refusal(name: str, typed: str, expected: str) -> None:
    panel = score_panel("z", {"lab_value": 12.5, "assigned_value": 10.0, "sd_for_pt": 1.0})
    good = panel.score
    panel.fields[name].value = typed
    assert panel.error == expected  # the library's message (viscometry.proficiency)
    assert html.escape(expected) in panel.messages[name].value  # next to its field
    assert panel.score is good
    assert "the score shown is the last good one" in panel.statement_html.value
    with pytest.raises(InputError, match="kind must be one of"):
        score_panel("t")


def test_decision_panels_layout(lot: BudgetResult) -> None:
    assert_responsive(conformity_panel(lot, 9.0, 11.0).widget)
    assert_responsive(score_panel("z").widget)
