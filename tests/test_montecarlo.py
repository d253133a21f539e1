"""Tests of the Monte Carlo core, viscometry.gum.montecarlo (JCGM 101:2008).

All runs are seeded. Tolerances on Monte Carlo estimates are a few standard errors of the
estimate at the number of trials used; each is justified beside the assertion. Check values
come from JCGM 101:2008 (tagged "from memory" as in REFERENCES.md, and then also recomputed
from first principles with scipy) or from exact analytic results.
"""

from __future__ import annotations

import dataclasses
import math
import threading
from math import comb, factorial

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, optimize, stats

from viscometry.errors import CorrelationError, CorrelationWarning, InputError, ModelError
from viscometry.gum import Budget
from viscometry.gum.inputs import InputQuantity
from viscometry.gum.montecarlo import (
    CHUNK_TRIALS,
    MAX_JOBS,
    MonteCarloResult,
    available_cores,
    check_jobs,
    coverage_interval,
    draw_inputs,
    numerical_tolerance,
    run_adaptive,
    run_monte_carlo,
    validate_against,
)
from viscometry.gum.simulation import simulate_budget
from viscometry.text import validation_statement

M = 10**6
Z975 = float(stats.norm.ppf(0.975))  # 1.959964..., exact normal quantile (scipy)


def _sum(*xs):
    return sum(xs)


def _rect(name: str, sd: float) -> InputQuantity:
    """Rectangular input centred on 0 with standard deviation ``sd`` (half-width sd·√3)."""
    return InputQuantity.rectangular(name, 0.0, sd * math.sqrt(3.0))


# ---------------------------------------------------------------- Irwin-Hall recomputation
def _irwin_hall_cdf(x: float, n: int) -> float:
    """CDF of the sum of n independent U(0, 1) (Irwin-Hall; exact closed form)."""
    if x <= 0:
        return 0.0
    if x >= n:
        return 1.0
    return sum((-1) ** k * comb(n, k) * (x - k) ** n for k in range(int(x) + 1)) / factorial(n)


def _irwin_hall_pdf(x: float, n: int) -> float:
    if x <= 0 or x >= n:
        return 0.0
    return sum((-1) ** k * comb(n, k) * (x - k) ** (n - 1) for k in range(int(x) + 1)) / factorial(
        n - 1
    )


def _quantile_four_rectangular_sd1(prob: float) -> float:
    """Quantile of the sum of four rectangulars of sd 1: 2√3·(S − 2), S ~ Irwin-Hall(4)."""
    s = optimize.brentq(lambda x: _irwin_hall_cdf(x, 4) - prob, 0.0, 4.0, xtol=1e-14)
    return 2.0 * math.sqrt(3.0) * (s - 2.0)


def _quantile_three_sd1_one_sd10(prob: float) -> float:
    """Quantile of R₁+R₂+R₃+R₄ (rectangular, sd 1, 1, 1, 10) by numerical convolution."""
    a, big = math.sqrt(3.0), 10.0 * math.sqrt(3.0)

    def pdf3(t: float) -> float:  # sum of three U(−a, a)
        return _irwin_hall_pdf((t + 3 * a) / (2 * a), 3) / (2 * a)

    def cdf(y: float) -> float:
        return integrate.quad(
            lambda t: pdf3(t) * min(1.0, max(0.0, (y - t + big) / (2 * big))),
            -3 * a,
            3 * a,
            points=[-a, a],
            epsabs=1e-13,
            epsrel=1e-13,
        )[0]

    return optimize.brentq(lambda y: cdf(y) - prob, 0.0, big + 3 * a, xtol=1e-12)


# ---------------------------------------------------------------- JCGM 101:2008, 9.2
def test_additive_model_four_normal_inputs():
    # JCGM 101:2008, 9.2.2 [from memory]: u = 2.00, 95 % interval ±3.92.
    # Recomputed: Y ~ N(0, 4) exactly, so u = 2 and y_high = 2·z₀.₉₇₅ = 3.9199.
    xs = [InputQuantity.normal(f"x{i}", 0.0, 1.0) for i in range(4)]
    # JCGM 101 states 95 % intervals; the package default is 95.45 %, so p is given.
    res = run_monte_carlo(_sum, xs, trials=M, seed=20080901, coverage_probability=0.95)
    assert res.coverage_probability == 0.95
    # SE(u) = u/√(2M) = 0.0014; SE(mean) = 0.002; SE(quantile) ≈ 0.0054 → ~4-5 SE allowed.
    assert res.standard_uncertainty == pytest.approx(2.0, abs=0.007)
    assert res.value == pytest.approx(0.0, abs=0.01)
    low, high = res.symmetric_interval
    assert low == pytest.approx(-2 * Z975, abs=0.025)
    assert high == pytest.approx(2 * Z975, abs=0.025)
    # The printed figures of 9.2.2, as a looser second check [from memory].
    assert round(res.standard_uncertainty, 2) == 2.00
    assert round(high, 2) in (3.91, 3.92, 3.93)


def test_additive_model_four_rectangular_inputs_validated():
    # JCGM 101:2008, 9.2.3 [from memory]: first-order ±3.92, Monte Carlo ±3.88, validated at
    # δ = 0.05. Recomputed: the exact 97.5 % quantile of the Irwin-Hall sum is 3.8794.
    exact = _quantile_four_rectangular_sd1(0.975)
    assert exact == pytest.approx(3.88, abs=0.005)
    xs = [_rect(f"x{i}", 1.0) for i in range(4)]
    res = run_monte_carlo(_sum, xs, trials=M, seed=7, coverage_probability=0.95)  # JCGM 101: 95 %
    # SE(quantile) = √(p(1−p)/M)/f(y) ≈ 0.0156/... ≈ 0.005 at M = 10⁶ → 0.02 is 4 SE.
    assert res.symmetric_interval[0] == pytest.approx(-exact, abs=0.02)
    assert res.symmetric_interval[1] == pytest.approx(exact, abs=0.02)
    # δ: u(y) = 2.0 = 20 × 10⁻¹ with n_dig = 2 gives δ = 0.05 (JCGM 101:2008, 7.9.2 and
    # 9.2.3 [from memory]); numerical_tolerance reproduces it, no tolerance is passed in.
    assert numerical_tolerance(res.standard_uncertainty, 2) == pytest.approx(0.05)
    check = validate_against(0.0, 2.0 * Z975, res, significant_digits=2)
    assert check.tolerance == pytest.approx(0.05)
    # Recomputed d = 3.9199 − 3.8794 = 0.0405 ≤ 0.05 (margin 2 SE of the MC quantile).
    assert check.d_low == pytest.approx(2 * Z975 - exact, abs=0.02)
    assert check.d_high == pytest.approx(2 * Z975 - exact, abs=0.02)
    assert check.validated
    assert validation_statement(check).startswith(
        "first-order budget validated at δ = 0.05 (d_low = 0.0"
    )


def test_additive_model_one_dominant_rectangular_not_validated():
    # JCGM 101:2008, 9.2.4 [from memory]: u = 10.15, first-order ±19.9, MC ±17.0, not
    # validated. Recomputed: u = √103 = 10.149; exact 97.5 % quantile by convolution 17.016.
    exact = _quantile_three_sd1_one_sd10(0.975)
    assert exact == pytest.approx(17.0, abs=0.05)
    xs = [_rect("x1", 1.0), _rect("x2", 1.0), _rect("x3", 1.0), _rect("x4", 10.0)]
    res = run_monte_carlo(_sum, xs, trials=M, seed=11, coverage_probability=0.95)  # JCGM 101: 95 %
    # SE(u) ≈ u·√((κ−1)/(4M)) ≈ 0.005 (κ ≈ 1.9); SE(quantile) ≈ 0.006 → ~4 SE allowed.
    assert res.standard_uncertainty == pytest.approx(math.sqrt(103.0), abs=0.02)
    assert round(res.standard_uncertainty, 2) == pytest.approx(10.15, abs=0.01)
    assert res.symmetric_interval[1] == pytest.approx(exact, abs=0.03)
    assert res.symmetric_interval[0] == pytest.approx(-exact, abs=0.03)
    first_order = Z975 * math.sqrt(103.0)  # 19.89 (JCGM 100:2008 law of propagation)
    assert first_order == pytest.approx(19.9, abs=0.05)
    check = validate_against(0.0, first_order, res)
    assert check.tolerance == pytest.approx(0.5)  # u = 10 (2 digits) → δ = ½ × 10⁰
    assert check.d_high == pytest.approx(first_order - exact, abs=0.03)  # ≈ 2.9
    assert not check.validated
    assert "not validated" in validation_statement(check)


# ---------------------------------------------------------------- exact analytic cases
def test_sum_of_two_rectangulars_is_triangular():
    # Exact: R₁ + R₂ with R ~ U(−a, a) is triangular on [−2a, 2a]; its upper tail
    # (2a − y)²/(8a²) = 0.025 gives the symmetric 95 % interval ±2a(1 − √0.05).
    a = 1.5
    xs = [InputQuantity.rectangular("x1", 0.0, a), InputQuantity.rectangular("x2", 0.0, a)]
    res = run_monte_carlo(_sum, xs, trials=M, seed=3, coverage_probability=0.95)
    half = 2 * a * (1 - math.sqrt(0.05))
    # SE(quantile) = √(0.025·0.975/M)/f(y) with f(y) = √0.05/(2a) → 7e-4·2a ≈ 0.002.
    assert res.symmetric_interval[0] == pytest.approx(-half, abs=0.008)
    assert res.symmetric_interval[1] == pytest.approx(half, abs=0.008)
    assert res.standard_uncertainty == pytest.approx(a * math.sqrt(2 / 3), rel=3e-3)  # exact
    # The output is symmetric and unimodal: the shortest interval ≈ the symmetric one.
    assert res.shortest_interval[0] == pytest.approx(res.symmetric_interval[0], abs=0.02)
    assert res.shortest_interval[1] == pytest.approx(res.symmetric_interval[1], abs=0.02)


def test_square_of_a_normal_moments():
    # Exact: X ~ N(μ, σ) → E[X²] = μ² + σ², Var[X²] = 4μ²σ² + 2σ⁴.
    mu, sigma = 1.0, 0.5
    res = run_monte_carlo(lambda x: x**2, [InputQuantity.normal("x", mu, sigma)], trials=M, seed=5)
    mean = mu**2 + sigma**2
    sd = math.sqrt(4 * mu**2 * sigma**2 + 2 * sigma**4)
    assert res.value == pytest.approx(mean, abs=5 * sd / math.sqrt(M))  # 5 SE of the mean
    assert res.standard_uncertainty == pytest.approx(sd, rel=5e-3)  # SE(sd)/sd ≈ 1e-3


# ---------------------------------------------------------------- distributions
def _sd_cases():
    nu = 10.0
    return [
        (InputQuantity.normal("x", 3.0, 0.2), 0.2),
        # JCGM 101:2008, 6.4.9: value + u·t_ν has sd u·√(ν/(ν−2)) (exact).
        (
            InputQuantity("x", 3.0, 0.2, distribution="student_t", dof=nu),
            0.2 * math.sqrt(nu / (nu - 2)),
        ),
        (InputQuantity.rectangular("x", 3.0, 0.5), 0.5 / math.sqrt(3)),  # a/√3 exact
        (InputQuantity.triangular("x", 3.0, 0.5), 0.5 / math.sqrt(6)),  # a/√6 exact
        (InputQuantity.arcsine("x", 3.0, 0.5), 0.5 / math.sqrt(2)),  # a/√2 exact
        (InputQuantity.trapezoidal("x", 3.0, 0.5, beta=0.4), 0.5 * math.sqrt(1.16 / 6)),
        # half_width absent: derived from u (a = u√3, u√6, u√2, u/√((1+β²)/6)).
        (InputQuantity("x", 3.0, 0.2, distribution="rectangular"), 0.2),
        (InputQuantity("x", 3.0, 0.2, distribution="triangular"), 0.2),
        (InputQuantity("x", 3.0, 0.2, distribution="arcsine"), 0.2),
        (InputQuantity("x", 3.0, 0.2, distribution="trapezoidal", beta=0.7), 0.2),
    ]


@pytest.mark.parametrize(("quantity", "expected_sd"), _sd_cases())
def test_each_distribution_has_its_stated_standard_deviation(quantity, expected_sd):
    x = draw_inputs([quantity], None, M, np.random.default_rng(17))[0]
    # SE(sd)/sd = √((κ − 1)/(4M)) ≤ 1.2e-3 for kurtosis κ ≤ 4 (t₁₀); 5e-3 is ≥ 4 SE.
    assert np.std(x, ddof=1) == pytest.approx(expected_sd, rel=5e-3)
    assert np.mean(x) == pytest.approx(3.0, abs=5 * expected_sd / math.sqrt(M))
    if quantity.distribution not in ("normal", "student_t"):
        a = quantity.half_width
        if a is None:  # derived half-width
            a = {
                "rectangular": 0.2 * math.sqrt(3),
                "triangular": 0.2 * math.sqrt(6),
                "arcsine": 0.2 * math.sqrt(2),
                "trapezoidal": 0.2 / math.sqrt((1 + 0.7**2) / 6),
            }[quantity.distribution]
        assert np.all(np.abs(x - 3.0) <= a * (1 + 1e-12))
        assert np.max(np.abs(x - 3.0)) > 0.99 * a  # the support is reached


def test_zero_uncertainty_input_is_constant():
    x = draw_inputs(
        [InputQuantity.normal("a", 2.5, 0.0), InputQuantity.rectangular("b", 1.0, 0.0)],
        None,
        1000,
        np.random.default_rng(0),
    )
    assert np.all(x[0] == 2.5) and np.all(x[1] == 1.0)


# ---------------------------------------------------------------- numerical tolerance
@pytest.mark.parametrize(
    ("u", "n_dig", "delta"),
    [
        (0.02857, 2, 0.0005),  # JCGM 101:2008, 7.9.2 [from memory; recomputed]: 29 × 10⁻³
        (2.0, 2, 0.05),  # 20 × 10⁻¹ (JCGM 101:2008, 9.2.3 [from memory])
        (10.149, 2, 0.5),  # 10 × 10⁰
        (2.0, 1, 0.5),  # 2 × 10⁰ (from the 7.9.2 definition)
        (0.0999, 2, 0.005),  # rounds to 0.10 = 10 × 10⁻² (from the definition)
        (1234.5, 3, 5.0),  # 123 × 10¹
    ],
)
def test_numerical_tolerance(u, n_dig, delta):
    assert numerical_tolerance(u, n_dig) == pytest.approx(delta, rel=1e-12)


@settings(max_examples=200, deadline=None, derandomize=True)
@given(
    u=st.floats(min_value=1e-12, max_value=1e12, allow_nan=False),
    n_dig=st.integers(min_value=1, max_value=4),
)
def test_numerical_tolerance_definition(u, n_dig):
    # From the definition (JCGM 101:2008, 7.9.2): u ≈ c × 10^ℓ with c an n_dig-digit integer.
    delta = numerical_tolerance(u, n_dig)
    scale = 2.0 * delta  # 10^ℓ
    c = round(u / scale)
    assert 10 ** (n_dig - 1) <= c <= 10**n_dig - 1 or c == 10**n_dig  # c = 10^n only at a tie
    assert abs(u - c * scale) <= delta * (1 + 1e-9)


def test_numerical_tolerance_rejects_bad_input():
    with pytest.raises(InputError, match="standard_uncertainty"):
        numerical_tolerance(-1.0)
    with pytest.raises(InputError, match="significant_digits"):
        numerical_tolerance(1.0, 0)
    assert numerical_tolerance(0.0) == 0.0


# ---------------------------------------------------------------- coverage intervals
def test_coverage_interval_index_rules():
    # JCGM 101:2008, 7.7 [from memory]: q = ⌊pM + ½⌋, r = (M − q)/2 or ⌊(M − q + 1)/2⌋;
    # interval [y_(r), y_(r+q)] (1-based order statistics).
    y = np.arange(1.0, 101.0)  # M = 100: q = 95, r = 3 → [3, 98]
    assert coverage_interval(y, 0.95) == (3.0, 98.0)
    y = np.arange(1.0, 102.0)  # M = 101: q = 96, M − q = 5, r = 3 → [3, 99]
    assert coverage_interval(y, 0.95) == (3.0, 99.0)
    y = np.arange(1.0, 11.0)  # M = 10, p = 0.5: q = 5, r = 3 → [3, 8]
    assert coverage_interval(y, 0.5) == (3.0, 8.0)
    # Shortest: the densest stretch of q + 1 values (here 4 of 6, p·M = 3).
    y = [0.0, 1.0, 1.1, 1.2, 1.3, 9.0]
    assert coverage_interval(y, 0.5, "shortest") == (1.0, 1.3)


def test_coverage_interval_rejects_bad_input():
    with pytest.raises(InputError, match="kind"):
        coverage_interval([1.0, 2.0, 3.0], 0.5, "central")
    with pytest.raises(InputError, match="sorted"):
        coverage_interval([3.0, 1.0, 2.0], 0.5)
    with pytest.raises(InputError, match="p must lie strictly between 0 and 1"):
        coverage_interval([1.0, 2.0, 3.0], 1.0)
    with pytest.raises(InputError, match="too few"):
        coverage_interval([1.0, 2.0], 0.95)


def test_shortest_interval_of_a_lognormal_output():
    # Y = exp(X), X ~ N(0, 0.5): lognormal, right-skewed. Exact shortest 95 % interval:
    # minimise F⁻¹(α + p) − F⁻¹(α) over α (scipy), recomputed independently.
    sigma = 0.5
    res = run_monte_carlo(
        np.exp, [InputQuantity.normal("x", 0.0, sigma)], trials=M, seed=9, coverage_probability=0.95
    )
    dist = stats.lognorm(s=sigma)
    opt = optimize.minimize_scalar(
        lambda al: dist.ppf(al + 0.95) - dist.ppf(al), bounds=(1e-9, 0.05 - 1e-9), method="bounded"
    )
    lo, hi = dist.ppf(opt.x), dist.ppf(opt.x + 0.95)
    sym_w = res.symmetric_interval[1] - res.symmetric_interval[0]
    short_w = res.shortest_interval[1] - res.shortest_interval[0]
    assert short_w < sym_w
    assert sym_w == pytest.approx(dist.ppf(0.975) - dist.ppf(0.025), rel=5e-3)  # exact
    # The shortest interval's ends are flat functions of α: ~4 SE of a quantile at 10⁶.
    assert res.shortest_interval[0] == pytest.approx(lo, abs=0.01)
    assert res.shortest_interval[1] == pytest.approx(hi, abs=0.02)
    assert short_w == pytest.approx(hi - lo, rel=5e-3)


# ---------------------------------------------------------------- determinism
def _demo_inputs():
    return [
        InputQuantity.normal("a", 1.0, 0.1),
        InputQuantity("b", 2.0, 0.05, distribution="student_t", dof=4),
        InputQuantity.rectangular("c", 0.5, 0.2),
        InputQuantity.arcsine("d", 0.0, 0.1),
    ]


def _demo_model(a, b, c, d):
    return a * b + c**2 - d


def test_same_seed_is_bit_identical_and_other_seed_differs():
    xs = _demo_inputs()
    r1 = run_monte_carlo(_demo_model, xs, trials=50_000, seed=42)
    r2 = run_monte_carlo(_demo_model, xs, trials=50_000, seed=42)
    r3 = run_monte_carlo(_demo_model, xs, trials=50_000, seed=43)
    assert r1 == r2  # every field, bit for bit
    assert r1.seed == 42
    assert r3.value != r1.value and r3.interval != r1.interval
    d1 = draw_inputs(xs, None, 1000, np.random.default_rng(8))
    d2 = draw_inputs(xs, None, 1000, np.random.default_rng(8))
    assert np.array_equal(d1, d2)
    # With a generator passed in, the seed is not known and is recorded as None.
    assert run_monte_carlo(_demo_model, xs, trials=1000, rng=np.random.default_rng(1)).seed is None


# Three whole chunks and a partial one, so that the last chunk's draws are cut.
M_CHUNKS = 3 * CHUNK_TRIALS + 17


def _demo_correlation():
    corr = np.eye(4)
    corr[0, 1] = corr[1, 0] = 0.5
    return corr


@pytest.mark.parametrize("p", [0.9545, 0.5])  # tails sorted in pieces; one sort (big tails)
def test_seeded_result_is_bit_identical_for_any_number_of_threads(p):
    # The stream layout of the module notes: chunk k's draws depend only on the seed and k,
    # and every summary is an order statistic or a sum in trial order, so the number of
    # threads cannot change a bit of the result (this package's own design, no source).
    xs = _demo_inputs()
    results = []
    for jobs in (1, 2, 3, 4):
        # input b is t-distributed: in the correlated block it is drawn as a normal, said so
        with pytest.warns(CorrelationWarning, match=r"b \(student_t\)"):
            res = run_monte_carlo(
                _demo_model, xs, correlation=_demo_correlation(), trials=M_CHUNKS, seed=4,
                coverage_probability=p, jobs=jobs,
            )  # fmt: skip
        results.append(res)
    assert all(r == results[0] for r in results[1:])  # every field, bit for bit
    assert all(r.trials == M_CHUNKS and sum(r.histogram_counts) == M_CHUNKS for r in results)


def test_summary_from_pieces_is_that_of_one_sorted_sample():
    # With several threads the values are sorted in pieces and the intervals found from
    # them; recomputed here from the same draws with one np.sort and the index rules of
    # JCGM 101:2008, 7.7 (as in test_coverage_interval_index_rules), exactly.
    xs = _demo_inputs()
    res = run_monte_carlo(_demo_model, xs, trials=M_CHUNKS, seed=6, jobs=3)
    y = np.sort(_demo_model(*draw_inputs(xs, None, M_CHUNKS, seed=6)))
    p = res.coverage_probability
    q = math.floor(p * M_CHUNKS + 0.5)
    r = (M_CHUNKS - q + 1) // 2
    assert res.symmetric_interval == (y[r - 1], y[r + q - 1])
    j = int(np.argmin(y[q:] - y[: M_CHUNKS - q]))
    assert res.shortest_interval == (y[j], y[j + q])
    assert res.histogram_edges[0] == y[0] and res.histogram_edges[-1] == y[-1]
    counts, _ = np.histogram(y, bins=np.array(res.histogram_edges))
    assert res.histogram_counts == tuple(int(c) for c in counts)
    # mean and sd: the same values summed in another order agree to rounding (exact analytic)
    assert res.value == pytest.approx(float(np.mean(y)), rel=1e-13)
    assert res.standard_uncertainty == pytest.approx(float(np.std(y, ddof=1)), rel=1e-12)


@pytest.mark.parametrize("model", [np.round, lambda x: np.round(x) * 0.0, lambda x: x * 0.0])
def test_ties_and_signed_zeros_give_the_same_result_for_any_number_of_threads(model):
    # Model values with many ties at the interval ends, zeros of both signs (np.round of
    # small negatives is −0.0) and a constant output: order statistics are values, so the
    # result is that of one np.sort of the same values (JCGM 101:2008, 7.7 rules), with a
    # zero reported as 0.0 whichever sign came first (this package's own rule).
    xs = [InputQuantity.normal("x", 0.0, 1.0)]
    runs = [run_monte_carlo(model, xs, trials=M_CHUNKS, seed=12, jobs=j) for j in (1, 2, 3, 4)]
    assert all(r == runs[0] for r in runs[1:])
    assert all(repr(r.interval) == repr(runs[0].interval) for r in runs)  # signs of zeros too
    y = np.sort(model(draw_inputs(xs, None, M_CHUNKS, seed=12)[0]))
    q = math.floor(runs[0].coverage_probability * M_CHUNKS + 0.5)
    r = (M_CHUNKS - q + 1) // 2
    assert runs[0].symmetric_interval == (y[r - 1], y[r + q - 1])
    j = int(np.argmin(y[q:] - y[: M_CHUNKS - q]))
    assert runs[0].shortest_interval == (y[j], y[j + q])
    assert sum(runs[0].histogram_counts) == M_CHUNKS


def test_stream_layout_is_as_documented():
    # Module notes: chunk k of a run with seed s draws from PCG64 seeded by the k-th child
    # of SeedSequence(s); each uncorrelated input draws the whole chunk in turn (this
    # package's own layout, recomputed with numpy alone).
    xs = [InputQuantity.normal("a", 1.0, 0.5), InputQuantity.rectangular("b", 0.0, 2.0)]
    x = draw_inputs(xs, None, CHUNK_TRIALS + 5, seed=21)
    children = np.random.SeedSequence(21).spawn(2)
    for k, start in ((0, 0), (1, CHUNK_TRIALS)):
        stream = np.random.Generator(np.random.PCG64(children[k]))
        a = stream.standard_normal(CHUNK_TRIALS) * 0.5 + 1.0
        b = (stream.random(CHUNK_TRIALS) - 0.5) * 4.0 + 0.0
        n = min(CHUNK_TRIALS, x.shape[1] - start)
        assert np.array_equal(x[0, start : start + n], a[:n])
        assert np.array_equal(x[1, start : start + n], b[:n])


def test_a_trial_depends_on_the_seed_and_its_index_only():
    # Every chunk is drawn in full, so fewer trials are the first trials of more.
    xs = _demo_inputs()
    short = draw_inputs(xs, None, CHUNK_TRIALS + 3, seed=8)
    long = draw_inputs(xs, None, 2 * CHUNK_TRIALS + 1, seed=8)
    assert np.array_equal(short, long[:, : CHUNK_TRIALS + 3])
    # a generator passed in seeds the root from four of its integers: same state, same draws
    assert np.array_equal(
        draw_inputs(xs, None, 100, np.random.default_rng(3)),
        draw_inputs(xs, None, 100, np.random.default_rng(3)),
    )


def test_the_number_of_threads_never_changes_the_number_of_trials():
    xs = _demo_inputs()
    for jobs in (1, 2, 5):
        calls: list[tuple[int, int]] = []
        res = run_monte_carlo(_demo_model, xs, trials=M_CHUNKS, seed=1, jobs=jobs,
                              progress=lambda d, t, calls=calls: calls.append((d, t)))  # fmt: skip
        assert res.trials == M_CHUNKS and sum(res.histogram_counts) == M_CHUNKS
        # one call per chunk, in order, from the calling thread
        assert calls == [(CHUNK_TRIALS * k, M_CHUNKS) for k in (1, 2, 3)] + [(M_CHUNKS, M_CHUNKS)]


def test_jobs_is_checked():
    xs = [InputQuantity.normal("x", 0.0, 1.0)]
    # this package's own wording (no external source)
    for bad in (0, -2, 1.5, True, "2"):
        with pytest.raises(InputError, match="jobs must be a whole number of at least 1, got"):
            run_monte_carlo(lambda x: x, xs, trials=1000, seed=1, jobs=bad)
    with pytest.raises(InputError, match="jobs must be a whole number of at least 1, got 0"):
        run_adaptive(lambda x: x, xs, seed=1, jobs=0)
    with pytest.raises(InputError, match="jobs must be a whole number of at least 1, got 0"):
        simulate_budget(Budget.from_formula("y", "x", xs), trials=1000, jobs=0)
    assert check_jobs(None) == available_cores() >= 1
    assert check_jobs(10**6) == MAX_JOBS  # capped: more threads than that only cost memory
    # more threads than chunks: as many as there are chunks work, the result is the same
    assert run_monte_carlo(lambda x: x, xs, trials=1000, seed=1, jobs=MAX_JOBS) == run_monte_carlo(
        lambda x: x, xs, trials=1000, seed=1
    )


def test_failures_in_threads_are_the_same_as_without_threads():
    xs = [InputQuantity.normal("x", 0.0, 1.0)]

    def fails_on_the_last_chunk(x):
        if x.size < CHUNK_TRIALS:  # only the partial chunk at the end of the run
            raise ValueError("not this one")
        return x

    messages = []
    for jobs in (1, 3):
        with pytest.raises(ModelError) as info:
            run_monte_carlo(lambda x: np.where(x > 1.5, np.nan, x), xs, trials=M_CHUNKS,
                            seed=2, jobs=jobs)  # fmt: skip
        messages.append(str(info.value))
        with pytest.raises(ModelError, match="failed on a chunk of trials: not this one"):
            run_monte_carlo(fails_on_the_last_chunk, xs, trials=M_CHUNKS, seed=2, jobs=jobs)
    assert messages[0] == messages[1]  # same count, same example (the first in trial order)
    before = threading.active_count()

    def stop(done, total):
        if done > CHUNK_TRIALS:
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        run_monte_carlo(_demo_model, _demo_inputs(), trials=M_CHUNKS, seed=2, jobs=3,
                        progress=stop)  # fmt: skip
    assert threading.active_count() == before  # no thread outlives the run


# ---------------------------------------------------------------- adaptive procedure
def test_adaptive_run_stops_with_stable_u():
    # u(y) = √(0.6² + 0.75²) = 0.9605 exactly; at n_dig = 2, δ = 0.005 (96 × 10⁻²).
    xs = [InputQuantity.normal("a", 5.0, 0.6), _rect("b", 0.75)]
    rounded = set()
    for seed in (1, 2, 3):
        res = run_adaptive(_sum, xs, seed=seed)
        assert res.converged and res.batches is not None and res.batches >= 2
        assert res.trials == res.batches * 10_000  # M = max(⌈100/0.05⌉, 10⁴) = 10⁴
        assert "stabilised" in res.note
        rounded.add(round(res.standard_uncertainty, 2))
    assert rounded == {0.96}


def test_adaptive_run_is_the_same_for_any_number_of_threads():
    # With threads, chunks are drawn ahead of the batch being checked and the surplus is
    # dropped; the batches are those of a fixed run (module notes; this package's design).
    xs = [InputQuantity.normal("a", 5.0, 0.6), _rect("b", 0.75)]
    runs = [run_adaptive(_sum, xs, seed=2, jobs=jobs) for jobs in (1, 2, 3, 4)]
    assert all(r == runs[0] for r in runs[1:])
    res = runs[0]
    assert res.converged and res.trials == res.batches * 10_000
    fixed = run_monte_carlo(_sum, xs, trials=res.trials, seed=2, jobs=2)
    assert (fixed.value, fixed.standard_uncertainty) == (res.value, res.standard_uncertainty)
    assert fixed.symmetric_interval == res.symmetric_interval
    assert fixed.histogram_counts == res.histogram_counts
    # a model failing in a later batch is named with its batch and the count of that batch,
    # whatever the threads: NaN above the largest value of batch 1 (from the same draws)
    y = _sum(*draw_inputs(xs, None, 20_000, seed=2))
    top = float(y[:10_000].max())
    expected = int(np.sum(y[10_000:] > top))
    assert expected >= 1
    messages = set()
    for jobs in (1, 3):
        with pytest.raises(ModelError, match=rf"in {expected} of 10000 trials, e\.g\. a=") as info:
            run_adaptive(lambda a, b: np.where(a + b > top, np.nan, a + b), xs, seed=2,
                         jobs=jobs, max_trials=30_000)  # fmt: skip
        messages.add(str(info.value))
    assert len(messages) == 1 and messages.pop().endswith("(batch 2)")


def test_adaptive_run_reports_non_convergence():
    xs = [InputQuantity.normal("a", 5.0, 0.6), _rect("b", 0.75)]
    res = run_adaptive(_sum, xs, seed=1, max_trials=30_000, interval="shortest")
    assert not res.converged
    assert res.batches == 3 and res.trials == 30_000
    assert "max_trials = 30000" in res.note and "not stabilised" in res.note
    assert res.interval_kind == "shortest" and res.interval == res.shortest_interval
    with pytest.raises(InputError, match="max_trials"):
        run_adaptive(_sum, xs, seed=1, max_trials=5000)


# ---------------------------------------------------------------- correlation
def test_correlated_inputs_reproduce_r():
    r = 0.7
    xs = [InputQuantity.normal("a", 1.0, 2.0), InputQuantity.normal("b", -1.0, 0.5)]
    x = draw_inputs(xs, [[1.0, r], [r, 1.0]], M, np.random.default_rng(12))
    # SE of a sample correlation ≈ (1 − r²)/√N = 5.1e-4 → 4 SE = 0.002.
    assert np.corrcoef(x)[0, 1] == pytest.approx(r, abs=4 * (1 - r**2) / math.sqrt(M))
    assert np.std(x[0], ddof=1) == pytest.approx(2.0, rel=4e-3)
    assert np.std(x[1], ddof=1) == pytest.approx(0.5, rel=4e-3)


@pytest.mark.parametrize("r", [1.0, -1.0])
def test_fully_correlated_inputs_positive_semidefinite(r):
    xs = [
        InputQuantity.normal("a", 0.0, 1.0),
        InputQuantity("b", 0.0, 3.0, distribution="student_t", dof=8),
        InputQuantity.normal("c", 0.0, 1.0),
    ]
    corr = [[1.0, r, 0.0], [r, 1.0, 0.0], [0.0, 0.0, 1.0]]
    with pytest.warns(CorrelationWarning, match=r"b \(student_t\)"):
        x = draw_inputs(xs, corr, 100_000, np.random.default_rng(6))
    # Exact: with |r| = 1, b = r·(u_b/u_a)·a for every draw (up to rounding).
    np.testing.assert_allclose(x[1], r * 3.0 * x[0], atol=1e-12)
    assert abs(np.corrcoef(x[0], x[2])[0, 1]) < 0.02  # independent: 6 SE at N = 10⁵


def test_correlated_non_normal_input_warns_and_invalid_matrices_raise():
    xs = [_rect("a", 1.0), InputQuantity.normal("b", 0.0, 1.0)]
    with pytest.warns(CorrelationWarning, match="a \\(rectangular\\)"):
        draw_inputs(xs, [[1.0, 0.3], [0.3, 1.0]], 10, np.random.default_rng(0))
    three = [InputQuantity.normal(n, 0.0, 1.0) for n in "abc"]
    not_psd = [[1.0, 0.9, 0.9], [0.9, 1.0, -0.9], [0.9, -0.9, 1.0]]
    with pytest.raises(CorrelationError, match="positive semidefinite"):
        draw_inputs(three, not_psd, 10, np.random.default_rng(0))
    with pytest.raises(CorrelationError, match="symmetric"):
        draw_inputs(xs, [[1.0, 0.3], [0.2, 1.0]], 10, np.random.default_rng(0))
    with pytest.raises(InputError, match="3×3 matrix for 3 inputs, got shape \\(2, 2\\)"):
        run_monte_carlo(_sum, three, correlation=np.eye(2), trials=100)


# ---------------------------------------------------------------- models and checks
def test_non_finite_model_values_raise_with_count_and_example():
    xs = [InputQuantity.normal("x", 0.0, 1.0)]
    # Independent count from the same draws (draw_inputs with the run's seed).
    expected = int(np.sum(draw_inputs(xs, None, 20_000, seed=21)[0] > 1.5))
    with pytest.raises(ModelError, match=f"in {expected} of 20000 trials, e.g. x="):
        run_monte_carlo(lambda x: np.where(x > 1.5, np.nan, x), xs, trials=20_000, seed=21)
    with pytest.raises(ModelError, match="non-finite"):
        run_monte_carlo(lambda x: 1.0 / (x - x), xs, trials=1000, seed=1)  # no numpy warning


def test_scalar_model_is_broadcast_and_result_is_frozen():
    res = run_monte_carlo(lambda x: 3.0, [InputQuantity.normal("x", 0.0, 1.0)], trials=1000, seed=1)
    assert isinstance(res, MonteCarloResult)
    assert res.value == 3.0 and res.standard_uncertainty == 0.0
    assert res.symmetric_interval == (3.0, 3.0) == res.shortest_interval
    assert sum(res.histogram_counts) == 1000
    assert len(res.histogram_edges) == len(res.histogram_counts) + 1
    assert res.batches is None and not res.converged and "fixed number" in res.note
    with pytest.raises(dataclasses.FrozenInstanceError):
        res.value = 1.0  # type: ignore[misc]
    with pytest.raises(ModelError, match="shape"):
        run_monte_carlo(lambda x: np.ones(3), [InputQuantity.normal("x", 0.0, 1.0)], trials=100)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"trials": 0}, "trials must be at least 1, got 0"),
        ({"coverage_probability": 1.5}, "coverage_probability must lie strictly .* got 1.5"),
        ({"jobs": 0}, "jobs must be a whole number of at least 1, got 0"),
        ({"progress": 3}, "progress must be a callable"),
        ({"histogram_bins": 2.5}, "histogram_bins must be an integer, got 2.5"),
        ({"trials": 10}, "trials = 10 is too few"),
        ({"seed": 1, "rng": np.random.default_rng(1)}, "rng or seed"),
        ({"rng": 5}, "rng must be a numpy.random.Generator, got 5"),
    ],
)
def test_run_monte_carlo_input_checks(kwargs, match):
    with pytest.raises(InputError, match=match):
        run_monte_carlo(lambda x: x, [InputQuantity.normal("x", 0.0, 1.0)], **kwargs)


def test_adaptive_rejects_unknown_interval_kind():
    with pytest.raises(InputError, match="interval must be 'symmetric' or 'shortest', got 'wide'"):
        run_adaptive(lambda x: x, [InputQuantity.normal("x", 0.0, 1.0)], interval="wide")


# ---------------------------------------------------------------- default coverage probability
def test_default_coverage_probability_is_95_45_percent_for_every_run():
    # The package's one default p = 0.9545 (k = 2 for a normal; JCGM 100:2008, 6.3.3), also
    # for Monte Carlo. Y = X₁+…+X₄ with N(0, 1) inputs is N(0, 4) exactly (exact analytic),
    # so the default interval is ±2·z₀.₉₇₇₂₅ = ±3.99996, not the ±3.92 of a 95 % run.
    xs = [InputQuantity.normal(f"x{i}", 0.0, 1.0) for i in range(4)]
    half = 2.0 * float(stats.norm.ppf(0.5 * (1 + 0.9545)))
    assert half == pytest.approx(4.0, abs=1e-3)
    res = run_monte_carlo(_sum, xs, trials=M, seed=20080901)
    assert res.coverage_probability == 0.9545
    # SE of a 97.7 % quantile of N(0, 4) at M = 10⁶ ≈ 0.0057 → 0.025 is ~4 SE.
    assert res.symmetric_interval[0] == pytest.approx(-half, abs=0.025)
    assert res.symmetric_interval[1] == pytest.approx(half, abs=0.025)
    ada = run_adaptive(_sum, xs, seed=1)
    assert ada.coverage_probability == 0.9545
    # δ for u = 2.0 at n_dig = 2 is 0.05 (JCGM 101:2008, 7.9.2); an adaptive run's interval
    # ends are stable to about δ.
    assert ada.symmetric_interval[1] == pytest.approx(half, abs=0.1)
