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
4. A fast what-if with a Type A input: the same 12-input model with the flow time ``t``
   evaluated from six readings (ν = 5, so ν_eff is a real number that changes with every
   what-if and k = t_p(ν_eff) is looked up each time). The what-if changes u(t), the
   uncertainty the readings give, on the linearised budget and reads what a slider shows
   (U, k, ν_eff and the warnings); the `uncertainties` package re-evaluates the same model
   with the same new u(t) (its standard deviation only). Medians of 15 paired runs of 300
   what-ifs each, in alternating order. Goal: ours at most 0.5x the time of
   `uncertainties`, both on this budget and on the invented 7-input demo budget
   (``viscometry.demo.pressure_capillary_demo_budget``, Type A flow time, a power law whose
   every input keeps its sign, so every what-if runs every plausibility check). For
   reference, the ratio of the full what-if ``budget.with_uncertainty("t", u).evaluate()``
   (table rows, units and warnings) is printed too.

Run: ``.venv/bin/python benchmarks/bench_engine.py`` (or ``make bench``).
The budget is invented for the benchmark; its numbers mean nothing.
"""

from __future__ import annotations

import math
import statistics
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


#: Six invented flow-time readings [s] of the Type A input of goal 4 (mean 120 s).
READINGS = [119.93, 120.04, 119.98, 120.07, 119.96, 120.02]
PAIRS = 15
WHAT_IFS = 300


def type_a_budget() -> Budget:
    """The 12-input budget with ``t`` a Type A evaluation from :data:`READINGS`."""
    inputs = [
        InputQuantity.from_readings(n, READINGS) if n == "t" else InputQuantity.normal(n, v, u)
        for n, v, u in zip(NAMES, VALUES, UNCERT, strict=True)
    ]
    return Budget.from_formula("eta", FORMULA, inputs)


def with_uncertainties_t(budget: Budget):  # type: ignore[no-untyped-def]
    """u(t) → u_c of the 12-input model by the `uncertainties` package (dimensionless)."""
    given = {q.name: (q.value, q.standard_uncertainty) for q in budget.inputs}

    def u_c(u_t: float) -> float:
        x = {n: ufloat(v, u) for n, (v, u) in given.items()}
        x["t"] = ufloat(given["t"][0], u_t)
        r, dp, t, V, L, n, m, rho, g, h, a, b = (x[k] for k in NAMES)
        y = (
            math.pi * r**4 * dp * t / (8 * V * (L + n * r)) * a * umath.exp(b)
            - m * rho * V / (8 * math.pi * (L + n * r) * t)
            + 0 * g * h
        )
        return y.std_dev

    return u_c


def demo_uncertainties_t(budget: Budget):  # type: ignore[no-untyped-def]
    """u(t) → u_c of the demo model by the `uncertainties` package (SI inside, u_c in the
    budget's unit; the conversion factors are computed once, outside the timings)."""
    x_si, u_si, _nu, _c = budget.si_arrays()
    given = dict(zip(budget.input_names, zip(x_si.tolist(), u_si.tolist(), strict=True),
                     strict=True))  # fmt: skip
    scale_t = budget.input_scales[budget.input_names.index("t")]
    out = budget.output_scale

    def u_c(u_t: float) -> float:
        x = {n: ufloat(v, u) for n, (v, u) in given.items()}
        x["t"] = ufloat(given["t"][0], u_t * scale_t)
        y = math.pi * x["r"] ** 4 * x["rho_m"] * x["g"] * x["h"] * x["t"] / (8 * x["V"] * x["L"])
        return y.std_dev / out

    return u_c


def paired(ours, theirs, pairs: int = PAIRS) -> tuple[float, float, float]:
    """Median times per call of ``ours`` and ``theirs`` (each runs :data:`WHAT_IFS`
    what-ifs) and the median of the per-pair ratios; the first to run alternates."""
    t_ours, t_theirs, ratios = [], [], []
    for k in range(pairs):
        took = {}
        for fn in (ours, theirs) if k % 2 == 0 else (theirs, ours):
            t0 = time.perf_counter()
            fn()
            took[fn] = (time.perf_counter() - t0) / WHAT_IFS
        t_ours.append(took[ours])
        t_theirs.append(took[theirs])
        ratios.append(took[ours] / took[theirs])
    return statistics.median(t_ours), statistics.median(t_theirs), statistics.median(ratios)


def type_a_what_if(budget: Budget, theirs_for) -> tuple[float, float, float, float]:  # type: ignore[no-untyped-def]
    """Paired timings of the fast what-if on u(t) against `uncertainties`; also the ratio of
    the full what-if ``budget.with_uncertainty("t", u).evaluate()`` to `uncertainties`."""
    budget.evaluate()  # compile once (cached), as a slider's budget is
    linear = budget.linearise()
    theirs_of = theirs_for(budget)
    u0 = budget.input("t").standard_uncertainty
    values = [u0 * (0.5 + 0.01 * i) for i in range(WHAT_IFS)]  # ν_eff differs every time
    check = linear.with_uncertainty("t", values[7])
    full = budget.with_uncertainty("t", values[7]).evaluate()
    assert abs(check.expanded_uncertainty / full.expanded_uncertainty - 1) < 1e-12
    assert abs(check.standard_uncertainty / theirs_of(values[7]) - 1) < 1e-9
    assert check.coverage_factor > 2.0  # k from a finite ν_eff (p = 95.45 %)

    def ours() -> None:
        for u in values:
            w = linear.with_uncertainty("t", u)
            _shown = (w.expanded_uncertainty, w.coverage_factor, w.effective_dof, w.warnings)

    def theirs() -> None:
        for u in values:
            theirs_of(u)

    def full_path() -> None:
        for u in values[:60]:
            budget.with_uncertainty("t", u).evaluate()

    ours(), theirs(), full_path()  # warm-up outside the timings
    t_ours, t_theirs, ratio = paired(ours, theirs)
    _, _, ratio_full = paired(full_path, theirs, pairs=5)
    return t_ours, t_theirs, ratio, ratio_full * WHAT_IFS / 60


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
    report_type_a()
    return 0


def report_type_a() -> None:
    """Goal 4: the fast what-if with a Type A input against `uncertainties`, on the 12-input
    budget and on the 7-input demo (a power law: every input keeps its sign, so every
    what-if runs every plausibility check)."""
    from viscometry.demo import pressure_capillary_demo_budget

    t12, u12, r12, full12 = type_a_what_if(type_a_budget(), with_uncertainties_t)
    t7, u7, r7, full7 = type_a_what_if(pressure_capillary_demo_budget(), demo_uncertainties_t)
    worst = max(r12, r7)
    print(f"(4) Type A what-if (u(t) of the readings changed; U, k, ν_eff and warnings read) "
          f"on the linearised budget vs re-evaluation with the uncertainties package: 12 inputs "
          f"{t12 * 1e6:.1f} µs vs {u12 * 1e6:.1f} µs, ratio {r12:.2f}; 7-input demo "
          f"{t7 * 1e6:.1f} µs vs {u7 * 1e6:.1f} µs, ratio {r7:.2f} (goal <= 0.5 for both) "
          f"{status(worst <= 0.5)}")  # fmt: skip
    print(f"    (for reference: the full what-if budget.with_uncertainty('t', u).evaluate(), "
          f"with table rows, units and warnings, takes {full12:.2f}x (12 inputs) and "
          f"{full7:.2f}x (demo) the time of uncertainties)")  # fmt: skip


if __name__ == "__main__":
    raise SystemExit(main())
