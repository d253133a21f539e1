"""Command-line tests of ``viscometry plan``, ``scope``, ``decide`` and ``score``.

The planning numbers come from the exact analytic linear budget y = x1 + x2 + x3 with
u = (3, 4, 12) and k = 2 (u_c = 13, U = 26); decisions and scores are recomputed
independently with scipy / plain arithmetic from the published formulas named beside them.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from scipy import stats

from viscometry.cli import main
from viscometry.io import load_budget

ROOT = Path(__file__).resolve().parent.parent
EXAMPLE_BUDGET = ROOT / "examples" / "primary_capillary_poiseuille.toml"
EXAMPLE_CANDIDATES = ROOT / "examples" / "upgrades" / "pressure_capillary_upgrades.toml"

LINEAR_BUDGET = """
format = "viscometry-budget/1"
title = "linear test budget"

[measurand]
name = "y"
unit = "mm"
model = "x1 + x2 + x3"
coverage_factor = 2

[inputs.x1]
value = 1.0
unit = "mm"
standard_uncertainty = 3.0

[inputs.x2]
value = 2.0
unit = "mm"
standard_uncertainty = 4.0

[inputs.x3]
value = 3.0
unit = "mm"
standard_uncertainty = 12.0
"""

CANDIDATES = """
currency = "credits"

[[candidate]]
name = "A"
cost = 80
[candidate.changes]
x3 = 0.0

[[candidate]]
name = "B"
cost = 5
[candidate.changes]
x1 = 0.0
x2 = 0.0

[[candidate]]
name = "D"
cost = 20
description = "x3 to 6 mm"
[candidate.changes]
x3 = { expanded_uncertainty = 12.0, coverage_factor = 2 }
"""


@pytest.fixture
def files(tmp_path: Path) -> tuple[str, str]:
    b = tmp_path / "linear.toml"
    b.write_text(LINEAR_BUDGET, encoding="utf-8")
    c = tmp_path / "cands.toml"
    c.write_text(CANDIDATES, encoding="utf-8")
    return str(b), str(c)


def _run(capsys: pytest.CaptureFixture[str], *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out = capsys.readouterr()
    return code, out.out, out.err


# --------------------------------------------------------------------------- plan
def test_plan_json_exact(files: tuple[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(capsys, "plan", *files, "--target", "12", "--json")
    assert code == 0, err
    d = json.loads(out)
    assert list(d) == [
        "schema", "measurand", "unit", "currency", "search", "baseline", "target",
        "combination_rule", "candidates", "options", "frontier", "best_per_cost",
        "cheapest_reaching_target", "required_uncertainties", "warnings", "fingerprint",
        "source",
    ]  # fmt: skip
    assert d["schema"] == "viscometry.plan/1"
    assert d["currency"] == "credits" and d["search"] == "exhaustive"
    assert d["fingerprint"] == load_budget(files[0]).fingerprint and d["source"] == files[0]
    # the plan's warnings are the budget's, as evaluate gives them (none for this sum: its
    # inputs may take either sign; test_scope_warnings_are_the_budgets covers a warned one)
    assert d["warnings"] == list(load_budget(files[0]).budget.evaluate().warnings) == []
    assert d["baseline"]["expanded_uncertainty"] == pytest.approx(26.0, rel=1e-14)  # 2·13
    # exact analytic: B + D gives u = (0, 0, 6) → U = 12 for 5 + 20
    assert sorted(d["cheapest_reaching_target"]["candidates"]) == ["B", "D"]
    assert d["cheapest_reaching_target"]["cost"] == 25.0
    # best per cost: D, (26 − 2√61)/20
    assert d["best_per_cost"]["candidates"] == ["D"]
    assert d["best_per_cost"]["reduction_per_cost"] == pytest.approx(
        (26 - 2 * math.sqrt(61)) / 20, rel=1e-13
    )
    assert len(d["options"]) == 8
    us = [o["expanded_uncertainty"] for o in d["options"]]
    assert us == sorted(us)
    # exact analytic cost–U frontier: (), B, D, B+D, A, A+B with U = 26, 24, 2√61, 12, 10, 0
    front = [(sorted(o["candidates"]), o["cost"], o["expanded_uncertainty"]) for o in d["frontier"]]
    assert [(c, cost) for c, cost, _ in front] == [
        ([], 0.0), (["B"], 5.0), (["D"], 20.0), (["B", "D"], 25.0), (["A"], 80.0),
        (["A", "B"], 85.0),
    ]  # fmt: skip
    assert [u for *_, u in front] == pytest.approx(
        [26.0, 24.0, 2 * math.sqrt(61.0), 12.0, 10.0, 0.0], rel=1e-14, abs=1e-14
    )
    req = {r["input"]: r for r in d["required_uncertainties"]}
    assert list(req["x3"]) == [
        "input", "unit", "current_uncertainty", "required_uncertainty", "floor", "reachable",
        "solver",
    ]  # fmt: skip
    # exact analytic: (12/2)² − 3² − 4² = 11 → u(x3) ≤ √11
    assert req["x3"]["required_uncertainty"] == pytest.approx(math.sqrt(11.0), rel=1e-13)
    assert req["x1"]["reachable"] is False


def test_plan_text_and_percent_target(
    files: tuple[str, str], capsys: pytest.CaptureFixture[str]
) -> None:
    # y = 6 mm; 200 % of 6 = 12 mm, the same target as above
    code, out, err = _run(capsys, "plan", *files, "--target", "200%")
    assert code == 0, err
    assert "cheapest set reaching U ≤ 12 mm: B + D for 25 credits" in out
    assert "x1: unreachable even with u(x1) = 0" in out
    # by default the ranking shows the cost–U frontier (6 of the 8 sets, by cost); --all
    # ranks every set by U (candidate numbers: 1 = A, 2 = B, 3 = D)
    assert "the cost–U frontier (sets no cheaper set beats)" in out
    assert _set_labels(out) == ["(baseline)", "2", "3", "2+3", "1", "1+2"]
    code, out, err = _run(capsys, "plan", *files, "--target", "200%", "--all")
    assert code == 0, err
    assert "every set, ranked by U" in out and "cost–U frontier" not in out
    assert _set_labels(out) == ["1+2", "1+2+3", "1", "1+3", "2+3", "3", "2", "(baseline)"]


def _set_labels(out: str) -> list[str]:
    """First cells of the rows of the ranking table printed by ``viscometry plan``."""
    lines = out.splitlines()
    start = next(i for i, line in enumerate(lines) if line.split()[:2] == ["set", "cost"]) + 1
    rows = []
    for line in lines[start:]:
        if not line.startswith("  ") or line.startswith("  ..."):
            break
        rows.append(line.split()[0])
    return rows


def test_plan_errors_name_file_table_key(files: tuple[str, str], tmp_path: Path,
                                         capsys: pytest.CaptureFixture[str]) -> None:  # fmt: skip
    bad = tmp_path / "bad.toml"
    bad.write_text(
        '[[candidate]]\nname = "A"\ncost = -3\n[candidate.changes]\nx1 = 1\n', encoding="utf-8"
    )
    code, _out, err = _run(capsys, "plan", files[0], str(bad))
    assert code == 2
    assert err.startswith("viscometry: error: ")
    assert "bad.toml: [[candidate]] #1 ('A'), key 'cost': must be a number ≥ 0, got -3" in err
    bad.write_text(
        '[[candidate]]\nname = "A"\ncost = 3\n[candidate.changes]\nq = 1\n', encoding="utf-8"
    )
    code, _out, err = _run(capsys, "plan", files[0], str(bad))
    assert code == 2 and "[changes] key 'q': no such input" in err
    bad.write_text("[[candidate]\n", encoding="utf-8")
    code, _out, err = _run(capsys, "plan", files[0], str(bad))
    assert code == 2 and "not valid TOML" in err
    code, _out, err = _run(capsys, "plan", *files, "--target", "abc")
    assert code == 2 and "--target must be a number" in err


@pytest.mark.skipif(not EXAMPLE_CANDIDATES.exists() or not EXAMPLE_BUDGET.exists(),
                    reason="example files not present")  # fmt: skip
def test_plan_example_files(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(capsys, "plan", str(EXAMPLE_BUDGET), str(EXAMPLE_CANDIDATES), "--json")
    assert code == 0, err
    d = json.loads(out)
    assert d["search"] == "exhaustive" and len(d["options"]) == 2 ** len(d["candidates"])


# --------------------------------------------------------------------------- scope
def test_scope_json(files: tuple[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = _run(capsys, "scope", files[0], "--over", "x1", "--from", "1", "--to", "11",
                          "--points", "6", "--edges", "4,10,16", "--json")  # fmt: skip
    assert code == 0, err
    d = json.loads(out)
    assert d["schema"] == "viscometry.scope/1"
    assert (d["measurand"], d["unit"], d["over"], d["over_unit"]) == ("y", "mm", "x1", "mm")
    pts = d["points"]
    assert [p["input_value"] for p in pts] == [1.0, 3.0, 5.0, 7.0, 9.0, 11.0]
    # exact analytic: y = x1 + 5, U = 26 throughout (linear model)
    assert [p["value"] for p in pts] == pytest.approx([6.0, 8.0, 10.0, 12.0, 14.0, 16.0], rel=1e-14)
    assert all(p["expanded_uncertainty"] == pytest.approx(26.0, rel=1e-14) for p in pts)
    assert all(p["dominant"] == "x3" for p in pts)
    # exact analytic: x3 carries 144/169 of the variance
    assert all(p["dominant_share"] == pytest.approx(144 / 169, rel=1e-14) for p in pts)
    # scope: largest U/y in [4, 10] is 26/6 → 4.4 (rounded up; common practice, no source)
    assert [s["stated_relative_expanded_uncertainty"] for s in d["scope"]] == [4.4, 2.6]
    assert [s["largest_relative_expanded_uncertainty"] for s in d["scope"]] == pytest.approx(
        [26 / 6, 26 / 10], rel=1e-14
    )  # exact analytic
    assert d["fingerprint"] == load_budget(files[0]).fingerprint and d["source"] == files[0]


def test_scope_text_and_errors(files: tuple[str, str], capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _err = _run(capsys, "scope", files[0], "--over", "x2", "--from", "1", "--to", "100",
                           "--points", "3", "--log")  # fmt: skip
    assert code == 0 and "y [mm] across x2 [mm] from 1 to 100, 3 points" in out
    code, _out, err = _run(capsys, "scope", files[0], "--over", "nope", "--from", "1", "--to", "2")
    assert code == 2 and "no input named 'nope'" in err
    code, _out, err = _run(
        capsys, "scope", files[0], "--over", "x1", "--from", "0", "--to", "2", "--log"
    )
    assert code == 2 and "a log range needs start and stop > 0" in err
    assert err.startswith(f"viscometry: error: {files[0]}: ")


def test_scope_old_option_name_is_refused(
    files: tuple[str, str], capsys: pytest.CaptureFixture[str]
) -> None:
    # --scope was renamed --edges: the old name is an unknown option (usage error, exit 2)
    code, out, err = _run(capsys, "scope", files[0], "--over", "x1", "--from", "1", "--to", "11",
                          "--scope", "4,10,16")  # fmt: skip
    assert code == 2 and out == ""
    assert "unrecognized arguments: --scope" in err


def test_scope_warnings_are_the_budgets(
    files: tuple[str, str], capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    # one budget, one path: the range carries the same warnings as evaluate — here for
    # y = x1·x2 with u(x1) = 3 > |x1| = 1 and u(x2) = 4 > |x2| = 2 (factors that keep their
    # sign) and an unused x3
    text = Path(files[0]).read_text(encoding="utf-8").replace('"x1 + x2 + x3"', '"x1 * x2 / 1"')
    text = text.replace('unit = "mm"\nmodel', 'unit = "mm^2"\nmodel', 1)
    warned = tmp_path / "warned.toml"
    warned.write_text(text, encoding="utf-8")
    code, out, err = _run(capsys, "evaluate", "--json", str(warned))
    assert code == 0, err
    expected = json.loads(out)["warnings"]
    assert len(expected) == 3 and "input x3 is not used" in expected[0]
    assert "u(x1) = 3 mm is at least |x1| = 1 mm" in expected[1]
    assert "u(x2) = 4 mm is at least |x2| = 2 mm" in expected[2]
    code, out, err = _run(capsys, "scope", str(warned), "--over", "x2", "--from", "1", "--to", "11",
                          "--points", "3", "--json")  # fmt: skip
    assert code == 0, err
    assert json.loads(out)["warnings"] == expected
    code, out, err = _run(capsys, "scope", str(warned), "--over", "x2", "--from", "1", "--to", "11",
                          "--points", "3")  # fmt: skip
    assert code == 0, err
    assert [line for line in out.splitlines() if line.startswith("warning: ")] == [
        f"warning: {w}" for w in expected
    ]


# --------------------------------------------------------------------------- decide
def test_decide_guarded_normal(capsys: pytest.CaptureFixture[str]) -> None:
    # JCGM 106:2012 (from memory): with w = U, k = 2 and y at the acceptance limit,
    # p_c = Φ(2) ≈ 0.977; recomputed with scipy
    code, out, err = _run(capsys, "decide", "--value", "9.88", "-u", "0.06", "--upper", "10",
                          "--rule", "guarded", "--json")  # fmt: skip
    assert code == 0, err
    d = json.loads(out)
    assert d["verdict"] == "accept"
    assert d["conformance_probability"] == pytest.approx(stats.norm.cdf(2.0), rel=1e-12)
    assert d["acceptance_upper"] == pytest.approx(9.88, rel=1e-15)
    assert "caution" in d


def test_decide_from_expanded_and_budget(
    files: tuple[str, str], capsys: pytest.CaptureFixture[str]
) -> None:
    # two-sided normal p_c = Φ((T_U − y)/u) − Φ((T_L − y)/u), recomputed with scipy
    code, out, _ = _run(capsys, "decide", "--value", "10.9", "-U", "0.2", "-k", "2",
                        "--lower", "9", "--upper", "11", "--json")  # fmt: skip
    d = json.loads(out)
    assert d["standard_uncertainty"] == pytest.approx(0.1)
    assert d["conformance_probability"] == pytest.approx(
        stats.norm.cdf(1.0) - stats.norm.cdf(-19.0), rel=1e-9
    )
    # from the budget file: y = 6 mm, u_c = 13 mm, k = 2, normal
    code, out, err = _run(capsys, "decide", "--budget", files[0], "--lower", "-20", "--upper", "40")
    assert code == 0, err
    assert "verdict: ACCEPT" in out and "mm" in out
    p = stats.norm.cdf(34 / 13) - stats.norm.cdf(-26 / 13)
    assert f"{100 * p:.1f} %" in out
    code, _out, err = _run(capsys, "decide", "--value", "1", "--upper", "2")
    assert code == 2 and "give exactly one of --standard-uncertainty" in err
    code, _out, err = _run(capsys, "decide", "--value", "1", "-u", "0.1")
    assert code == 2 and "both None" in err


# --------------------------------------------------------------------------- score
@pytest.mark.parametrize(
    ("argv", "value", "cls"),
    [
        # ISO 13528 E_n = (x − X)/√(U_lab² + U_ref²): (1.9 − 1)/√(0.36 + 0.45) = 0.9/0.9 = 1 → satisfactory
        (["en", "--value", "1.9", "-U", "0.6", "--assigned", "1.0",
          "--assigned-expanded-uncertainty", str(math.sqrt(0.45))], 1.0, "satisfactory"),
        # z = (x − x_pt)/σ_pt = 2.5 → questionable (ISO 13528; ISO/IEC 17043)
        (["z", "--value", "12.5", "--assigned", "10", "--sigma-pt", "1"], 2.5, "questionable"),
        # ISO 13528 z′ = (x − x_pt)/√(σ_pt² + u(x_pt)²) = 3/√(1 + 0.5625) = 3/1.25 = 2.4 → questionable
        (["zprime", "--value", "13", "--assigned", "10", "--sigma-pt", "1",
          "--assigned-uncertainty", "0.75"], 2.4, "questionable"),
        # ζ = (x − x_pt)/√(u² + u_pt²) = 3/√(0.36 + 0.64) = 3 → unsatisfactory
        (["zeta", "--value", "13", "-u", "0.6", "--assigned", "10",
          "--assigned-uncertainty", "0.8"], 3.0, "unsatisfactory"),
    ],
)  # fmt: skip
def test_score_json(
    argv: list[str], value: float, cls: str, capsys: pytest.CaptureFixture[str]
) -> None:
    code, out, err = _run(capsys, "score", *argv, "--json")
    assert code == 0, err
    d = json.loads(out)
    assert d["value"] == pytest.approx(value, rel=1e-12)
    assert d["classification"] == cls


def test_score_text_and_errors(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _ = _run(
        capsys, "score", "z", "--value", "12.5", "--assigned", "10", "--sigma-pt", "1"
    )
    assert code == 0 and out.startswith("z = 2.50: questionable")
    code, _out, err = _run(capsys, "score", "en", "--value", "1", "--assigned", "1")
    assert (
        code == 2
        and "score en needs --expanded-uncertainty, --assigned-expanded-uncertainty" in err
    )
    code, _out, err = _run(
        capsys, "score", "z", "--value", "1", "--assigned", "1", "--sigma-pt", "1", "-u", "2"
    )
    assert code == 2 and "does not use --standard-uncertainty" in err
