"""The upgrade explorer widget, driven from Python (no kernel, no browser).

Setting ``checkbox.value`` or ``target.value`` fires the ipywidgets observers synchronously,
so the tests tick boxes, set targets and assert on the HTML the user would read.

Check values: a linear model y = a + b + c with unit sensitivities and a fixed k = 2, so
u_c² = Σ u²(xᵢ) and U = 2 u_c exactly (JCGM 100:2008, eq. 10 and 6.2.1); every expected
number below is worked out by hand in the comments. The invented Poiseuille example file is
demo data, not a check value: there the explorer is only compared with
:func:`viscometry.planning.evaluate_upgrades` run independently.
"""

from __future__ import annotations

import html
import math
import re
import tomllib
from pathlib import Path

import ipywidgets as widgets
import pytest

import viscometry.planning.upgrades as upgrades
from viscometry.errors import InputError
from viscometry.gum import Budget, InputQuantity
from viscometry.io import load_budget
from viscometry.io.candidates import candidates_from_mapping
from viscometry.planning import UpgradeCandidate, cheapest_reaching, evaluate_upgrades
from viscometry.widgets.upgrade_explorer import UpgradeExplorer, format_u, upgrade_explorer

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "examples" / "primary_capillary_poiseuille.toml"
EXAMPLE_CANDIDATES = ROOT / "examples" / "upgrades" / "pressure_capillary_upgrades.toml"


@pytest.fixture(scope="module")
def linear() -> Budget:
    # u(a) = 3, u(b) = 4, u(c) = 12: u_c = 13, U = 26 (k = 2 fixed).
    return Budget.from_formula(
        "y",
        "a + b + c",
        [
            InputQuantity.normal("a", 1.0, 3.0, "mm"),
            InputQuantity.normal("b", 1.0, 4.0, "mm"),
            InputQuantity.normal("c", 1.0, 12.0, "mm"),
        ],
        "mm",
        coverage_factor=2.0,
    )


CANDIDATES = (
    UpgradeCandidate("better a", 100.0, {"a": 0.0}),  # alone: U = 2√160 = 25.298, per cost 0.00702
    UpgradeCandidate("better b", 50.0, {"b": 0.0}),  # alone: U = 2√153 = 24.739, per cost 0.02522
    UpgradeCandidate("better c", 1000.0, {"c": 5.0}),  # alone: U = 2√50 = 14.142, per cost 0.01186
)


def make(linear: Budget, target: float | None = None, **kw: object) -> UpgradeExplorer:
    kw.setdefault("show_chart", False)
    return upgrade_explorer(linear, CANDIDATES, target, currency="EUR", **kw)  # type: ignore[arg-type]


def text(h: str) -> str:
    """The HTML as a person reads it: tags removed, entities decoded."""
    return html.unescape(re.sub(r"<[^>]+>", "", h))


def table_rows(h: str) -> list[list[str]]:
    rows = re.findall(r"<tr[^>]*>(.*?)</tr>", h, flags=re.S)
    return [[html.unescape(c) for c in re.findall(r"<t[dh]>(.*?)</t[dh]>", r)] for r in rows]


def test_opens_at_the_baseline(linear: Budget) -> None:
    ex = make(linear)
    o = ex.selected_result()
    assert ex.selected() == ()
    assert o.candidates == () and o.cost == 0.0
    assert o.expanded_uncertainty == pytest.approx(26.0, rel=1e-14)  # 2·√(9 + 16 + 144)
    s = text(ex.summary_html.value)
    assert "ticked: (baseline)" in s
    assert "U before: 26 mm → U after: 26 mm" in s
    assert "target: none set" in s
    assert ex.current_target() is None and o.reaches_target is None


def test_ticking_updates_the_verdict(linear: Budget) -> None:
    ex = make(linear, target=15.0)
    ex.checkboxes["better c"].value = True
    o = ex.selected_result()
    assert o.expanded_uncertainty == pytest.approx(2 * math.sqrt(50), rel=1e-14)  # 2·√(9+16+25)
    s = text(ex.summary_html.value)
    assert "ticked: better c" in s
    assert f"U after: {format_u(2 * math.sqrt(50))} mm" in s  # 14.14
    assert "14.14 mm (-45.6 %)" in s  # (14.142 - 26)/26 = -45.6 %
    assert "cost: 1,000 EUR" in s
    assert "target U ≤ 15 mm: reached" in s
    assert "cheapest set reaching the target: better c, cost 1,000 EUR, U = 14.14 mm" in s
    ex.checkboxes["better b"].value = True
    o = ex.selected_result()
    assert o.candidates == ("better b", "better c")
    assert o.cost == 1050.0
    assert o.expanded_uncertainty == pytest.approx(2 * math.sqrt(34), rel=1e-14)  # 2·√(9+25)
    assert "cost: 1,050 EUR" in text(ex.summary_html.value)


def test_changing_the_target_rereads_the_cheapest_set(linear: Budget) -> None:
    ex = make(linear, target=15.0)
    ex.checkboxes["better c"].value = True
    ex.target.value = "12"
    s = text(ex.summary_html.value)
    assert "target U ≤ 12 mm: not reached" in s  # 14.14 > 12
    # Reaching 12: {b, c} U = 2√34 = 11.66 for 1050, {a, b, c} U = 10 for 1150, {a, c} 12.81 no.
    assert (
        "cheapest set reaching the target: better b + better c, cost 1,050 EUR, U = 11.66 mm" in s
    )
    assert ex.selected_result().reaches_target is False
    ex.target.value = "9"  # below the best set (U = 2·√25 = 10): unreachable
    s = text(ex.summary_html.value)
    assert (
        "none of the evaluated sets reaches it (smallest U = 10 mm, with better a + better b + better c)"
        in s
    )
    assert ex.cheapest() is None
    ex.target.value = ""  # an empty field: no target
    assert "target: none set" in text(ex.summary_html.value)
    assert ex.current_plan().target is None and ex.error is None


def test_table_ranks_candidates_by_reduction_per_cost(linear: Budget) -> None:
    ex = make(linear, target=12.0)
    rows = table_rows(ex.table_html.value)
    header = rows[0]
    assert header[:4] == ["#", "set", "cost [EUR]", "U [mm]"]
    assert header[-1] == "reaches target"
    singles = rows[1:4]
    # per cost: b (26 - 24.739)/50 = 0.0252 > c (26 - 14.142)/1000 = 0.0119 > a 0.70/100 = 0.0070
    assert [r[1] for r in singles] == ["better b", "better c", "better a"]
    plan = evaluate_upgrades(linear, CANDIDATES, target=12.0)
    for r in singles:
        o = plan.option([r[1]])
        assert r[3] == format_u(o.expanded_uncertainty)
        assert r[6] == f"{o.reduction_per_cost:.3g}"
        assert r[-1] == ("yes" if o.reaches_target else "no")
    assert singles[0][6] == "0.0252"  # (26 - 2√153)/50
    assert "8 sets evaluated (exhaustive)" in text(ex.table_html.value)
    # With "show all sets": every set ranked by U; the first is all three (U = 10), then
    # {b, c} (11.66).
    ex.show_all.value = True
    ranked = table_rows(ex.table_html.value)[5:]
    assert len(ranked) == 8
    assert ranked[0][1] == "better a + better b + better c" and ranked[0][3] == "10"
    assert ranked[1][1] == "better b + better c" and ranked[1][3] == "11.66"


def test_table_keeps_the_ticked_set_when_outside_the_top(linear: Budget) -> None:
    ex = make(linear, target=12.0, top=1, ticked=["better a"], show_all=True)
    rows = table_rows(ex.table_html.value)
    ranked = [r for r in rows[5:] if r[0] != "#"]
    assert [r[1] for r in ranked] == ["better a + better b + better c", "better a",
                                      "better b + better c"]  # fmt: skip
    assert "background:#dde8ff'><td>" in ex.table_html.value  # the ticked set is highlighted


def test_explorer_agrees_with_the_planner_on_the_example(linear: Budget) -> None:
    bf = load_budget(EXAMPLE)
    data = tomllib.loads(EXAMPLE_CANDIDATES.read_text(encoding="utf-8"))
    cands, _currency = candidates_from_mapping(data, bf.budget)
    ex = upgrade_explorer(bf.budget, cands, 0.003, currency="EUR", show_chart=False)
    for target in (0.003, 0.0025, 0.0017, 0.001):
        ex.target.value = repr(target)
        mine = ex.cheapest()
        theirs = evaluate_upgrades(bf.budget, cands, target=target).cheapest
        if theirs is None:
            assert mine is None
            assert "none of the evaluated sets reaches it" in text(ex.summary_html.value)
        else:
            assert mine is not None and mine.candidates == theirs.candidates
            assert mine.expanded_uncertainty == theirs.expanded_uncertainty
            assert f"U = {format_u(theirs.expanded_uncertainty)} mPa·s" in text(
                ex.summary_html.value
            )
    for c in cands:
        ex.checkboxes[c.name].value = True
    assert ex.selected_result().expanded_uncertainty == pytest.approx(
        ex.selected_budget().evaluate().expanded_uncertainty, rel=1e-12
    )


def test_ticks_only_look_results_up(linear: Budget, monkeypatch: pytest.MonkeyPatch) -> None:
    ex = make(linear, target=12.0)

    def forbidden(*_args: object, **_kw: object) -> None:
        raise AssertionError("re-evaluated on a tick")

    monkeypatch.setattr(upgrades, "_evaluate", forbidden)
    monkeypatch.setattr(Budget, "evaluate", forbidden)
    ex.checkboxes["better a"].value = True
    ex.target.value = "20"
    ex.show_all.value = True
    assert ex.selected_result().candidates == ("better a",)


def test_greedy_plan_evaluates_unvisited_sets_on_demand(linear: Budget) -> None:
    ex = make(linear, target=12.0, max_exhaustive=1)
    assert ex.plan.search == "greedy"
    ex.checkboxes["better a"].value = True
    ex.checkboxes["better c"].value = True
    o = ex.selected_result()
    assert o.expanded_uncertainty == pytest.approx(2 * math.sqrt(41), rel=1e-12)  # 2·√(16+25)
    assert o.cost == 1100.0 and o.reaches_target is False
    assert "searched greedily" in text(ex.summary_html.value)


def test_chart_is_a_png_that_follows_the_ticks(linear: Budget) -> None:
    ex = make(linear, target=12.0, show_chart=True)
    first = bytes(ex.chart.value)
    assert first[:8] == b"\x89PNG\r\n\x1a\n"
    ex.checkboxes["better a"].value = True
    ex.checkboxes["better c"].value = True  # {a, c} is not drawn before: a new bar
    assert bytes(ex.chart.value) != first


def test_names_are_escaped(linear: Budget) -> None:
    cands = (UpgradeCandidate("<b>x</b> & co", 10.0, {"a": 1.0}),)
    ex = upgrade_explorer(linear, cands, ticked=["<b>x</b> & co"], show_chart=False)
    assert "<b>x</b> & co" not in ex.summary_html.value
    assert "&lt;b&gt;x&lt;/b&gt; &amp; co" in ex.summary_html.value
    assert "&lt;b&gt;x&lt;/b&gt; &amp; co" in ex.table_html.value


def test_bad_arguments(linear: Budget) -> None:
    with pytest.raises(InputError, match="ticked candidate 'nope'"):
        make(linear, ticked=["nope"])
    with pytest.raises(InputError, match="top must be a positive integer, got 0"):
        make(linear, top=0)
    with pytest.raises(InputError, match="target expanded uncertainty must be positive"):
        make(linear, target=-1.0)


def test_cheapest_reaching_matches_the_planner(linear: Budget) -> None:
    for target in (30.0, 25.0, 14.2, 12.0, 10.0, 9.99):
        plan = evaluate_upgrades(linear, CANDIDATES, target=target)
        mine = cheapest_reaching(plan.options, target)
        assert (mine is None) == (plan.cheapest is None)
        if mine is not None:
            assert mine.candidates == plan.cheapest.candidates


# ------------------------------------------------------------------------ the cost–U frontier
def test_the_table_shows_the_frontier_by_default_and_every_set_on_request(linear: Budget) -> None:
    ex = make(linear, target=12.0)
    assert ex.show_all.value is False
    rows = table_rows(ex.table_html.value)
    shown = [r[1] for r in rows[5:]]
    # By cost: (baseline) 0/26; b 50/24.74; a+b 150/24; c 1000/14.14; b+c 1050/11.66;
    # a+b+c 1150/10. Not on it: a (100, U 25.30 > 24.74 of b for 50) and a+c (1100, U 12.81 >
    # 11.66 of b+c for 1050) — worked out by hand from u_c² = Σ u²(xᵢ), U = 2 u_c.
    assert shown == ["(baseline)", "better b", "better a + better b", "better c",
                     "better b + better c", "better a + better b + better c"]  # fmt: skip
    assert shown == [o.label for o in ex.current_plan().frontier]  # asked of the plan
    assert [o.label for o in ex.frontier()] == shown
    assert "cost–U frontier: the 6 sets that no cheaper set beats" in text(ex.table_html.value)
    ex.show_all.value = True
    assert len(table_rows(ex.table_html.value)[5:]) == 8
    assert "every set, ranked by U (8 of 8 shown)" in text(ex.table_html.value)
    ex.show_all.value = False
    assert [r[1] for r in table_rows(ex.table_html.value)[5:]] == shown


def test_a_ticked_set_off_the_frontier_is_still_listed(linear: Budget) -> None:
    ex = make(linear, target=12.0, ticked=["better a", "better c"])
    rows = table_rows(ex.table_html.value)[5:]
    assert rows[-1][0] == "·" and rows[-1][1] == "better a + better c"
    assert "background:#dde8ff'><td>·</td>" in ex.table_html.value


# ------------------------------------------------------------------------ refusals are shown
@pytest.mark.parametrize(
    ("typed", "expected"),
    [
        ("0", "target expanded uncertainty must be positive, got 0.0"),
        ("-1", "target expanded uncertainty must be positive, got -1.0"),
        ("abc", "target U: 'abc' is not a number"),
    ],
)
def test_a_refused_target_shows_the_message_and_keeps_the_last_one(
    linear: Budget, typed: str, expected: str
) -> None:
    ex = make(linear, target=15.0)
    ex.checkboxes["better c"].value = True
    table = ex.table_html.value
    if typed != "abc":  # the plan's own message (viscometry.planning.UpgradePlan.with_target)
        with pytest.raises(InputError) as caught:
            ex.plan.with_target(float(typed))
        assert str(caught.value) == expected
    ex.target.value = typed
    assert ex.error == expected
    assert html.escape(expected) in ex.target_message.value  # next to the field
    assert "color:#a00" in ex.target_message.value
    assert f"target not applied: {expected}" in text(ex.summary_html.value)
    assert ex.current_target() == 15.0  # the last good target stays, nothing clamped
    assert ex.target.value == typed
    assert "target U ≤ 15 mm: reached" in text(ex.summary_html.value)
    assert ex.table_html.value == table
    ex.target.value = "14"
    assert ex.error is None and ex.target_message.value == "" and ex.current_target() == 14.0
    assert "target U ≤ 14 mm: not reached" in text(ex.summary_html.value)  # 14.14 > 14


def test_set_target_from_code_keeps_the_exact_number(linear: Budget) -> None:
    ex = make(linear)
    assert ex.set_target(14.142135)
    assert ex.target.value == "14.14"  # four significant digits shown
    assert ex.current_target() == 14.142135
    # 2√50 = 14.1421356... > 14.142135: not reached (exact arithmetic)
    ex.checkboxes["better c"].value = True
    assert ex.selected_result().reaches_target is False
    assert not ex.set_target(-2.0)
    assert ex.current_target() == 14.142135
    assert ex.set_target(None) and ex.current_target() is None and ex.target.value == ""


def test_the_plans_warnings_are_shown_in_colour() -> None:
    # u(a) = 2 ≥ |a| = 1 for a factor of the product a·b: a plausibility warning of the budget
    b = Budget.from_formula(
        "y", "a * b", [InputQuantity.normal("a", 1.0, 2.0), InputQuantity.normal("b", 1.0, 0.1)]
    )
    ex = upgrade_explorer(b, [UpgradeCandidate("better a", 5.0, {"a": 0.1})], show_chart=False)
    assert ex.plan.warnings and ex.plan.warnings == b.evaluate().warnings
    shown = re.findall(r"<span style='color:#a60'>warning: (.*?)</span>", ex.summary_html.value)
    assert [html.unescape(w) for w in shown] == list(ex.plan.warnings)


# ------------------------------------------------------------------------ layout
def _tree(w: widgets.Widget) -> list[widgets.Widget]:
    out = [w]
    for child in getattr(w, "children", ()):
        out += _tree(child)
    return out


def test_layout_wraps_labels_and_keeps_costs_and_chart_whole(linear: Budget) -> None:
    long = UpgradeCandidate("a very long candidate name that cannot fit a narrow column", 12345.0,
                            {"a": 1.0})  # fmt: skip
    ex = upgrade_explorer(linear, [*CANDIDATES, long], currency="EUR", show_chart=False)
    row = ex.widget.children[1]
    assert row.layout.flex_flow == "row wrap"  # the chart goes below the controls when narrow
    column, chart = row.children
    assert column.layout.min_width == "22em"  # the tick-box column is never zero wide
    assert (chart.layout.width, chart.layout.height) == ("100%", "auto")  # aspect kept
    assert chart.layout.max_width
    for name, box in ex.checkboxes.items():
        tick = next(w for w in _tree(column) if box in getattr(w, "children", ()))
        (label,) = [w for w in tick.children if w is not box]
        # the label is an HTML block that wraps (a Checkbox description would be cut)
        assert isinstance(label, widgets.HTML) and "white-space:normal" in label.value
        assert label.layout.min_width == "10em" and box.layout.min_width == "2em"
        assert html.escape(name) in label.value
    # the whole cost stays in one piece beside the name
    labels = [text(w.value) for w in _tree(column) if isinstance(w, widgets.HTML)]
    assert any(t.endswith("cannot fit a narrow column (12,345 EUR)") for t in labels)
    # costs in the table never break over lines; only the set's name wraps
    assert ".viscometry-upgrade-table td{white-space:nowrap" in ex.table_html.value
    for w in _tree(ex.widget):
        if isinstance(w, widgets.Text | widgets.Dropdown | widgets.Button | widgets.Checkbox):
            assert w.layout.min_width not in (None, "", "0", "0px"), w
