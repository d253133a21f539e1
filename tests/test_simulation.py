"""Tests of viscometry.gum.simulation: Monte Carlo simulation of a whole budget (JCGM 101:2008).

The main check is the r⁴ model Y = R⁴ with R normal, N(μ, σ²), where everything is known in
closed form (exact analytic, no source needed beyond the moments of the normal
distribution):

* E[R⁴] = μ⁴ + 6μ²σ² + 3σ⁴, so the Monte Carlo mean lies above the first-order estimate μ⁴
  by the 6μ²σ² term;
* Var[R⁴] = E[R⁸] − E[R⁴]², with E[R⁸] = μ⁸ + 28μ⁶σ² + 210μ⁴σ⁴ + 420μ²σ⁶ + 105σ⁸;
* R⁴ is increasing for R > 0 (P(R ≤ 0) is below 10⁻²⁰ in every case here), so its
  probabilistically symmetric 100p % interval is exactly [(μ − zσ)⁴, (μ + zσ)⁴] with z the
  (1 + p)/2 normal quantile.

The first-order result is y = μ⁴, u = 4μ³σ (JCGM 100:2008, 5.1.2), so the validation
distances d_low, d_high of JCGM 101:2008, 8.2 are known exactly too. All runs are seeded and
use 10⁵ trials; Monte Carlo tolerances are a few standard errors, justified beside each.
"""

from __future__ import annotations

import dataclasses
import json
import math

import numpy as np
import pytest
from scipy import stats

from viscometry.errors import InputError, ModelError
from viscometry.gum import Budget, Correlation, InputQuantity
from viscometry.gum.montecarlo import CHUNK_TRIALS, MAX_TRIALS, numerical_tolerance
from viscometry.gum.simulation import BudgetSimulation, simulate_budget
from viscometry.io.json_out import dumps
from viscometry.text import simulation_lines, validation_statement

M = 100_000
MU = 1.0  # mm
SMALL = 3e-4  # mm: u(y) = 1.2e-3 mm⁴, δ = 5e-5 mm⁴ (about 5 standard errors of a quantile)
LARGE = 0.05  # mm: 5 % relative, where the r⁴ nonlinearity shows


def _r4_budget(sigma: float, *, r_unit: str = "mm", y_unit: str = "mm^4", scale: float = 1.0):
    """Y = R⁴ with R ~ N(MU, sigma²) [mm]; ``scale`` converts the mm values to ``r_unit``."""
    r = InputQuantity.normal("r", MU * scale, sigma * scale, r_unit)
    return Budget.from_formula("y", "r**4", [r], y_unit)


def _exact_moments(mu: float, s: float) -> tuple[float, float]:
    """Exact mean and standard deviation of R⁴ for R ~ N(mu, s²) (normal moments)."""
    m4 = mu**4 + 6 * mu**2 * s**2 + 3 * s**4
    m8 = mu**8 + 28 * mu**6 * s**2 + 210 * mu**4 * s**4 + 420 * mu**2 * s**6 + 105 * s**8
    return m4, math.sqrt(m8 - m4**2)


def _z(p: float) -> float:
    return float(stats.norm.ppf(0.5 * (1.0 + p)))  # exact normal quantile (scipy)


# ------------------------------------------------------------------ the r⁴ case
def test_r4_monte_carlo_mean_follows_the_exact_normal_moment():
    sim = simulate_budget(_r4_budget(LARGE), trials=M, seed=11)
    mean, sd = _exact_moments(MU, LARGE)  # exact analytic: 1.01501875 and 0.20477...
    se = sd / math.sqrt(M)  # 6.5e-4
    assert sim.mc.value == pytest.approx(mean, abs=4 * se)
    # The first-order estimate μ⁴ misses the 6μ²σ² = 0.015 term: about 23 standard errors.
    assert sim.first_order.value == pytest.approx(MU**4, rel=1e-12)
    assert sim.mc.value - sim.first_order.value > 10 * se
    # SE of a sample sd is about sd·√((κ − 1)/(4M)) ≈ 0.25 % here (κ ≈ 3.6): allow 1 %.
    assert sim.mc.standard_uncertainty == pytest.approx(sd, rel=0.01)


def test_r4_symmetric_interval_is_the_mapped_normal_quantiles():
    sim = simulate_budget(_r4_budget(LARGE), trials=M, seed=12)
    z = _z(sim.mc.coverage_probability)
    low, high = (MU - z * LARGE) ** 4, (MU + z * LARGE) ** 4  # exact analytic
    # SE of the 2.3 % / 97.7 % quantiles at M = 10⁵ ≈ 0.009·u ≈ 0.0018: allow ~4.5 SE.
    assert sim.mc.symmetric_interval == pytest.approx((low, high), abs=0.008)
    assert sim.mc.interval == sim.mc.symmetric_interval


def test_r4_first_order_not_validated_at_large_u():
    sim = simulate_budget(_r4_budget(LARGE), trials=M, seed=13)
    fo = sim.first_order
    # First-order: u = 4μ³σ exactly (JCGM 100:2008, 5.1.2), U = k u.
    assert fo.standard_uncertainty == pytest.approx(4 * MU**3 * LARGE, rel=1e-12)
    big_u = fo.expanded_uncertainty
    z = _z(fo.coverage_probability)
    d_low = abs(MU**4 - big_u - (MU - z * LARGE) ** 4)  # exact: ≈ 0.056
    d_high = abs(MU**4 + big_u - (MU + z * LARGE) ** 4)  # exact: ≈ 0.064
    _, sd = _exact_moments(MU, LARGE)
    delta = numerical_tolerance(sd, 2)  # u = 0.20 → δ = 0.005 (JCGM 101:2008, 7.9.2)
    assert delta == pytest.approx(0.005)
    assert min(d_low, d_high) > 10 * delta  # the exact verdict: not validated
    assert sim.validation.tolerance == pytest.approx(delta)
    assert sim.validation.d_low == pytest.approx(d_low, abs=0.008)  # quantile SE as above
    assert sim.validation.d_high == pytest.approx(d_high, abs=0.008)
    assert sim.validated is False
    assert sim.validation.reference == "first-order"
    assert validation_statement(sim.validation, sim.unit).startswith(
        "first-order budget not validated at δ = 0.005 mm⁴"
    )


def test_r4_first_order_validated_at_small_u():
    sim = simulate_budget(_r4_budget(SMALL), trials=M, seed=14)
    big_u = sim.first_order.expanded_uncertainty
    z = _z(sim.first_order.coverage_probability)
    d_low = abs(MU**4 - big_u - (MU - z * SMALL) ** 4)  # exact: ≈ 6(zσ)² = 2.2e-6
    d_high = abs(MU**4 + big_u - (MU + z * SMALL) ** 4)
    _, sd = _exact_moments(MU, SMALL)
    delta = numerical_tolerance(sd, 2)  # u = 0.0012 → δ = 0.00005
    assert delta == pytest.approx(5e-5)
    assert max(d_low, d_high) < delta / 10  # the exact verdict: validated
    # What is left is Monte Carlo noise: SE(quantile) ≈ 0.009·u ≈ 1.1e-5, i.e. δ ≈ 4.6 SE.
    assert sim.validation.tolerance == pytest.approx(delta)
    assert sim.validated is True
    assert validation_statement(sim.validation, sim.unit).startswith(
        "first-order budget validated at δ = 0.00005 mm⁴"
    )


def test_higher_order_reference_is_labelled_and_still_misses_the_mean_shift():
    sim = simulate_budget(_r4_budget(LARGE), trials=M, seed=15, higher_order_reference=True)
    # JCGM 100:2008 eq. (10) for one input: u² = c²σ² + (½f''² + f'f''')σ⁴
    # = 16μ⁶σ² + (72 + 96)μ⁴σ⁴ (exact analytic derivatives of r⁴).
    expected = math.sqrt(16 * MU**6 * LARGE**2 + 168 * MU**4 * LARGE**4)
    assert sim.first_order.propagation == "higher-order"
    assert sim.first_order.standard_uncertainty == pytest.approx(expected, rel=1e-12)
    assert sim.validation.reference == "higher-order"
    assert sim.to_dict()["validation"]["reference"] == "higher-order"
    assert sim.validated is False  # y is still μ⁴, not E[R⁴]
    assert validation_statement(sim.validation).startswith("higher-order budget not validated")
    assert sim.to_dict()["first_order"]["propagation"] == "higher-order"


# ------------------------------------------------------------------ reproducibility
def test_seeded_runs_are_identical_and_seeds_differ():
    b = _r4_budget(LARGE)
    a1 = simulate_budget(b, trials=M, seed=3)
    a2 = simulate_budget(b, trials=M, seed=3)
    other = simulate_budget(b, trials=M, seed=4)
    assert a1.to_dict() == a2.to_dict()
    assert a1.mc == a2.mc
    assert a1.mc.value != other.mc.value
    assert a1.to_dict()["seed"] == 3


def test_generator_instead_of_seed():
    b = _r4_budget(LARGE)
    r1 = simulate_budget(b, trials=M, rng=np.random.default_rng(9))
    r2 = simulate_budget(b, trials=M, rng=np.random.default_rng(9))
    assert r1.mc == r2.mc
    assert r1.mc.seed is None and r1.to_dict()["seed"] is None
    with pytest.raises(InputError, match="rng or seed"):
        simulate_budget(b, trials=M, seed=1, rng=np.random.default_rng(1))


# ------------------------------------------------------------------ units
def test_same_budget_in_mm_and_m_gives_the_same_relative_result():
    in_mm = simulate_budget(_r4_budget(LARGE), trials=M, seed=21)
    in_m = simulate_budget(
        _r4_budget(LARGE, r_unit="m", y_unit="m^4", scale=1e-3), trials=M, seed=21
    )
    # The SI draws are the same numbers (up to the last bit of 10⁻³ scalings), so relative
    # figures agree to rounding error (common practice, no source).
    ref_mm, ref_m = in_mm.first_order.value, in_m.first_order.value
    assert ref_m == pytest.approx(ref_mm * 1e-12, rel=1e-12)
    assert in_m.mc.value / ref_m == pytest.approx(in_mm.mc.value / ref_mm, rel=1e-9)
    assert in_m.mc.standard_uncertainty / ref_m == pytest.approx(
        in_mm.mc.standard_uncertainty / ref_mm, rel=1e-9
    )
    for a, b in zip(in_m.mc.symmetric_interval, in_mm.mc.symmetric_interval, strict=True):
        assert a / ref_m == pytest.approx(b / ref_mm, rel=1e-9)
    assert in_m.validation.tolerance / ref_m == pytest.approx(
        in_mm.validation.tolerance / ref_mm, rel=1e-9
    )
    assert in_m.validated == in_mm.validated


def test_output_is_in_the_measurand_unit():
    # r in mm, y reported in m⁴: every Monte Carlo figure is 10⁻¹² of the mm⁴ one.
    mm4 = simulate_budget(_r4_budget(LARGE), trials=M, seed=22)
    m4 = simulate_budget(_r4_budget(LARGE, y_unit="m^4"), trials=M, seed=22)
    assert m4.mc.value == pytest.approx(mm4.mc.value * 1e-12, rel=1e-12)
    assert m4.mc.histogram_edges[0] == pytest.approx(mm4.mc.histogram_edges[0] * 1e-12, rel=1e-12)
    assert m4.mc.histogram_counts == mm4.mc.histogram_counts
    assert m4.unit == "m^4"


def test_offset_unit_measurand():
    # θ = T with T given in °C and the result in °C: SI inside is kelvin (offset 273.15),
    # the output must come back to °C (exact: a mean of N(20, 0.1²) draws).
    b = Budget.from_formula("theta", "T", [InputQuantity.normal("T", 20.0, 0.1, "degC")], "degC")
    sim = simulate_budget(b, trials=M, seed=23)
    assert sim.mc.value == pytest.approx(20.0, abs=4 * 0.1 / math.sqrt(M))
    assert sim.mc.standard_uncertainty == pytest.approx(0.1, rel=0.01)


# ------------------------------------------------------------------ budget features
def test_correlated_inputs_use_the_budget_correlation():
    # y = a + b, u(a) = u(b) = 1, r = 0.5: u² = 1 + 1 + 2·0.5 = 3 exactly (JCGM 100:2008, 5.2.2).
    b = Budget.from_formula(
        "y",
        "a + b",
        [InputQuantity.normal("a", 0.0, 1.0), InputQuantity.normal("b", 0.0, 1.0)],
        correlations=[Correlation("a", "b", 0.5)],
    )
    sim = simulate_budget(b, trials=M, seed=31)
    # SE(sd) = sd/√(2M) ≈ 0.0039: allow 1 %.
    assert sim.mc.standard_uncertainty == pytest.approx(math.sqrt(3.0), rel=0.01)
    assert sim.first_order.standard_uncertainty == pytest.approx(math.sqrt(3.0), rel=1e-12)


def test_budget_coverage_probability_is_used():
    b = _r4_budget(SMALL).with_settings(coverage_probability=0.99)
    sim = simulate_budget(b, trials=M, seed=32, significant_digits=1)
    assert sim.mc.coverage_probability == 0.99
    assert sim.to_dict()["coverage_probability"] == 0.99


def test_shortest_interval_reported_but_validation_uses_symmetric():
    sim = simulate_budget(_r4_budget(LARGE), trials=M, seed=33, interval="shortest")
    mc = sim.mc
    assert mc.interval_kind == "shortest" and mc.interval == mc.shortest_interval
    assert mc.shortest_interval[1] - mc.shortest_interval[0] <= (
        mc.symmetric_interval[1] - mc.symmetric_interval[0]
    )
    fo = sim.first_order
    assert sim.validation.d_low == pytest.approx(
        abs(fo.value - fo.expanded_uncertainty - mc.symmetric_interval[0]), rel=1e-12
    )
    assert sim.to_dict()["interval"]["kind"] == "shortest"


def test_adaptive_run():
    sim = simulate_budget(_r4_budget(LARGE), adaptive=True, significant_digits=1, seed=34)
    assert sim.mc.converged is True
    assert sim.mc.batches is not None and sim.mc.trials == sim.mc.batches * 10_000
    assert "stabilised" in simulation_lines(sim)[1]
    # JCGM 101:2008, 7.2.2 concerns a fixed M; an adaptive run chooses its own
    assert not any("7.2.2" in w for w in sim.warnings)
    assert sim.to_dict()["adaptive"] is True and sim.to_dict()["converged"] is True
    with pytest.raises(InputError, match="not both"):
        simulate_budget(_r4_budget(LARGE), adaptive=True, trials=M)


def test_progress_callback_counts_trials():
    # one call per chunk of CHUNK_TRIALS = 65 536 trials, in order, whatever the threads
    for jobs in (1, 2):
        calls: list[tuple[int, int]] = []
        simulate_budget(_r4_budget(SMALL), trials=150_000, seed=35, jobs=jobs,
                        progress=lambda d, t, calls=calls: calls.append((d, t)))  # fmt: skip
        assert calls == [(65_536, 150_000), (131_072, 150_000), (150_000, 150_000)]
    calls = []
    sim = simulate_budget(_r4_budget(LARGE), adaptive=True, significant_digits=1, seed=34,
                          jobs=2, progress=lambda d, t: calls.append((d, t)))  # fmt: skip
    assert calls[0] == (CHUNK_TRIALS, MAX_TRIALS) and calls[-1][0] >= sim.mc.trials


def test_a_seeded_simulation_is_the_same_for_any_number_of_threads():
    # This package's own design (module notes of viscometry.gum.montecarlo): chunk k's
    # draws depend only on the seed and k. Three chunks and a partial one.
    b = _r4_budget(LARGE)
    trials = 3 * CHUNK_TRIALS + 17
    fixed = [simulate_budget(b, trials=trials, seed=7, jobs=jobs) for jobs in (1, 2, 3, 4)]
    assert all(s.mc == fixed[0].mc and s.to_dict() == fixed[0].to_dict() for s in fixed)
    assert fixed[0].mc.trials == trials
    assert simulate_budget(b, trials=trials, seed=7).mc == fixed[0].mc  # the default: all cores
    ada = [simulate_budget(b, adaptive=True, significant_digits=1, seed=8, jobs=jobs)
           for jobs in (1, 2, 3)]  # fmt: skip
    assert all(s.mc == ada[0].mc for s in ada) and ada[0].mc.converged


def test_invalid_arguments():
    b = _r4_budget(SMALL)
    with pytest.raises(InputError, match="interval"):
        simulate_budget(b, trials=M, interval="widest")  # type: ignore[arg-type]
    with pytest.raises(InputError, match="budget"):
        simulate_budget("y = r**4", trials=M)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="progress"):
        simulate_budget(b, trials=M, progress=42)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="trials"):
        simulate_budget(b, trials=0)


def test_non_finite_model_values_raise_model_error():
    # sqrt of a normal input with estimate 0.5 and u = 1 is NaN in about 31 % of the trials.
    b = Budget.from_formula("y", "sqrt(x)", [InputQuantity.normal("x", 0.5, 1.0)])
    with pytest.raises(ModelError, match="non-finite"):
        simulate_budget(b, trials=10_000, seed=1)


# ------------------------------------------------------------------ output
def test_to_dict_has_exactly_the_issue_keys():
    sim = simulate_budget(_r4_budget(LARGE), trials=M, seed=41)
    d = sim.to_dict()
    # The keys of the migration guide ("One budget, one path"): the run, the Monte Carlo
    # result, the validation and the first-order result it validated.
    assert list(d) == [
        "trials", "seed", "adaptive", "converged", "value", "standard_uncertainty",
        "coverage_probability", "interval", "validation", "first_order",
    ]  # fmt: skip
    assert list(d["interval"]) == ["low", "high", "kind"]
    assert list(d["validation"]) == [
        "reference", "tolerance", "d_low", "d_high", "validated", "not_applicable",
    ]  # fmt: skip
    assert list(d["first_order"]) == [
        "value", "standard_uncertainty", "coverage_factor", "expanded_uncertainty", "propagation",
    ]  # fmt: skip
    assert d["trials"] == M and d["value"] == sim.mc.value
    assert d["adaptive"] is False and d["converged"] is False
    assert (d["interval"]["low"], d["interval"]["high"]) == sim.mc.interval
    assert d["validation"]["validated"] is False
    assert d["validation"]["not_applicable"] is None
    fo = sim.first_order
    assert d["first_order"] == {
        "value": fo.value,
        "standard_uncertainty": fo.standard_uncertainty,
        "coverage_factor": fo.coverage_factor,
        "expanded_uncertainty": fo.expanded_uncertainty,
        "propagation": "first-order",
    }
    assert json.loads(dumps(d)) == d  # plain JSON types only


def test_result_is_frozen_and_text_is_complete():
    sim = simulate_budget(_r4_budget(SMALL), trials=M, seed=42)
    assert isinstance(sim, BudgetSimulation)
    with pytest.raises(dataclasses.FrozenInstanceError):
        sim.mc = None  # type: ignore[misc]
    lines = simulation_lines(sim)
    # six lines, then one "warning: " line per warning: here M = 10⁵ < 10⁴/(1 − p)
    assert len(lines) == 6 + len(sim.warnings) and len(sim.warnings) == 1
    assert lines[0] == "Monte Carlo method (JCGM 101:2008): 100000 trials, seed 42"
    assert lines[2].startswith("y = ") and "u(y) = 0.0012 mm⁴" in lines[2]
    assert lines[3].startswith("95.45 % coverage interval (probabilistically symmetric): [")
    assert lines[4].startswith("first-order (JCGM 100:2008): y = 1.00000 mm⁴")
    assert lines[5] == validation_statement(sim.validation, sim.unit)
    assert lines[6:] == [f"warning: {w}" for w in sim.warnings]
    for removed in ("statement", "summary_lines", "to_text"):
        assert not hasattr(sim, removed)
    assert "budget=" not in repr(sim)  # the long budget is left out of the repr


def test_no_validation_when_a_t_input_has_infinite_variance():
    # JCGM 101:2008, 6.4.9: the scaled-shifted t with nu <= 2 has no finite variance, so the
    # Monte Carlo u(y), and delta built from it, are undefined (exact analytic property).
    b = Budget.from_formula("y", "t", [InputQuantity.from_readings("t", [10.0, 10.2], "s")], "s")
    sim = simulate_budget(b, trials=20_000, seed=1)
    assert not sim.validated
    assert "ν ≤ 2" in validation_statement(sim.validation, sim.unit)
    assert "no finite variance" in validation_statement(sim.validation)
    assert sim.to_dict()["validation"]["not_applicable"] == sim.validation.not_applicable


def test_no_validation_when_every_input_is_exact():
    b = Budget.from_formula("y", "a * 2", [InputQuantity.normal("a", 1.0, 0.0, "m")], "m")
    sim = simulate_budget(b, trials=1_000, seed=1)
    assert not sim.validated
    assert "nothing to validate" in validation_statement(sim.validation)


# ------------------------------------------------------------------ warnings
def _trials_warning(sim):
    return [w for w in sim.warnings if "JCGM 101:2008, 7.2.2" in w]


def test_too_few_fixed_trials_for_the_coverage_probability_is_flagged():
    # JCGM 101:2008, 7.2.2 (from memory): M should be large compared with 1/(1 − p), at
    # least 10⁴ times; 10⁴/(1 − 0.9545) = 219 780.2 → 219 781 trials (exact arithmetic).
    b = _r4_budget(SMALL)
    sim = simulate_budget(b, trials=M, seed=51)
    (note,) = _trials_warning(sim)
    assert note.startswith(
        "M = 100000 Monte Carlo trials is fewer than 10⁴/(1 − p) = 219781 for p = 95.45 % "
        "(JCGM 101:2008, 7.2.2)"
    )
    assert "adaptive procedure" in note
    assert simulation_lines(sim)[-1] == f"warning: {note}"
    # enough trials: nothing to say
    assert _trials_warning(simulate_budget(b, trials=219_781, seed=51)) == []
    # p = 95 %: 10⁴/0.05 = 200 000 exactly
    b95 = b.with_settings(coverage_probability=0.95)
    assert _trials_warning(simulate_budget(b95, trials=200_000, seed=51)) == []
    (note95,) = _trials_warning(simulate_budget(b95, trials=199_999, seed=51))
    assert "M = 199999" in note95 and "= 200000 for p = 95.00 %" in note95


def test_simulation_warnings_start_with_the_budget_warnings():
    # The budget's own warnings (here u(x) >= |x|: JCGM 101 is the remedy it names) come
    # first, then the run's.
    b = Budget.from_formula("y", "x**2", [InputQuantity.normal("x", 0.5, 0.6, "mm")], "mm^2")
    sim = simulate_budget(b, trials=20_000, seed=52)
    fo_warnings = b.evaluate().warnings
    assert any(w.startswith("u(x) = 0.6 mm is at least |x| = 0.5 mm") for w in fo_warnings)
    assert sim.warnings[: len(fo_warnings)] == fo_warnings
    assert len(_trials_warning(sim)) == 1 and sim.warnings[-1] == _trials_warning(sim)[0]
