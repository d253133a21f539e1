"""Every path that changes inputs checks them as loading a budget file would.

A working range (and its scope table), an upgrade plan (every set of candidates, exhaustive or
greedy), the target solver, the fast what-if of a linearised budget, the budget's own what-if
helpers and the widgets build budgets from changed estimates or uncertainties. Each refuses
what :class:`~viscometry.gum.Budget` refuses when a file is loaded — a radius, a time or a
volume that is not positive, a number no float in SI units can hold — naming the point, the
set or the field, and each warns where the budget's validity and plausibility checks warn.

Expected messages are this package's own wording (no external source). Expected numbers
come from exact analytic scaling (scaling one input's estimate and uncertainty by f scales y,
u_c and U by f in a product model) or are stated beside the assertion.
"""

from __future__ import annotations

import html
import math
from pathlib import Path

import numpy as np
import pytest

from viscometry.cli import main
from viscometry.errors import InputError, ModelError
from viscometry.gum import Budget, InputQuantity
from viscometry.io import load_budget
from viscometry.planning import (
    UpgradeCandidate,
    evaluate_upgrades,
    required_uncertainty,
    scope_table,
    working_range,
)
from viscometry.widgets.budget_editor import budget_editor
from viscometry.widgets.builder import budget_builder
from viscometry.widgets.upgrade_explorer import upgrade_explorer

ROOT = Path(__file__).resolve().parent.parent
PRESSURE = ROOT / "examples" / "methods" / "pressure_capillary.toml"


@pytest.fixture(scope="module")
def capillary() -> Budget:
    """The invented pressure-capillary demo (r = 0.2 mm, t ≈ 200 s, V = 1 mL, L = 100 mm)."""
    return load_budget(PRESSURE).budget


PRODUCT = load_budget(ROOT / "tests" / "data" / "product_three_inputs.toml").budget


def product(factor: float = 1.0, **settings: object) -> Budget:
    """y = a·b/c (tests/data/product_three_inputs.toml) with a and u(a) scaled by ``factor``."""
    a = PRODUCT.input("a")
    scaled = PRODUCT.with_input(a.with_uncertainty(a.standard_uncertainty * factor,
                                                   value=a.value * factor))  # fmt: skip
    return scaled.with_settings(**settings)


# ============================================================================ working ranges
def test_range_through_a_negative_radius_is_refused_at_its_first_point(capillary) -> None:
    with pytest.raises(InputError) as info:
        working_range(capillary, "r", -0.1, 0.3, points=5)
    assert str(info.value) == (
        "at r = -0.1 (point 1 of the range): r must be positive for method "
        "'pressure_capillary' (capillary_radius), got -0.1 mm"
    )
    assert info.value.where == "inputs.r"  # the field a widget or a file reader points at


def test_range_names_the_first_bad_point_not_the_first_non_finite_one(capillary) -> None:
    # V = -1 mL at point 1 gives a finite (negative) model value; V = 0 at point 3 a division
    # by zero. Loading refuses V = -1 mL, so the range refuses point 1.
    with pytest.raises(InputError, match=r"^at V = -1\.0 \(point 1 of the range\): V must be "
                                         r"positive .*got -1\.0 mL$"):  # fmt: skip
        working_range(capillary, "V", -1.0, 1.0, points=5)
    with pytest.raises(
        InputError, match=r"at t = 0\.0 \(point 1 of the range\): t must be positive"
    ):
        working_range(capillary, "t", 0.0, 300.0, points=5)


def test_range_refuses_an_input_moved_by_adjust(capillary) -> None:
    # L follows r and becomes 0 at the third point (L = 100 − 500·r mm, r in mm)
    def adjust(r: np.ndarray) -> dict[str, np.ndarray]:
        return {"L": 100.0 - 500.0 * r}

    with pytest.raises(InputError, match=r"^at r = 0\.2 \(point 3 of the range\): L must be "
                                         r"positive .*got 0\.0 mm$"):  # fmt: skip
        working_range(capillary, "r", 0.1, 0.3, points=5, adjust=adjust)


def test_range_refuses_a_number_no_float_holds(capillary) -> None:
    # 1e-320 mm is 1e-323 m in SI: a subnormal float with about two significant bits
    with pytest.raises(InputError, match=r"^at r = 1e-320 \(point 1 of the range\): the estimate of "
                                         r"r is 9\.88e-324 in SI units, too small for a "
                                         r"floating-point number to keep its digits"):  # fmt: skip
        working_range(capillary, "r", 1e-320, 0.2, points=3)


def test_range_warns_where_the_checks_of_loading_warn(capillary) -> None:
    # t = 1 s: the kinetic-energy term dominates (the method's own check). The budget itself
    # (t ≈ 200 s) has no warning; the range states it once per kind, with the first point.
    res = working_range(capillary, "t", 1.0, 300.0, points=50)
    assert res.warnings == capillary.evaluate().warnings == ()
    kinetic = [w for w in res.point_warnings if "kinetic-energy term is" in w]
    assert len(kinetic) == 1
    assert kinetic[0].startswith("at t = 1.0 (point 1 of the range) and ")
    assert "more of the 50 points: kinetic-energy term is" in kinetic[0]
    # the same sentence as loading a budget with t = 1 s gives (one budget, one path)
    one = capillary.with_input(capillary.input("t").with_uncertainty(0.01, value=1.0))
    assert kinetic[0].split(": ", 1)[1] in one.estimate_warnings


def test_range_states_plausibility_warnings_of_its_points() -> None:
    # y = x1·x2 (both keep their sign), u(x2) = 4: at x2 = 20 no warning, at x2 = 1 (point 1)
    # u(x2) ≥ |x2| — its distribution reaches past zero.
    b = Budget.from_formula(
        "y", "x1 * x2",
        [InputQuantity.normal("x1", 1.0, 0.1, "mm"), InputQuantity.normal("x2", 20.0, 4.0, "mm")],
        "mm^2",
    )  # fmt: skip
    assert b.evaluate().warnings == ()
    res = working_range(b, "x2", 1.0, 11.0, points=3)
    assert res.warnings == ()
    (note,) = res.point_warnings
    assert note.startswith(
        "at x2 = 1.0 (point 1 of the range): u(x2) = 4 mm is at least |x2| = 1 mm"
    )


@pytest.mark.parametrize("factor", [1e-200, 1e200])
def test_range_of_a_scaled_budget_scales_exactly(factor: float) -> None:
    # exact analytic scaling: each point's u_c and U scale by f, ν_eff does not change
    base = working_range(product(), "b", 1.0, 2.0, points=4)
    scaled = working_range(product(factor), "b", 1.0, 2.0, points=4)
    np.testing.assert_allclose(scaled.standard_uncertainty, factor * base.standard_uncertainty,
                               rtol=1e-13)  # fmt: skip
    np.testing.assert_allclose(scaled.effective_dof, base.effective_dof, rtol=1e-12)
    np.testing.assert_allclose(scaled.variance_shares, base.variance_shares, rtol=1e-12)
    assert scaled.dominant == base.dominant


def test_scope_table_of_a_refused_range_is_never_made(capillary) -> None:
    with pytest.raises(InputError):
        scope_table(working_range(capillary, "r", -0.1, 0.3, points=5), [0.0, 1.0])


def test_scope_command_refuses_a_negative_radius(capsys, tmp_path) -> None:
    code = main(["scope", str(PRESSURE), "--over", "r", "--from", "-0.1", "--to", "0.3",
                 "--points", "5"])  # fmt: skip
    captured = capsys.readouterr()
    assert code == 2 and captured.out == ""
    (line,) = captured.err.splitlines()
    assert line.startswith(f"viscometry: error: {PRESSURE}")
    assert "at r = -0.1 (point 1 of the range): r must be positive" in line


# ============================================================================ upgrade plans
def test_candidate_that_zeroes_the_radius_is_refused_exhaustive_and_greedy(capillary) -> None:
    zero = UpgradeCandidate("zero radius", 1.0, {"r": InputQuantity.normal("r", 0.0, 1e-5, "mm")})
    other = UpgradeCandidate("better V", 2.0, {"V": 1e-4})
    for max_exhaustive in (12, 0):
        with pytest.raises(InputError, match=r"candidate 'zero radius': inputs\.r: value must be "
                                             r"positive for method 'pressure_capillary'"):  # fmt: skip
            evaluate_upgrades(capillary, [other, zero], max_exhaustive=max_exhaustive)


def test_candidate_uncertainty_no_float_holds_is_refused(capillary) -> None:
    tiny = UpgradeCandidate("tiny", 1.0, {"r": 1e-320})
    with pytest.raises(InputError, match=r"^with candidate 'tiny': the standard uncertainty of r "
                                         r"is 9\.88e-324 in SI units"):  # fmt: skip
        evaluate_upgrades(capillary, [tiny])


def test_plan_warns_about_the_sets_a_loaded_budget_would_warn_about(capillary) -> None:
    big = UpgradeCandidate("big u", 1.0, {"r": 1.0})  # u(r) = 1 mm ≥ r = 0.2 mm
    short = UpgradeCandidate("short", 2.0, {"t": InputQuantity.normal("t", 5.0, 0.1, "s")})
    for max_exhaustive in (12, 0):
        plan = evaluate_upgrades(capillary, [big, short], max_exhaustive=max_exhaustive)
        assert plan.warnings[: len(plan.baseline.warnings)] == plan.baseline.warnings
        assert any(w.startswith("with candidate 'big u'") and "u(r) = 1 mm is at least |r| = 0.2 mm"
                   in w for w in plan.warnings)  # fmt: skip
    plan = evaluate_upgrades(capillary, [big, short])
    # 'short' alone and 'big u' + 'short' have t = 5 s: the method's kinetic-energy check
    (kinetic,) = [w for w in plan.warnings if "kinetic-energy term is" in w]
    assert kinetic.startswith("with candidate 'short' and 1 more of the 4 sets: ")


@pytest.mark.parametrize("factor", [1e-200, 1e200])
def test_plan_of_a_scaled_budget_scales_exactly(factor: float) -> None:
    def candidates(f: float) -> list[UpgradeCandidate]:
        return [UpgradeCandidate("better a", 5.0, {"a": 1.0e4 * f}),
                UpgradeCandidate("better c", 3.0, {"c": 2e-4})]  # fmt: skip

    base = evaluate_upgrades(product(), candidates(1.0))
    scaled = evaluate_upgrades(product(factor), candidates(factor))
    for o, s in zip(base.ranked, scaled.ranked, strict=True):
        assert s.candidates == o.candidates
        assert s.expanded_uncertainty == pytest.approx(factor * o.expanded_uncertainty, rel=1e-13)
        assert s.effective_dof == pytest.approx(o.effective_dof, rel=1e-12)
        assert s.dominant == o.dominant


# ============================================================================ target solver
@pytest.mark.parametrize("factor", [1e-200, 1e200])
@pytest.mark.parametrize("fixed_k", [2.0, None])
def test_required_uncertainty_of_a_scaled_budget_scales_exactly(factor, fixed_k) -> None:
    # closed form (fixed k) and root finding (k = t_p(ν_eff)); exact analytic scaling: the
    # u(a) that reaches f·target is f times the one that reaches target.
    base, scaled = product(coverage_factor=fixed_k), product(factor, coverage_factor=fixed_k)
    target = 0.8 * base.evaluate().expanded_uncertainty
    r0 = required_uncertainty(base, "a", target)
    r1 = required_uncertainty(scaled, "a", factor * target)
    assert r0.reachable and r1.reachable and r0.solver == r1.solver
    assert r1.required_uncertainty == pytest.approx(factor * r0.required_uncertainty, rel=1e-9)
    assert r1.floor == pytest.approx(factor * r0.floor, rel=1e-12)


def test_target_below_the_floor_is_unreachable_not_a_negative_uncertainty() -> None:
    b = product(coverage_factor=2.0)
    floor = required_uncertainty(b, "a", 1.0).floor  # U with u(a) = 0
    r = required_uncertainty(b, "a", 0.5 * floor)
    assert not r.reachable and math.isnan(r.required_uncertainty)


def test_target_solver_refuses_what_evaluate_refuses() -> None:
    # c·u = 1e-200 · 3e-200: u_c ≈ 3e-400 cannot be represented
    b = Budget.from_formula(
        "y", "k * x", [InputQuantity.normal("k", 1e-200, 0.0), InputQuantity.normal("x", 1.0, 3e-200)]
    )  # fmt: skip
    with pytest.raises(ModelError, match="too small for a floating-point number"):
        required_uncertainty(b, "x", 1.0)


# ============================================================================ fast what-ifs
def test_linearised_what_if_with_a_negative_estimate_is_refused(capillary) -> None:
    lin = capillary.linearise().with_uncertainty("V", 1e-4)
    with pytest.raises(InputError, match=r"value must be positive for method 'pressure_capillary' "
                                         r"\(capillary_radius\), got -0\.1 mm"):  # fmt: skip
        lin.with_estimate("r", -0.1)
    moved = lin.with_estimate("r", 0.25)
    # the new estimate gives new sensitivities; the changed u(V) is kept
    full = capillary.with_input(capillary.input("r").with_uncertainty(
        capillary.input("r").standard_uncertainty, value=0.25)).with_uncertainty("V", 1e-4)  # fmt: skip
    assert moved.expanded_uncertainty == pytest.approx(full.evaluate().expanded_uncertainty,
                                                       rel=1e-12)  # fmt: skip


def test_linearised_what_if_refuses_an_uncertainty_no_float_holds(capillary) -> None:
    with pytest.raises(InputError, match=r"r\.standard_uncertainty = 1e-320: the standard "
                                         r"uncertainty of r is 9\.88e-324 in SI units"):  # fmt: skip
        capillary.linearise().with_uncertainty("r", 1e-320)


def test_linearised_and_full_evaluation_agree_on_a_scaled_budget() -> None:
    b = product(1e-200)
    assert b.linearise().standard_uncertainty == pytest.approx(
        b.evaluate().standard_uncertainty, rel=1e-14
    )
    assert b.linearise().with_uncertainty("b", 0.004).variance_shares.sum() == pytest.approx(1.0)


def test_budget_helpers_run_the_checks_of_loading(capillary) -> None:
    r = capillary.input("r")
    with pytest.raises(InputError, match=r"inputs\.r: value must be positive") as info:
        capillary.with_input(r.with_uncertainty(r.standard_uncertainty, value=-0.1))
    assert info.value.where == "inputs.r"
    with pytest.raises(InputError, match=r"inputs\.r: the standard uncertainty of r is 9\.88e-324"):
        capillary.with_uncertainty("r", 1e-320)
    with pytest.raises(InputError, match="must be non-negative"):
        capillary.with_uncertainty("r", -1e-5)


# ============================================================================ widgets
def test_budget_editor_refuses_and_keeps_the_last_good_result(capillary) -> None:
    editor = budget_editor(capillary)
    good = editor.current_result()
    editor.controls["r"].value = "1e-320"
    assert editor.current_result() is good
    assert editor.error is not None and "too small for a floating-point number" in editor.error
    assert "too small for a floating-point number" in html.unescape(editor.messages["r"].value)
    assert "not applied" in editor.statement_html.value
    assert editor.set_uncertainty("r", 1e-4)  # the refusal goes when the field is good again
    assert editor.error is None
    # a huge u is not capped: u_c is computed (scaled), and the plausibility warnings show
    assert editor.set_uncertainty("rho", 1e200)
    assert editor.current_result().standard_uncertainty > 1e190
    assert editor.error is None and "reaches past zero" in editor.statement_html.value


def test_upgrade_explorer_refuses_what_the_plan_refuses(capillary) -> None:
    zero = UpgradeCandidate("zero radius", 1.0, {"r": InputQuantity.normal("r", 0.0, 1e-5, "mm")})
    with pytest.raises(InputError, match="candidate 'zero radius'"):
        upgrade_explorer(capillary, [zero], show_chart=False)
    big = UpgradeCandidate("big u", 1.0, {"r": 1.0})
    explorer = upgrade_explorer(capillary, [big], show_chart=False)
    summary = html.unescape(explorer.summary_html.value)
    assert "with candidate 'big u': u(r) = 1 mm is at least |r| = 0.2 mm" in summary
    explorer.checkboxes["big u"].value = True  # not clamped: its U is shown as computed
    assert (
        explorer.selected_result().expanded_uncertainty
        > 10 * explorer.plan.baseline.expanded_uncertainty
    )


def test_builder_refuses_changed_rows_and_keeps_the_last_good_budget(tmp_path) -> None:
    b = budget_builder(PRESSURE, folder=ROOT / "examples", save_path=tmp_path / "pc.toml",
                       show_chart=False)  # fmt: skip
    good = b.current_result()
    b.input_row("r").value.text.value = "-0.1"
    assert "must be positive" in b.message("inputs.r")
    assert b.current_result() is good
    b.input_row("r").value.text.value = "1e-320"
    assert "too small for a floating-point number" in b.message("inputs.r")
    assert b.current_result() is good
    b.input_row("r").value.text.value = "0.21"
    assert b.message("inputs.r") == ""
    assert b.current_result().value > good.value  # η ∝ r⁴ at first order: a larger radius
