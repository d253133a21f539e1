"""Tests of viscometry.planning: upgrade what-ifs, the inverse question, working ranges, scope tables.

Check values come from exact analytic cases (a linear model y = x1 + x2 + x3 with a fixed
k = 2, where u_c is a root-sum-square of whole numbers) and from independent recomputation
with the engine's own point-by-point :meth:`Budget.evaluate`. Budgets with t-based k use
invented numbers; they are compared only with that recomputation, never as check values.
"""

from __future__ import annotations

import math
from dataclasses import replace

import matplotlib
import numpy as np
import pytest

matplotlib.use("Agg")

from viscometry.errors import BudgetFileError, InputError  # noqa: E402
from viscometry.gum import Budget, Constant, Correlation, InputQuantity  # noqa: E402
from viscometry.io.candidates import candidates_from_mapping  # noqa: E402
from viscometry.planning import (  # noqa: E402
    UpgradeCandidate,
    apply_candidates,
    evaluate_upgrades,
    required_uncertainties,
    required_uncertainty,
    round_up,
    scope_table,
    working_range,
)
from viscometry.text import format_exact_percent, required_text  # noqa: E402


# --------------------------------------------------------------------------- fixtures
def linear_budget() -> Budget:
    """y = x1 + x2 + x3, u = (3, 4, 12), k = 2: u_c = 13, U = 26 (exact analytic)."""
    return Budget.from_formula(
        "y", "x1 + x2 + x3",
        [InputQuantity.normal("x1", 1.0, 3.0), InputQuantity.normal("x2", 2.0, 4.0),
         InputQuantity.normal("x3", 3.0, 12.0)],
        coverage_factor=2.0,
    )  # fmt: skip


def linear_candidates() -> list[UpgradeCandidate]:
    return [
        UpgradeCandidate("A: x3 exact", 80.0, {"x3": 0.0}),  # U = 2·5 = 10
        UpgradeCandidate("B: x1, x2 exact", 5.0, {"x1": 0.0, "x2": 0.0}),  # U = 2·12 = 24
        UpgradeCandidate("D: x3 to 6", 20.0, {"x3": 6.0}),  # U = 2·√61
    ]


def t_budget(correlated: bool = False) -> Budget:
    """A nonlinear budget with finite dofs, so k = t_p(ν_eff) (invented numbers)."""
    inputs = [
        InputQuantity("C", 0.0100, 2.0e-5, "mm^2/s^2", dof=12.0),
        InputQuantity.from_readings("t", [301.2, 300.8, 301.5, 300.9], "s"),
        InputQuantity.normal("E", 3.0, 0.6, "mm^2*s", dof=8.0),
        InputQuantity.rectangular("T", 293.15, 0.02, "K"),
    ]
    corr = [Correlation("C", "E", 0.3)] if correlated else []
    return Budget.from_formula(
        "nu", "(C*t - E/t**2) * (1 - alpha*(T - T0))", inputs, "mm^2/s",
        constants=[Constant("alpha", 0.02, "1/K"), Constant("T0", 293.15, "K")],
        correlations=corr, coverage_probability=0.95,
    )  # fmt: skip


def _frozen_eval(b: Budget):
    return b.evaluate()


# --------------------------------------------------------------------------- candidates
def test_candidate_validation() -> None:
    with pytest.raises(InputError, match="cost must be ≥ 0, got -1.0"):
        UpgradeCandidate("x", -1.0, {"a": 1.0})
    with pytest.raises(InputError, match="non-empty mapping"):
        UpgradeCandidate("x", 1.0, {})
    with pytest.raises(InputError, match="new u\\(a\\) must be ≥ 0"):
        UpgradeCandidate("x", 1.0, {"a": -0.1})
    with pytest.raises(InputError, match="cost must be a number"):
        UpgradeCandidate("x", True, {"a": 0.1})  # type: ignore[arg-type]
    c = UpgradeCandidate("x", 3, {"a": 1})
    with pytest.raises(TypeError):
        c.changes["a"] = 2.0  # type: ignore[index]
    b = linear_budget()
    with pytest.raises(InputError, match="unknown input 'zz'"):
        evaluate_upgrades(b, [UpgradeCandidate("x", 1.0, {"zz": 1.0})])
    with pytest.raises(InputError, match="used twice"):
        evaluate_upgrades(b, [UpgradeCandidate("x", 1.0, {"x1": 1.0})] * 2)
    with pytest.raises(InputError, match="target expanded uncertainty must be positive"):
        evaluate_upgrades(b, linear_candidates(), target=0.0)


# --------------------------------------------------------------------------- exact analytic
def test_linear_upgrades_exact() -> None:
    # exact analytic: u_c = sqrt(sum u_i^2), U = 2 u_c, baseline 2·13 = 26
    plan = evaluate_upgrades(linear_budget(), linear_candidates(), target=12.0)
    assert plan.search == "exhaustive" and len(plan.options) == 8
    assert plan.baseline.expanded_uncertainty == pytest.approx(26.0, rel=1e-14)
    a = plan.option(["A: x3 exact"])
    b = plan.option(["B: x1, x2 exact"])
    d = plan.option(["D: x3 to 6"])
    assert a.expanded_uncertainty == pytest.approx(10.0, rel=1e-14)  # 2·sqrt(9 + 16)
    assert b.expanded_uncertainty == pytest.approx(24.0, rel=1e-14)  # 2·12
    assert d.expanded_uncertainty == pytest.approx(2 * math.sqrt(61.0), rel=1e-14)
    assert a.reduction == pytest.approx(16.0, rel=1e-14)
    assert a.reduction_per_cost == pytest.approx(16.0 / 80.0, rel=1e-14)
    assert b.reduction_per_cost == pytest.approx(2.0 / 5.0, rel=1e-14)
    assert d.reduction_per_cost == pytest.approx((26 - 2 * math.sqrt(61.0)) / 20.0, rel=1e-14)
    # best per cost: D (0.519) beats B (0.4) and A (0.2)
    assert plan.best_per_cost is d
    # combination rule: A + D both change x3; the smaller u (0) wins → same U as A alone
    ad = plan.option(["A: x3 exact", "D: x3 to 6"])
    assert ad.expanded_uncertainty == pytest.approx(10.0, rel=1e-14) and ad.cost == 100.0
    # cheapest set reaching U ≤ 12: B + D (u = 0, 0, 6 → U = 12 exactly) for 25
    assert plan.cheapest is not None
    assert set(plan.cheapest.candidates) == {"B: x1, x2 exact", "D: x3 to 6"}
    assert plan.cheapest.cost == 25.0
    assert plan.cheapest.expanded_uncertainty == pytest.approx(12.0, rel=1e-14)
    # full set: every u = 0
    assert plan.best.expanded_uncertainty == 0.0 and plan.best.cost == 85.0
    # table ranked by U
    t = plan.table()
    assert list(t.columns) == [
        "candidates", "count", "cost", "expanded_uncertainty", "relative_expanded_uncertainty",
        "standard_uncertainty", "coverage_factor", "effective_dof", "reduction",
        "reduction_per_cost", "dominant", "reaches_target",
    ]  # fmt: skip
    assert list(t["expanded_uncertainty"]) == sorted(t["expanded_uncertainty"])
    assert t.iloc[-1]["candidates"] == "(baseline)"
    # the cost–U frontier (exact analytic): (), B, D, B + D, A, A + B — by cost, U falling
    assert [(o.cost, o.label) for o in plan.frontier] == [
        (0.0, "(baseline)"), (5.0, "B: x1, x2 exact"), (20.0, "D: x3 to 6"),
        (25.0, "B: x1, x2 exact + D: x3 to 6"), (80.0, "A: x3 exact"),
        (85.0, "A: x3 exact + B: x1, x2 exact"),
    ]  # fmt: skip


def test_cheapest_tie_goes_to_larger_reduction() -> None:
    # exact analytic: two sets of equal cost 80 reach U ≤ 10; E (U = 2·4 = 8) beats A (U = 10)
    cands = linear_candidates() + [
        UpgradeCandidate("E: x1, x3 exact", 80.0, {"x1": 0.0, "x3": 0.0})
    ]
    plan = evaluate_upgrades(linear_budget(), cands, target=10.0)
    assert plan.cheapest is not None and plan.cheapest.candidates == ("E: x1, x3 exact",)
    assert plan.cheapest.expanded_uncertainty == pytest.approx(8.0, rel=1e-14)


def test_target_unreachable_by_any_set() -> None:
    plan = evaluate_upgrades(
        linear_budget(), [UpgradeCandidate("D", 20.0, {"x3": 6.0})], target=1.0
    )
    assert plan.cheapest is None
    assert plan.table()["reaches_target"].sum() == 0


def test_free_candidate_per_cost() -> None:
    plan = evaluate_upgrades(linear_budget(), [UpgradeCandidate("free", 0.0, {"x3": 0.0}),
                                               UpgradeCandidate("worse", 0.0, {"x1": 30.0})])  # fmt: skip
    assert plan.option(["free"]).reduction_per_cost == math.inf
    assert plan.option(["worse"]).reduction_per_cost == -math.inf
    assert plan.option([]).reduction_per_cost == 0.0
    assert plan.best_per_cost is not None and plan.best_per_cost.candidates == ("free",)


# --------------------------------------------------------------------------- vs Budget.evaluate
@pytest.mark.parametrize("correlated", [False, True])
def test_vectorised_sets_equal_full_evaluation(correlated: bool) -> None:
    b = t_budget(correlated)
    rng = np.random.default_rng(20240611)
    names = b.input_names
    cands = []
    for j in range(9):
        key = names[j % len(names)]
        q = b.input(key)
        cands.append(UpgradeCandidate(f"c{j}", float(rng.integers(1, 500)),
                                      {key: q.standard_uncertainty * float(rng.uniform(0.1, 1.2))}))  # fmt: skip
    # a replacement with another dof and another (compatible) unit
    cands.append(
        UpgradeCandidate(
            "new T", 50.0, {"T": InputQuantity.normal("T", 20.0, 0.005, "degC", dof=20.0)}
        )
    )
    plan = evaluate_upgrades(b, cands)
    assert len(plan.options) == 2**10
    assert any(o.coverage_factor > 2.0 for o in plan.options)  # t-based k in play
    picks = rng.choice(len(plan.options), size=40, replace=False)
    for s in picks:
        o = plan.options[int(s)]
        full = plan.budget_for(o.candidates).evaluate()
        assert o.value == pytest.approx(full.value, rel=1e-12)
        assert o.standard_uncertainty == pytest.approx(full.standard_uncertainty, rel=1e-10)
        assert o.effective_dof == pytest.approx(full.effective_dof, rel=1e-9)
        assert o.coverage_factor == pytest.approx(full.coverage_factor, rel=1e-12)
        assert o.expanded_uncertainty == pytest.approx(full.expanded_uncertainty, rel=1e-10)
        assert o.dominant == full.dominant.name


def test_estimate_changing_candidate_equals_full_evaluation() -> None:
    b = t_budget()
    recert = InputQuantity("C", 0.01003, 5.0e-6, "mm^2/s^2", dof=50.0)
    cands = [
        UpgradeCandidate("re-certify C", 900.0, {"C": recert}),
        UpgradeCandidate("timer", 150.0, {"t": 0.05}),
        UpgradeCandidate("cheap C", 100.0, {"C": 1.5e-5}),
    ]
    plan = evaluate_upgrades(b, cands)
    for o in plan.options:
        full = plan.budget_for(o.candidates).evaluate()
        assert o.value == pytest.approx(full.value, rel=1e-13)
        assert o.expanded_uncertainty == pytest.approx(full.expanded_uncertainty, rel=1e-10)
    both = plan.option(["re-certify C", "cheap C"])
    assert both.value == pytest.approx(
        0.01003 * b.input("t").value - 3.0 / b.input("t").value ** 2, rel=1e-6
    )


def test_apply_candidates_rule() -> None:
    b = linear_budget()
    nb = apply_candidates(b, linear_candidates(), ["D: x3 to 6", "A: x3 exact"])
    assert nb.input("x3").standard_uncertainty == 0.0
    with pytest.raises(InputError, match="no candidate named 'nope'"):
        apply_candidates(b, linear_candidates(), ["nope"])


def test_greedy_search_documented_behaviour() -> None:
    # y = x1 + ... + x14, u_i = 1, k = 2; candidate i sets u_i = 0 at cost i (exact analytic)
    n = 14
    inputs = [InputQuantity.normal(f"x{i}", 0.0, 1.0) for i in range(1, n + 1)]
    b = Budget.from_formula("y", " + ".join(q.name for q in inputs), inputs, coverage_factor=2.0)
    cands = [UpgradeCandidate(f"c{i}", float(i), {f"x{i}": 0.0}) for i in range(1, n + 1)]
    plan = evaluate_upgrades(b, cands, target=2 * math.sqrt(10.0))
    assert plan.search == "greedy"
    # each greedy step takes the cheapest remaining candidate (largest reduction per cost)
    assert [o.candidates[-1] for o in plan.greedy_path] == [f"c{i}" for i in range(1, n + 1)]
    # U ≤ 2√10 needs 4 inputs exact; cheapest: c1..c4, cost 10
    assert plan.cheapest is not None and plan.cheapest.cost == 10.0
    assert plan.cheapest.candidates == ("c1", "c2", "c3", "c4")


# --------------------------------------------------------------------------- inverse question
def test_required_uncertainty_closed_form() -> None:
    b = linear_budget()
    r = required_uncertainty(b, "x3", 20.0)
    # exact analytic: (20/2)² − 3² − 4² = 75 → u(x3) = √75
    assert r.solver == "closed form" and r.reachable and not r.already_met
    assert r.required_uncertainty == pytest.approx(math.sqrt(75.0), rel=1e-14)
    assert r.floor == pytest.approx(10.0, rel=1e-14)
    ok = b.with_uncertainty("x3", r.required_uncertainty).evaluate()
    assert ok.expanded_uncertainty == pytest.approx(20.0, rel=1e-14)


def test_required_uncertainty_unreachable_and_floor() -> None:
    b = linear_budget()
    r = required_uncertainty(b, "x1", 20.0)
    # exact analytic: the others alone give 2·√(16 + 144) = 2√160 ≈ 25.3 > 20
    assert not r.reachable and math.isnan(r.required_uncertainty)
    assert r.floor == pytest.approx(2 * math.sqrt(160.0), rel=1e-14)
    assert required_text(r).startswith("unreachable even with u(x1) = 0")
    assert "25.3" in required_text(r)
    met = required_uncertainty(b, "x1", 30.0)
    # exact analytic: 15² − 160 = 65 → u(x1) may grow to √65
    assert met.already_met and met.required_uncertainty == pytest.approx(math.sqrt(65.0), rel=1e-14)
    rs = required_uncertainties(b, 20.0)
    assert [r.name for r in rs] == ["x1", "x2", "x3"]
    assert [r.reachable for r in rs] == [False, False, True]


def test_required_uncertainty_with_correlation_closed_form() -> None:
    # y = x1 + x2, u = (1, 1), r = 0.5, k = 2: u_c² = u1² + 1 + u1 (exact analytic);
    # target U = 2√3 → u_c² = 3 → u1² + u1 − 2 = 0 → u1 = 1
    b = Budget.from_formula("y", "x1 + x2", [InputQuantity.normal("x1", 0.0, 1.0),
                                            InputQuantity.normal("x2", 0.0, 1.0)],
                            correlations=[Correlation("x1", "x2", 0.5)], coverage_factor=2.0)  # fmt: skip
    r = required_uncertainty(b, "x1", 2 * math.sqrt(3.0))
    assert r.required_uncertainty == pytest.approx(1.0, rel=1e-12)


def test_required_uncertainty_t_based_root() -> None:
    b = t_budget()
    base = b.evaluate()
    target = 0.8 * base.expanded_uncertainty
    hits = 0
    for name in b.input_names:
        r = required_uncertainty(b, name, target)
        assert r.solver == "root finding"
        if not r.reachable:
            floor = b.with_uncertainty(name, 0.0).evaluate().expanded_uncertainty
            assert r.floor == pytest.approx(floor, rel=1e-10)
            assert floor > target
            continue
        hits += 1
        at = b.with_uncertainty(name, r.required_uncertainty).evaluate().expanded_uncertainty
        above = (
            b.with_uncertainty(name, r.required_uncertainty * (1 + 1e-6))
            .evaluate()
            .expanded_uncertainty
        )
        assert at <= target * (1 + 1e-12)
        assert above > target
    assert hits >= 1


def test_required_uncertainty_errors() -> None:
    with pytest.raises(InputError, match="target_U must be positive, got -1.0"):
        required_uncertainty(linear_budget(), "x1", -1.0)
    with pytest.raises(InputError, match="no input named 'q'"):
        required_uncertainty(linear_budget(), "q", 1.0)


# --------------------------------------------------------------------------- working ranges
def test_working_range_equals_point_by_point() -> None:
    b = t_budget(correlated=True)
    s = working_range(b, "t", 200.0, 900.0, points=25, spacing="log")
    assert np.allclose(s.values, np.geomspace(200.0, 900.0, 25), rtol=0, atol=0)
    for j, v in enumerate(s.values):
        full = b.with_input(replace(b.input("t"), value=float(v))).evaluate()
        assert s.value[j] == pytest.approx(full.value, rel=1e-13)
        assert s.standard_uncertainty[j] == pytest.approx(full.standard_uncertainty, rel=1e-12)
        assert s.effective_dof[j] == pytest.approx(full.effective_dof, rel=1e-10)
        assert s.coverage_factor[j] == pytest.approx(full.coverage_factor, rel=1e-13)
        assert s.expanded_uncertainty[j] == pytest.approx(full.expanded_uncertainty, rel=1e-12)
        assert s.dominant[j] == full.dominant.name
    t = s.table()
    assert list(t.columns) == [
        "input_value", "value", "standard_uncertainty", "effective_dof", "coverage_factor",
        "expanded_uncertainty", "relative_expanded_uncertainty", "dominant", "dominant_share",
    ]  # fmt: skip
    assert len(t) == 25
    assert np.array_equal(t["input_value"], s.values) and np.array_equal(t["value"], s.value)
    assert np.allclose(
        t["relative_expanded_uncertainty"], t["expanded_uncertainty"] / t["value"].abs()
    )


def test_working_range_with_adjust_equals_point_by_point() -> None:
    b = t_budget()

    def adjust(t):
        # the constant's uncertainty and E grow with t (vectorised; invented dependence)
        return {"C": {"standard_uncertainty": 2.0e-5 * t / 300.0}, "E": 3.0 + 0.001 * t,
                "t": {"standard_uncertainty": 0.0005 * t}}  # fmt: skip

    s = working_range(b, "t", 250.0, 700.0, points=12, adjust=adjust)
    for j, v in enumerate(s.values):
        bb = b.with_input(replace(b.input("t"), value=float(v), standard_uncertainty=0.0005 * v))
        bb = bb.with_uncertainty("C", 2.0e-5 * v / 300.0)
        bb = bb.with_input(replace(bb.input("E"), value=3.0 + 0.001 * v))
        full = bb.evaluate()
        assert s.value[j] == pytest.approx(full.value, rel=1e-13)
        assert s.expanded_uncertainty[j] == pytest.approx(full.expanded_uncertainty, rel=1e-12)


def test_working_range_errors() -> None:
    b = t_budget()
    with pytest.raises(InputError, match="a log range needs start and stop > 0"):
        working_range(b, "t", 0.0, 10.0, spacing="log")
    with pytest.raises(InputError, match="spacing must be"):
        working_range(b, "t", 1.0, 10.0, spacing="cubic")  # type: ignore[arg-type]
    with pytest.raises(InputError, match="unknown input 'Z'"):
        working_range(b, "t", 100.0, 200.0, adjust=lambda v: {"Z": v})
    with pytest.raises(
        InputError, match="may not set the estimate of 't', which the range runs over"
    ):
        working_range(b, "t", 100.0, 200.0, adjust=lambda v: {"t": v})
    with pytest.raises(InputError, match="range points must be a positive integer"):
        working_range(b, "t", 100.0, 200.0, points=0)
    with pytest.raises(InputError, match=r"not finite at t = 0.0 \(point 1 of the range\)"):
        working_range(b, "t", 0.0, 10.0, points=3)


def warned_budget() -> Budget:
    """y = a·b with u(a) = 2 > |a| = 1 (a is a power-law factor, so it keeps its sign) and an
    input c the model does not use: one plausibility and one estimate warning."""
    return Budget.from_formula(
        "y", "a * b",
        [InputQuantity.normal("a", 1.0, 2.0), InputQuantity.normal("b", 2.0, 0.1),
         InputQuantity.normal("c", 1.0, 0.1)],
        coverage_factor=2.0,
    )  # fmt: skip


def test_a_sum_has_no_sign_bound_inputs() -> None:
    # In y = x1 + x2 + x3 each input may take either sign, so u(xᵢ) ≥ |xᵢ| is no warning.
    assert linear_budget().evaluate().warnings == ()


def test_working_range_carries_the_budgets_warnings() -> None:
    # one budget, one path: the range states the warnings evaluate() gives for the budget
    b = warned_budget()
    expected = b.evaluate().warnings
    assert len(expected) == 2 and "input c is not used" in expected[0]
    assert "u(a) = 2 is at least |a| = 1" in expected[1]
    assert working_range(b, "b", 1.0, 3.0, points=3).warnings == expected


def test_upgrade_plan_carries_the_budgets_warnings() -> None:
    b = warned_budget()
    plan = evaluate_upgrades(b, [UpgradeCandidate("better b", 10.0, {"b": 0.01})])
    assert plan.warnings == b.evaluate().warnings and len(plan.warnings) == 2


# --------------------------------------------------------------------------- scope tables
def test_round_up_two_significant_digits() -> None:
    # common practice, no source: stated uncertainties are rounded up, never down
    assert round_up(0.002501) == 0.0026
    assert round_up(0.0025) == 0.0025
    assert round_up(0.00999) == 0.01
    assert round_up(1.0001) == 1.1
    assert round_up(0.0246 / 3) == 0.0082  # binary round-off does not push it to 0.0083
    assert round_up(123.4, digits=3) == 124.0
    with pytest.raises(InputError, match="must be positive, got 0.0"):
        round_up(0.0)


def test_scope_table_rounds_up_the_largest_in_each_subrange() -> None:
    # y = x with u = 0.0123, k = 2: relative U = 0.0246/x (exact analytic)
    b = Budget.from_formula("y", "x", [InputQuantity.normal("x", 1.0, 0.0123)], coverage_factor=2.0)
    s = working_range(b, "x", 1.0, 10.0, points=10)
    t = scope_table(s, [1.0, 3.0, 10.0])
    assert list(t.columns) == [
        "from", "to", "points", "largest_relative_expanded_uncertainty", "at",
        "stated_relative_expanded_uncertainty",
    ]  # fmt: skip
    assert list(t["points"]) == [3, 8]  # x = 3 lies on the shared edge and counts in both
    assert list(t["at"]) == [1.0, 3.0]
    assert t["largest_relative_expanded_uncertainty"].tolist() == pytest.approx(
        [0.0246, 0.0082], rel=1e-14
    )
    # 0.0246 → 0.025 (up, not to the nearer 0.025 by chance: 0.0246 would round to 0.025
    # either way), 0.0082 stays 0.0082
    assert t["stated_relative_expanded_uncertainty"].tolist() == [0.025, 0.0082]
    # the stated percentages, written without float noise (the text column is gone)
    assert [format_exact_percent(v) for v in t["stated_relative_expanded_uncertainty"]] == [
        "2.5",
        "0.82",
    ]
    t2 = scope_table(s, [1.0, 1.5, 4.5])
    # 0.0246/2 = 0.0123 → 0.013 (rounded up although 0.012 is nearer)
    assert t2["stated_relative_expanded_uncertainty"].tolist() == [0.025, 0.013]
    with pytest.raises(InputError, match=r"no point with y in the sub-range \[1.1, 1.9\]"):
        scope_table(s, [1.1, 1.9])
    with pytest.raises(InputError, match="strictly increasing"):
        scope_table(s, [3.0, 1.0])


# --------------------------------------------------------------------------- candidates file
def test_candidates_from_mapping_and_errors() -> None:
    b = t_budget()
    data = {
        "currency": "EUR",
        "candidate": [
            {"name": "timer", "cost": 150, "changes": {"t": 0.05}},
            {"name": "re-certify C", "cost": 900, "description": "invented",
             "changes": {"C": {"expanded_uncertainty": 1e-5, "coverage_factor": 2, "dof": 50}}},
            {"name": "new C", "cost": 1200,
             "changes": {"C": {"standard_uncertainty": 4e-6, "value": 0.01002}}},
        ],
    }  # fmt: skip
    cands, cur = candidates_from_mapping(data, b, source="up.toml")
    assert cur == "EUR" and [c.name for c in cands] == ["timer", "re-certify C", "new C"]
    assert cands[0].changes["t"] == 0.05
    rc = cands[1].changes["C"]
    assert isinstance(rc, InputQuantity) and rc.standard_uncertainty == pytest.approx(5e-6)
    assert rc.dof == 50.0 and rc.value == b.input("C").value
    assert cands[2].changes["C"].value == 0.01002  # type: ignore[union-attr]
    bad = {"candidate": [{"name": "x", "cost": "12 EUR", "changes": {"t": 0.1}}]}
    with pytest.raises(BudgetFileError, match=r"up.toml: \[\[candidate\]\] #1 \('x'\), key 'cost'"):
        candidates_from_mapping(bad, b, source="up.toml")
    bad = {"candidate": [{"name": "x", "cost": 1, "changes": {"q": 0.1}}]}
    with pytest.raises(BudgetFileError, match=r"\[changes\] key 'q': no such input"):
        candidates_from_mapping(bad, b, source="up.toml")
    bad = {"candidate": [{"name": "x", "cost": 1, "changes": {"t": {"u": 0.1}}}]}
    with pytest.raises(BudgetFileError, match=r"key 't': unknown key\(s\) 'u'"):
        candidates_from_mapping(bad, b, source="up.toml")
    with pytest.raises(BudgetFileError, match="no candidates"):
        candidates_from_mapping({}, b, source="up.toml")
    with pytest.raises(BudgetFileError, match="unknown key"):
        candidates_from_mapping({"candidates": []}, b, source="up.toml")


# --------------------------------------------------------------------------- plots
def test_plots_return_figures() -> None:
    from matplotlib.figure import Figure

    from viscometry.planning_plots import plot_upgrades, plot_working_range

    s = working_range(t_budget(), "t", 200.0, 20000.0, points=30, spacing="log")
    fig = plot_working_range(s)
    assert isinstance(fig, Figure) and fig.axes[0].get_xscale() == "log"
    sc = scope_table(s, [float(s.value.min()), 10.0, float(s.value.max())])
    fig2 = plot_working_range(s, relative=True, axis="value", scope=sc)
    assert isinstance(fig2, Figure)
    plan = evaluate_upgrades(linear_budget(), linear_candidates(), target=12.0)
    fig3 = plot_upgrades(plan)
    labels = [t.get_text() for t in fig3.axes[0].get_yticklabels()]
    assert "B: x1, x2 exact + D: x3 to 6" in labels and len(labels) == 4


def test_exhaustive_search_is_bounded():
    # 2**17 sets and more are refused before any set is built (time and memory double with
    # each candidate); this package's own limit, no external source.
    from viscometry.errors import InputError
    from viscometry.planning import MAX_EXHAUSTIVE, evaluate_upgrades

    budget = Budget.from_formula(
        "y", "a + b", [InputQuantity.normal("a", 1.0, 0.3), InputQuantity.normal("b", 2.0, 0.4)]
    )
    with pytest.raises(
        InputError, match=f"max_exhaustive must be at most {MAX_EXHAUSTIVE}.*got 17"
    ):
        evaluate_upgrades(
            budget,
            [UpgradeCandidate("a better", 1.0, {"a": 0.1})],
            max_exhaustive=MAX_EXHAUSTIVE + 1,
        )
