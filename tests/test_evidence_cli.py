"""``viscometry drift`` and ``viscometry accept``: text, JSON keys, provenance, and numbers
against independent computations (numpy.polyfit with weights; exact analytic arithmetic).

The example files are invented (a fictional laboratory); their numbers are inputs here, and
every expected value is recomputed independently in the test.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import re
from pathlib import Path

import numpy as np
import pytest

from viscometry.cli import main

ROOT = Path(__file__).resolve().parents[1]
HISTORY = ROOT / "examples" / "evidence" / "ubbelohde_4471_history.csv"
TIMINGS = ROOT / "examples" / "evidence" / "base_oil_duplicate_timings.csv"
SNAKE = re.compile(r"^[a-z][a-z0-9_]*$")


def _json(capsys, *argv):
    assert main([str(a) for a in argv]) == 0
    return json.loads(capsys.readouterr().out)


def _keys(obj):
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield k
            yield from _keys(v)
    elif isinstance(obj, list):
        for v in obj:
            yield from _keys(v)


def _certificates():
    rows = [line.split(",", 4) for line in HISTORY.read_text().splitlines()
            if line[:1].isdigit()]  # fmt: skip
    dates = [dt.date.fromisoformat(r[0]) for r in rows]
    return dates, np.array([float(r[1]) for r in rows]), np.array([float(r[2]) for r in rows])


def test_drift_json_against_an_independent_fit(capsys):
    d = _json(capsys, "drift", HISTORY, "--date", "2026-05-01", "--json")
    assert d["schema"] == "viscometry.drift/1" and d["source"] == str(HISTORY)
    assert d["fingerprint"].startswith("sha256:") and d["version"]
    # the only warning: 2026-05-01 is past the recommended date (tests/test_evidence_overdue.py)
    assert [w[:35] for w in d["warnings"]] == ["recalibration overdue on 2026-05-01"]
    assert len(d["certificates"]) == 5
    assert all(SNAKE.match(k) for k in _keys(d)), sorted(set(_keys(d)))
    dates, c, u_exp = _certificates()
    x = np.array([(t - dates[-1]).days / 365.25 for t in dates])
    s = u_exp / 2
    # independent: numpy.polyfit with weights 1/σ, unscaled covariance (absolute σ)
    p, cov = np.polyfit(x, c, 1, w=1 / s, cov="unscaled")
    assert d["drift"]["slope"] == pytest.approx(p[0], rel=1e-9)
    assert d["drift"]["slope_uncertainty"] == pytest.approx(math.sqrt(cov[0, 0]), rel=1e-9)
    assert np.array(d["drift"]["covariance"]) == pytest.approx(cov[::-1, ::-1], rel=1e-9)
    # prediction anchored on the last certificate; its u from the weights (exact analytic):
    # u² = u_last² + Δt² u²(b) + 2 Δt g_last u_last², g_last = w_last (x_last − x̄_w)/S_xx
    w = 1 / s**2
    xbar = np.sum(w * x) / np.sum(w)
    sxx = np.sum(w * (x - xbar) ** 2)
    g_last = w[-1] * (x[-1] - xbar) / sxx
    dtime = (dt.date(2026, 5, 1) - dates[-1]).days / 365.25
    u2 = s[-1] ** 2 + dtime**2 * cov[0, 0] + 2 * dtime * g_last * s[-1] ** 2
    pred = d["prediction"]
    assert pred["constant"] == pytest.approx(c[-1] + p[0] * dtime, rel=1e-12)
    assert pred["standard_uncertainty"] == pytest.approx(math.sqrt(u2), rel=1e-9)
    assert pred["expanded_uncertainty"] == pytest.approx(2 * math.sqrt(u2), rel=1e-9)
    term = d["stability_input"]
    assert term["name"] == "dC_drift" and term["unit"] == "mm^2/s^2"
    assert term["standard_uncertainty"] == pytest.approx(math.sqrt(u2 - s[-1] ** 2), rel=1e-9)
    # interval: T = f·U_last/(|b| + k u(b)) (the documented rule, exact analytic)
    years = 0.5 * u_exp[-1] / (abs(p[0]) + 2 * math.sqrt(cov[0, 0]))
    assert d["interval"]["years"] == pytest.approx(years, rel=1e-9)
    assert d["interval"]["next_date"] == str(dates[-1] + dt.timedelta(days=int(years * 365.25)))


def test_drift_text_output(capsys):
    assert main(["drift", str(HISTORY), "--date", "2026-05-01", "--fraction", "0.3"]) == 0
    out = capsys.readouterr().out
    assert "drift: b = " in out and "per year" in out
    assert "predicted constant on 2026-05-01" in out and "mm²/s²" in out
    assert "recommended recalibration interval:" in out and "within 30 % of U" in out
    assert f"source: {HISTORY}" in out and "fingerprint: sha256:" in out


def test_drift_warns_with_two_certificates(tmp_path, capsys):
    f = tmp_path / "two.csv"
    f.write_text("format,viscometry-history/1\ndate,C,U,k,source\n"
                 "2020-01-10,0.010021,0.000015,2,A\n2022-01-12,0.010026,0.000015,2,B\n")  # fmt: skip
    d = _json(capsys, "drift", f, "--date", "2023-01-01", "--json")
    assert "only two certificates" in d["warnings"][0]
    assert all("overdue" in w for w in d["warnings"][1:])
    assert d["drift"]["birge_ratio"] is None  # NaN is written as null
    assert main(["drift", str(f), "--date", "2023-01-01"]) == 0
    assert "warning: only two certificates" in capsys.readouterr().out


def test_drift_refuses_a_date_before_the_last_certificate_and_a_bad_date(capsys):
    assert main(["drift", str(HISTORY), "--date", "2020-01-01"]) == 2
    assert "before the last calibration" in capsys.readouterr().err
    assert main(["drift", str(HISTORY), "--date", "1.5.2026"]) == 2
    assert "--date must be a date YYYY-MM-DD" in capsys.readouterr().err


def test_drift_plot(tmp_path, capsys):
    png = tmp_path / "history.png"
    assert main(["drift", str(HISTORY), "--date", "2026-05-01", "--plot", str(png)]) == 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    capsys.readouterr()
    copy = tmp_path / "h.csv"
    copy.write_bytes(HISTORY.read_bytes())
    assert main(["drift", str(copy), "--date", "2026-05-01", "--plot", str(copy)]) == 2
    assert "is the input file itself" in capsys.readouterr().err
    assert copy.read_bytes() == HISTORY.read_bytes()


def test_accept_timings_and_duplicates_json(capsys):
    d = _json(capsys, "accept", "timings", "312.40", "312.62", "--json")
    assert d["schema"] == "viscometry.accept/1" and d["warnings"] == []
    v = d["verdicts"][0]
    assert all(SNAKE.match(k) for k in _keys(d))
    # exact analytic: limit 0.2 % of the mean for two timings
    assert v["action"] == "accept" and v["limit"] == pytest.approx(0.002 * 312.51, rel=1e-12)
    assert v["result"] == pytest.approx(312.51, rel=1e-15)
    d = _json(capsys, "accept", "duplicates", "31.20", "31.29", "--precision-sd", "0.02",
              "--json")  # fmt: skip
    v = d["verdicts"][0]
    assert v["action"] == "repeat" and v["more"] == 2 and v["limit"] == pytest.approx(0.056)
    d = _json(capsys, "accept", "duplicates", "31.20", "31.29", "31.24", "31.22",
              "--precision-sd", "0.02", "--json")  # fmt: skip
    v = d["verdicts"][0]
    # exact analytic: CR(4) = 3.6 σ_r (ISO 5725-6:1994, Table 1, from memory)
    assert v["limit"] == pytest.approx(3.6 * 0.02, rel=1e-12) and v["action"] == "investigate"
    assert v["result"] == pytest.approx(31.23, rel=1e-15)  # the median


def test_accept_file_checks_each_determination_then_the_pair(capsys):
    d = _json(capsys, "accept", "file", "--file", TIMINGS, "--limit",
              "d445_base_oil_determinability", "--json")  # fmt: skip
    assert [v["check"] for v in d["verdicts"]] == ["flow_time", "flow_time", "determination"]
    assert d["unit"] == "mm^2/s" and d["sample"].startswith("base oil")
    pair = d["verdicts"][2]
    nu = [0.030041 * (1042.31 + 1042.55) / 2, 0.030041 * (1043.02 + 1042.80) / 2]
    assert pair["values"] == pytest.approx(nu, rel=1e-14)  # exact analytic: ν = C·t̄
    assert pair["action"] == "accept"


def test_accept_text_and_refusals(capsys):
    assert main(["accept", "timings", "312.40", "313.62"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("repeat: ") and "take 1 more timing" in out and "note:" in out
    assert main(["accept", "duplicates", "1", "2"]) == 2
    assert "give a limit" in capsys.readouterr().err
    assert main(["accept", "duplicates", "1", "2", "--limit", "nope"]) == 2
    assert "--limit must be one of" in capsys.readouterr().err
    assert main(["accept", "timings", "1", "2", "--relative-limit", "0.1",
                 "--absolute-limit", "1"]) == 2  # fmt: skip
    assert "give one limit" in capsys.readouterr().err


def test_accept_limits_lists_sources(capsys):
    d = _json(capsys, "accept", "limits", "--json")
    assert {r["name"] for r in d["limits"]} >= {"flow_time_range", "d445_base_oil_repeatability"}
    assert all(r["source"] for r in d["limits"])
    assert main(["accept", "limits"]) == 0
    assert "source: common practice, no source" in capsys.readouterr().out


def test_accept_budget_checks_the_timings_a_budget_file_carries(capsys):
    import tomllib

    budget = ROOT / "examples" / "lubricant_lab_kinematic_viscosity.toml"
    readings = tomllib.loads(budget.read_text(encoding="utf-8"))["inputs"]["t"]["readings"]
    d = _json(capsys, "accept", "budget", "--file", budget, "--json")
    assert d["inputs"] == ["t"] and d["source"] == str(budget)
    v = d["verdicts"][0]
    assert v["values"] == readings
    # exact analytic: range against 0.2 % of the mean scaled by f(5)/f(2) = 3.9/2.8
    mean = sum(readings) / len(readings)
    assert v["limit"] == pytest.approx(0.002 * mean * 3.9 / 2.8, rel=1e-12)
    assert v["action"] == (
        "accept" if max(readings) - min(readings) <= v["limit"] else "investigate"
    )
    assert main(["accept", "budget", "--file", str(budget)]) == 0
    assert capsys.readouterr().out.startswith("input t: ")


def test_a_budget_file_takes_the_stability_term_from_the_json(capsys):
    # exact analytic: C = C_last + dC_drift with independent inputs has the prediction's u
    from viscometry.io import loads_budget

    d = _json(capsys, "drift", HISTORY, "--date", "2026-05-01", "--json")
    last, term = d["certificates"][-1], d["stability_input"]
    text = (
        'format = "viscometry-budget/1"\n[measurand]\nname = "C"\nunit = "mm^2/s^2"\n'
        'model = "C_last + dC_drift"\n[inputs.C_last]\n'
        f'value = {last["constant"]!r}\nunit = "mm^2/s^2"\n'
        f"expanded_uncertainty = {last['expanded_uncertainty']!r}\ncoverage_factor = 2\n"
        f'[inputs.dC_drift]\nvalue = {term["value"]!r}\nunit = "{term["unit"]}"\n'
        f"standard_uncertainty = {term['standard_uncertainty']!r}\n"
    )
    result = loads_budget(text, "drift.toml").budget.evaluate()
    assert result.value == pytest.approx(d["prediction"]["constant"], rel=1e-12)
    u = d["prediction"]["standard_uncertainty"]
    assert result.standard_uncertainty == pytest.approx(u, rel=1e-9)


def test_hostile_names_are_escaped_on_the_terminal(tmp_path, capsys):
    f = tmp_path / "h.csv"
    f.write_text(
        "format,viscometry-history/1\nviscometer,\x1b[31mred\u202eevil\n"
        "date,C,U,k,source\n2020-01-10,0.010021,0.000015,2,\x07bell\n"
        "2022-01-12,0.010026,0.000015,2,B\n",
        encoding="utf-8",
    )
    assert main(["drift", str(f), "--date", "2023-01-01"]) == 0
    out = capsys.readouterr().out
    assert "\x1b" not in out and "\u202e" not in out and "\x07" not in out
    d = _json(capsys, "drift", f, "--date", "2023-01-01", "--json")
    assert d["viscometer"] == "\x1b[31mred\u202eevil"  # exact in JSON, escaped in its text


def test_the_printed_budget_input_table_loads_in_a_budget_file(capsys):
    from viscometry.io import loads_budget

    assert main(["drift", str(HISTORY), "--date", "2026-05-01"]) == 0
    out = capsys.readouterr().out.splitlines()
    start = out.index("  [inputs.dC_drift]")
    table = [line.strip() for line in out[start : start + 7] if line.startswith("  ")]
    text = (
        'format = "viscometry-budget/1"\n[measurand]\nname = "C"\nunit = "mm^2/s^2"\n'
        'model = "C_last + dC_drift"\n[inputs.C_last]\nvalue = 0.030035\nunit = "mm^2/s^2"\n'
        "expanded_uncertainty = 0.000021\ncoverage_factor = 2\n" + "\n".join(table) + "\n"
    )
    result = loads_budget(text, "snippet.toml").budget.evaluate()
    d = _json(capsys, "drift", HISTORY, "--date", "2026-05-01", "--json")
    # exact analytic: the same numbers as the prediction
    assert result.value == pytest.approx(d["prediction"]["constant"], rel=1e-12)
    assert result.standard_uncertainty == pytest.approx(
        d["prediction"]["standard_uncertainty"], rel=1e-9
    )
