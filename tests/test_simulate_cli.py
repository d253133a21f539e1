"""Tests of ``viscometry simulate`` (viscometry/commands/simulate.py), run in-process.

Budget files are written with :func:`viscometry.io.save_budget` from small budgets whose
Monte Carlo verdict is known in closed form: Y = R⁴ with R normal (exact analytic; see
tests/test_simulation.py): at u(r)/r = 5 % the first-order interval misses the exact
[(μ − 2σ)⁴, (μ + 2σ)⁴] by about 0.06 ≫ δ = 0.005, so it is not validated.
"""

from __future__ import annotations

import json

import pytest

import viscometry
from viscometry.cli import main
from viscometry.gum import Budget, InputQuantity
from viscometry.io import load_budget, save_budget

KEYS = [
    "schema", "trials", "seed", "adaptive", "converged", "value", "standard_uncertainty",
    "coverage_probability", "interval", "validation", "first_order", "warnings", "fingerprint",
    "version", "source",
]  # fmt: skip


@pytest.fixture
def r4_file(tmp_path):
    b = Budget.from_formula("y", "r**4", [InputQuantity.normal("r", 1.0, 0.05, "mm")], "mm^4")
    return save_budget(b, tmp_path / "r4.toml")


@pytest.fixture
def linear_file(tmp_path):
    b = Budget.from_formula(
        "A", "a * b",
        [InputQuantity.normal("a", 2.0, 0.002, "m"), InputQuantity.normal("b", 3.0, 0.003, "m")],
        "m^2",
    )  # fmt: skip
    return save_budget(b, tmp_path / "area.toml")


def _json(capsys, argv):
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 0, err
    assert err == ""
    return json.loads(out)


def test_json_keys_and_values(capsys, r4_file):
    d = _json(capsys, ["simulate", str(r4_file), "--trials", "100000", "--seed", "5", "--json"])
    assert list(d) == KEYS
    assert d["schema"] == "viscometry.simulate/1"
    assert list(d["interval"]) == ["low", "high", "kind"]
    assert list(d["validation"]) == [
        "reference", "tolerance", "d_low", "d_high", "validated", "not_applicable",
    ]  # fmt: skip
    assert list(d["first_order"]) == [
        "value", "standard_uncertainty", "coverage_factor", "expanded_uncertainty", "propagation",
    ]  # fmt: skip
    assert d["trials"] == 100_000 and d["seed"] == 5
    assert d["adaptive"] is False
    assert d["interval"]["kind"] == "symmetric"
    assert d["coverage_probability"] == 0.9545
    assert d["validation"]["reference"] == "first-order"
    assert d["validation"]["tolerance"] == pytest.approx(0.005)  # u = 0.20 mm⁴, n_dig = 2
    assert d["validation"]["validated"] is False  # exact analytic verdict (module docstring)
    assert d["validation"]["not_applicable"] is None
    # first-order reference of Y = R⁴: y = 1, u = 4·1³·0.05 = 0.2 mm⁴ (exact analytic)
    assert d["first_order"]["value"] == pytest.approx(1.0, rel=1e-14)
    assert d["first_order"]["standard_uncertainty"] == pytest.approx(0.2, rel=1e-12)
    assert d["first_order"]["propagation"] == "first-order"
    # the only warning: M = 10⁵ < 10⁴/(1 − 0.9545) ≈ 2.2·10⁵ trials (JCGM 101:2008, 7.2.2)
    (warning,) = d["warnings"]
    assert warning.startswith("M = 100000 Monte Carlo trials is fewer than") and "7.2.2" in warning
    assert d["fingerprint"] == load_budget(r4_file).fingerprint
    assert d["version"] == viscometry.__version__
    assert d["source"] == str(r4_file)


def test_json_is_reproducible_with_a_seed(capsys, r4_file):
    argv = ["simulate", str(r4_file), "--trials", "1e5", "--seed", "8", "--json"]
    assert _json(capsys, argv) == _json(capsys, argv)


def test_options_reach_the_simulation(capsys, r4_file):
    d = _json(
        capsys,
        ["simulate", str(r4_file), "--trials", "100_000", "--seed", "1", "--json",
         "--interval", "shortest", "--higher-order", "--digits", "1"],
    )  # fmt: skip
    assert d["interval"]["kind"] == "shortest"
    assert d["validation"]["reference"] == "higher-order"
    assert d["validation"]["tolerance"] == pytest.approx(0.05)  # u = 0.2 at n_dig = 1


def test_adaptive(capsys, linear_file):
    d = _json(capsys, ["simulate", str(linear_file), "--adaptive", "--digits", "1", "--seed", "2",
                       "--json"])  # fmt: skip
    assert d["trials"] % 10_000 == 0 and d["trials"] >= 20_000  # whole batches (7.9.4)


def test_human_output(capsys, r4_file):
    code = main(["simulate", str(r4_file), "--trials", "100000", "--seed", "5"])
    out, err = capsys.readouterr()
    assert code == 0 and err == ""
    lines = out.splitlines()
    assert lines[0] == "Monte Carlo method (JCGM 101:2008): 100000 trials, seed 5"
    assert any(line.startswith("95.45 % coverage interval (probabilistically symmetric)")
               for line in lines)  # fmt: skip
    assert any(line.startswith("first-order budget not validated at δ = 0.005 mm⁴")
               for line in lines)  # fmt: skip
    assert f"fingerprint: {load_budget(r4_file).fingerprint}" in lines


@pytest.mark.parametrize(
    "extra, message",
    [
        (["--trials", "0"], "trials must be at least 1"),
        (["--trials", "10", "--adaptive"], "not allowed with"),
        (["--trials", "ten"], "whole number"),
        (["--trials", "1.5"], "whole number"),
        (["--seed", "-1"], "seed"),
        (["--interval", "widest"], "invalid choice"),
    ],
)
def test_bad_options_exit_2(capsys, r4_file, extra, message):
    code = main(["simulate", str(r4_file), *extra])
    out, err = capsys.readouterr()
    assert code == 2
    assert out == ""
    assert message in err


def test_missing_file_exits_2_with_one_line(capsys, tmp_path):
    code = main(["simulate", str(tmp_path / "nope.toml"), "--trials", "1000"])
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    assert err.startswith("viscometry: error: ") and err.count("\n") == 1


def test_model_failure_exits_2(capsys, tmp_path):
    # sqrt of N(0.5, 1²) is NaN in ~31 % of the trials: a ModelError naming the file.
    b = Budget.from_formula("y", "sqrt(x)", [InputQuantity.normal("x", 0.5, 1.0)])
    path = save_budget(b, tmp_path / "sqrt.toml")
    code = main(["simulate", str(path), "--trials", "10000", "--seed", "1"])
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    assert err.startswith(f"viscometry: error: {path}: ") and "non-finite" in err


def test_a_run_without_seed_prints_the_seed_it_drew_and_can_be_repeated(r4_file, capsys):
    # Reproducibility: the record of a run must be enough to repeat it (common practice).
    path = str(r4_file)
    assert main(["simulate", path, "--trials", "2000"]) == 0
    out = capsys.readouterr().out
    seed = int(out.split("repeat this run with --seed ")[1].split()[0])
    assert main(["simulate", path, "--trials", "2000", "--seed", str(seed)]) == 0
    again = capsys.readouterr().out
    first = [line for line in out.splitlines() if "drawn at random" not in line]
    assert first == again.splitlines()


def test_jobs_zero_is_refused_with_one_line(capsys, r4_file):
    # refused before the file is read: the line names the option, not the file (this
    # package's own wording, the same as `viscometry audit --jobs 0`)
    for bad in ("0", "-2"):
        code = main(["simulate", str(r4_file), "--trials", "1000", "--jobs", bad])
        out, err = capsys.readouterr()
        assert code == 2 and out == ""
        assert err == f"viscometry: error: --jobs must be a whole number of at least 1, got {bad}\n"
    code = main(["simulate", str(r4_file), "--jobs", "two"])
    out, err = capsys.readouterr()
    assert code == 2 and out == "" and "argument --jobs: must be a whole number" in err


def test_the_number_of_threads_changes_nothing_in_the_output(capsys, r4_file):
    # 2 × 65 536 + 5 trials: two whole chunks and a partial one (viscometry.gum.montecarlo)
    argv = ["simulate", str(r4_file), "--trials", "131077", "--seed", "3", "--json"]
    one = _json(capsys, [*argv, "--jobs", "1"])
    assert one["trials"] == 131_077
    assert _json(capsys, [*argv, "--jobs", "3"]) == one
    assert _json(capsys, argv) == one  # default: every core
    assert _json(capsys, [*argv, "--jobs", "1000"]) == one  # capped at 64 threads
