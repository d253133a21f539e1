"""Benchmark of the Monte Carlo core (viscometry.gum.montecarlo); a script, not a test.

Run:  .venv/bin/python benchmarks/bench_montecarlo.py          (about two minutes)

(a) Speed in process: 10⁶ trials of the pressure-driven capillary model

        η = π r⁴ Δp t / (8 V (L + n r)) − m ρ V / (8 π (L + n r) t)

    (Hagen-Poiseuille with a Couette end correction n·r and a kinetic-energy correction
    m ρ V/(8π(L + n r) t); the formula has eight quantities, all treated as uncertain inputs)
    through ``run_monte_carlo`` (one thread) with a plain NumPy model function, against a
    hand-written NumPy Monte Carlo of the same model in the same process that computes the
    same outputs (mean, standard deviation, 95 % probabilistically symmetric interval; p = 0.95
    is passed to ``run_monte_carlo`` explicitly, its default being 0.9545). Best of 3 repeats.
    Goal: wall-time ratio ≤ 1.2. ``run_monte_carlo`` additionally computes the shortest
    interval and a histogram, which the hand-written loop skips.

(b) Memory in process: tracemalloc peak for 10⁶ and 10⁷ trials. The stored output values
    take 8 bytes per trial; everything else (the input draws, chunked) should stay flat.
    Goals: the non-output part grows by at most 1.5× from 10⁶ to 10⁷ trials, and the 10⁷
    total stays under 500 MB.

(c) The command as a whole process: ``viscometry simulate examples/primary_capillary_
    poiseuille.toml --trials 1e7 --seed 1`` (default: every available core) against a
    hand-written single-core chunked NumPy script for the same model and inputs (chunks of
    10⁵ trials, all 10⁷ output values kept, mean and standard deviation combined per chunk,
    an in-place sort and the 95 % probabilistically symmetric interval), each a subprocess.
    Wall time and peak resident memory (``os.wait4``) of each, medians of 5 paired runs in
    alternating order. Goals: time ratio ≤ 1.3, peak memory ratio ≤ 1.2.

(d) The same simulation in process on 2 cores: ``simulate_budget(..., jobs=2)`` on the
    loaded budget (model already compiled) against the same hand-written script's function
    run in the same process; medians of 5 paired runs. Goal: time ratio ≤ 0.6. The ratio
    with ``jobs=1`` is printed alongside, for information. Needs at least two cores.

The input estimates of (a) and (b) are INVENTED demo values for a fictional lab's water-like
sample near 20 °C; those of (c) and (d) come from the invented example budget. They are not
measurement data and not check values. Timings depend on the machine; the number of cores
is printed first.
"""

from __future__ import annotations

import math
import os
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np

from viscometry.gum.inputs import InputQuantity
from viscometry.gum.montecarlo import available_cores, run_monte_carlo

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE = ROOT / "examples" / "primary_capillary_poiseuille.toml"
VISCOMETRY = Path(sys.executable).with_name("viscometry")

# Invented demo estimates, SI units (fictional lab; not check values).
INPUTS = [
    InputQuantity.normal("r", 2.5e-4, 5.0e-7),  # capillary radius [m]
    InputQuantity.normal("dp", 1630.0, 2.0),  # pressure difference [Pa]
    InputQuantity(  # flow time [s], Type A from 10 readings
        "t", 200.0, 0.05, distribution="student_t", dof=9.0, evaluation="A"
    ),
    InputQuantity.normal("V", 5.0e-6, 5.0e-9),  # efflux volume [m³]
    InputQuantity.normal("L", 0.1, 1.0e-4),  # capillary length [m]
    InputQuantity.rectangular("n", 1.0, 0.35),  # end-correction coefficient [1]
    InputQuantity.rectangular("m", 1.12, 0.09),  # kinetic-energy coefficient [1]
    InputQuantity.normal("rho", 998.2, 0.1),  # liquid density [kg/m³]
]

TRIALS = 10**6
BIG = 10**7
P = 0.95
PAIRS = 5

#: The hand-written single-core chunked script of (c) and (d). ``INPUTS`` (SI values of the
#: example budget's inputs) is filled in from the budget, so that both sides draw from the
#: same distributions; everything else is what a person would write for this one model.
SCRIPT = """
import math
import sys

import numpy as np

INPUTS = {inputs!r}  # (name, distribution, value, u, dof, half-width), SI
P = {p!r}
CHUNK = 100_000


def simulate(trials, seed):
    rng = np.random.default_rng(seed)
    y = np.empty(trials)
    count, mean, m2 = 0, 0.0, 0.0
    for start in range(0, trials, CHUNK):
        n = min(CHUNK, trials - start)
        x = {{}}
        for name, dist, value, u, dof, a in INPUTS:
            if dist == "normal":
                x[name] = rng.normal(value, u, n)
            elif dist == "student_t":
                x[name] = value + u * rng.standard_t(dof, n)
            else:  # rectangular
                x[name] = rng.uniform(value - a, value + a, n)
        # eta = pi r^4 rho_m g h t / (8 V L), in mPa s
        yc = y[start : start + n]
        yc[...] = 1e3 * math.pi * x["r"] ** 4 * x["rho_m"] * x["g"] * x["h"] * x["t"] / (
            8.0 * x["V"] * x["L"]
        )
        mc = float(yc.mean())
        m2c = float(yc.var()) * n
        total = count + n
        delta = mc - mean
        mean += delta * n / total
        m2 += m2c + delta * delta * count * n / total
        count = total
    y.sort()
    q = int(math.floor(P * trials + 0.5))
    r = (trials - q + 1) // 2
    return mean, math.sqrt(m2 / (trials - 1)), float(y[r - 1]), float(y[r + q - 1])


if __name__ == "__main__":
    print(*simulate(int(float(sys.argv[1])), int(sys.argv[2])))
"""


def capillary_model(r, dp, t, V, L, n, m, rho):  # noqa: N803 - symbols of the formula
    """Dynamic viscosity [Pa·s] of the pressure-driven capillary model (vectorised)."""
    length = L + n * r
    return math.pi * r**4 * dp * t / (8.0 * V * length) - m * rho * V / (8.0 * math.pi * length * t)


def hand_written(trials: int, seed: int) -> tuple[float, float, float, float]:
    """A plain NumPy Monte Carlo of the same model, all trials at once."""
    rng = np.random.default_rng(seed)
    x = []
    for q in INPUTS:
        if q.distribution == "normal":
            x.append(rng.normal(q.value, q.standard_uncertainty, trials))
        elif q.distribution == "student_t":
            x.append(q.value + q.standard_uncertainty * rng.standard_t(q.dof, trials))
        else:  # rectangular
            a = q.standard_uncertainty * math.sqrt(3.0)
            x.append(rng.uniform(q.value - a, q.value + a, trials))
    y = capillary_model(*x)
    y.sort()
    qn = int(math.floor(P * trials + 0.5))
    rr = (trials - qn + 1) // 2
    return float(y.mean()), float(y.std(ddof=1)), float(y[rr - 1]), float(y[rr + qn - 1])


def best_of(fn, repeats: int = 3) -> float:
    best = math.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def peak_bytes(trials: int) -> int:
    tracemalloc.start()
    tracemalloc.reset_peak()
    run_monte_carlo(capillary_model, INPUTS, trials=trials, seed=2, coverage_probability=P)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak


def status(ok: bool) -> str:
    return "PASS" if ok else "MISS"


def in_process_goals() -> None:
    """(a) and (b)."""

    def library():
        return run_monte_carlo(
            capillary_model, INPUTS, trials=TRIALS, seed=1, coverage_probability=P
        )

    res = library()
    ref = hand_written(TRIALS, 1)
    lo, hi = res.symmetric_interval
    print(
        f"demo model (invented inputs): eta = {res.value:.6e} Pa·s, u = {res.standard_uncertainty:.2e},"
        f" {P:.0%} interval [{lo:.6e}, {hi:.6e}]"
        f" (hand-written: {ref[0]:.6e}, {ref[1]:.2e}, [{ref[2]:.6e}, {ref[3]:.6e}])"
    )

    t_lib = best_of(library)
    t_hand = best_of(lambda: hand_written(TRIALS, 1))
    ratio = t_lib / t_hand
    print(
        f"(a) 10^6 trials, 8 inputs: run_monte_carlo {t_lib * 1e3:.0f} ms, "
        f"hand-written NumPy {t_hand * 1e3:.0f} ms (best of 3)"
    )
    print(f"goal: time ratio <= 1.2   measured: {ratio:.2f}   {status(ratio <= 1.2)}")

    small, large = 10**6, 10**7
    p_small = peak_bytes(small)
    p_large = peak_bytes(large)
    extra_small = p_small - 8 * small
    extra_large = p_large - 8 * large
    mb = 1e-6
    print(
        f"(b) tracemalloc peak: 10^6 trials {p_small * mb:.1f} MB, 10^7 trials "
        f"{p_large * mb:.1f} MB (ratio {p_large / p_small:.2f}); beyond the stored output "
        f"values: {extra_small * mb:.1f} MB vs {extra_large * mb:.1f} MB"
    )
    flat = extra_large / extra_small
    print(
        f"goal: draws' memory flat (non-output peak ratio <= 1.5)   measured: {flat:.2f}   "
        f"{status(flat <= 1.5)}"
    )
    print(
        f"goal: 10^7-trial peak < 500 MB   measured: {p_large * mb:.1f} MB   "
        f"{status(p_large < 500e6)}"
    )


# ---------------------------------------------------------------- (c) and (d)
def script_text() -> str:
    """The hand-written script, with the example budget's inputs in SI."""
    from viscometry.io.reader import load_budget

    budget = load_budget(str(EXAMPLE)).budget
    rows = []
    for q in budget.si_inputs():
        dof = float(q.dof) if math.isfinite(q.dof) else None
        rows.append((q.name, q.distribution, q.value, q.standard_uncertainty, dof, q.half_width))
    return SCRIPT.format(inputs=rows, p=budget.coverage_probability)


def child_runs(argv_a: list[str], argv_b: list[str]) -> list[tuple[float, float, float, float]]:
    """PAIRS paired runs of two commands in alternating order: (time_a, rss_a, time_b, rss_b)."""
    rows = []
    for i in range(PAIRS):
        if i % 2:
            tb, rb, _ = run_child_waited(argv_b)
            ta, ra, _ = run_child_waited(argv_a)
        else:
            ta, ra, _ = run_child_waited(argv_a)
            tb, rb, _ = run_child_waited(argv_b)
        rows.append((ta, ra, tb, rb))
    return rows


def run_child_waited(argv: list[str]) -> tuple[float, float, str]:
    """Like :func:`run_child`, reaping the child with ``os.wait4`` to read its own peak RSS."""
    t0 = time.perf_counter()
    proc = subprocess.Popen(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    out = proc.stdout.read()  # type: ignore[union-attr]
    err = proc.stderr.read()  # type: ignore[union-attr]
    _, code, usage = os.wait4(proc.pid, 0)
    elapsed = time.perf_counter() - t0
    proc.returncode = os.waitstatus_to_exitcode(code)
    proc.stdout.close()  # type: ignore[union-attr]
    proc.stderr.close()  # type: ignore[union-attr]
    if proc.returncode:
        raise RuntimeError(f"{' '.join(argv[:3])} failed: {err.decode().strip()}")
    return elapsed, usage.ru_maxrss / 1024, out.decode()


def whole_process_goals(script: Path) -> None:
    """(c): the command against the script, each a whole process."""
    cli = [str(VISCOMETRY), "simulate", str(EXAMPLE), "--trials", "1e7", "--seed", "1"]
    hand = [sys.executable, str(script), "1e7", "1"]
    _, _, out = run_child_waited(hand)
    mean, sd, lo, hi = (float(v) for v in out.split())
    print(
        f"(c) example budget, hand-written script: eta = {mean:.6f} mPa·s, u = {sd:.2g}, "
        f"interval [{lo:.6f}, {hi:.6f}]"
    )
    rows = child_runs(cli, hand)
    t_cli, rss_cli, t_hand, rss_hand = (statistics.median(col) for col in zip(*rows, strict=True))
    time_ratio = statistics.median(r[0] / r[2] for r in rows)
    rss_ratio = statistics.median(r[1] / r[3] for r in rows)
    print(
        f"    viscometry simulate --trials 1e7 ({available_cores()} threads): {t_cli:.2f} s, "
        f"peak {rss_cli:.0f} MB; hand-written script: {t_hand:.2f} s, peak {rss_hand:.0f} MB "
        f"(medians of {PAIRS} paired runs)"
    )
    print(
        f"goal: whole-process time ratio <= 1.3   measured: {time_ratio:.2f}   "
        f"{status(time_ratio <= 1.3)}"
    )
    print(
        f"goal: whole-process peak memory ratio <= 1.2   measured: {rss_ratio:.2f}   "
        f"{status(rss_ratio <= 1.2)}"
    )


def in_process_cores_goal(script: Path) -> None:
    """(d): simulate_budget on 2 threads (and 1) against the script's function, in process."""
    from viscometry.gum.simulation import simulate_budget
    from viscometry.io.reader import load_budget

    if available_cores() < 2:
        print("(d) fewer than two cores available: the 2-core goal cannot be measured")
        return
    namespace: dict[str, object] = {"__name__": "hand_written_script"}
    exec(compile(script.read_text(), str(script), "exec"), namespace)  # our own benchmark text
    hand = namespace["simulate"]
    budget = load_budget(str(EXAMPLE)).budget
    simulate_budget(budget, trials=10**5, seed=1, jobs=1)  # compile the model first

    def timed(fn) -> float:
        t0 = time.perf_counter()
        fn()
        return time.perf_counter() - t0

    rows = []
    for i in range(PAIRS):
        runs = [
            lambda: hand(BIG, 1),  # type: ignore[operator]
            lambda: simulate_budget(budget, trials=BIG, seed=1, jobs=2),
            lambda: simulate_budget(budget, trials=BIG, seed=1, jobs=1),
        ]
        order = range(3) if i % 2 == 0 else range(2, -1, -1)
        times = [0.0, 0.0, 0.0]
        for j in order:
            times[j] = timed(runs[j])
        rows.append(times)
    t_hand, t_two, t_one = (statistics.median(col) for col in zip(*rows, strict=True))
    two = statistics.median(r[1] / r[0] for r in rows)
    one = statistics.median(r[2] / r[0] for r in rows)
    print(
        f"(d) in process, 10^7 trials: simulate_budget jobs=2 {t_two:.2f} s, jobs=1 "
        f"{t_one:.2f} s, hand-written script {t_hand:.2f} s (medians of {PAIRS} paired runs); "
        f"jobs=1 ratio {one:.2f}"
    )
    print(f"goal: 2-core time ratio <= 0.6   measured: {two:.2f}   {status(two <= 0.6)}")


def load() -> str:
    """The 1-minute load average: other work on the machine takes cores from (c) and (d)."""
    try:
        return f"{os.getloadavg()[0]:.2f}"
    except OSError:  # pragma: no cover - not on Unix
        return "unknown"


def main() -> None:
    print(
        f"cores available: {available_cores()} (os.cpu_count() = {os.cpu_count()}); "
        f"load average {load()}"
    )
    in_process_goals()
    with tempfile.TemporaryDirectory() as tmp:
        script = Path(tmp) / "hand_written_mc.py"
        script.write_text(script_text())
        whole_process_goals(script)
        in_process_cores_goal(script)
    print(f"load average at the end: {load()} (this benchmark adds up to 2; more: other work)")


if __name__ == "__main__":
    main()
