"""Control chart, run rules, top-down uncertainty and reconciliation (issue 16, parts 3–4).

Check values and their sources:

* the top-down formula on hand-made cases with Pythagorean triples (exact analytic);
* Shewhart limits centre ± 2σ / ± 3σ (ISO 7870-2:2013, from memory) against ``statistics``;
* s_Rw against ``statistics.stdev`` and ``numpy.std(ddof=1)`` (independent computations);
* χ² tests against ``scipy.stats.chi2`` and the closed form of the χ² survival function for
  even ν: P(χ²_ν ≥ x) = e^(−x/2) Σ_{j<ν/2} (x/2)^j / j! (exact analytic);
* run rules on constructed sequences, one side of each count (ISO 7870-2:2013, Annex B,
  from memory);
* scores against their formulas (ISO 13528:2015, 9.4–9.7, from memory).

The example files are invented (the fictional Harrowgate Fluids Laboratory); their numbers are
inputs here, and every expected value is recomputed independently in the test.
"""

from __future__ import annotations

import csv
import datetime as dt
import json
import math
import re
import statistics
from pathlib import Path

import numpy as np
import pytest
from scipy.stats import chi2

from viscometry.cli import main
from viscometry.errors import InputError
from viscometry.evidence import (
    BudgetClaim,
    ControlPoint,
    ControlRecord,
    ProficiencyHistory,
    ProficiencyRound,
    control_chart,
    reconcile,
    run_rule_violations,
    top_down,
)

ROOT = Path(__file__).resolve().parents[1]
EVIDENCE = ROOT / "examples" / "evidence"
CONTROL = EVIDENCE / "cs46_control_chart.csv"
ROUNDS = EVIDENCE / "fenmoor_proficiency_rounds.csv"
HISTORY = EVIDENCE / "ubbelohde_4471_history.csv"
BUDGET = ROOT / "examples" / "lubricant_lab_kinematic_viscosity.toml"
SNAKE = re.compile(r"^[a-z][a-z0-9_]*$")
DAY = dt.date(2025, 1, 6)


def _record(values, unit="mm^2/s"):
    pts = tuple(ControlPoint(DAY + dt.timedelta(days=i), v) for i, v in enumerate(values))
    return ControlRecord("check oil", unit, pts)


def _round(x, x_pt, u_pt, name="R", U=1.0, sigma=1.0):
    return ProficiencyRound(name, DAY, x, U, x_pt, u_pt, sigma)


def _chi2_sf_even(x, nu):
    """P(χ²_ν ≥ x) for even ν, closed form (exact analytic)."""
    h = x / 2
    return math.exp(-h) * math.fsum(h**j / math.factorial(j) for j in range(nu // 2))


# --------------------------------------------------------------------- top-down, hand cases


def test_top_down_on_a_hand_case_with_pythagorean_triples():
    # values 98.8, 100, 101.2: mean 100, s = 1.2 → u(Rw) = 0.012 (exact analytic)
    chart = control_chart(_record([98.8, 100.0, 101.2]))
    # biases +0.004 and −0.004 → RMS 0.004; u(x_pt)/x_pt = 0.003 → u(bias) = 0.005 (3-4-5)
    rounds = ProficiencyHistory("mm^2/s", (_round(50.2, 50.0, 0.15), _round(19.92, 20.0, 0.06)))
    td = top_down(chart, rounds)
    assert td.reproducibility == pytest.approx(0.012, rel=1e-12)  # exact analytic
    assert td.rms_bias == pytest.approx(0.004, rel=1e-12)  # exact analytic
    assert td.reference_uncertainty == pytest.approx(0.003, rel=1e-12)  # exact analytic
    assert td.bias_uncertainty == pytest.approx(0.005, rel=1e-12)  # exact analytic (3-4-5)
    assert td.standard_uncertainty == pytest.approx(0.013, rel=1e-12)  # exact (5-12-13)
    assert td.expanded_uncertainty == pytest.approx(0.026, rel=1e-12)  # k = 2


def test_reconciliation_on_the_hand_case():
    chart = control_chart(_record([98.8, 100.0, 101.2]))
    rounds = ProficiencyHistory("mm^2/s", (_round(50.2, 50.0, 0.15), _round(19.92, 20.0, 0.06)))
    claim = BudgetClaim(50.0, 0.5, 2.0, "mm^2/s", (("t", 0.2), ("C", 0.7), ("T", 0.1)))
    rec = reconcile(chart, rounds, claim)
    assert rec.ratio == pytest.approx(0.026 / 0.02, rel=1e-12)  # exact analytic
    a, b = rec.tests
    # test A: χ² = (n − 1) s² / (w x̄)² = 2 · 1.2² / 1² = 2.88, ν = 2 (exact analytic)
    assert a.statistic == pytest.approx(2.88, rel=1e-12) and a.degrees_of_freedom == 2
    assert a.p_value == pytest.approx(math.exp(-1.44), rel=1e-12)  # χ²_2 sf = e^(−x/2)
    # test B: ζ with u_lab = w·x (exact analytic arithmetic), Σζ² against χ²_2
    z1 = 0.2 / math.hypot(0.01 * 50.2, 0.15)
    z2 = -0.08 / math.hypot(0.01 * 19.92, 0.06)
    assert b.statistic == pytest.approx(z1**2 + z2**2, rel=1e-12)
    assert b.p_value == pytest.approx(math.exp(-(z1**2 + z2**2) / 2), rel=1e-12)
    assert rec.verdict == "borderline" and not a.rejected and not b.rejected
    assert rec.dominant(2) == (("C", 0.7), ("t", 0.2))  # largest variance shares first
    assert rec.top_down_expanded_uncertainty == pytest.approx(0.026 * 50, rel=1e-12)
    # a stricter α rejects test A (p = 0.237) → does not hold; a larger u covers everything
    assert reconcile(chart, rounds, claim, alpha=0.3).verdict == "does_not_hold"
    generous = BudgetClaim(50.0, 0.75, 2.0)
    assert reconcile(chart, rounds, generous).verdict == "holds"
    assert set(rec.flags) == {"few_control_values", "few_rounds"}


def test_bad_arguments_are_refused_naming_the_field():
    chart = control_chart(_record([1.0, 1.1]))
    hist = ProficiencyHistory("mm^2/s", (_round(1.0, 1.0, 0.01),))
    with pytest.raises(InputError, match="alpha must lie between 0 and 1"):
        reconcile(chart, hist, BudgetClaim(1.0, 0.01), alpha=1.5)
    with pytest.raises(InputError, match="value must not be zero"):
        BudgetClaim(0.0, 0.01)
    with pytest.raises(InputError, match="sd_for_pt must be positive"):
        _round(1.0, 1.0, 0.01, sigma=0.0)
    with pytest.raises(InputError, match="at least two values"):
        _record([1.0])
    with pytest.raises(InputError, match="all equal"):
        control_chart(_record([1.0, 1.0, 1.0]))
    with pytest.raises(InputError, match="rules must be among"):
        control_chart(_record([1.0, 1.1]), rules=(9,))


# --------------------------------------------------------------------- run rules


def _rules(z):
    return sorted({(v.rule, v.index) for v in run_rule_violations(z, 0.0, 1.0)})


@pytest.mark.parametrize(
    ("rule", "signal", "quiet"),
    [
        # ISO 7870-2:2013, Annex B (from memory); each pair: the count reached / one short
        (1, [0.1, 3.01], [0.1, 3.0]),
        (2, [0.5, -0.5] + [0.5] * 9, [0.5, -0.5] + [0.5] * 8),
        (3, [0.0, 0.1, 0.2, 0.3, 0.4, 0.5], [0.0, 0.1, 0.2, 0.3, 0.4, 0.4]),
        (4, [0.5, -0.5] * 7, [0.5, -0.5] * 6 + [0.5]),
        (5, [0.0, 2.1, 0.0, 2.1], [0.0, 2.1, 0.0, 0.0, 2.1]),
        (6, [0.0, 1.1, 1.1, 0.0, 1.1, 1.1], [0.0, 1.1, 1.1, 0.0, 0.0, 1.1, 1.1]),
        (7, [0.5, -0.5] * 7 + [0.5], [0.5, -0.5] * 7),
        (8, [1.5, -1.5, -1.6, 1.6] * 2, [1.5, -1.5, -1.6, 1.6, 1.5, -1.5, -1.6]),
    ],
)
def test_each_run_rule_signals_at_its_count_and_not_one_short(rule, signal, quiet):
    assert (rule, len(signal) - 1) in _rules(signal)
    assert rule not in {r for r, _ in _rules(quiet)}


def test_rule_5_needs_both_points_on_the_same_side():
    assert 5 not in {r for r, _ in _rules([0.0, 2.1, -2.1])}
    assert 6 not in {r for r, _ in _rules([1.1, -1.1, 1.1, -1.1, 1.1])}


# --------------------------------------------------------------------- the example files


def _control_values():
    rows = [r for r in csv.reader(CONTROL.read_text().splitlines()) if r and r[0][:2] == "20"]
    return [float(r[1]) for r in rows]


def _rounds_rows():
    rows = [r for r in csv.reader(ROUNDS.read_text().splitlines()) if r and r[0][:3] == "FLV"]
    return [[float(c) for c in r[2:]] for r in rows]  # x, U, x_pt, u_x_pt, sigma_pt


def _json(capsys, *argv):
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    return json.loads(captured.out)


def _keys(obj):
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield k
            yield from _keys(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from _keys(v)


@pytest.fixture(scope="module")
def reconciled(tmp_path_factory):
    import contextlib
    import io

    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        code = main(["reconcile", "--control", str(CONTROL), "--proficiency", str(ROUNDS),
                     "--budget", str(BUDGET), "--history", str(HISTORY), "--date",
                     "2026-05-01", "--json"])  # fmt: skip
    assert code == 0
    return json.loads(out.getvalue())


def test_reconcile_json_has_a_schema_snake_case_keys_and_provenance(reconciled):
    d = reconciled
    assert d["schema"] == "viscometry.reconcile/1" and d["version"]
    assert all(SNAKE.match(k) for k in _keys(d)), sorted(set(_keys(d)))
    assert set(d["sources"]) == {"control", "proficiency", "budget", "history"}
    assert all(s["fingerprint"].startswith("sha256:") for s in d["sources"].values())
    assert isinstance(d["warnings"], list)
    assert any("run rules 5" in w for w in d["warnings"])
    assert "does not replace" in d["reconciliation"]["caution"]


def test_the_chart_of_the_example_against_statistics(reconciled):
    x = _control_values()
    c = reconciled["chart"]
    assert c["count"] == len(x) == 25
    mean, s = statistics.fmean(x), statistics.stdev(x)  # independent computation
    assert c["centre"] == pytest.approx(mean, rel=1e-12)
    assert c["reproducibility_sd"] == pytest.approx(s, rel=1e-10)
    assert c["reproducibility_sd"] == pytest.approx(np.std(x, ddof=1), rel=1e-12)
    # Shewhart limits: centre ± 2σ, ± 3σ (ISO 7870-2:2013, from memory)
    assert c["warning_limits"]["upper"] == pytest.approx(mean + 2 * s, rel=1e-12)
    assert c["action_limits"]["lower"] == pytest.approx(mean - 3 * s, rel=1e-12)
    # the one signal: points 20 and 22 beyond +2σ, two of three (rule 5), by hand
    z = [(v - mean) / s for v in x]
    assert [i + 1 for i, zi in enumerate(z) if abs(zi) > 2] == [20, 22]
    assert [(v["rule"], v["point"], v["points"]) for v in c["violations"]] == [(5, 22, [20, 22])]


def test_top_down_and_tests_of_the_example_against_independent_computations(reconciled):
    x = _control_values()
    rows = _rounds_rows()
    u_rw = statistics.stdev(x) / statistics.fmean(x)
    biases = [(r[0] - r[2]) / r[2] for r in rows]
    rms = math.sqrt(sum(b * b for b in biases) / len(biases))
    u_cref = sum(r[3] / r[2] for r in rows) / len(rows)
    u_c = math.sqrt(u_rw**2 + rms**2 + u_cref**2)  # Nordtest TR 537 (from memory)
    td = reconciled["top_down"]
    assert td["reproducibility"] == pytest.approx(u_rw, rel=1e-10)
    assert td["rms_bias"] == pytest.approx(rms, rel=1e-12)
    assert td["reference_uncertainty"] == pytest.approx(u_cref, rel=1e-12)
    assert td["expanded_uncertainty"] == pytest.approx(2 * u_c, rel=1e-10)
    b = reconciled["budget"]
    w = b["standard_uncertainty"] / b["value"]
    rec = reconciled["reconciliation"]
    assert rec["ratio"] == pytest.approx(2 * u_c / (2 * w), rel=1e-10)
    test_a, test_b = rec["tests"]
    stat_a = (len(x) - 1) * (statistics.stdev(x) / (w * statistics.fmean(x))) ** 2
    assert test_a["statistic"] == pytest.approx(stat_a, rel=1e-10)
    assert test_a["p_value"] == pytest.approx(chi2.sf(stat_a, 24), rel=1e-10)
    assert test_a["p_value"] == pytest.approx(_chi2_sf_even(stat_a, 24), rel=1e-9)
    zetas = [(r[0] - r[2]) / math.hypot(w * r[0], r[3]) for r in rows]
    stat_b = sum(z * z for z in zetas)
    assert test_b["statistic"] == pytest.approx(stat_b, rel=1e-10)
    assert test_b["p_value"] == pytest.approx(_chi2_sf_even(stat_b, 4), rel=1e-9)
    verdict = "does_not_hold" if min(test_a["p_value"], test_b["p_value"]) < 0.05 else (
        "borderline" if rec["ratio"] > 1 else "holds")  # fmt: skip
    assert rec["verdict"] == verdict == "borderline"
    shares = [s["name"] for s in rec["dominant_inputs"]]
    assert shares == ["C", "T", "t"]  # the budget's largest variance shares, in order


def test_the_rounds_scores_against_their_formulas(reconciled):
    rows = _rounds_rows()
    for r, got in zip(rows, reconciled["proficiency"]["rounds"], strict=True):
        x, big_u, x_pt, u_pt, sigma = r
        s = got["scores"]  # ISO 13528:2015, 9.4–9.7 (from memory)
        assert s["z"]["value"] == pytest.approx((x - x_pt) / sigma, rel=1e-12)
        assert s["z_prime"]["value"] == pytest.approx((x - x_pt) / math.hypot(sigma, u_pt))
        assert s["zeta"]["value"] == pytest.approx((x - x_pt) / math.hypot(big_u / 2, u_pt))
        assert s["e_n"]["value"] == pytest.approx((x - x_pt) / math.hypot(big_u, 2 * u_pt))
        assert all(v["classification"] == "satisfactory" for v in s.values())


def test_drift_in_reconcile_matches_the_drift_command(reconciled, capsys):
    d = _json(capsys, "drift", HISTORY, "--date", "2026-05-01", "--json")
    got = reconciled["drift"]
    assert got["slope"] == pytest.approx(d["drift"]["slope"], rel=1e-12)
    assert got["prediction"]["constant"] == pytest.approx(d["prediction"]["constant"], rel=1e-12)
    assert got["prediction"]["expanded_uncertainty"] == pytest.approx(
        d["prediction"]["expanded_uncertainty"], rel=1e-12
    )
    assert got["interval"]["next_date"] == d["interval"]["next_date"]


def test_reconcile_text_names_the_verdict_and_where_to_look(capsys, tmp_path):
    png = tmp_path / "chart.png"
    argv = ["reconcile", "--control", str(CONTROL), "--proficiency", str(ROUNDS), "--budget",
            str(BUDGET), "--plot", str(png)]  # fmt: skip
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert "rule 5 at point 22 (2026-01-26)" in out
    assert "ratio U_top-down / U_budget = 1.38" in out  # regression value (this tool)
    assert "verdict: borderline" in out
    assert "look first at the budget's largest variance shares: C 61 %, T 37 %, t 2.2 %" in out
    assert "does not replace it" in out
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_a_fixed_centre_and_sigma_are_used(capsys):
    d = _json(capsys, "reconcile", "--control", CONTROL, "--proficiency", ROUNDS, "--budget",
              BUDGET, "--centre", "45.9", "--sigma", "0.05", "--json")  # fmt: skip
    c = d["chart"]
    assert c["centre_given"] and c["sigma_given"]
    # σ = 0.05 is larger than the values' scatter: no point beyond 2σ, and 15 in a row within
    # 1σ (rule 7: σ overstated) from point 15 on
    assert {v["rule"] for v in c["violations"]} == {7}
    assert c["violations"][0]["point"] == 15
    assert c["action_limits"]["upper"] == pytest.approx(45.9 + 0.15, rel=1e-12)
    assert c["reproducibility_sd"] == pytest.approx(statistics.stdev(_control_values()))


def test_charts_draw(tmp_path):
    from viscometry.evidence_qc_plots import control_chart_figure, scores_figure
    from viscometry.io.qc_records import load_control, load_proficiency

    chart = control_chart(load_control(CONTROL).record)
    fig = control_chart_figure(chart)
    assert len(fig.axes[0].lines) >= 6
    fig2 = scores_figure(load_proficiency(ROUNDS).history)
    assert fig2.axes[0].get_ylim() == (-3.5, 3.5)
