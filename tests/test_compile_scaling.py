"""Large flat models: parser limits that count real nesting, derivatives that scale.

* A sum or product of 1000 inputs parses (a chain of one operator family is one level of
  nesting) and evaluates to the exact analytic uncertainty.
* The compiled gradient (reverse-mode program, :mod:`viscometry.gum.program`) agrees with
  sympy's lambdified derivatives, and the exact symbolic derivatives
  (:func:`~viscometry.gum.model.symbolic_derivative`) equal :func:`sympy.diff`'s on every
  example budget and on random product/ratio/sum models.

Nothing here is timed (the speed goals are in ``benchmarks/bench_compile.py``).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

from viscometry.errors import FormulaError, ViscometryError
from viscometry.gum import Budget, InputQuantity
from viscometry.gum.formula import MAX_DEPTH, parse_formula
from viscometry.gum.model import CompiledModel, MeasurementModel, symbolic_derivative
from viscometry.gum.program import Program, ProgramError
from viscometry.io import load_budget

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
N = 1000


def _inputs(values, uncertainties):
    return [
        InputQuantity.normal(f"x{i}", v, u)
        for i, (v, u) in enumerate(zip(values, uncertainties, strict=True))
    ]


# ----------------------------------------------------------------------------- parser
def test_flat_sum_of_1000_inputs_gives_the_exact_analytic_uncertainty():
    # exact analytic: y = Σxᵢ, cᵢ = 1, so y = Σxᵢ and u_c = √(Σu(xᵢ)²) (JCGM 100:2008, 5.1.2).
    x = [1.0 + i / N for i in range(N)]
    u = [0.001 * (1 + i % 7) for i in range(N)]
    formula = " + ".join(f"x{i}" for i in range(N))
    result = Budget.from_formula("y", formula, _inputs(x, u)).evaluate()
    assert result.value == pytest.approx(math.fsum(x), rel=1e-14)
    assert result.standard_uncertainty == pytest.approx(
        math.sqrt(math.fsum(v * v for v in u)), rel=1e-13
    )
    assert all(c.sensitivity == 1.0 for c in result.contributions)


def test_flat_ratio_of_1000_inputs_gives_the_exact_analytic_uncertainty():
    # exact analytic: y = Πxᵢ(i<500) / Πxᵢ(i≥500), so cᵢ = ±y/xᵢ and
    # (u_c/y)² = Σ(u(xᵢ)/xᵢ)² (JCGM 100:2008, 5.1.6, exponents ±1).
    x = [1.0 + (i % 11) / 100 for i in range(N)]
    u = [0.0005 * (1 + i % 5) for i in range(N)]
    top = " * ".join(f"x{i}" for i in range(N // 2))
    bottom = " * ".join(f"x{i}" for i in range(N // 2, N))
    result = Budget.from_formula("y", f"{top} / ({bottom})", _inputs(x, u)).evaluate()
    y = math.prod(x[: N // 2]) / math.prod(x[N // 2 :])
    assert result.value == pytest.approx(y, rel=1e-12)
    rel = math.sqrt(math.fsum((ui / xi) ** 2 for ui, xi in zip(u, x, strict=True)))
    assert result.standard_uncertainty == pytest.approx(abs(y) * rel, rel=1e-12)
    for i in (0, 499, 500, 999):
        c = result.contributions[i]
        assert c.sensitivity == pytest.approx((1 if i < 500 else -1) * y / x[i], rel=1e-12)


def test_flat_chains_are_one_level_but_real_nesting_is_counted():
    names = [f"x{i}" for i in range(60)]
    # 60 terms of a sum, a product and a mixed chain: one level each
    for op in (" + ", " - ", " * ", " / "):
        assert isinstance(parse_formula(op.join(names), names), sp.Expr)
    mixed = " + ".join(
        f"{a} * {b} / {c}" for a, b, c in zip(names, names[1:], names[2:], strict=False)
    )
    assert isinstance(parse_formula(mixed, names), sp.Expr)
    # nesting: signs, powers and calls inside one another still count, one level each
    # (this package's own wording, no external source)
    with pytest.raises(FormulaError, match=f"nesting deeper than {MAX_DEPTH} levels"):
        parse_formula("-" * (MAX_DEPTH + 2) + "x0", names)
    with pytest.raises(FormulaError, match=f"nesting deeper than {MAX_DEPTH} levels"):
        parse_formula("x0" + "**x1" * (MAX_DEPTH + 2), names)
    with pytest.raises(FormulaError, match="parentheses nested 41 deep; the limit is 40"):
        parse_formula("exp(" * 41 + "x0" + ")" * 41, names)


def test_short_chains_parse_to_the_same_expression_as_before():
    # Chains of up to 40 operators are built operator by operator, as when every operator
    # counted as a level (so fingerprints do not move); sympy distributes 2*(x+y) there.
    x, y, z = sp.symbols("x y z", real=True)
    assert parse_formula("2*(x+y)*z", ["x", "y", "z"]) == (2 * (x + y)) * z
    assert parse_formula("x - y + z - 3", ["x", "y", "z"]) == ((x - y) + z) - 3


def test_a_flat_chain_with_a_zero_divisor_is_refused():
    names = [f"x{i}" for i in range(60)]
    text = " / ".join(names) + " / (x0 - x0)"
    with pytest.raises(FormulaError, match="undefined or infinite"):
        parse_formula(text, names)


# ----------------------------------------------------------------------------- derivatives
def _example_budgets():
    out = []
    for path in sorted(EXAMPLES.rglob("*.toml")):
        try:
            out.append(pytest.param(load_budget(path).budget, id=path.stem))
        except ViscometryError:  # candidates and chain files are not budgets
            continue
    return out


def _check_against_sympy(model: MeasurementModel, point: list[float], same=False) -> None:
    compiled = CompiledModel(model)
    syms = [model.symbol(n) for n in model.input_names + model.constant_names]
    reference = [sp.diff(model.expression, model.symbol(n)) for n in model.input_names]
    for i, d in enumerate(reference):
        mine = compiled.derivative(i)
        assert mine == d or (not same and sp.simplify(mine - d) == 0), model.input_names[i]
    lam = sp.lambdify(syms, [model.expression, *reference], modules="numpy")
    expected = np.array(lam(*point), dtype=float)
    got = np.array([float(compiled.value(*point)), *compiled.gradient(*point)])
    scale = np.abs(expected[1:]) * np.abs(point[: len(reference)])  # |cᵢ·xᵢ|
    np.testing.assert_allclose(got[0], expected[0], rtol=1e-13)
    np.testing.assert_allclose(got[1:] * np.abs(point[: len(reference)]), scale * np.sign(
        expected[1:]), rtol=1e-12, atol=1e-14 * (np.max(scale) + abs(expected[0])))  # fmt: skip


@pytest.mark.parametrize("budget", _example_budgets())
def test_derivatives_equal_sympys_on_every_example(budget):
    # Regression against the previous method (sympy.diff, lambdified): the same expressions,
    # the same numbers to rounding (common practice, no source).
    x, _u, _nu, c = budget.si_arrays()
    _check_against_sympy(budget.model, [*map(float, x), *map(float, c)], same=True)


def test_derivatives_of_a_model_with_reference_data_functions():
    model = MeasurementModel.from_formula(
        "C * t * water_viscosity(T) / water_density(T)", ["C", "t", "T"]
    )
    _check_against_sympy(model, [1e-8, 300.0, 293.15], same=True)


FACTOR = st.tuples(st.integers(0, 4), st.sampled_from([1, 2, -1, -2, 3, 0.5, -0.5]))
FUNCS = st.sampled_from(["", "exp", "log", "sqrt", "sin", "cos", "atan"])


@st.composite
def models(draw):
    """A random sum of products/ratios of powers of five inputs, some inside functions."""
    terms = []
    for _ in range(draw(st.integers(1, 4))):
        factors = draw(st.lists(FACTOR, min_size=1, max_size=5))
        body = " * ".join(f"x{i}**({p})" for i, p in factors)
        func = draw(FUNCS)
        coeff = draw(st.sampled_from(["", "2 * ", "-3 * ", "0.25 * "]))
        terms.append(f"{coeff}{func}({body})" if func else f"{coeff}{body}")
    return " + ".join(terms)


@settings(max_examples=40, deadline=None, derandomize=True)
@given(models())
def test_derivatives_equal_sympys_on_random_models(formula):
    names = [f"x{i}" for i in range(5)]
    model = MeasurementModel.from_formula(formula, names)
    _check_against_sympy(model, [0.7, 1.3, 0.4, 2.2, 0.9])


def test_symbolic_derivative_of_a_long_product_is_exact():
    xs = sp.symbols("x0:300", positive=True)
    expr = sp.Mul(*xs[:150]) / sp.Mul(*xs[150:])
    for k in (0, 149, 150, 299):
        assert symbolic_derivative(expr, xs[k]) == sp.diff(expr, xs[k])


# ----------------------------------------------------------------------------- programs
def test_a_zero_factor_gives_the_product_of_the_others():
    # ∂(abc)/∂a = bc at a = 0 (exact analytic): no division by the zero factor.
    compiled = CompiledModel(MeasurementModel.from_formula("a * b * c", ["a", "b", "c"]))
    assert list(compiled.gradient(0.0, 2.0, 3.0)) == [6.0, 0.0, 0.0]


def test_gradient_program_grows_linearly_with_the_inputs():
    sizes = []
    for n in (50, 100, 200):
        names = [f"x{i}" for i in range(n)]
        text = " * ".join(names[: n // 2]) + " / (" + " * ".join(names[n // 2 :]) + ")"
        compiled = CompiledModel(MeasurementModel.from_formula(text, names))
        sizes.append(len(compiled.programs[1].steps))
    # a few steps per input (product: forward, adjoint, one multiplication each)
    assert sizes[1] <= 2.1 * sizes[0] and sizes[2] <= 2.1 * sizes[1]
    assert sizes[2] <= 6 * 200


def test_program_data_round_trip_and_refusals():
    compiled = CompiledModel(MeasurementModel.from_formula("a * exp(b) / c", ["a", "b", "c"]))
    value, gradient = compiled.programs
    again = Program.from_data(gradient.to_data())
    assert again == gradient
    args = (1.5, 0.25, 3.0)
    assert again.run(*args) == gradient.run(*args)
    data = gradient.to_data()
    bad = [
        {**data, "version": 99},
        {**data, "steps": [["system", 0]]},
        {**data, "steps": [["add", 0, 7]]},  # a register not yet written
        {**data, "steps": [["float", "nan"]]},
        {**data, "steps": [["int", True]]},
        {**data, "outputs": [10**6]},
        {**data, "arguments": -1},
        "not a mapping",
    ]
    for item in bad:
        with pytest.raises(ProgramError):
            Program.from_data(item)


def test_arrays_given_are_never_written_and_reused_temporaries_change_no_bit():
    # Intermediate arrays are overwritten by their last use (out=); the caller's arrays
    # never are, and the numbers are those of the same steps on one value at a time
    # (IEEE arithmetic is exact to the bit for + − × ÷: no source needed).
    model = MeasurementModel.from_formula("(a*b + a/b) * (a - b) / (a + 2*b) - a*a*b", ["a", "b"])
    compiled = CompiledModel(model)
    rng = np.random.default_rng(7)
    a, b = 1 + rng.random(1000), 2 + rng.random(1000)
    kept = a.copy(), b.copy()
    value, gradient = compiled.value(a, b), compiled.gradient(a, b)
    assert np.array_equal(a, kept[0]) and np.array_equal(b, kept[1])
    for i in (0, 17, 999):
        assert compiled.value(float(a[i]), float(b[i])) == value[i]
        assert np.array_equal(compiled.gradient(float(a[i]), float(b[i])), gradient[:, i])


def test_higher_order_terms_of_a_long_product_come_from_the_gradient_program():
    # The symbolic derivatives of a product of 1000 inputs have about a million nodes
    # together (past MAX_DERIVATIVE_NODES); eq. (10) of JCGM 100:2008 then takes finite
    # differences of the gradient program, and the first-order u_c is the exact analytic
    # one (see the flat-ratio test above); the higher-order terms add a little.
    x = [1.0 + (i % 11) / 100 for i in range(N)]
    u = [0.0005] * N
    text = " * ".join(f"x{i}" for i in range(N))
    result = Budget.from_formula("y", text, _inputs(x, u)).evaluate(higher_order=True)
    y = math.prod(x)
    rel = math.sqrt(math.fsum((ui / xi) ** 2 for ui, xi in zip(u, x, strict=True)))
    assert result.first_order_standard_uncertainty == pytest.approx(y * rel, rel=1e-12)
    assert result.standard_uncertainty >= result.first_order_standard_uncertainty
    assert result.standard_uncertainty == pytest.approx(y * rel, rel=1e-3)
