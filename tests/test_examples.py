"""The bundled example budgets: the GUM H.1 reference file against its published result,
and every example's [recorded] table against a fresh evaluation.
"""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

import pytest
from scipy import stats

from viscometry.audit import audit_file
from viscometry.cli import main
from viscometry.gum.propagation import DEFAULT_COVERAGE_PROBABILITY
from viscometry.io import (
    budget_to_document,
    dumps_budget,
    is_budget_file,
    load_budget,
    loads_budget,
    save_budget,
)

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
H1 = EXAMPLES / "reference" / "gum_h1_end_gauge.toml"


def _json(capsys, *argv):
    assert main(list(argv)) == 0
    return json.loads(capsys.readouterr().out)


def test_h1_first_order_reproduces_the_published_result(capsys):
    # JCGM 100:2008, H.1 (from memory; recomputed per REFERENCES.md):
    # u_c = 32 nm (31.7 unrounded), nu_eff = 16 (16.7), k = t99(16) = 2.92, U99 = 93 nm,
    # l = 50.000 838 mm.
    d = _json(capsys, "evaluate", "--json", str(H1))
    assert d["unit"] == "mm"
    assert d["standard_uncertainty"] * 1e6 == pytest.approx(31.7, abs=0.05)
    assert round(d["standard_uncertainty"] * 1e6) == 32
    assert d["effective_dof"] == pytest.approx(16.7, abs=0.05)
    assert math.floor(d["effective_dof"]) == 16
    # independent recomputation of t99(16) with scipy (JCGM 100:2008, Table G.2 prints 2.92)
    assert d["coverage_factor"] == pytest.approx(stats.t.ppf(0.995, 16), rel=1e-12)
    assert round(d["coverage_factor"], 2) == 2.92
    assert round(d["expanded_uncertainty"] * 1e6) == 93
    assert d["value"] == pytest.approx(50.000838, abs=5e-7)
    assert d["coverage_probability"] == 0.99
    assert d["propagation"] == "first-order"
    assert d["schema"] == "viscometry.evaluate/1" and d["source"] == str(H1)
    assert d["fingerprint"] == load_budget(H1).fingerprint


def test_h1_sensitivities(capsys):
    # JCGM 100:2008, H.1 (from memory; recomputed per REFERENCES.md): c(dalpha) = -l_s*theta,
    # c(dtheta) = -l_s*alpha_s, c(alpha_s) = c(theta) = 0 at the estimates.
    d = _json(capsys, "evaluate", "--json", str(H1))
    rows = {r["name"]: r for r in d["inputs"]}
    assert rows["dalpha"]["sensitivity"] == pytest.approx(50.000623 * 0.1, rel=1e-12)  # mm·K
    assert rows["dtheta"]["sensitivity"] == pytest.approx(-50.000623 * 11.5e-6, rel=1e-12)  # mm/K
    assert rows["alpha_s"]["sensitivity"] == 0.0 and rows["theta"]["sensitivity"] == 0.0
    assert rows["l_s"]["dof"] == 18 and rows["dalpha"]["dof"] == pytest.approx(50)
    assert rows["dtheta"]["dof"] == pytest.approx(2)
    assert rows["theta"]["dof"] == "inf"


def test_h1_higher_order(capsys):
    # JCGM 100:2008, H.1.7 (from memory; recomputed per REFERENCES.md): with the second-order
    # terms of eq. (10), u_c = 34 nm.
    d = _json(capsys, "evaluate", "--json", "--higher-order", str(H1))
    assert d["propagation"] == "higher-order"
    assert round(d["standard_uncertainty"] * 1e6) == 34
    # recomputed: sqrt(u1² + (l_s u(dalpha) u(theta))² + (l_s u(alpha_s) u(dtheta))²)
    first = _json(capsys, "evaluate", "--json", str(H1))["standard_uncertainty"]
    extra = (50.000623 * 0.58e-6 * 0.41) ** 2 + (50.000623 * 1.2e-6 * 0.029) ** 2
    assert d["standard_uncertainty"] == pytest.approx(math.sqrt(first**2 + extra), rel=1e-9)


# The budgets this module is responsible for (other example folders belong to other features).
ALL = [
    EXAMPLES / "lubricant_lab_kinematic_viscosity.toml",
    EXAMPLES / "primary_capillary_poiseuille.toml",
    EXAMPLES / "calibration_lab_viscometer_constant.toml",
    H1,
]


def test_examples_exist():
    assert all(p.is_file() for p in ALL)


@pytest.mark.parametrize("path", ALL, ids=lambda p: p.name)
def test_every_example_matches_its_record(path):
    # regression values: each [recorded] table was computed with this tool (fingerprinted)
    verdict = audit_file(path)
    assert verdict.status == "match", verdict.messages
    assert load_budget(path).recorded.fingerprint is not None


def test_poiseuille_radius_has_relative_sensitivity_four():
    # Exact: eta ∝ r⁴, so (r/eta) ∂eta/∂r = 4 (Hagen-Poiseuille law)
    r = load_budget(EXAMPLES / "primary_capillary_poiseuille.toml").budget.evaluate()
    assert r.contribution("r").relative_sensitivity == pytest.approx(4.0, rel=1e-12)
    assert r.dominant.name == "r"


def test_demo_default_folder_is_the_repository_examples():
    from viscometry.commands.demo import default_folder

    assert default_folder() == EXAMPLES


def test_demo_runs_every_example_including_reference(capsys, tmp_path):
    for p in ALL:
        target = tmp_path / p.relative_to(EXAMPLES)
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(p.read_bytes())
    (tmp_path / "not_a_budget.toml").write_text('title = "a list of upgrade candidates"\n')
    assert main(["demo", str(tmp_path)]) == 0
    out = capsys.readouterr().out
    for p in ALL:
        assert f"=== {p.relative_to(EXAMPLES).as_posix()} " in out
    assert "not_a_budget.toml: skipped" in out
    assert out.count("Caution:") == 1
    assert "mercury" in out and "local codes" in out
    assert "result: l = (50.000838 ± 0.000093) mm" in out


# ----------------------------------------------------------------------------- round trips
# Every budget file under examples/ (the upgrade-candidates file is another kind of TOML).
EVERY = sorted(p for p in EXAMPLES.rglob("*.toml") if is_budget_file(p))


def test_every_budget_example_is_in_the_round_trip():
    # the migration guide: `viscometry audit examples/` matches all 27 budget files
    assert len(EVERY) == 27
    others = sorted(p.name for p in EXAMPLES.rglob("*.toml") if p not in EVERY)
    assert others == ["ashcombe_chain_surface_tension.toml", "ashcombe_step_up_chain.toml",
                      "pet_resin_series.toml", "pressure_capillary_upgrades.toml"]  # fmt: skip


@pytest.mark.parametrize("path", EVERY, ids=lambda p: p.relative_to(EXAMPLES).as_posix())
def test_file_budget_file_round_trip(path, tmp_path):
    """file → Budget → file: the same fingerprint (the recorded one), and writing the budget
    again gives identical text; the written file states the same tables as the example."""
    bf = load_budget(path)
    text = dumps_budget(budget_to_document(bf.budget))
    again = loads_budget(text, "again.toml")
    assert again.fingerprint == bf.fingerprint == bf.recorded.fingerprint
    assert dumps_budget(budget_to_document(again.budget)) == text
    # the same numbers and the same warnings
    r1, r2 = bf.budget.evaluate(), again.budget.evaluate()
    assert (r2.value, r2.standard_uncertainty, r2.expanded_uncertainty, r2.effective_dof) == (
        r1.value, r1.standard_uncertainty, r1.expanded_uncertainty, r1.effective_dof,
    )  # fmt: skip
    assert r2.warnings == r1.warnings
    # the written tables are the example's own (inputs in their stated forms, constants,
    # correlations, checks with sources, the record); only a setting at its default value
    # (coverage probability 0.9545) is left out, and comments are not kept
    original = tomllib.loads(path.read_text(encoding="utf-8"))
    if original["measurand"].get("coverage_probability") == DEFAULT_COVERAGE_PROBABILITY:
        del original["measurand"]["coverage_probability"]
    written = tomllib.loads(dumps_budget(budget_to_document(bf.budget, recorded=bf.recorded)))
    assert written == original
    # save_budget (with the [recorded] table and a header) twice: identical files
    first = save_budget(bf, tmp_path / "first.toml")
    second = save_budget(load_budget(first), tmp_path / "second.toml")
    assert second.read_bytes() == first.read_bytes()
    assert load_budget(second).recorded == bf.recorded
    assert audit_file(second).status == "match"
