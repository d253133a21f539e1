"""Property-based tests (hypothesis) of the budget engine."""

import math

import numpy as np
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
