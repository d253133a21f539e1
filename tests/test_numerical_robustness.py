"""Numerical robustness: results stay finite, or the error says why.

Cases: inputs from nanometres to metres and results from µPa·s to kPa·s; an estimate
y = 0 (relative quantities undefined: stated in the warnings, NaN only where documented);
all inputs with infinite degrees of freedom; inputs with zero uncertainty; correlation
matrices at the edge of positive semidefiniteness; Monte Carlo runs whose model has
extreme tails or undefined values.

Expected values are exact analytic cases or independent recomputations (plain floats,
numpy, scipy); each says where it comes from.
"""

from __future__ import annotations

import json
import math
import warnings
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from viscometry.errors import CorrelationError, InputError, ModelError
from viscometry.gum import (
    Budget,
    Correlation,
    InputQuantity,
    run_monte_carlo,
    simulate_budget,
    validate_correlation,
)
from viscometry.gum.propagation import PSD_TOLERANCE
from viscometry.io import load_budget
from viscometry.io.json_out import dumps, result_to_dict
from viscometry.text import statement

POISEUILLE = "pi * r**4 * dp * t / (8 * V * L)"


def _poiseuille_budget(r, r_unit, L, L_unit, V, V_unit, dp, dp_unit, t, unit):
    """η = π r⁴ Δp t / (8 V L), each input with 1 % relative standard uncertainty."""
    inputs = [
        InputQuantity.normal("r", r, 0.01 * r, r_unit),
        InputQuantity.normal("L", L, 0.01 * L, L_unit),
        InputQuantity.normal("V", V, 0.01 * V, V_unit),
        InputQuantity.normal("dp", dp, 0.01 * dp, dp_unit),
        InputQuantity.normal("t", t, 0.01 * t, "s"),
    ]
    return Budget.from_formula("eta", POISEUILLE, inputs, unit)


# (r, unit), (L, unit), (V, unit), (dp, unit), t [s], measurand unit, SI factors of the units
SCALES = [
    # a nano-channel: r = 50 nm, L = 2 µm, V = 1 fL (1e-18 m³), Δp = 200 kPa → µPa·s range
    ((50.0, "nm"), (2.0, "um"), (1.0e-9, "mm^3"), (200.0, "kPa"), 1.0e-3, "uPa*s",
     (1e-9, 1e-6, 1e-9, 1e3, 1e-6)),
    # a laboratory capillary: r = 0.2 mm, L = 100 mm, V = 1 mL, Δp = 800 Pa → mPa·s
    ((0.2, "mm"), (100.0, "mm"), (1.0, "mL"), (800.0, "Pa"), 200.0, "mPa*s",
     (1e-3, 1e-3, 1e-6, 1.0, 1e-3)),
    # a wide pipe and a very viscous liquid: r = 0.05 m, L = 1 m, V = 1 L → kPa·s
    ((0.05, "m"), (1.0, "m"), (1.0, "L"), (50.0, "kPa"), 3600.0, "kPa*s",
     (1.0, 1.0, 1e-3, 1e3, 1e3)),
]  # fmt: skip


@pytest.mark.parametrize("case", SCALES, ids=["nano_uPa_s", "lab_mPa_s", "pipe_kPa_s"])
def test_orders_of_magnitude_exact_power_law(case):
    (r, ru), (L, lu), (V, vu), (dp, pu), t, unit, (sr, sl, sv, sp, so) = case
    result = _poiseuille_budget(r, ru, L, lu, V, vu, dp, pu, t, unit).evaluate()
    # Independent recomputation with plain floats in SI, then in the measurand unit.
    eta_si = math.pi * (r * sr) ** 4 * (dp * sp) * t / (8 * (V * sv) * (L * sl))
    assert result.value == pytest.approx(eta_si / so, rel=1e-12)
    # Pure power law: (u_c/y)² = Σ (nᵢ u(xᵢ)/xᵢ)², exponents 4, 1, 1, -1, -1, each
    # u/x = 1 % (JCGM 100:2008, 5.1.6, eq. (12)).
    rel = math.sqrt(sum((n * 0.01) ** 2 for n in (4, 1, 1, 1, 1)))
    assert result.standard_uncertainty / result.value == pytest.approx(rel, rel=1e-12)
    for c in result.contributions:
        assert math.isfinite(c.sensitivity) and math.isfinite(c.contribution)
    assert [round(c.relative_sensitivity, 12) for c in result.contributions] == [4, -1, -1, 1, 1]
    assert math.isfinite(result.expanded_uncertainty)
    assert "relative U" in statement(result)


def test_same_budget_in_any_unit_has_the_same_relative_uncertainty():
    # Unit invariance (common practice, no source): µPa·s and kPa·s differ by 1e9.
    base = _poiseuille_budget(0.2, "mm", 100.0, "mm", 1.0, "mL", 800.0, "Pa", 200.0, "Pa*s")
    small = base.with_settings(unit="uPa*s").evaluate()
    large = base.with_settings(unit="kPa*s").evaluate()
    assert small.value == pytest.approx(large.value * 1e9, rel=1e-12)
    assert small.relative_expanded_uncertainty == pytest.approx(
        large.relative_expanded_uncertainty, rel=1e-12
    )


def test_result_too_large_for_its_unit_is_a_clear_error():
    b = Budget.from_formula(
        "l", "a + b", [InputQuantity.normal(n, 1e308, 1.0, "mm") for n in "ab"], "mm"
    )
    with pytest.raises(ModelError, match=r"cannot be expressed in the measurand unit 'mm'"):
        b.evaluate()


# ----------------------------------------------------------------------------- y = 0
def _difference_budget(a=2.5, b=2.5):
    return Budget.from_formula(
        "d",
        "a - b",
        [InputQuantity.normal("a", a, 0.03, "mm"), InputQuantity.normal("b", b, 0.04, "mm")],
        "mm",
    )


def test_zero_estimate_relative_quantities_stated_undefined():
    r = _difference_budget().evaluate()
    # Exact: d = 0, u_c = sqrt(0.03² + 0.04²) = 0.05 mm (common practice, no source).
    assert r.value == 0.0
    assert r.standard_uncertainty == pytest.approx(0.05, rel=1e-14)
    assert math.isfinite(r.expanded_uncertainty) and r.expanded_uncertainty > 0
    assert any("estimate is zero" in w and "undefined" in w for w in r.warnings)
    # NaN only where documented (relative quantities), and the statement omits them.
    assert math.isnan(r.relative_expanded_uncertainty)
    assert all(math.isnan(c.relative_sensitivity) for c in r.contributions)
    assert all(math.isfinite(c.sensitivity) for c in r.contributions)
    assert "relative U" not in statement(r) and "nan" not in statement(r).lower()
    d = json.loads(dumps(result_to_dict(r)))  # strict JSON: NaN is written as null
    assert d["relative_expanded_uncertainty"] is None
    assert all(row["relative_sensitivity"] is None for row in d["inputs"])


def test_tiny_nonzero_estimate_is_finite():
    r = _difference_budget(2.5, 2.5 - 1e-12).evaluate()
    assert r.value == pytest.approx(1e-12, rel=1e-3)
    assert math.isfinite(r.relative_expanded_uncertainty)
    assert all(math.isfinite(c.relative_sensitivity) for c in r.contributions)


# ----------------------------------------------------------------------------- dof, zero u
def test_all_inputs_with_infinite_dof_use_the_normal_quantile():
    b = Budget.from_formula(
        "y",
        "a * b",
        [InputQuantity.normal("a", 3.0, 0.1, "m"), InputQuantity.normal("b", 2.0, 0.2, "m")],
        "m^2",
    )
    r = b.evaluate()
    assert math.isinf(r.effective_dof) and math.isinf(r.effective_dof_used)
    # k = z_{(1+p)/2} of the normal distribution (JCGM 100:2008, G.6.3; scipy recomputes it).
    assert r.coverage_factor == pytest.approx(stats.norm.ppf((1 + 0.9545) / 2), rel=1e-12)
    # Exact: u_c² = (b u_a)² + (a u_b)² = 0.2² + 0.6² (JCGM 100:2008, 5.1.2).
    assert r.standard_uncertainty == pytest.approx(math.hypot(0.2, 0.6), rel=1e-14)


def test_zero_uncertainty_inputs_give_zero_shares_not_nan():
    b = Budget.from_formula(
        "y",
        "a + b + c",
        [
            InputQuantity.normal("a", 1.0, 0.0, "m", dof=4),
            InputQuantity.normal("b", 2.0, 0.3, "m", dof=9),
            InputQuantity.normal("c", 3.0, 0.0, "m"),
        ],
        "m",
    )
    r = b.evaluate()
    assert r.contribution("a").variance_share == 0.0
    assert r.contribution("c").contribution == 0.0
    assert r.standard_uncertainty == pytest.approx(0.3, rel=1e-14)
    # Welch-Satterthwaite with one non-zero term gives that term's dof (JCGM 100:2008, G.4.1).
    assert r.effective_dof == pytest.approx(9.0, rel=1e-12)


def test_all_zero_uncertainties_is_stated():
    b = Budget.from_formula(
        "y", "a * b", [InputQuantity.normal(n, 2.0, 0.0, "m", dof=3) for n in "ab"], "m^2"
    )
    r = b.evaluate()
    assert r.standard_uncertainty == 0.0 and r.expanded_uncertainty == 0.0
    assert math.isinf(r.effective_dof)
    assert all(c.variance_share == 0.0 for c in r.contributions)
    assert any("combined standard uncertainty is zero" in w for w in r.warnings)
    assert "exactly known" in statement(r)


# ----------------------------------------------------------------------------- correlation
def _edge_matrix(eigenvalue: float) -> np.ndarray:
    """A 3×3 correlation matrix whose smallest eigenvalue is ``eigenvalue`` (≈ 0).

    Start from the rank-2 matrix Rᵢⱼ = cos(θᵢ − θⱼ) (PSD with one zero eigenvalue, null
    vector v), then move r₁₃ by δ = eigenvalue / (2 v₁ v₃), the first-order shift of that
    eigenvalue (perturbation theory for symmetric matrices).
    """
    theta = np.array([0.0, 0.7, 1.9])
    r = np.cos(theta[:, None] - theta[None, :])
    w, v = np.linalg.eigh(r)
    null = v[:, 0]
    delta = eigenvalue / (2 * null[0] * null[2])
    r[0, 2] += delta
    r[2, 0] += delta
    np.fill_diagonal(r, 1.0)
    return r


def test_near_singular_correlation_accepted_within_round_off():
    r = _edge_matrix(-1e-12)
    low = np.linalg.eigvalsh(r).min()  # independent check of the construction (numpy)
    assert -2e-12 < low < -0.5e-12 and -low < PSD_TOLERANCE
    checked = validate_correlation(r, ["a", "b", "c"])
    assert checked[0, 2] == r[0, 2]  # accepted as given, never silently repaired


def test_clearly_indefinite_correlation_rejected():
    r = _edge_matrix(-1e-6)
    assert np.linalg.eigvalsh(r).min() == pytest.approx(-1e-6, rel=1e-3)
    with pytest.raises(CorrelationError, match="not positive semidefinite"):
        validate_correlation(r, ["a", "b", "c"])


def test_budget_along_the_null_direction_is_zero_not_nan():
    """With sensitivities along the (almost) null vector, cᵀRc ≈ −1e-12·|c|²: clipped to 0."""
    r = _edge_matrix(-1e-12)
    null = np.linalg.eigh(r)[1][:, 0]
    names = ["a", "b", "c"]
    inputs = [InputQuantity.normal(n, 1.0, 1.0, "1") for n in names]
    formula = " + ".join(f"({float(c)!r})*{n}" for c, n in zip(null, names, strict=True))
    corr = [
        Correlation(names[i], names[j], float(r[i, j])) for i in range(3) for j in range(i + 1, 3)
    ]
    result = Budget.from_formula("y", formula, inputs, "1", correlations=corr).evaluate()
    assert result.standard_uncertainty < 1e-5  # ≤ sqrt(round-off), no NaN
    assert math.isfinite(result.standard_uncertainty)
    assert all(math.isfinite(t.covariance_term) for t in result.cross_terms)


# ----------------------------------------------------------------------------- Monte Carlo
def test_monte_carlo_heavy_tail_of_an_inverse_stays_finite():
    # y = 1/x with x rectangular on [0.001, 0.021]: a heavy right tail, but finite.
    x = InputQuantity.rectangular("x", 0.011, 0.010, "1")
    b = Budget.from_formula("y", "1 / x", [x], "1")
    sim = simulate_budget(b, trials=200_000, seed=7)
    mc = sim.mc
    assert all(math.isfinite(v) for v in (mc.value, mc.standard_uncertainty, *mc.interval))
    # The exact mean is ln(0.021/0.001)/0.020 = 152.2 (calculus; common practice, no source);
    # the sample mean of a heavy tail is close but noisy: 5 % is ample for 2e5 trials.
    assert mc.value == pytest.approx(math.log(21) / 0.020, rel=0.05)
    # The first-order result cannot describe this tail: the validation says so.
    assert not sim.validated


def test_monte_carlo_undefined_values_are_a_clear_model_error():
    # log(x) with x ~ N(0.01, 0.01): about 16 % of the draws are negative (log undefined).
    b = Budget.from_formula("y", "log(x)", [InputQuantity.normal("x", 0.01, 0.01, "1")], "1")
    with pytest.raises(ModelError, match=r"non-finite values in \d+ of 20000 trials, e\.g\. x="):
        simulate_budget(b, trials=20_000, seed=3)


def test_monte_carlo_model_raising_is_a_model_error():
    def blows_up(x):
        raise ZeroDivisionError("division by zero")

    with pytest.raises(ModelError, match="failed on a chunk of trials"):
        run_monte_carlo(blows_up, [InputQuantity.normal("x", 1.0, 0.1)], trials=1000, seed=1)


def test_no_numpy_warning_escapes_an_evaluation_with_extreme_values():
    # c·u = 1e150 · 1e149 = 1e299 would overflow when squared for the variance; the scaled
    # sum gives u_c = √2·1e299 (exact analytic: y = a·b, u_c² = (b·u_a)² + (a·u_b)²), and no
    # RuntimeWarning escapes.
    b = Budget.from_formula(
        "y", "a * b", [InputQuantity.normal(n, 1e150, 1e149, "1") for n in "ab"], "1"
    )
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert b.evaluate().standard_uncertainty == pytest.approx(math.sqrt(2) * 1e299, rel=1e-14)
    # u_c = √2·2e308 itself exceeds the largest float (1.8e308): a ModelError saying so.
    too_big = Budget.from_formula(
        "y", "a * b", [InputQuantity.normal(n, 1e154, 2e154, "1") for n in "ab"], "1"
    )
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        with pytest.raises(
            ModelError, match=r"u_c ≈ 2\.8e\+308 is too large for a floating-point number"
        ):
            too_big.evaluate()


# ----------------------------------------------------------------------------- plausibility
# Legal but doubtful budgets are evaluated and carry a warning with the numbers in it
# (viscometry.gum.validity.uncertainty_warnings); no warnings.warn is emitted (warnings are
# errors in this test run).
def _poiseuille_with_radius(u_r):
    inputs = [
        InputQuantity.normal("r", 0.4, u_r, "mm"),
        InputQuantity.normal("dp", 800.0, 8.0, "Pa"),
        InputQuantity.normal("t", 200.0, 0.2, "s"),
        InputQuantity.normal("V", 1.0, 0.01, "mL"),
        InputQuantity.normal("L", 100.0, 0.1, "mm"),
    ]
    return Budget.from_formula("eta", POISEUILLE, inputs, "mPa*s")


def test_input_uncertainty_reaching_past_zero_is_named_with_both_numbers():
    r = _poiseuille_with_radius(0.5).evaluate()
    (note,) = [w for w in r.warnings if w.startswith("u(r)")]
    assert note.startswith(
        "u(r) = 0.5 mm is at least |r| = 0.4 mm: its distribution reaches past zero"
    )
    assert "Monte Carlo" in note
    # the other inputs are far from zero: nothing about them
    assert not any(w.startswith(("u(dp)", "u(t)", "u(V)", "u(L)")) for w in r.warnings)
    # the boundary u = |x| is included; just below it there is no u(r) warning
    assert any(w.startswith("u(r) = 0.4 mm is at least |r| = 0.4 mm") for w in
               _poiseuille_with_radius(0.4).evaluate().warnings)  # fmt: skip
    below = _poiseuille_with_radius(0.39).evaluate().warnings
    assert not any(w.startswith("u(r)") for w in below)
    # (u(r)/r = 98 % still gives U > η: that is the other plausibility warning)
    assert [w[:40] for w in below] == ["the coverage interval eta ± U reaches be"]
    # the fast what-if path shows the same warnings as a full evaluation
    lin = _poiseuille_with_radius(0.01).linearise()
    assert lin.warnings == ()
    assert lin.with_uncertainty("r", 0.5).warnings == r.warnings


def test_zero_estimate_input_is_not_flagged():
    # u(x) >= |x| is only meaningful for a non-zero estimate (a correction of 0 ± u is usual).
    b = Budget.from_formula(
        "nu", "C * t + E", [InputQuantity.normal("C", 0.1, 1e-4, "mm^2/s^2"),
                            InputQuantity.normal("t", 400.0, 0.1, "s"),
                            InputQuantity.normal("E", 0.0, 0.01, "mm^2/s")], "mm^2/s",
    )  # fmt: skip
    assert b.evaluate().warnings == ()


def test_coverage_interval_of_a_viscosity_below_zero_is_flagged():
    # ν = a − b = 0.5 mm²/s, u_c = √(0.3² + 0.3²) = 0.424, U = 2·0.424 = 0.849 > ν (exact
    # analytic, k = 2.00 for p = 95.45 % and ν_eff = ∞): ν − U < 0, impossible for a viscosity.
    qs = [
        InputQuantity.normal("a", 1.0, 0.3, "mm^2/s"),
        InputQuantity.normal("b", 0.5, 0.3, "mm^2/s"),
    ]
    r = Budget.from_formula("nu", "a - b", qs, "mm^2/s").evaluate()
    assert r.expanded_uncertainty == pytest.approx(2.0 * math.sqrt(0.18), rel=1e-3)
    (note,) = r.warnings
    assert note.startswith(
        "the coverage interval nu ± U reaches below zero (U = 0.849 mm²/s > nu = 0.5 mm²/s)"
    )
    assert "Monte Carlo" in note
    # a dynamic viscosity, recognised by its unit, too
    dyn = [
        InputQuantity.normal("a", 1.0, 0.3, "mPa*s"),
        InputQuantity.normal("b", 0.5, 0.3, "mPa*s"),
    ]
    assert any("reaches below zero" in w for w in
               Budget.from_formula("eta", "a - b", dyn, "mPa*s").evaluate().warnings)  # fmt: skip
    # a length difference may be negative: nothing to say
    lengths = [InputQuantity.normal("a", 1.0, 0.3, "mm"), InputQuantity.normal("b", 0.5, 0.3, "mm")]
    assert Budget.from_formula("d", "a - b", lengths, "mm").evaluate().warnings == ()
    # with smaller uncertainties the interval stays above zero: nothing to say
    small = [q.with_uncertainty(0.1) for q in qs]
    assert Budget.from_formula("nu", "a - b", small, "mm^2/s").evaluate().warnings == ()


def test_built_in_viscometer_model_interval_below_zero_is_flagged():
    # glass_capillary_kinetic, ν = C·t − E/t² = 0.01·250 = 2.5 mm²/s; u(C)/C = 60 % gives
    # U ≈ 2·0.6·2.5 = 3.0 mm²/s > ν (exact analytic, first order).
    from viscometry.methods import get_method

    m = get_method("glass_capillary_kinetic")
    qs = [InputQuantity.normal("C", 0.01, 0.006, "mm^2/s^2"),
          InputQuantity.normal("t", 250.0, 0.1, "s"),
          InputQuantity.normal("E", 0.0, 1.0, "mm^2*s")]  # fmt: skip
    r = m.budget(qs, unit="mm^2/s").evaluate()
    assert r.expanded_uncertainty == pytest.approx(3.0, rel=1e-4)
    assert [w for w in r.warnings if "reaches below zero" in w] == [
        "the coverage interval nu ± U reaches below zero (U = 3 mm²/s > nu = 2.5 mm²/s); nu "
        "cannot be negative, so the first-order budget is not adequate here: check the "
        "uncertainties and use the Monte Carlo method (JCGM 101)"
    ]


# ----------------------------------------------------------------------------- underflow, overflow
# The law of propagation works on contributions scaled by a power of two, so squares and
# fourth powers neither underflow nor overflow (viscometry.gum.propagation). Scaling one
# input's estimate and uncertainty by a factor f scales y, every sensitivity coefficient of
# the other inputs and every contribution by f, and leaves ν_eff and k unchanged: exact
# analytic scaling is the source of the expected values below.
PRODUCT = load_budget(Path(__file__).parent / "data" / "product_three_inputs.toml").budget


def _product_budget(factor: float) -> Budget:
    """y = a·b/c with a (and u(a)) scaled by ``factor``; contributions ≈ 5e4, 5e3, 5e3 × f."""
    a = PRODUCT.input("a")
    return PRODUCT.with_input(a.with_uncertainty(3.0e4 * factor, value=2.0e6 * factor))


@pytest.mark.parametrize("factor", [1e-200, 1e-170, 1e150, 1e200])
def test_scaled_budget_scales_u_c_exactly(factor):
    # f = 1e-200: each (c·u)² ≈ 1e-392 underflows to 0 in plain floats; f = 1e150 and 1e200:
    # (c·u)² ≈ 1e309 and 1e409 overflow. Exact analytic scaling: u_c(f) = f·u_c(1).
    base = _product_budget(1.0).evaluate()
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no RuntimeWarning escapes either
        scaled = _product_budget(factor).evaluate()
    assert scaled.value == pytest.approx(factor * base.value, rel=1e-14)
    assert scaled.standard_uncertainty == pytest.approx(
        factor * base.standard_uncertainty, rel=1e-13
    )
    assert scaled.expanded_uncertainty == pytest.approx(
        factor * base.expanded_uncertainty, rel=1e-13
    )
    # ν_eff = u_c⁴/Σ(cᵢu(xᵢ))⁴/νᵢ is scale-free (JCGM 100:2008, G.2b), so k is the same too
    assert scaled.effective_dof == pytest.approx(base.effective_dof, rel=1e-12)
    assert scaled.coverage_factor == base.coverage_factor
    assert [c.variance_share for c in scaled.contributions] == pytest.approx(
        [c.variance_share for c in base.contributions], rel=1e-12
    )
    assert not any("exactly known" in w for w in scaled.warnings)


def test_scaled_kernel_matches_plain_floats_in_the_normal_range():
    # Scaling by a power of two is exact: in the normal range the kernel gives the very digits
    # of the unscaled formulas (independent recomputation with plain floats and math.fsum).
    c = np.array([0.3, -1.7, 2.5e3, 4.0e-3])
    u = np.array([0.01, 0.002, 1.0e-6, 0.7])
    nu = np.array([4.0, np.inf, 9.0, 30.0])
    from viscometry.gum.propagation import propagate, welch_satterthwaite

    p = propagate(c, u, nu)
    cu = [a * b for a, b in zip(c.tolist(), u.tolist(), strict=True)]
    uc = math.sqrt(math.fsum(x * x for x in cu))
    assert float(p.standard_uncertainty) == uc
    nu_eff = uc**4 / math.fsum(
        x**4 / n for x, n in zip(cu, nu.tolist(), strict=True) if n != math.inf
    )
    assert float(p.effective_dof) == pytest.approx(nu_eff, rel=1e-15)
    # the vectorised form agrees with the one-budget form
    cols = propagate(np.repeat(c[:, None], 3, axis=1), np.repeat(u[:, None], 3, axis=1), nu)
    assert cols.standard_uncertainty.tolist() == [uc] * 3
    # the public Welch-Satterthwaite function is scale-free too (exact analytic scaling)
    assert welch_satterthwaite(np.array(cu) * 1e-200, nu, uc * 1e-200) == pytest.approx(
        nu_eff, rel=1e-12
    )


def test_result_example_with_tiny_inputs_is_not_exactly_known():
    # A budget file's density stated as 1e-200 ± 1e-200 kg/m³: its contribution c·u ≈ 1e-206
    # Pa·s is representable, its square is not. u_c follows from the other contributions by
    # exact analytic scaling of y = π r⁴ ρ g h t / (8 V L): u_c/y is that of the unscaled
    # budget with u(ρ)/ρ = 1 (relative uncertainties add in quadrature for a power law,
    # JCGM 100:2008, 5.1.6).
    def budget(rho: float, u_rho: float) -> Budget:
        inputs = [
            InputQuantity.normal("r", 0.2, 1e-4, "mm"),
            InputQuantity.normal("rho", rho, u_rho, "kg/m^3"),
            InputQuantity.normal("g", 9.81, 1e-5, "m/s^2"),
            InputQuantity.normal("h", 81.4, 0.03, "mm"),
            InputQuantity.normal("t", 200.0, 0.04, "s"),
            InputQuantity.normal("V", 1.0, 3e-4, "mL"),
            InputQuantity.normal("L", 100.0, 0.01, "mm"),
        ]
        return Budget.from_formula("eta", "pi * r**4 * rho * g * h * t / (8 * V * L)", inputs,
                                   "mPa*s")  # fmt: skip

    tiny = budget(1e-200, 1e-200).evaluate()
    plain = budget(998.2, 998.2).evaluate()
    assert tiny.standard_uncertainty / tiny.value == pytest.approx(
        plain.standard_uncertainty / plain.value, rel=1e-12
    )
    assert tiny.standard_uncertainty > 0
    assert not any("exactly known" in w for w in tiny.warnings)
    assert "exactly known" not in statement(tiny)


def test_model_value_that_underflows_is_refused():
    # r = 1e-90 m: π r⁴ Δp t / (8 V L) ≈ 6e-355 Pa·s in SI, far below the smallest normal
    # float (2.2e-308): it would be shown as 0 ("exactly known"). This package's own wording.
    b = _poiseuille_budget(1e-87, "mm", 100.0, "mm", 1.0, "mL", 800.0, "Pa", 200.0, "mPa*s")
    with pytest.raises(ModelError, match=r"the model value eta at the input estimates is about "
                                         r"\d(\.\d)?e-3\d\d in SI units, too small for a "
                                         r"floating-point number \(underflow below 3e-316\)"):  # fmt: skip
        b.evaluate()
    with pytest.raises(ModelError, match="underflow"):
        b.linearise()


def test_intermediate_underflow_is_refused():
    # y = r⁴·q with r = 1e-90 m, q = 1e300 m⁻⁴: y = 1e-60 is representable, but r⁴ = 1e-360
    # underflows to 0 first, so plain floats give y = 0 (exact analytic value 1e-60).
    b = Budget.from_formula(
        "y", "r**4 * q",
        [InputQuantity.normal("r", 1e-90, 1e-92, "m"), InputQuantity.normal("q", 1e300, 1e298, "1/m^4")],
        "1",
    )  # fmt: skip
    with pytest.raises(ModelError, match=r"an intermediate value of the model underflows at the "
                                         r"input estimates: y is about 1e-60"):  # fmt: skip
        b.evaluate()
    # y = r⁴/s² with s = 1e-150 m: r⁴ underflows, so y = 0 (exact analytic value 1e-60);
    # refused like the first case (the derivative program gives finite, underflowed
    # sensitivities here, which the exact check would not accept either).
    c = Budget.from_formula(
        "y", "r**4 / s**2",
        [InputQuantity.normal("r", 1e-90, 1e-92, "m"), InputQuantity.normal("s", 1e-150, 1e-152, "m")],
        "m^2",
    )  # fmt: skip
    with pytest.raises(ModelError, match=r"an intermediate value of the model underflows at the "
                                         r"input estimates: y is about 1e-60"):  # fmt: skip
        c.evaluate()
    # y = a/s² with a = 1e-200 m², s = 1e-150 m: y = 1e100 is fine, but ∂y/∂s = −2a/s³ =
    # −2e250 (exact analytic) overflows through 1/s² = 1e300 times y: not finite in plain
    # floats; its exact value is named, so the cause is clear.
    d = Budget.from_formula(
        "y", "a / s**2",
        [InputQuantity.normal("a", 1e-200, 1e-202, "m^2"), InputQuantity.normal("s", 1e-150, 1e-152, "m")],
        "1",
    )  # fmt: skip
    with pytest.raises(ModelError, match=r"sensitivity coefficient of s is not finite at the "
                                         r"estimates .*exact value is about 2e\+250"):  # fmt: skip
        d.evaluate()


def test_true_zero_is_not_mistaken_for_an_underflow():
    # y = a − b with a = b: the zero is exact (checked in exact-exponent arithmetic), the
    # result stands (exact analytic: u_c = √(0.03² + 0.04²) = 0.05).
    r = _difference_budget().evaluate()
    assert r.value == 0.0 and r.standard_uncertainty == pytest.approx(0.05, rel=1e-14)


def test_sensitivity_that_underflows_with_a_negligible_share_is_a_warning():
    # y = a + r⁵ with r = 1e-80: ∂y/∂r = 5r⁴ = 5e-320 is a subnormal float with about 13
    # significant bits; its contribution 5e-320 · 1e-81 ≈ 5e-401 is far below u_c = u(a) =
    # 0.1 (exact analytic), so u_c stands and only r's share is lost: a warning says so.
    b = Budget.from_formula(
        "y", "a + r**5", [InputQuantity.normal("a", 1.0, 0.1), InputQuantity.normal("r", 1e-80, 1e-81)]
    )  # fmt: skip
    result = b.evaluate()
    assert result.standard_uncertainty == 0.1
    (note,) = [w for w in result.warnings if "sensitivity coefficient of r" in w]
    assert "about 5e-320" in note and "u_c is not affected" in note
    assert b.linearise().standard_uncertainty == 0.1


def test_sensitivity_that_underflows_with_a_real_share_is_refused():
    # y = b + r⁵ with b = 1e-290 ± 1e-300 and r = 1e-80 ± 1e20: c·u(r) = 5e-320 · 1e20 =
    # 5e-300 would dominate u_c, but c keeps too few digits: u_c would be wrong, so it is
    # refused.
    b = Budget.from_formula(
        "y", "b + r**5",
        [InputQuantity.normal("b", 1e-290, 1e-300), InputQuantity.normal("r", 1e-80, 1e20)],
    )  # fmt: skip
    with pytest.raises(ModelError, match=r"sensitivity coefficient of r at the input estimates "
                                         r"is about 5e-320.*u_c would be wrong"):  # fmt: skip
        b.evaluate()


def test_u_c_below_the_smallest_float_is_refused():
    # c·u = 1e-200 · 3e-200 = 3e-400: u_c itself cannot be represented (underflow).
    b = Budget.from_formula(
        "y", "k * x", [InputQuantity.normal("k", 1e-200, 0.0), InputQuantity.normal("x", 1.0, 3e-200)]
    )  # fmt: skip
    with pytest.raises(ModelError, match=r"u_c ≈ 3e-400 is too small for a floating-point number"):
        b.evaluate()


def test_input_below_the_smallest_float_in_si_is_refused():
    # 1e-320 mm is 1e-323 m: a subnormal float with about two significant bits.
    with pytest.raises(InputError, match=r"inputs\.a: the standard uncertainty of a is 9\.88e-324 "
                                         r"in SI units, too small for a floating-point number "
                                         r"to keep its digits \(below 3e-316\)"):  # fmt: skip
        Budget.from_formula("y", "a", [InputQuantity.normal("a", 1.0, 1e-320, "mm")], "mm")


def test_result_below_the_smallest_float_in_its_unit_is_refused():
    # y = 1e-305 Pa·s is 1e-317 TPa·s, a subnormal that keeps too few digits: choose a
    # smaller unit.
    b = Budget.from_formula("y", "a", [InputQuantity.normal("a", 1e-305, 1e-306, "Pa*s")], "TPa*s")
    with pytest.raises(ModelError, match=r"measurand unit 'TPa\*s' \(underflow below 3e-316\); "
                                         r"choose a unit closer to its size"):  # fmt: skip
        b.evaluate()
    assert b.with_settings(unit="Pa*s").evaluate().value == 1e-305


def test_subnormal_numbers_that_keep_their_digits_are_accepted():
    # 2.2250738585e-313 is subnormal but keeps 36 significant bits (relative rounding below
    # 1e-10): y = a is that number, u_c = u(a) (exact analytic).
    r = Budget.from_formula("y", "a", [InputQuantity.normal("a", 2.2250738585e-313, 1.0, "m")],
                            "m").evaluate()  # fmt: skip
    assert r.value == 2.2250738585e-313 and r.standard_uncertainty == 1.0


@pytest.mark.parametrize("factor", [1e-200, 1e200])
def test_monte_carlo_spread_of_a_scaled_budget_is_not_lost(factor):
    # The squared deviations of values near 1e-200 underflow (near 1e200 they overflow); the
    # spread is computed on values scaled by a power of two instead. Same seed, same draws:
    # the scaled run's mean and standard deviation are f times the unscaled ones (exact
    # analytic scaling, up to the rounding of each draw).
    base = simulate_budget(_product_budget(1.0), trials=20_000, seed=11).mc
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        scaled = simulate_budget(_product_budget(factor), trials=20_000, seed=11).mc
    assert scaled.standard_uncertainty == pytest.approx(
        factor * base.standard_uncertainty, rel=1e-12
    )
    assert scaled.value == pytest.approx(factor * base.value, rel=1e-12)
    assert scaled.interval[1] == pytest.approx(factor * base.interval[1], rel=1e-12)


def test_higher_order_terms_that_no_float_holds_are_refused_or_negligible():
    # y = a·b with u(a) = u(b) = 1e-200, a = b = 1: first order u_c = √2·1e-200 (exact
    # analytic); the second-order term ½(∂²y/∂a∂b)²u²(a)u²(b)·2 = 1e-800 is negligible next to
    # u_c² = 2e-400, though u⁴ underflows: u_c stays √2·1e-200.
    tiny = Budget.from_formula("y", "a * b", [InputQuantity.normal(n, 1.0, 1e-200) for n in "ab"])
    r = tiny.evaluate(higher_order=True)
    assert r.standard_uncertainty == pytest.approx(math.sqrt(2) * 1e-200, rel=1e-14)
    # In the scaled product budget the second-order terms are 1e-5 of u_c² (regression
    # value of the unscaled budget); at f = 1e-200 that variance (≈ 2e-396) is no float: a
    # clear refusal instead of silently leaving the terms out.
    with pytest.raises(ModelError, match=r"higher-order terms of the law of propagation are "
                                         r"about 2\.1e-396 .* too small for a floating-point"):  # fmt: skip
        _product_budget(1e-200).evaluate(higher_order=True)
    # unscaled, nothing changes: the plain sum is used
    plain = _product_budget(1.0).evaluate(higher_order=True)
    assert plain.standard_uncertainty > plain.first_order_standard_uncertainty
