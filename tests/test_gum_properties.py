"""Property-based tests (hypothesis) of the budget engine."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from viscometry.gum import Budget, InputQuantity

FAST = settings(max_examples=40, deadline=None, derandomize=True)

positive = st.floats(min_value=0.1, max_value=10.0, allow_nan=False)
small = st.floats(min_value=1e-4, max_value=0.5, allow_nan=False)


@FAST
@given(
    a=positive,
    b=positive,
    c=positive,
    ua=small,
    ub=small,
    uc=small,
    perm=st.permutations([0, 1, 2]),
)
def test_permuting_inputs_leaves_result_unchanged(a, b, c, ua, ub, uc, perm):
    qs = [
        InputQuantity.normal("a", a, ua),
        InputQuantity.normal("b", b, ub),
        InputQuantity.normal("c", c, uc),
    ]
    r1 = Budget.from_formula("y", "a * b / c", qs).evaluate()
    r2 = Budget.from_formula("y", "a * b / c", [qs[i] for i in perm]).evaluate()
    assert math.isclose(r1.value, r2.value, rel_tol=1e-12)
    assert math.isclose(r1.standard_uncertainty, r2.standard_uncertainty, rel_tol=1e-12)
    assert math.isclose(r1.expanded_uncertainty, r2.expanded_uncertainty, rel_tol=1e-12)


@FAST
@given(r=positive, ur=small, L=positive, uL=small)
def test_rescaling_units_leaves_result_unchanged(r, ur, L, uL):
    base = [InputQuantity.normal("r", r, ur * r / 10, "mm"), InputQuantity.normal("L", L, uL, "m")]
    scaled = [
        InputQuantity.normal("r", r / 1000, ur * r / 10 / 1000, "m"),
        InputQuantity.normal("L", L * 100, uL * 100, "cm"),
    ]
    r1 = Budget.from_formula("A", "r**2 / L", base, "mm").evaluate()
    r2 = Budget.from_formula("A", "r**2 / L", scaled, "m").evaluate()
    assert math.isclose(r1.value / 1000, r2.value, rel_tol=1e-10)
    assert math.isclose(r1.standard_uncertainty / 1000, r2.standard_uncertainty, rel_tol=1e-10)
    assert (
        math.isclose(r1.effective_dof, r2.effective_dof, rel_tol=1e-10)
        or r1.effective_dof == r2.effective_dof
    )


@FAST
@given(
    coeffs=st.lists(st.floats(min_value=-5, max_value=5, allow_nan=False), min_size=3, max_size=3),
    us=st.lists(small, min_size=3, max_size=3),
    dofs=st.lists(st.integers(min_value=2, max_value=60), min_size=3, max_size=3),
)
def test_linear_model_equals_closed_form(coeffs, us, dofs):
    # exact analytic: y = sum a_i x_i -> u^2 = sum a_i^2 u_i^2, W-S closed form
    names = ["x1", "x2", "x3"]
    formula = " + ".join(f"({a!r})*{n}" for a, n in zip(coeffs, names, strict=True))
    qs = [InputQuantity.normal(n, 1.0, u, dof=d) for n, u, d in zip(names, us, dofs, strict=True)]
    r = Budget.from_formula("y", formula, qs).evaluate()
    ci = np.array(coeffs) * np.array(us)
    uc = math.sqrt(float(np.sum(ci**2)))
    assert math.isclose(r.value, sum(coeffs), rel_tol=1e-12, abs_tol=1e-12)
    assert math.isclose(r.standard_uncertainty, uc, rel_tol=1e-12, abs_tol=1e-15)
    if uc > 0 and np.any(ci != 0):
        nu = uc**4 / float(np.sum(ci**4 / np.array(dofs)))
        assert math.isclose(r.effective_dof, nu, rel_tol=1e-9)


# --------------------------------------------------------------------------- one kernel
# Every path that propagates uncertainty (Budget.evaluate, Budget.linearise, the upgrade
# planner) must give the u_c, ν_eff, k and U of viscometry.gum.propagation.propagate for the
# same numbers. The sensitivities below are written out by hand (exact analytic), so the
# kernel is fed independently of the paths under test.
def _kernel_budget(**settings):
    from viscometry.gum import Correlation

    qs = [
        InputQuantity.normal("C", 0.01, 2e-5, "mm^2/s^2", dof=30),
        InputQuantity.from_readings("t", [300.1, 300.4, 299.9, 300.2], "s"),
        InputQuantity.rectangular("d", 0.0, 1e-3),
    ]
    return Budget.from_formula(
        "nu", "C * t * (1 + d)", qs, "mm^2/s", correlations=[Correlation("C", "d", 0.4)], **settings
    )


def _kernel(budget, u):
    from viscometry.gum.propagation import propagate

    c_val, t_val, d_val = (q.value for q in budget.inputs)
    grad = np.array([t_val * (1 + d_val), c_val * (1 + d_val), c_val * t_val])  # mm²/s per unit
    nu = np.array([q.dof for q in budget.inputs])
    return propagate(
        grad,
        np.asarray(u, dtype=float),
        nu,
        budget.correlation_matrix,
        coverage_probability=budget.coverage_probability,
        coverage_factor=budget.coverage_factor,
    )


def _same(path, kernel):
    assert math.isclose(
        path.standard_uncertainty, float(kernel.standard_uncertainty), rel_tol=1e-12
    )
    assert math.isclose(path.effective_dof, float(kernel.effective_dof), rel_tol=1e-12)
    assert math.isclose(path.coverage_factor, float(kernel.coverage_factor), rel_tol=1e-12)
    assert math.isclose(
        path.expanded_uncertainty, float(kernel.expanded_uncertainty), rel_tol=1e-12
    )


@pytest.mark.parametrize(
    "settings",
    [{}, {"coverage_probability": 0.95}, {"coverage_probability": 0.99}, {"coverage_factor": 2.0}],
    ids=["default", "p95", "p99", "k2"],
)
def test_every_path_uses_the_one_propagation_kernel(settings):
    from viscometry.planning import UpgradeCandidate, evaluate_upgrades

    b = _kernel_budget(**settings)
    u0 = [q.standard_uncertainty for q in b.inputs]
    kernel = _kernel(b, u0)
    # the budget has finite dofs and a correlation, so ν_eff and R both matter
    assert math.isfinite(float(kernel.effective_dof)) and b.correlation_matrix is not None
    full = b.evaluate()
    lin = b.linearise()
    _same(full, kernel)
    _same(lin, kernel)
    assert full.coverage_probability == lin.coverage_probability
    candidates = [
        UpgradeCandidate("better C", 100.0, {"C": 1e-5}),
        UpgradeCandidate("more readings", 50.0, {"t": 0.02}),
        UpgradeCandidate("better d", 10.0, {"d": 1e-4}),
    ]
    plan = evaluate_upgrades(b, candidates)
    assert plan.search == "exhaustive" and len(plan.ranked) == 2 ** len(candidates)
    for option in plan.ranked:
        changes = {
            k: v for c in candidates if c.name in option.candidates for k, v in c.changes.items()
        }
        u = [changes.get(q.name, q.standard_uncertainty) for q in b.inputs]
        kern = _kernel(b, u)
        _same(option, kern)
        _same(lin.with_uncertainties(changes), kern)
        again = b
        for name, value in changes.items():
            again = again.with_uncertainty(name, value)
        _same(again.evaluate(), kern)
