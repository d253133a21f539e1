"""Per-call overhead: what the fast paths compute is what the plain paths compute.

Three fast paths are checked against a plain computation of the same thing (timings are in
``benchmarks/``, never here):

* the coverage factor k = t_p(ν) for any real ν_eff, by the scalar and the vectorised
  kernel, against ``scipy.stats.t.ppf`` and ``scipy.stats.norm.ppf`` (scipy as an
  independent reference; ν truncated to an integer ≥ 1 per JCGM 100:2008, G.6.4);
* the columns of an upgrade plan (frontier, cheapest set, ranking, the candidates alone,
  look-ups) against the plain Python rules written in the docstrings of
  :mod:`viscometry.planning.upgrades` (this package's own rules; no external source),
  re-implemented here over row objects;
* a what-if on an uncertainty (:meth:`Budget.with_uncertainty`, the linearised budget),
  which skips the unit checks that a change of uncertainty cannot change, against the
  budget rebuilt from scratch: equal budgets, results, warnings and refusals (messages are
  this package's own wording, compared with themselves).
"""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from viscometry import units
from viscometry.errors import ViscometryError
from viscometry.gum import Budget, InputQuantity
from viscometry.gum.propagation import coverage_factors, propagate, t_quantile, truncate_dof
from viscometry.io import load_budget
from viscometry.planning import (
    UpgradeCandidate,
    UpgradeOption,
    UpgradePlan,
    cheapest_reaching,
    evaluate_upgrades,
    frontier,
)
from viscometry.planning.options import TARGET_TOLERANCE, UpgradeOptions

ROOT = Path(__file__).resolve().parent.parent

#: Real degrees of freedom: fractional, at the truncation edge, 1, large, ∞.
DOFS = [0.3, 0.999999, 1.0, 1.5, 2.0, 2.9999999999, 3.0, 4.7, 16.7, 49.99999999999999, 50.0,
        123.456, 1000.5, 1e6 + 0.25, 1e12, 1e300, math.inf]  # fmt: skip
PROBABILITIES = [0.6827, 0.95, 0.9545, 0.99]


def scipy_k(p: float, nu: float) -> float:
    """t_p(ν) with ν truncated per JCGM 100:2008 G.6.4, by scipy.stats (the reference)."""
    q = 0.5 * (1 + p)
    used = truncate_dof(nu)
    return float(stats.norm.ppf(q)) if math.isinf(used) else float(stats.t.ppf(q, used))


# ============================================================================ t quantiles
@pytest.mark.parametrize("p", PROBABILITIES)
def test_coverage_factors_equal_scipy_for_real_dofs(p: float) -> None:
    want = np.array([scipy_k(p, nu) for nu in DOFS])
    few = coverage_factors(p, np.array(DOFS))  # one quantile per entry
    assert few.tolist() == want.tolist()
    # many entries (each distinct ν once), shuffled and as a 2-d array: the same k exactly
    order = np.random.default_rng(3).permutation(len(DOFS) * 6) % len(DOFS)
    many = coverage_factors(p, np.array(DOFS)[order].reshape(6, -1))
    assert many.shape == (6, len(DOFS))
    assert many.ravel().tolist() == want[order].tolist()


@pytest.mark.parametrize("p", PROBABILITIES)
def test_scalar_t_quantile_equals_scipy_for_real_dofs(p: float) -> None:
    # t_quantile takes ν as given (a Type B input's real ν, JCGM 100:2008 G.4.2)
    q = 0.5 * (1 + p)
    for nu in DOFS:
        want = stats.norm.ppf(q) if math.isinf(nu) else stats.t.ppf(q, nu)
        assert t_quantile(p, nu) == float(want), nu


def test_one_budget_and_many_budgets_get_the_same_k() -> None:
    # 64 invented budgets of three inputs with real νᵢ: the scalar kernel (one budget) and
    # the vectorised one (all columns at once) give the same ν_eff and exactly the same k,
    # the t quantile of the truncated ν_eff (scipy as reference)
    rng = np.random.default_rng(14)
    c = rng.uniform(-2.0, 2.0, (3, 64))
    u = rng.uniform(0.1, 1.0, (3, 64))
    nu = np.stack([rng.uniform(1.0, 30.0, 64), rng.uniform(0.5, 4.0, 64), np.full(64, np.inf)])
    many = propagate(c, u, nu)
    for j in range(64):
        one = propagate(c[:, j], u[:, j], nu[:, j])
        assert one.effective_dof == pytest.approx(float(many.effective_dof[j]), rel=1e-13)
        assert truncate_dof(one.effective_dof) == float(many.effective_dof_used[j])
        assert one.coverage_factor == float(many.coverage_factor[j])
        assert one.coverage_factor == scipy_k(0.9545, one.effective_dof)


# ============================================================================ plan columns
NAMES = ("A", "B", "C", "D")


def reference_frontier(rows):  # the rule of frontier(), as a loop over rows
    best = []
    for o in sorted(rows, key=lambda o: (o.cost, o.expanded_uncertainty, len(o.candidates))):
        if not best or o.expanded_uncertainty < best[-1].expanded_uncertainty * (
            1 - TARGET_TOLERANCE
        ):
            best.append(o)
    return best


def reference_cheapest(rows, target):  # the rule of cheapest_reaching()
    reaching = [o for o in rows if o.reaches(target)]
    if not reaching:
        return None
    return min(reaching, key=lambda o: (o.cost, -o.reduction, len(o.candidates)))


def rank(o):
    return (o.expanded_uncertainty, o.cost, len(o.candidates))


row_strategy = st.builds(
    lambda names, cost, big_u, red: UpgradeOption(
        tuple(n for n in NAMES if n in names), cost, 1.0, big_u / 2, math.inf, 2.0, big_u,
        red, red / cost if cost else 0.0, "x", None,
    ),
    st.sets(st.sampled_from(NAMES)),
    st.sampled_from([0.0, 1.0, 2.0, 5.0]),
    st.sampled_from([0.0, 1.0, 1.0 + 1e-13, 1.0 - 1e-13, 1.0 + 1e-11, 2.0, 3.0]),
    st.sampled_from([-1.0, -0.0, 0.0, 0.5, 1.0]),
)  # fmt: skip


@settings(max_examples=300, deadline=None)
@given(st.lists(row_strategy, min_size=1, max_size=30), st.sampled_from([0.5, 1.0, 2.0, 9.0]))
def test_columns_follow_the_row_rules(rows, target) -> None:
    table = UpgradeOptions.from_rows(rows, NAMES)
    assert list(table) == rows and all(a is b for a, b in zip(table, rows, strict=True))
    for given_as in (rows, table):
        assert [id(o) for o in frontier(given_as)] == [id(o) for o in reference_frontier(rows)]
        assert cheapest_reaching(given_as, target) is reference_cheapest(rows, target)
    plan = UpgradePlan(None, tuple(UpgradeCandidate(n, 1.0, {"x": 0.0}) for n in NAMES), rows,  # type: ignore[arg-type]
                       "exhaustive", None, None)  # fmt: skip
    assert [id(o) for o in plan.ranked] == [id(o) for o in sorted(rows, key=rank)]
    assert plan.best is min(rows, key=rank)
    by = {o.candidates: o for o in rows if len(o.candidates) == 1}
    assert plan.singles == tuple(by[(n,)] for n in NAMES if (n,) in by)
    for names in ((), ("A",), ("B", "D"), NAMES):
        match = [o for o in rows if set(o.candidates) == set(names)]
        if match:
            assert plan.option(names) is match[0]
    judged = plan.with_target(target)
    assert [o.reaches_target for o in judged.options] == [o.reaches(target) for o in rows]
    assert [replace(o, reaches_target=None) for o in judged.options] == rows
    assert judged.cheapest is reference_cheapest(judged.options, target)


def linear_plan() -> UpgradePlan:
    """y = a + b + c with u = 3, 4, 12 and k = 2 (exact analytic: U = 26), three candidates."""
    b = Budget.from_formula("y", "a + b + c", [InputQuantity.normal("a", 1.0, 3.0),
                                               InputQuantity.normal("b", 1.0, 4.0),
                                               InputQuantity.normal("c", 1.0, 12.0)],
                            coverage_factor=2.0)  # fmt: skip
    cands = [UpgradeCandidate("better a", 10.0, {"a": 0.0}),
             UpgradeCandidate("better b", 20.0, {"b": 0.0}),
             UpgradeCandidate("better c", 40.0, {"c": 0.0})]  # fmt: skip
    return evaluate_upgrades(b, cands, target=12.0)


def test_options_behave_like_the_tuple_they_stand_for() -> None:
    plan = linear_plan()
    opts = plan.options
    rows = tuple(opts)
    assert len(opts) == 8 and opts == rows and rows == tuple(opts)
    assert opts[0] is rows[0] and opts[-1] is rows[-1] and opts[2:5] == rows[2:5]
    assert isinstance(opts[2:5], tuple)
    assert all(o in opts for o in rows)
    assert replace(rows[3], reaches_target=not rows[3].reaches_target) not in opts
    assert "not an option" not in opts
    assert repr(opts) == repr(rows) and hash(opts) == hash(rows)
    # U = 2·√(3² + 4² + 12²) = 26 for the baseline, 2·12 = 24 without u(b) and u(a) (exact)
    assert plan.option([]).expanded_uncertainty == pytest.approx(26.0, rel=1e-15)
    assert plan.option(["better b", "better a"]).expanded_uncertainty == pytest.approx(24.0)
    assert plan.option(["better a", "better b"]) is opts[3]
    ranked = plan.ranked
    assert [o.expanded_uncertainty for o in ranked] == sorted(o.expanded_uncertainty for o in rows)
    assert ranked[0] is plan.best and ranked[0] in opts
    # a tuple given to the plan becomes columns again, with the same rows
    again = replace(plan, options=rows)
    assert isinstance(again.options, UpgradeOptions) and again == plan
    extra = replace(rows[1], cost=99.0)
    longer = replace(plan, options=plan.options + (extra,))
    assert len(longer.options) == 9 and longer.options[-1] is extra and longer.options[0] is rows[0]
    assert ((extra,) + plan.options)[0] is extra
    with pytest.raises(ViscometryError, match="not one of the plan's candidates"):
        replace(plan, options=(replace(rows[1], candidates=("nobody",)),))


def test_a_new_target_judges_the_same_numbers_again() -> None:
    plan = linear_plan()
    for target in (None, 12.0, 24.0, 26.0, 1.0):
        view = plan.with_target(target)
        for o, v in zip(plan.options, view.options, strict=True):
            assert replace(v, reaches_target=o.reaches_target) == o
            assert v.reaches_target == o.reaches(target)
        want = None if target is None else reference_cheapest(view.options, target)
        assert view.cheapest is want


# ============================================================================ uncertainty what-ifs
def budgets() -> list[Budget]:
    """A formula budget in units, a built-in model with Type A readings, a correlated one."""
    formula = Budget.from_formula(
        "eta", "pi * r**4 * dp * t / (8 * V * L)",
        [InputQuantity.normal("r", 0.2, 1e-4, "mm"), InputQuantity.normal("dp", 800.0, 0.1, "Pa"),
         InputQuantity.from_readings("t", [199.9, 200.1, 200.0, 200.05], "s"),
         InputQuantity.rectangular("V", 1.0, 0.002, "mL"),
         InputQuantity.normal("L", 100.0, 0.01, "mm", dof=12.5)], "mPa*s",
    )  # fmt: skip
    method = load_budget(ROOT / "examples" / "methods" / "pressure_capillary.toml").budget
    correlated = load_budget(
        ROOT / "examples" / "methods" / "dynamic_from_kinematic_correlated.toml"
    ).budget
    return [formula, method, correlated]


def rebuilt(b: Budget, name: str, u: object) -> Budget:
    """The what-if the slow way: the budget built again with all its checks."""
    return b.with_input(b.input(name).with_uncertainty(u))  # type: ignore[arg-type]


@pytest.mark.parametrize("b", budgets(), ids=["formula", "method", "correlated"])
def test_with_uncertainty_equals_the_rebuilt_budget(b: Budget) -> None:
    _filled = (b.evaluate(), b.estimate_warnings, b.fingerprint)  # caches, as in a widget
    for q in b.inputs:
        for factor in (0.0, 0.5, 3.0, 1e6):
            u = q.standard_uncertainty * factor
            fast, slow = b.with_uncertainty(q.name, u), rebuilt(b, q.name, u)
            assert fast == slow and fast.fingerprint == slow.fingerprint
            assert fast.correlation_matrix is b.correlation_matrix
            try:
                want = slow.evaluate()
            except ViscometryError as exc:  # the same refusal (a U no float holds...)
                with pytest.raises(type(exc)) as info:
                    fast.evaluate()
                assert str(info.value) == str(exc)
                continue
            got = fast.evaluate()
            assert got.expanded_uncertainty == want.expanded_uncertainty
            assert got.effective_dof == want.effective_dof
            assert got.warnings == want.warnings


@pytest.mark.parametrize("value", [-1e-5, math.nan, math.inf, True, "0.1", 1e-320, 1e306])
def test_with_uncertainty_refuses_what_a_budget_refuses(value: object) -> None:
    b = budgets()[0]  # 1e-320 mm is about 1e-323 m in SI: too small to keep its digits
    for name in ("r", "V", "t"):
        try:
            rebuilt(b, name, value)
        except ViscometryError as exc:
            with pytest.raises(type(exc)) as info:
                b.with_uncertainty(name, value)  # type: ignore[arg-type]
            assert str(info.value) == str(exc) and info.value.where == exc.where
        else:
            assert b.with_uncertainty(name, value) == rebuilt(b, name, value)  # type: ignore[arg-type]


def test_with_uncertainty_in_si_overflow_is_refused_naming_the_input() -> None:
    b = Budget.from_formula("y", "2 * x", [InputQuantity.normal("x", 1.0, 0.1, "km")], "km")
    with pytest.raises(ViscometryError) as info:
        b.with_uncertainty("x", 1e306)  # 1e309 m: no float holds it in SI
    assert info.value.where == "inputs.x" and "too large for a floating-point number" in str(
        info.value
    )


def test_with_uncertainty_runs_no_unit_check(monkeypatch) -> None:
    b = budgets()[0]
    _filled = (b.evaluate(), b.sign_bound, b.estimate_warnings)

    def forbidden(*_args: object, **_kwargs: object) -> None:
        raise AssertionError("a change of uncertainty cannot change units or dimensions")

    for name in ("check_model_dimensions", "si_conversion", "check_offset_unit", "same_dimension"):
        monkeypatch.setattr(units, name, forbidden)
    new = b.with_uncertainty("t", 0.5)
    assert new.input("t").standard_uncertainty == 0.5
    assert new.estimate_warnings is b.estimate_warnings  # carried, not computed again
    assert new.sign_bound is b.sign_bound


def test_plausibility_and_propagation_checks_still_run_after_a_change_of_uncertainty() -> None:
    b = budgets()[1]  # built-in model: r, dp, t, V, L keep their sign
    r = b.input("r").value
    fast = b.with_uncertainty("r", 1.5 * r).evaluate()
    slow = rebuilt(b, "r", 1.5 * r).evaluate()
    assert fast.warnings == slow.warnings
    assert any("u(r)" in w and "reaches past zero" in w for w in fast.warnings)
    lin = b.linearise().with_uncertainty("r", 1.5 * r)
    assert lin.warnings == fast.warnings
    assert lin.expanded_uncertainty == pytest.approx(fast.expanded_uncertainty, rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.floats(0.0, 3.0), st.sampled_from(["r", "dp", "t", "V", "L", "n", "m", "rho"]))
def test_linearised_warnings_equal_the_full_evaluation(factor: float, name: str) -> None:
    b = METHOD_BUDGET
    u = abs(b.input(name).value) * factor
    try:
        want = b.with_uncertainty(name, u).evaluate().warnings
    except ViscometryError as exc:  # a u no float holds in SI (1e-311 mL...): both refuse it
        with pytest.raises(type(exc)):
            _ = b.linearise().with_uncertainty(name, u).warnings
        return
    assert b.linearise().with_uncertainty(name, u).warnings == want


METHOD_BUDGET = budgets()[1]
