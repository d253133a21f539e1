"""Series files (``viscometry-series/1``) and ``viscometry dilute``: reading, errors, output.

The example file is invented (examples/polymer/); the numbers the command prints are checked
against the library called directly and against independent computations (exact analytic
concentrations, the `uncertainties` package), never against the invented data themselves.
"""

from __future__ import annotations

import contextlib
import io
import json
import math
import re
import shutil
from pathlib import Path

import numpy as np
import pytest
import uncertainties

from viscometry.cli import main
from viscometry.errors import BudgetFileError
from viscometry.io.series import load_series, loads_series
from viscometry.polymer import extrapolate, molar_mass

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "polymer" / "pet_resin_series.toml"

MINIMAL = """\
format = "viscometry-series/1"
concentration_unit = "g/dL"
solvent_flow_time = [100.02, 100.00, 99.98]
[stock]
polymer_mass = { value = 0.1, standard_uncertainty = 0.0001, unit = "g" }
volume = { value = 20, standard_uncertainty = 0.02, unit = "mL" }
[[solutions]]
readings = [150.1, 150.0]
[[solutions]]
readings = [130.1, 130.0]
aliquot_volume = { value = 10, standard_uncertainty = 0.01, unit = "mL" }
final_volume = { value = 20, standard_uncertainty = 0.02, unit = "mL" }
[[solutions]]
readings = [122.1, 122.0]
aliquot_volume = { value = 5, standard_uncertainty = 0.01, unit = "mL" }
final_volume = { value = 20, standard_uncertainty = 0.02, unit = "mL" }
"""


def _keys_not_snake_case(obj, where=""):
    """Every key of a JSON value, at any depth, that is not snake_case."""
    bad = []
    if isinstance(obj, dict):
        for key, value in obj.items():
            if not re.fullmatch(r"[a-z][a-z0-9_]*", key):
                bad.append(f"{where}/{key}")
            bad += _keys_not_snake_case(value, f"{where}/{key}")
    elif isinstance(obj, list):
        for i, value in enumerate(obj):
            bad += _keys_not_snake_case(value, f"{where}[{i}]")
    return bad


def run_cli(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(argv))
    return code, out.getvalue(), err.getvalue()


def test_minimal_file_concentrations_in_si():
    sf = loads_series(MINIMAL, "mini.toml")
    c, rel = sf.series.points()
    # exact analytic: 0.1 g in 20 mL = 5 kg/m³, then 1/2 and 1/4 of it
    assert [float(x) for x in c] == pytest.approx([5.0, 2.5, 1.25], rel=1e-14)
    assert float(rel[0]) == pytest.approx(150.05 / 100.0, rel=1e-14)
    t0 = sf.series.solvent_flow_time
    assert t0.evaluation == "A" and t0.dof == 2
    assert sf.concentration_unit == "g/dL" and sf.mark_houwink is None


def test_example_file_reads():
    sf = load_series(EXAMPLE)
    assert len(sf.series.solutions) == 5
    k, a, r, src = sf.mark_houwink
    assert k.value == pytest.approx(4.7e-4 * 0.1, rel=1e-14)  # dL/g → m³/kg
    assert a.value == 0.68 and r == -0.9 and "invented" in src
    # a rectangular flask tolerance of ±0.03 mL: u = 0.03/√3 mL (JCGM 100:2008, 4.3.7)
    assert sf.series.stock_volume.standard_uncertainty == pytest.approx(0.03e-6 / math.sqrt(3))


@pytest.mark.parametrize(
    ("edit", "pattern"),
    [
        (("viscometry-series/1", "viscometry-series/9"), r"format = 'viscometry-series/9' is not supported"),
        (('concentration_unit = "g/dL"', 'concentration_unit = "mL"'), r"top level concentration_unit must be a unit of a mass concentration .* got 'mL'"),
        (('concentration_unit = "g/dL"', 'colour = "red"'), r"top level has unknown key 'colour'"),
        (("[100.02, 100.00, 99.98]", "[100.02, -1.0]"), r"solvent_flow_time\[1\] must be a positive flow time in s, got -1.0"),
        (('unit = "g" }', 'unit = "mL" }'), r"\[stock\] polymer_mass unit must be a unit of a mass .* got 'mL'"),
        (("readings = [150.1, 150.0]", "readings = [150.1, 150.0]\ncolour = 1"), r"\[\[solutions\]\] 1 has unknown key 'colour'"),
        (("readings = [130.1, 130.0]", "readings = ['x', 130.0]"), r"\[\[solutions\]\] 2 readings\[0\] must be a finite number, got 'x'"),
        (("final_volume = { value = 20, standard_uncertainty = 0.02, unit = \"mL\" }\n[[solutions]]\nreadings = [122.1",
          "[[solutions]]\nreadings = [122.1"), r"\[\[solutions\]\] 2 aliquot_volume and final_volume go together"),
        (("volume = { value = 20,", "volume = { value = 'twenty',"), r"\[stock\] volume value must be a number, got 'twenty'"),
    ],
)  # fmt: skip
def test_errors_name_file_key_and_value(edit, pattern):
    text = MINIMAL.replace(*edit)
    assert text != MINIMAL
    with pytest.raises(BudgetFileError) as info:
        loads_series(text, "lab.toml")
    message = str(info.value)
    assert message.startswith("lab.toml: ") and "\n" not in message
    assert re.search(pattern, message), message


def test_too_many_solutions_and_missing_stock():
    many = MINIMAL + "[[solutions]]\nreadings = [110.0, 110.1]\n" * 48
    with pytest.raises(BudgetFileError, match="at most 50 solutions, got 51"):
        loads_series(many, "lab.toml")
    with pytest.raises(BudgetFileError, match="missing table \\[stock\\]"):
        no_stock = "\n".join(line for line in MINIMAL.splitlines() if "[stock]" not in line
                             and not line.startswith(("polymer_mass", "volume")))  # fmt: skip
        loads_series(no_stock, "lab.toml")


def test_cli_json_matches_library_and_independent_reference():
    code, out, err = run_cli("dilute", str(EXAMPLE), "--json", "--trials", "20000", "--seed", "5")
    assert code == 0, err
    d = json.loads(out)
    assert d["schema"] == "viscometry.dilute/1"
    assert isinstance(d["warnings"], list)
    assert _keys_not_snake_case(d) == []
    assert {"name": "t_0", "contribution": pytest.approx(
        dict(extrapolate(load_series(EXAMPLE).series).huggins.intrinsic.contributions)["t_0"] * 10.0
    )} in d["huggins"]["contributions"]  # fmt: skip
    sf = load_series(EXAMPLE)
    ext = extrapolate(sf.series)
    scale = 10.0  # exact analytic: 1 g/dL = 10 kg/m³, so [η] in dL/g = 10 × [η] in m³/kg
    h = d["huggins"]["intrinsic_viscosity"]
    assert h["value"] == pytest.approx(ext.huggins.intrinsic.value * scale, rel=1e-13)
    assert h["expanded_uncertainty"] == pytest.approx(
        ext.huggins.intrinsic.expanded_uncertainty * scale, rel=1e-13
    )
    assert d["intrinsic_viscosity_unit"] == "dL/g"
    assert d["consistency"]["consistent"] is ext.consistent
    assert len(d["single_point"]) == 15
    # molar mass: the `uncertainties` package with correlated K and a (independent reference)
    k, a, r, _ = sf.mark_houwink
    cov = [[k.standard_uncertainty**2, r * k.standard_uncertainty * a.standard_uncertainty],
           [r * k.standard_uncertainty * a.standard_uncertainty, a.standard_uncertainty**2]]  # fmt: skip
    uk, ua = uncertainties.correlated_values([k.value, a.value], cov)
    eta = uncertainties.ufloat(
        ext.huggins.intrinsic.value, ext.huggins.intrinsic.standard_uncertainty
    )
    ref = (eta / uk) ** (1 / ua)
    assert d["molar_mass"]["value"] == pytest.approx(ref.nominal_value, rel=1e-12)
    assert d["molar_mass"]["standard_uncertainty"] == pytest.approx(ref.std_dev, rel=1e-9)
    mm = molar_mass(ext.huggins.intrinsic, k, a, correlation=r)
    assert d["molar_mass"]["expanded_uncertainty"] == pytest.approx(mm.expanded_uncertainty)
    assert d["monte_carlo"]["trials"] == 20000 and d["monte_carlo"]["seed"] == 5
    again = json.loads(
        run_cli("dilute", str(EXAMPLE), "--json", "--trials", "20000", "--seed", "5")[1]
    )
    assert again == d  # seeded: the same output


def _gls_intercept(c, y, w):
    """Intercept of y = b0 + b1·c by least squares with weight matrix w, in the arithmetic
    of whatever c and y are (here `uncertainties` numbers)."""
    n = len(c)

    def dot(p, q):
        return sum(p[i] * w[i, j] * q[j] for i in range(n) for j in range(n))

    one = [1.0] * n
    s11, s1c, scc, s1y, scy = dot(one, one), dot(one, c), dot(c, c), dot(one, y), dot(c, y)
    return (scc * s1y - s1c * scy) / (s11 * scc - s1c**2)


def test_example_through_the_cli_against_the_uncertainties_package():
    # independent reference: the example's chain (weighings → concentrations → flow times →
    # fit with the same fixed weights) in `uncertainties` arithmetic; [η] in dL/g = 10 × m³/kg
    from uncertainties import umath

    code, out, err = run_cli("dilute", str(EXAMPLE), "--json", "--trials", "0")
    assert code == 0, err
    d = json.loads(out)
    sf = load_series(EXAMPLE)
    series = sf.series
    v = {
        q.name: uncertainties.ufloat(q.value, q.standard_uncertainty, q.name)
        for q in series.inputs()
    }
    c_stock = v["m_p"] * v["w_p"] / v["V_0"]
    cs, rel = [], []
    for s in series.solutions:
        a, f = s.aliquot_volume, s.final_volume
        cs.append(c_stock if a is None else c_stock * v[a.name] / v[f.name])
        t, t0, cc, e = v[s.flow_time.name], v["t_0"], v["C"], v["E"]
        rel.append((cc * t - e / t**2) / (cc * t0 - e / t0**2))
    for form, ys in (("huggins", [(r - 1) / c for r, c in zip(rel, cs, strict=True)]),
                     ("kraemer", [umath.log(r) / c for r, c in zip(rel, cs, strict=True)])):  # fmt: skip
        w = np.linalg.inv(uncertainties.covariance_matrix(ys))
        b0 = _gls_intercept(cs, ys, w)
        got = d[form]["intrinsic_viscosity"]
        assert got["value"] == pytest.approx(b0.nominal_value * 10.0, rel=1e-12)
        assert got["standard_uncertainty"] == pytest.approx(b0.std_dev * 10.0, rel=1e-7)
    # the concentrations themselves: exact analytic from the file (0.2250 g · 0.9962 / 25 mL)
    assert d["points"][0]["concentration"] == pytest.approx(0.2250 * 0.9962 / 25.0 * 100, rel=1e-13)
    assert d["points"][1]["concentration"] == pytest.approx(
        0.2250 * 0.9962 / 25.0 * 100 * 20 / 25, rel=1e-13
    )


def test_cli_text_report_and_errors(tmp_path):
    code, out, err = run_cli("dilute", str(EXAMPLE), "--trials", "0")
    assert code == 0, err
    assert "Huggins: [η] = " in out and "Kraemer: [η] = " in out and "dL/g" in out
    assert "consistent" in out and "Solomon–Ciută" in out and "M_v = " in out
    assert "fume cupboard" in out and "Monte Carlo" not in out
    bad = tmp_path / "bad.toml"
    bad.write_text(MINIMAL.replace("[100.02, 100.00, 99.98]", "[100.02, -1.0]"), encoding="utf-8")
    code, out, err = run_cli("dilute", str(bad))
    assert code == 2 and out == ""
    assert (
        err.count("\n") == 1
        and "bad.toml" in err
        and "solvent_flow_time[1]" in err
        and "-1.0" in err
    )


def test_cli_warnings_in_json(tmp_path):
    # η_rel = 1.0016 is far below 1.2 (threshold: common practice, no source)
    low = MINIMAL.replace("[122.1, 122.0]", "[100.17, 100.15]")
    path = tmp_path / "low.toml"
    path.write_text(low, encoding="utf-8")
    code, out, err = run_cli("dilute", str(path), "--json", "--trials", "0")
    assert code == 0, err
    d = json.loads(out)
    assert any("outside 1.2–2.0" in w for w in d["warnings"])
    assert d["monte_carlo"] is None and d["molar_mass"] is None


def test_panel_loads_refuses_and_keeps_the_last_good_report():
    from viscometry.widgets.dilute_panel import dilute_panel

    panel = dilute_panel(str(EXAMPLE), trials=0)
    good = panel.report()
    assert good is not None and good.monte_carlo is None
    expected = extrapolate(load_series(EXAMPLE).series).huggins.intrinsic.value
    assert good.extrapolation.huggins.intrinsic.value == expected  # the same library call
    assert "Huggins: [η]" in panel.report_html.value
    assert panel.load_text(MINIMAL.replace("[100.02, 100.00, 99.98]", "[1, -1]"), "x.toml") is False
    assert "x.toml" in panel.message.value and "solvent_flow_time[1]" in panel.message.value
    assert panel.report() is good and "still that of the last series" in panel.message.value
    panel._uploaded([{"name": "bin.toml", "content": memoryview(b"\xff\xfe")}])
    assert "not UTF-8" in panel.message.value and panel.report() is good
    assert panel.load_text(MINIMAL, "mini.toml") is True and panel.message.value == ""


def test_the_demo_shows_the_series_result_in_its_summary(tmp_path, capsys):
    """The demo evaluates a dilution series with its own reader (not skipped as a non-budget)."""
    from viscometry.cli import main

    (tmp_path / "polymer").mkdir()
    shutil.copy(EXAMPLE, tmp_path / "polymer" / EXAMPLE.name)
    shutil.copy(EXAMPLE.parents[1] / "primary_capillary_poiseuille.toml", tmp_path)
    assert main(["demo", str(tmp_path)]) == 0
    # regression value of the invented example (the same as `viscometry dilute` prints)
    assert (
        f"polymer/{EXAMPLE.name}: dilution series, Huggins [η] = 0.6549 ± 0.0036 dL/g"
        in capsys.readouterr().out
    )
