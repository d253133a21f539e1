"""Benchmark of the Monte Carlo core (viscometry.gum.montecarlo); a script, not a test.

Run:  .venv/bin/python benchmarks/bench_montecarlo.py

(a) Speed: 10⁶ trials of the pressure-driven capillary model

        η = π r⁴ Δp t / (8 V (L + n r)) − m ρ V / (8 π (L + n r) t)

    (Hagen-Poiseuille with a Couette end correction n·r and a kinetic-energy correction
    m ρ V/(8π(L + n r) t); the formula has eight quantities, all treated as uncertain inputs)
    through ``run_monte_carlo`` with a plain NumPy model function, against a hand-written
    NumPy Monte Carlo of the same model in the same process that computes the same outputs
    (mean, standard deviation, 95 % probabilistically symmetric interval; p = 0.95 is passed
    to ``run_monte_carlo`` explicitly, its default being 0.9545). Best of 3 repeats.
    Goal: wall-time ratio ≤ 1.2. ``run_monte_carlo`` additionally computes the shortest
    interval and a histogram, which the hand-written loop skips.

(b) Memory: tracemalloc peak for 10⁶ and 10⁷ trials. The stored output values take 8 bytes
    per trial; everything else (the input draws, chunked) should stay flat. Goals: the
    non-output part grows by at most 1.5× from 10⁶ to 10⁷ trials, and the 10⁷ total stays
    under 500 MB.

The input estimates are INVENTED demo values for a fictional lab's water-like sample near
20 °C; they are not measurement data and not check values. Timings depend on the machine.
"""

from __future__ import annotations

import math
import time
import tracemalloc

import numpy as np

from viscometry.gum.inputs import InputQuantity
from viscometry.gum.montecarlo import run_monte_carlo

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
P = 0.95


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


def main() -> None:
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


if __name__ == "__main__":
    main()
