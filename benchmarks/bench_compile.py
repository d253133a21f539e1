"""Formula to first result for large product/ratio and sum models (issue 14, goal 3).

For models of 10, 50, 100 and 200 inputs, ``y = x0*…*x(n/2−1) / (x(n/2)*…*x(n−1))`` and
``y = x0 + … + x(n−1)``, each measured in a fresh process (after the imports and a
one-input warm-up budget, so the unit registry is built), medians of repeated runs:

* ``before``: the previous compilation, re-enacted: ``sympy.diff`` by every input, then
  ``sympy.lambdify`` with common-subexpression elimination (products only up to 100 inputs;
  200 took about 45 s when measured).
* ``cold``: the compiled-model programs (reverse-mode gradient), no cache.
* ``cache``: the same with the on-disk cache (``viscometry.cache``) holding the model,
  written by an earlier process.
* ``uncertainties``: the `uncertainties` package computing u_c for the same model from
  ufloats (no parsing, no checks: a floor, not a like-for-like alternative).

Goals: the 100-input product/ratio model from formula to first result in at most 1 s cold
and at most 50 ms from the cache; compiling (value and gradient programs) grows about
linearly with the number of inputs (1000 inputs at most 15 times 100); the value program
evaluates Monte Carlo draws of the example models at most 1.15 times as long as sympy's
lambdified expression did.

Run: ``.venv/bin/python benchmarks/bench_compile.py`` (or ``make bench``). The models are
invented for the benchmark.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SIZES = (10, 50, 100, 200)
REPEATS = 3
BEFORE_LIMIT = {"product": 100, "sum": 200}

CHILD = r"""
import sys, time
mode, kind, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
names = [f"x{i}" for i in range(n)]
values = [1.0 + 0.01 * i for i in range(n)]
if kind == "product":
    formula = "*".join(names[: n // 2]) + "/(" + "*".join(names[n // 2 :]) + ")"
else:
    formula = "+".join(names)
if mode == "uncertainties":
    import math
    from uncertainties import ufloat
    t0 = time.perf_counter()
    xs = [ufloat(v, 0.001) for v in values]
    if kind == "product":
        y = math.prod(xs[: n // 2]) / math.prod(xs[n // 2 :])
    else:
        y = sum(xs)
    u = y.std_dev
    print(time.perf_counter() - t0)
    raise SystemExit(0)
import sympy as sp
from viscometry.gum import Budget, InputQuantity
from viscometry.gum import model as M
from viscometry.gum.program import UnsupportedExpression
if mode == "before":
    def refuse(*args, **kwargs):
        raise UnsupportedExpression("benchmark: the previous compilation")
    M.compile_expression = refuse
    M.symbolic_derivative = lambda expr, x: sp.diff(expr, x)
if mode == "cache":
    from viscometry.cache import install_store
    install_store()
Budget.from_formula("w", "2 * a - 1 / a + sqrt(a)", [InputQuantity.normal("a", 1.0, 0.1)]).evaluate()
inputs = [InputQuantity.normal(nm, v, 0.001) for nm, v in zip(names, values)]
t0 = time.perf_counter()
result = Budget.from_formula("y", formula, inputs).evaluate()
elapsed = time.perf_counter() - t0
assert result.standard_uncertainty > 0
print(elapsed)
"""


def run(mode: str, kind: str, n: int, env: dict[str, str]) -> float:
    out = subprocess.run(
        [sys.executable, "-c", CHILD, mode, kind, str(n)],
        cwd=ROOT, env=env, capture_output=True, text=True, check=True, timeout=600,
    )  # fmt: skip
    return float(out.stdout.strip().splitlines()[-1])


def measure(kind: str, n: int, cache_dir: str) -> dict[str, float | None]:
    env_off = {**os.environ, "VISCOMETRY_CACHE": "off"}
    env_cache = {**os.environ, "VISCOMETRY_CACHE": cache_dir}
    run("cache", kind, n, env_cache)  # writes the entry
    times: dict[str, list[float]] = {"before": [], "cold": [], "cache": [], "uncertainties": []}
    for _ in range(REPEATS):  # paired: one run of each mode per round
        if n <= BEFORE_LIMIT[kind]:
            times["before"].append(run("before", kind, n, env_off))
        times["cold"].append(run("cold", kind, n, env_off))
        times["cache"].append(run("cache", kind, n, env_cache))
        times["uncertainties"].append(run("uncertainties", kind, n, env_off))
    return {k: (statistics.median(v) if v else None) for k, v in times.items()}


def compile_time(n: int) -> float:
    """Median time to compile an n-input product/ratio model in this process (the
    expression parsed beforehand): the part of formula-to-result that differentiates."""
    import time

    from viscometry.gum.model import CompiledModel, MeasurementModel

    names = [f"x{i}" for i in range(n)]
    text = "*".join(names[: n // 2]) + "/(" + "*".join(names[n // 2 :]) + ")"
    model = MeasurementModel.from_formula(text, names)
    times = []
    for _ in range(5):
        t0 = time.perf_counter()
        CompiledModel(model).gradient(*[1.0 + 0.01 * i for i in range(n)])
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def array_speed() -> list[tuple[str, float]]:
    """Evaluating example models on 10⁶ Monte Carlo draws: the value program against
    sympy's lambdified expression (what the models used before), medians of paired runs."""
    import time

    import numpy as np
    import sympy as sp

    from viscometry.gum.model import CompiledModel
    from viscometry.io import load_budget

    rng = np.random.default_rng(1)
    out = []
    for name in ("methods/pressure_capillary_mercury_thread", "methods/falling_sphere",
                 "methods/glass_capillary_corrected_surface_tension",
                 "primary_capillary_poiseuille"):  # fmt: skip
        budget = load_budget(ROOT / "examples" / f"{name}.toml").budget
        x, u, _nu, c = budget.si_arrays()
        draws = [xi + ui * rng.standard_normal(10**6) for xi, ui in zip(x, u, strict=True)]
        model = budget.model
        symbols = [model.symbol(n) for n in model.input_names + model.constant_names]
        lam = sp.lambdify(symbols, model.expression, modules="numpy", cse=True)
        compiled = CompiledModel(model)
        ratios = []
        for _ in range(11):
            t0 = time.perf_counter()
            compiled.value(*draws, *c)
            t1 = time.perf_counter()
            lam(*draws, *c)
            ratios.append((t1 - t0) / (time.perf_counter() - t1))
        out.append((name.rsplit("/", 1)[-1], statistics.median(ratios)))
    return out


def status(ok: bool) -> str:
    return "PASS" if ok else "MISS"


def show(t: float | None) -> str:
    return "      (not run)" if t is None else f"{t * 1000:12.1f} ms"


def main() -> int:
    results: dict[tuple[str, int], dict[str, float | None]] = {}
    with tempfile.TemporaryDirectory() as cache_dir:
        print(f"{'model':>16} {'before':>15} {'cold':>15} {'cache':>15} {'uncertainties':>15}")
        for kind in ("product", "sum"):
            for n in SIZES:
                r = measure(kind, n, cache_dir)
                results[(kind, n)] = r
                cells = " ".join(show(r[m]) for m in ("before", "cold", "cache", "uncertainties"))
                print(f"{kind + ' ' + str(n):>16} {cells}", flush=True)
    r100 = results[("product", 100)]
    cold, cached, before = r100["cold"], r100["cache"], r100["before"]
    assert cold is not None and cached is not None
    if before is not None:
        print(f"100-input product/ratio: cold is {before / cold:.0f}x faster than before")
    print(f"100-input product/ratio, formula to first result cold: {cold * 1000:.0f} ms "
          f"(goal <= 1000 ms) {status(cold <= 1.0)}")  # fmt: skip
    print(f"100-input product/ratio, formula to first result from the cache: "
          f"{cached * 1000:.0f} ms (goal <= 50 ms) {status(cached <= 0.05)}")  # fmt: skip
    compile_times = {n: compile_time(n) for n in (100, 200, 400, 1000)}
    for n, t in compile_times.items():
        print(f"compiling the {n}-input product/ratio (value and gradient programs): "
              f"{t * 1000:.1f} ms")  # fmt: skip
    growth = compile_times[1000] / compile_times[100]
    print(f"compile time 1000 / 100 inputs: {growth:.1f} (about linear: <= 15) "
          f"{status(growth <= 15)}")  # fmt: skip
    speeds = array_speed()
    for name, ratio in speeds:
        print(f"value program / lambdified expression on 10^6 draws, {name}: {ratio:.2f}")
    worst = max(r for _, r in speeds)
    print(f"value program on Monte Carlo draws, worst example: {worst:.2f}x the lambdified "
          f"expression (goal <= 1.15) {status(worst <= 1.15)}")  # fmt: skip
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
