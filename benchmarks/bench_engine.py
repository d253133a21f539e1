"""Engine speed goals, measured as ratios within one run (machines here are noisy).

1. Re-evaluating a 12-input budget after one input's uncertainty changes (cached, compiled
   derivatives) versus re-evaluating the same model with the `uncertainties` package.
   Goal: at least 10x faster.
2. Sweeping one input over 10 000 values in one vectorised call versus a Python loop of
   single evaluations. Goal: at least 100x faster.

Run: ``.venv/bin/python benchmarks/bench_engine.py`` (or ``make bench``).
The budget is invented for the benchmark; its numbers mean nothing.
"""

from __future__ import annotations

import math
import time

from uncertainties import ufloat, umath

from viscometry.gum import Budget, InputQuantity

NAMES = ["r", "dp", "t", "V", "L", "n", "m", "rho", "g", "h", "a", "b"]
VALUES = [2.5e-4, 5000.0, 120.0, 2e-6, 0.1, 0.6, 1.1, 870.0, 9.81, 0.5, 1.0, 0.0]
UNCERT = [1e-7, 2.0, 0.05, 1e-9, 1e-5, 0.05, 0.05, 0.1, 1e-4, 1e-4, 1e-3, 1e-3]
FORMULA = (
    "pi * r**4 * dp * t / (8 * V * (L + n * r)) * a * exp(b)"
    " - m * rho * V / (8 * pi * (L + n * r) * t) + 0 * g * h"
)


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


def main() -> int:
    budget = twelve_input_budget()
    budget.evaluate()  # compile once (cached)
    u_values = iter([1e-7 * (1 + 0.01 * i) for i in range(10**6)])

    def ours() -> float:
        return budget.with_uncertainty("r", next(u_values)).evaluate().standard_uncertainty

    def theirs() -> float:
        return with_uncertainties(next(u_values))

    linear = budget.linearise()

    def ours_fast() -> float:
        return linear.with_uncertainty("r", next(u_values)).expanded_uncertainty

    assert abs(ours() / theirs() - 1) < 0.05  # same model, same order of magnitude
    t_full = best_of(ours)
    t_fast = best_of(ours_fast)
    t_theirs = best_of(theirs)
    ratio1 = t_theirs / t_fast
    print(f"re-evaluate 12-input budget after a change of u(r): cached linearised budget "
          f"{t_fast * 1e3:.3f} ms, uncertainties package {t_theirs * 1e3:.3f} ms, "
          f"speed-up {ratio1:.1f}x (goal >= 10x) {'PASS' if ratio1 >= 10 else 'MISS'}")  # fmt: skip
    print(f"  (for reference: a full Budget.evaluate with table rows, units and warnings "
          f"takes {t_full * 1e3:.3f} ms, {t_theirs / t_full:.1f}x the uncertainties package's speed)")  # fmt: skip

    import numpy as np

    values = np.linspace(2.0e-4, 3.0e-4, 10_000)
    t0 = time.perf_counter()
    budget.sweep("r", values)
    t_sweep = time.perf_counter() - t0
    t0 = time.perf_counter()
    loop_n = 500  # a sample of the loop, scaled to 10 000
    from dataclasses import replace

    q = budget.input("r")
    for v in values[:loop_n]:
        budget.with_input(replace(q, value=float(v))).evaluate()
    t_loop = (time.perf_counter() - t0) * (len(values) / loop_n)
    ratio2 = t_loop / t_sweep
    print(f"sweep of 10 000 values: vectorised {t_sweep * 1e3:.1f} ms, loop (scaled from "
          f"{loop_n}) {t_loop:.2f} s, speed-up {ratio2:.0f}x (goal >= 100x) "
          f"{'PASS' if ratio2 >= 100 else 'MISS'}")  # fmt: skip
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
