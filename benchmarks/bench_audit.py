"""Re-auditing an archive on every core: ``viscometry audit --jobs 1`` versus ``--jobs 2``.

Generates ``FILES`` budget files with distinct models in a temporary folder: each a random
product, ratio or sum formula of 3 to 8 inputs with names of its own (so no two files share
a compiled model), normal, rectangular and Type A-like inputs (some with degrees of
freedom), and a ``[recorded]`` table written by :func:`viscometry.io.save_budget` from the
budget's own result (so every file matches). The data are invented (random numbers; no
laboratory). Then times the command as whole processes, ``--jobs 1`` and ``--jobs 2``
alternately (order swapped every round) after one warm-up round, and compares the medians
of ``ROUNDS`` rounds; the two outputs are checked to be byte-identical.

Goal: ``--jobs 2`` at least 1.7x faster than ``--jobs 1`` (needs 2 cores; on one core the
line says SKIP). Also printed: the per-file cost (``--jobs 1`` time less the time of an audit
of one file, divided by ``FILES``); the best ratio two processes could give with that
start-up (Amdahl: start-up + half the per-file work), which bounds any ``--jobs 2``; and, in
each round, how much faster two processes that only count in a loop finish than one doing
the same work twice (``SPIN``: what the machine's cores gave two processes during the run;
2.0 on two idle cores, less on a machine others use at the same time).

Run: ``.venv/bin/python benchmarks/bench_audit.py [ROUNDS]`` (or ``make bench``).
"""

from __future__ import annotations

import random
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
FILES = 1000
ROUNDS = 5
GOAL = 1.7
VISCOMETRY = [sys.executable, "-m", "viscometry"]
#: A process that only counts (about half a second of one core).
SPIN = [sys.executable, "-c", "x = 0\nfor i in range(15_000_000): x += i"]


def _formula(rng: random.Random, names: list[str]) -> str:
    """A random product/ratio/sum of the inputs, each used once."""
    text = names[0]
    for name in names[1:]:
        op = rng.choice(("*", "/", "+", "*", "/"))
        text = f"({text}) + {name}" if op == "+" else f"{text} {op} {name}"
    return text


def generate(folder: Path, count: int = FILES, seed: int = 14) -> None:
    """Write ``count`` budget files with distinct models and matching records."""
    from viscometry.gum import Budget, InputQuantity
    from viscometry.io import save_budget
    from viscometry.io.writer import recorded_from

    rng = random.Random(seed)
    for i in range(count):
        names = [f"{rng.choice('abcdefgh')}{j}_{i}" for j in range(rng.randint(3, 8))]
        inputs = []
        for name in names:
            value = rng.uniform(1.0, 10.0)
            kind = rng.randrange(3)
            if kind == 0:
                q = InputQuantity.normal(name, value, value * rng.uniform(1e-4, 1e-2), "1")
            elif kind == 1:
                q = InputQuantity.rectangular(name, value, value * rng.uniform(1e-4, 1e-2), "1")
            else:
                dof = float(rng.randint(4, 20))
                q = InputQuantity.normal(name, value, value * 1e-3, "1", dof=dof)
            inputs.append(q)
        budget = Budget.from_formula(
            "y", _formula(rng, names), inputs, "1", title=f"generated model {i}"
        )
        save_budget(
            budget, folder / f"model_{i:04d}.toml", recorded=recorded_from(budget.evaluate())
        )


def _run(args: list[str]) -> tuple[float, bytes]:
    t0 = time.perf_counter()
    proc = subprocess.run([*VISCOMETRY, *args], capture_output=True, check=False, cwd=ROOT)
    elapsed = time.perf_counter() - t0
    if proc.returncode != 0:
        raise SystemExit(f"viscometry {' '.join(args)} failed: {proc.stderr.decode()[-500:]}")
    return elapsed, proc.stdout


def _two_cores() -> float:
    """Throughput of two counting processes at once against one doing both in turn."""
    t0 = time.perf_counter()
    subprocess.run(SPIN, check=True)
    subprocess.run(SPIN, check=True)
    one_after_other = time.perf_counter() - t0
    t0 = time.perf_counter()
    both = [subprocess.Popen(SPIN) for _ in range(2)]
    for proc in both:
        proc.wait()
    return one_after_other / (time.perf_counter() - t0)


def main(rounds: int = ROUNDS) -> None:
    from viscometry.parallel import available_cores

    cores = available_cores()
    with tempfile.TemporaryDirectory(prefix="bench_audit_") as tmp:
        folder = Path(tmp)
        t0 = time.perf_counter()
        generate(folder)
        print(
            f"generated {FILES} budget files with distinct models in {time.perf_counter() - t0:.1f} s"
        )
        one = str(folder / "model_0000.toml")
        _run(["audit", "--jobs", "1", str(folder)])  # warm-up (file cache, byte code)
        times: dict[str, list[float]] = {"1": [], "2": [], "one": [], "spin": []}
        outputs: dict[str, bytes] = {}
        for r in range(rounds):
            for jobs in ("1", "2") if r % 2 == 0 else ("2", "1"):
                elapsed, outputs[jobs] = _run(["audit", "--jobs", jobs, str(folder)])
                times[jobs].append(elapsed)
            times["one"].append(_run(["audit", "--jobs", "1", one])[0])
            times["spin"].append(_two_cores())
    t1, t2, t_one = (statistics.median(times[k]) for k in ("1", "2", "one"))
    assert outputs["1"] == outputs["2"], "--jobs 2 printed something else than --jobs 1"
    per_file = (t1 - t_one) / FILES
    ideal = t1 / (t_one + (t1 - t_one) / 2)
    ratio = t1 / t2
    print(f"cores available: {cores}; medians of {rounds} rounds (whole processes)")
    print(f"audit of one file (start-up): {t_one:.2f} s; per-file cost {per_file * 1e3:.1f} ms")
    print(f"audit of {FILES} files: --jobs 1 {t1:.2f} s, --jobs 2 {t2:.2f} s; outputs identical")
    print(f"best possible on 2 cores with this start-up (Amdahl): {ideal:.2f}x")
    for r in range(rounds):
        print(
            f"  round {r + 1}: --jobs 1 {times['1'][r]:.2f} s, --jobs 2 {times['2'][r]:.2f} s "
            f"({times['1'][r] / times['2'][r]:.2f}x); two counting processes against one: "
            f"{times['spin'][r]:.2f}x (2.00 on two idle cores)"
        )
    if cores < 2:
        print(f"--jobs 2 vs --jobs 1: {ratio:.2f}x (goal >= {GOAL}x) SKIP: this machine has 1 core")
        return
    verdict = "PASS" if ratio >= GOAL else "MISS"
    print(f"--jobs 2 vs --jobs 1: {ratio:.2f}x faster (goal >= {GOAL}x) {verdict}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else ROUNDS)
