"""Start-up cost of the command line, whole processes, as ratios within one run.

1. ``viscometry evaluate examples/primary_capillary_poiseuille.toml`` (a fresh process: start
   Python, import what the command needs, read the file, check units, build the model,
   propagate, print the table) versus a hand-written script that reads the same TOML file
   with :mod:`tomllib`, converts its units with a table written for this file, propagates
   with the `uncertainties` package and prints y, u_c and U = 2 u_c (the script is
   ``BASELINE`` below; it is checked to give the same u_c first).
   Goal: evaluate at most 2x the script's time.
2. ``viscometry --help`` versus a trivial script that imports :mod:`argparse` and
   :mod:`json` and prints the help of a parser with eleven subcommands (``TRIVIAL``).
   Goal: at most 2x the trivial script's time (the command line imports only itself and
   the standard library for its help).
3. For reference, not a goal: ``viscometry evaluate --help`` and ``viscometry --version``.

Each pair is run alternately (the order swapped every round) after one warm-up round; the
medians of ``ROUNDS`` rounds are compared. Timings include the interpreter's start-up,
which both sides pay. Environment variables that would change the result
(``PYTHONPROFILEIMPORTTIME``, ``PYTHONDONTWRITEBYTECODE``) are removed for the runs.

Run: ``.venv/bin/python benchmarks/bench_startup.py [ROUNDS]`` (or ``make bench``).
"""

from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "primary_capillary_poiseuille.toml"
ROUNDS = 15

#: The baseline of goal 1: what a person would write for this one file (its units and model
#: hard-coded), with the `uncertainties` package.
BASELINE = r"""
import math
import sys
import tomllib

from uncertainties import ufloat

SI = {"mm": 1e-3, "mL": 1e-6, "kg/m^3": 1.0, "m/s^2": 1.0, "s": 1.0}  # this file's units
with open(sys.argv[1], "rb") as f:
    doc = tomllib.load(f)
x = {}
for name, spec in doc["inputs"].items():
    if "readings" in spec:
        r = spec["readings"]
        value = sum(r) / len(r)
        u = math.sqrt(sum((v - value) ** 2 for v in r) / (len(r) - 1) / len(r))
    elif "half_width" in spec:
        value, u = spec["value"], spec["half_width"] / math.sqrt(3)
    elif "expanded_uncertainty" in spec:
        value, u = spec["value"], spec["expanded_uncertainty"] / spec["coverage_factor"]
    else:
        value, u = spec["value"], spec["standard_uncertainty"]
    x[name] = ufloat(value * SI[spec["unit"]], u * SI[spec["unit"]], name)
eta = math.pi * x["r"] ** 4 * x["rho_m"] * x["g"] * x["h"] * x["t"] / (8 * x["V"] * x["L"])
eta = eta * 1e3  # mPa*s
print(f"eta = {eta.nominal_value:.6f} mPa*s, u_c = {eta.std_dev:.6f} mPa*s, "
      f"U = {2 * eta.std_dev:.6f} mPa*s (k = 2)")
"""

#: The baseline of goal 2: a command line of the same shape that imports nothing else.
TRIVIAL = r"""
import argparse
import json

parser = argparse.ArgumentParser(prog="trivial", description="a trivial command line")
parser.add_argument("--version", action="version", version="trivial 1")
sub = parser.add_subparsers(dest="command", metavar="COMMAND", title="commands")
for name in ("audit", "decide", "demo", "evaluate", "methods", "plan", "report", "scope",
             "score", "simulate", "workspace"):
    p = sub.add_parser(name, help=f"the {name} command")
    p.add_argument("file", metavar="FILE", help="a file")
    p.add_argument("--json", action="store_true", help="print JSON")
parser.parse_args(["--help"])
json.dumps({})
"""


def _command() -> list[str]:
    script = Path(sys.executable).with_name("viscometry")
    return [str(script)] if script.exists() else [sys.executable, "-m", "viscometry"]


def _env() -> dict[str, str]:
    env = dict(os.environ)
    for key in ("PYTHONPROFILEIMPORTTIME", "PYTHONDONTWRITEBYTECODE", "PYTHONWARNINGS"):
        env.pop(key, None)
    return env


def _time(argv: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run(argv, check=True, stdout=subprocess.DEVNULL, cwd=ROOT, env=_env())
    return time.perf_counter() - t0


def paired(a: list[str], b: list[str], rounds: int) -> tuple[float, float]:
    """Medians of ``rounds`` alternate runs of ``a`` and ``b`` (one warm-up round first)."""
    _time(a), _time(b)
    ta: list[float] = []
    tb: list[float] = []
    for i in range(rounds):
        if i % 2:
            tb.append(_time(b))
            ta.append(_time(a))
        else:
            ta.append(_time(a))
            tb.append(_time(b))
    return statistics.median(ta), statistics.median(tb)


def status(ok: bool) -> str:
    return "PASS" if ok else "MISS"


def _same_problem(viscometry: list[str]) -> None:
    """The script and the command compute the same u_c (so the comparison is fair)."""
    out = subprocess.run([*viscometry, "evaluate", "--json", str(EXAMPLE)], check=True,
                         capture_output=True, text=True, cwd=ROOT, env=_env()).stdout  # fmt: skip
    ours = json.loads(out)["standard_uncertainty"]
    line = subprocess.run([sys.executable, "-c", BASELINE, str(EXAMPLE)], check=True,
                          capture_output=True, text=True, env=_env()).stdout  # fmt: skip
    theirs = float(line.split("u_c = ")[1].split()[0])
    assert abs(theirs / ours - 1) < 1e-3, (ours, theirs)


def main(rounds: int = ROUNDS) -> int:
    viscometry = _command()
    _same_problem(viscometry)
    t_ours, t_script = paired(
        [*viscometry, "evaluate", str(EXAMPLE)], [sys.executable, "-c", BASELINE, str(EXAMPLE)],
        rounds,
    )  # fmt: skip
    r1 = t_ours / t_script
    print(f"(1) viscometry evaluate {EXAMPLE.name}: {t_ours * 1e3:.0f} ms, tomllib + "
          f"uncertainties script {t_script * 1e3:.0f} ms, ratio {r1:.2f}x (goal <= 2x) "
          f"{status(r1 <= 2)}", flush=True)  # fmt: skip
    t_help, t_trivial = paired([*viscometry, "--help"], [sys.executable, "-c", TRIVIAL], rounds)
    r2 = t_help / t_trivial
    print(f"(2) viscometry --help: {t_help * 1e3:.0f} ms, trivial argparse + json script "
          f"{t_trivial * 1e3:.0f} ms, ratio {r2:.2f}x (goal <= 2x) {status(r2 <= 2)}",
          flush=True)  # fmt: skip
    t_sub, _ = paired([*viscometry, "evaluate", "--help"], [sys.executable, "-c", TRIVIAL], 5)
    t_version, _ = paired([*viscometry, "--version"], [sys.executable, "-c", TRIVIAL], 5)
    print(f"    (for reference: viscometry evaluate --help {t_sub * 1e3:.0f} ms, "
          f"viscometry --version {t_version * 1e3:.0f} ms, python -c pass "
          f"{statistics.median(_time([sys.executable, '-c', 'pass']) for _ in range(5)) * 1e3:.0f} ms)")  # fmt: skip
    return 0


if __name__ == "__main__":
    raise SystemExit(main(int(sys.argv[1]) if len(sys.argv) > 1 else ROUNDS))
