"""Sensitivity coefficients agree three ways: sympy, central differences, `uncertainties`."""

import math

import numpy as np
import pytest
import sympy as sp
from uncertainties import ufloat, umath

from viscometry.gum import Budget, InputQuantity, MeasurementModel, compile_model

# A frozen set of models: (formula, {name: (value, u)}, function for `uncertainties`)
CASES = {
    "poiseuille": (
        "pi * r**4 * dp * t / (8 * V * L)",
        {
            "r": (2.5e-4, 1e-7),
            "dp": (5000.0, 2.0),
            "t": (120.0, 0.05),
            "V": (2e-6, 1e-9),
            "L": (0.1, 1e-5),
        },
        lambda r, dp, t, V, L: math.pi * r**4 * dp * t / (8 * V * L),
    ),
    "kinetic_energy": (
        "C * t - E / t**2",
        {"C": (0.1, 1e-4), "t": (400.0, 0.1), "E": (150.0, 5.0)},
        lambda C, t, E: C * t - E / t**2,
    ),
    "stokes": (
        "2 * a**2 * g * (rs - rf) / (9 * v)",
        {
            "a": (1e-3, 1e-6),
            "g": (9.81, 1e-4),
            "rs": (7800.0, 5.0),
            "rf": (900.0, 1.0),
            "v": (0.02, 1e-4),
        },
        lambda a, g, rs, rf, v: 2 * a**2 * g * (rs - rf) / (9 * v),
    ),
    "transcendental": (
        "A * exp(B / T) + log10(x) * sqrt(y)",
        {
            "A": (1e-3, 1e-5),
            "B": (1500.0, 10.0),
            "T": (313.15, 0.02),
            "x": (20.0, 0.1),
            "y": (4.0, 0.01),
        },
        lambda A, B, T, x, y: A * umath.exp(B / T) + umath.log10(x) * umath.sqrt(y),
    ),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_sensitivities_three_ways(case):
    formula, values, ufunc = CASES[case]
    names = list(values)
    model = MeasurementModel.from_formula(formula, names)
    comp = compile_model(model)
    x = np.array([values[n][0] for n in names])
    grad = comp.gradient(*x)
    # central difference, step relative to each estimate (exact analytic comparison)
    for i, n in enumerate(names):
        h = 1e-6 * abs(x[i])
        xp, xm = x.copy(), x.copy()
        xp[i] += h
        xm[i] -= h
        fd = (float(comp.value(*xp)) - float(comp.value(*xm))) / (2 * h)
        assert grad[i] == pytest.approx(fd, rel=1e-6), n
    # the `uncertainties` package as an independent reference library
    uvals = {n: ufloat(v, u, tag=n) for n, (v, u) in values.items()}
    y = ufunc(**uvals)
    derivs = y.derivatives
    for i, n in enumerate(names):
        assert grad[i] == pytest.approx(derivs[uvals[n]], rel=1e-9), n
    # and the combined standard uncertainty agrees with `uncertainties`
    inputs = [InputQuantity.normal(n, v, u) for n, (v, u) in values.items()]
    r = Budget.from_formula("y", formula, inputs).evaluate()
    assert r.standard_uncertainty == pytest.approx(y.std_dev, rel=1e-9)
    assert r.value == pytest.approx(y.nominal_value, rel=1e-12)


def test_poiseuille_relative_sensitivities_are_exact():
    # exact analytic: eta = pi r^4 dp t / (8 V L) -> exponents 4, 1, 1, -1, -1
    model = MeasurementModel.from_formula(
        "pi * r**4 * dp * t / (8 * V * L)", ["r", "dp", "t", "V", "L"]
    )
    expected = {"r": 4, "dp": 1, "t": 1, "V": -1, "L": -1}
    for name, exponent in expected.items():
        assert model.relative_sensitivity_expression(name) == sp.Integer(exponent)
    formula, values, _ = CASES["poiseuille"]
    inputs = [InputQuantity.normal(n, v, u) for n, (v, u) in values.items()]
    r = Budget.from_formula("eta", formula, inputs).evaluate()
    for name, exponent in expected.items():
        assert r.contribution(name).relative_sensitivity == pytest.approx(exponent, rel=1e-12)


def test_derivative_latex_and_cache():
    model = MeasurementModel.from_formula(
        "pi * r**4 * dp * t / (8 * V * L)", ["r", "dp", "t", "V", "L"]
    )
    assert model.derivative_latex("r") == r"\frac{\pi dp r^{3} t}{2 L V}"
    assert compile_model(model) is compile_model(
        MeasurementModel.from_formula(
            "pi * r**4 * dp * t / (8 * V * L)", ["r", "dp", "t", "V", "L"]
        )
    )


def test_signs_are_kept():
    # exact analytic: d/dE (C t - E/t^2) = -1/t^2 < 0
    inputs = [InputQuantity.normal("C", 0.1, 1e-4), InputQuantity.normal("t", 400.0, 0.1),
              InputQuantity.normal("E", 150.0, 5.0)]  # fmt: skip
    r = Budget.from_formula("nu", "C * t - E / t**2", inputs).evaluate()
    assert r.contribution("E").sensitivity == pytest.approx(-1 / 400.0**2)
    assert r.contribution("E").contribution == pytest.approx(-5.0 / 400.0**2)
