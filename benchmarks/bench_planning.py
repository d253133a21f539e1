"""Benchmark of the planning tools (viscometry.planning); a script, not a test.

Run:  .venv/bin/python benchmarks/bench_planning.py

(a) Working range: the budget evaluated at 10 000 values of one input by
    :func:`viscometry.planning.working_range` (one vectorised pass) against 10 000 separate
    :meth:`Budget.evaluate` calls on budgets with that input's estimate replaced, in the same
    process. Goal: at least 100× faster.
(b) Upgrades: all 4096 combinations of 12 upgrade candidates by :func:`evaluate_upgrades`
    (gradient once, u_c, ν_eff, k and U vectorised over the sets by the one propagation
    kernel). Goal: under 1 s; the ratio to one :meth:`Budget.evaluate` is reported too.

The budget is the package's invented demo (:func:`viscometry.demo.pressure_capillary_demo_budget`,
a fictional lab; not measurement data). Its flow time is a Type A evaluation with 5 degrees
of freedom, so k = t_p(ν_eff) is computed at every point. Timings depend on the machine;
best of 3 repeats (the separate-evaluation loop: one run).
"""

from __future__ import annotations

import time
from dataclasses import replace

import numpy as np

from viscometry.demo import pressure_capillary_demo_budget
from viscometry.planning import UpgradeCandidate, evaluate_upgrades, working_range

POINTS = 10_000


def best_of(fn, repeats: int = 3) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def status(ok: bool) -> str:
    return "PASS" if ok else "MISS"


def main() -> None:
    budget = pressure_capillary_demo_budget()
    budget.evaluate()  # derive and compile the model once (cached), outside the timings
    q = budget.input("t")
    values = np.linspace(60.0, 600.0, POINTS)

    # (a) working range vs separate evaluations ----------------------------------------
    t_range = best_of(lambda: working_range(budget, "t", 60.0, 600.0, points=POINTS))
    t0 = time.perf_counter()
    separate = [budget.with_input(replace(q, value=float(v))).evaluate() for v in values]
    t_loop = time.perf_counter() - t0
    wr = working_range(budget, "t", 60.0, 600.0, points=POINTS)
    worst = max(
        abs(wr.expanded_uncertainty[i] / r.expanded_uncertainty - 1) for i, r in enumerate(separate)
    )
    ratio = t_loop / t_range
    print(
        f"(a) working range of {POINTS} points: {t_range * 1e3:.1f} ms; {POINTS} separate "
        f"evaluations: {t_loop:.2f} s; ratio {ratio:.0f}× (goal ≥ 100×) {status(ratio >= 100)}; "
        f"largest relative difference in U {worst:.1e}"
    )

    # (b) 4096 combinations of 12 candidates -------------------------------------------
    rng = np.random.default_rng(12)
    names = budget.input_names
    candidates = []
    for j in range(12):
        key = names[j % len(names)]
        u = budget.input(key).standard_uncertainty * float(rng.uniform(0.2, 0.9))
        candidates.append(
            UpgradeCandidate(f"candidate {j + 1}", float(rng.integers(100, 5000)), {key: u})
        )
    t_one = best_of(budget.evaluate, repeats=200)
    target = 0.9 * budget.evaluate().expanded_uncertainty
    t_plan = best_of(lambda: evaluate_upgrades(budget, candidates, target=target))
    plan = evaluate_upgrades(budget, candidates)
    n = len(plan.options)
    print(
        f"(b) {n} combinations of {len(candidates)} candidates ({plan.search} search): "
        f"{t_plan * 1e3:.1f} ms (goal < 1000 ms) {status(t_plan < 1.0)}; one Budget.evaluate: "
        f"{t_one * 1e3:.3f} ms; ratio {t_plan / t_one:.0f} single evaluations "
        f"(vs {n} if evaluated one by one: {n * t_one / t_plan:.0f}× faster)"
    )


if __name__ == "__main__":
    main()
