"""Benchmark of the planning tools (viscometry.planning); a script, not a test.

Run:  .venv/bin/python benchmarks/bench_planning.py

(a) Working range: the budget evaluated at 10 000 values of one input by
    :func:`viscometry.planning.working_range` (one vectorised pass) against 10 000 separate
    :meth:`Budget.evaluate` calls on budgets with that input's estimate replaced, in the same
    process. Goal: at least 100× faster.
(b) Upgrades: all 4096 combinations of 12 upgrade candidates by :func:`evaluate_upgrades`
    against a hand-written vectorised NumPy evaluation of the same 4096 sets in the same
    process: the same sensitivity coefficients (closed form of the power-law model), the
    same combination rule (the smallest u of the candidates in a set), u_c, ν_eff (eq. G.2b),
    k = t_p(ν_eff truncated, G.6.4) by ``scipy.special.stdtrit``, U, the cost of each set
    and the cheapest set reaching a target. ``evaluate_upgrades`` does more: it evaluates
    the baseline budget, checks every set as loading a budget would (numbers a float cannot
    hold, plausibility, underflow) and keeps the numbers for rankings; the timed call also
    reads what ``viscometry plan`` prints (the candidates alone, the cost–U frontier, the
    best reduction per cost, the cheapest set reaching the target). Medians of 21 paired
    samples of 5 calls each, in alternating order. Goal: ratio ≤ 2.

The budget is the package's invented demo (:func:`viscometry.demo.pressure_capillary_demo_budget`,
a fictional lab; not measurement data). Its flow time is a Type A evaluation with 5 degrees
of freedom, so k = t_p(ν_eff) is computed for every set. Timings depend on the machine.
"""

from __future__ import annotations

import math
import statistics
import time
from dataclasses import replace

import numpy as np
from scipy import special

from viscometry.demo import pressure_capillary_demo_budget
from viscometry.planning import UpgradeCandidate, evaluate_upgrades, working_range

POINTS = 10_000
PAIRS = 21
#: Calls per timed sample (a sample of a few milliseconds is at the mercy of the scheduler).
CALLS = 5
#: Exponents of the demo model η = π r⁴ ρ_m g h t / (8 V L), in the budget's input order.
EXPONENTS = {"r": 4.0, "L": -1.0, "V": -1.0, "h": 1.0, "rho_m": 1.0, "g": 1.0, "t": 1.0}


def best_of(fn, repeats: int = 3) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def status(ok: bool) -> str:
    return "PASS" if ok else "MISS"


def paired(ours, theirs, pairs: int = PAIRS) -> tuple[float, float, float]:
    """Median times of ``ours`` and ``theirs`` and the median of the per-pair ratios, the
    two run alternately (which one goes first alternates too)."""
    t_ours, t_theirs, ratios = [], [], []
    for k in range(pairs):
        order = (ours, theirs) if k % 2 == 0 else (theirs, ours)
        took = {}
        for fn in order:
            t0 = time.perf_counter()
            for _ in range(CALLS):
                fn()
            took[fn] = (time.perf_counter() - t0) / CALLS
        t_ours.append(took[ours])
        t_theirs.append(took[theirs])
        ratios.append(took[ours] / took[theirs])
    return statistics.median(t_ours), statistics.median(t_theirs), statistics.median(ratios)


def numpy_sets(budget, candidates, target: float):  # type: ignore[no-untyped-def]
    """The hand-written evaluation of every set: U and cost per set, the cheapest set
    reaching ``target`` (plain NumPy and ``scipy.special``; SI inside, U in mPa·s)."""
    x, u0, nu, _c = budget.si_arrays()
    names = budget.input_names
    e = np.array([EXPONENTS[n] for n in names])
    scale_out = budget.output_scale
    n = len(candidates)
    idx = np.arange(2**n)
    masks = ((idx[:, None] >> np.arange(n)[None, :]) & 1).astype(bool)
    which = np.array([names.index(next(iter(c.changes))) for c in candidates])
    new_u = np.array([c.new_uncertainty(names[i]) for c, i in zip(candidates, which, strict=True)])
    new_u = new_u * np.array(budget.input_scales)[which]
    y = math.pi * x[0] ** 4 * x[4] * x[5] * x[3] * x[6] / (8 * x[2] * x[1])
    c = y * e / x
    u = np.repeat(u0[:, None], masks.shape[0], axis=1)
    for i in range(len(names)):
        js = np.flatnonzero(which == i)
        if js.size:
            best = np.where(masks[:, js], new_u[js], np.inf).min(axis=1)
            u[i] = np.where(np.isfinite(best), best, u0[i])
    cu = c[:, None] * u
    uc = np.sqrt(np.sum(cu * cu, axis=0))
    with np.errstate(divide="ignore"):
        nu_eff = uc**4 / np.sum(cu**4 / nu[:, None], axis=0)
    k = special.stdtrit(np.maximum(1.0, np.floor(nu_eff)), 0.5 * (1 + budget.coverage_probability))
    big_u = k * uc / scale_out
    cost = masks.astype(float) @ np.array([c.cost for c in candidates])
    reaching = np.flatnonzero(big_u <= target)
    cheapest = reaching[np.argmin(cost[reaching])] if reaching.size else None
    return big_u, cost, cheapest


def shown(plan) -> tuple:  # type: ignore[no-untyped-def]
    """What ``viscometry plan`` reads of a plan for its text output."""
    return plan.singles, plan.frontier, plan.best_per_cost, plan.cheapest, len(plan.options)


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

    # (b) 4096 combinations of 12 candidates vs hand-written NumPy ---------------------
    rng = np.random.default_rng(12)
    names = budget.input_names
    candidates = []
    for j in range(12):
        key = names[j % len(names)]
        u = budget.input(key).standard_uncertainty * float(rng.uniform(0.2, 0.9))
        candidates.append(
            UpgradeCandidate(f"candidate {j + 1}", float(rng.integers(100, 5000)), {key: u})
        )
    target = 0.9 * budget.evaluate().expanded_uncertainty
    plan = evaluate_upgrades(budget, candidates, target=target)
    big_u, cost, cheapest = numpy_sets(budget, candidates, target)
    ours_u = np.array([o.expanded_uncertainty for o in plan.options])
    agree = float(np.max(np.abs(ours_u / big_u - 1)))
    assert agree < 1e-12 and plan.cheapest is not None
    assert plan.cheapest.cost == cost[cheapest]

    def ours() -> None:
        shown(evaluate_upgrades(budget, candidates, target=target))

    def theirs() -> None:
        numpy_sets(budget, candidates, target)

    for fn in (ours, theirs):  # warm-up outside the timings
        fn()
    t_ours, t_np, ratio_b = paired(ours, theirs)
    n = len(plan.options)
    print(
        f"(b) {n} sets of {len(candidates)} candidates ({plan.search}): evaluate_upgrades and "
        f"the rows `viscometry plan` shows {t_ours * 1e3:.2f} ms, hand-written vectorised "
        f"NumPy {t_np * 1e3:.2f} ms, ratio {ratio_b:.2f} (goal ≤ 2) {status(ratio_b <= 2)}; "
        f"largest relative difference in U {agree:.1e}"
    )
    t_all = best_of(lambda: list(evaluate_upgrades(budget, candidates, target=target).ranked))
    print(
        f"    (for reference: with all {n} rows built as objects, as `--json` and `--all "
        f"--top 0` do: {t_all * 1e3:.1f} ms)"
    )


if __name__ == "__main__":
    main()
