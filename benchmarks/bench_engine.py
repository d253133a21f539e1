"""Engine speed goals, measured as ratios within one run (machines here are noisy).

1. Re-evaluating a 12-input budget after one input's uncertainty changes with the
   linearised budget (``budget.linearise().with_uncertainty(...)``: cached sensitivities,
   no model call) versus re-evaluating the same model with the `uncertainties` package.
   Goal: at least 10x faster.
2. The same what-if on the one-kernel design: the slider path
   ``budget.linearise().with_uncertainty(name, u)`` versus a full evaluation of the same
   what-if, ``budget.with_uncertainty(name, u).evaluate()`` (table rows, units, warnings).
   Both go through the one propagation kernel ``viscometry.gum.propagation.propagate``.
   Goal: the slider path at least 10x faster.
3. The budget across a working range of one input, 10 000 values in one vectorised call
   (``viscometry.planning.working_range``), versus a Python loop of separate evaluations.
   Goal: at least 100x faster.

Run: ``.venv/bin/python benchmarks/bench_engine.py`` (or ``make bench``).
The budget is invented for the benchmark; its numbers mean nothing.
"""

from __future__ import annotations

import math
import time
from dataclasses import replace

import numpy as np
from uncertainties import ufloat, umath

from viscometry.gum import Budget, InputQuantity
from viscometry.planning import working_range

NAMES = ["r", "dp", "t", "V", "L", "n", "m", "rho", "g", "h", "a", "b"]
VALUES = [2.5e-4, 5000.0, 120.0, 2e-6, 0.1, 0.6, 1.1, 870.0, 9.81, 0.5, 1.0, 0.0]
UNCERT = [1e-7, 2.0, 0.05, 1e-9, 1e-5, 0.05, 0.05, 0.1, 1e-4, 1e-4, 1e-3, 1e-3]
FORMULA = (
    "pi * r**4 * dp * t / (8 * V * (L + n * r)) * a * exp(b)"
    " - m * rho * V / (8 * pi * (L + n * r) * t) + 0 * g * h"
)
POINTS = 10_000


def twelve_input_budget() -> Budget:
    inputs = [InputQuantity.normal(n, v, u) for n, v, u in zip(NAMES, VALUES, UNCERT, strict=True)]
    return Budget.from_formula("eta", FORMULA, inputs)


def with_uncertainties(u_r: float) -> float:
    x = {n: ufloat(v, u) for n, v, u in zip(NAMES, VALUES, UNCERT, strict=True)}
    x["r"] = ufloat(VALUES[0], u_r)
    r, dp, t, V, L, n, m, rho, g, h, a, b = (x[k] for k in NAMES)
    y = (
        math.pi * r**4 * dp * t / (8 * V * (L + n * r)) * a * umath.exp(b)
        - m * rho * V / (8 * math.pi * (L + n * r) * t)
        + 0 * g * h
    )
    return y.std_dev


def best_of(fn, repeats: int = 5, number: int = 20) -> float:
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        for _ in range(number):
            fn()
        best = min(best, (time.perf_counter() - t0) / number)
    return best


def status(ok: bool) -> str:
    return "PASS" if ok else "MISS"


def main() -> int:
    budget = twelve_input_budget()
    budget.evaluate()  # compile once (cached)
    u_values = iter([1e-7 * (1 + 0.01 * i) for i in range(10**6)])
    linear = budget.linearise()  # built once, as a slider does

    def full() -> float:
        return budget.with_uncertainty("r", next(u_values)).evaluate().expanded_uncertainty

    def slider() -> float:
        return linear.with_uncertainty("r", next(u_values)).expanded_uncertainty

    def slider_with_warnings() -> tuple[float, tuple[str, ...]]:
        what_if = linear.with_uncertainty("r", next(u_values))
        return what_if.expanded_uncertainty, what_if.warnings

    def theirs() -> float:
        return with_uncertainties(next(u_values))

    # Same model, same what-if: the three paths agree before they are timed.
    u_check = 1.7e-7
    u_full = budget.with_uncertainty("r", u_check).evaluate()
    u_slider = linear.with_uncertainty("r", u_check)
    assert abs(u_slider.expanded_uncertainty / u_full.expanded_uncertainty - 1) < 1e-9
    assert abs(u_slider.standard_uncertainty / with_uncertainties(u_check) - 1) < 1e-6

    t_full = best_of(full)
    t_slider = best_of(slider)
    t_theirs = best_of(theirs)
    t_slider_warn = best_of(slider_with_warnings)

    ratio1 = t_theirs / t_slider
    print(f"(1) what-if on a 12-input budget after a change of u(r): linearised budget "
          f"{t_slider * 1e3:.3f} ms, uncertainties package {t_theirs * 1e3:.3f} ms, "
          f"speed-up {ratio1:.1f}x (goal >= 10x) {status(ratio1 >= 10)}")  # fmt: skip

    ratio2 = t_full / t_slider
    print(f"(2) slider path budget.linearise().with_uncertainty('r', u) {t_slider * 1e3:.3f} ms, "
          f"full budget.with_uncertainty('r', u).evaluate() {t_full * 1e3:.3f} ms, "
          f"speed-up {ratio2:.1f}x (goal >= 10x) {status(ratio2 >= 10)}")  # fmt: skip
    print(f"    (for reference: the full evaluation with table rows, units and warnings runs at "
          f"{t_theirs / t_full:.2f}x the uncertainties package's speed)")  # fmt: skip

    print(
        f"    (for reference: the slider path reading .warnings too, as a slider shows them, "
        f"takes {t_slider_warn * 1e3:.3f} ms, {t_full / t_slider_warn:.1f}x faster than the full "
        f"evaluation)"
    )

    lo, hi = 2.0e-4, 3.0e-4
    values = np.linspace(lo, hi, POINTS)
    working_range(budget, "r", lo, hi, points=10)  # warm-up outside the timing
    t0 = time.perf_counter()
    wr = working_range(budget, "r", lo, hi, points=POINTS)
    t_range = time.perf_counter() - t0
    loop_n = 500  # a sample of the loop, scaled to POINTS
    q = budget.input("r")
    t0 = time.perf_counter()
    separate = [budget.with_input(replace(q, value=float(v))).evaluate() for v in values[:loop_n]]
    t_loop = (time.perf_counter() - t0) * (POINTS / loop_n)
    worst = max(
        abs(wr.expanded_uncertainty[i] / res.expanded_uncertainty - 1)
        for i, res in enumerate(separate)
    )
    ratio3 = t_loop / t_range
    print(f"(3) working range of {POINTS} values of r: vectorised {t_range * 1e3:.1f} ms, loop of "
          f"separate evaluations (scaled from {loop_n}) {t_loop:.2f} s, speed-up {ratio3:.0f}x "
          f"(goal >= 100x) {status(ratio3 >= 100)}; largest relative difference in U "
          f"{worst:.1e}")  # fmt: skip
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
