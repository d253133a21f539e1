"""The chain panel (viscometry.widgets.chain_panel), driven in plain pytest.

Controls are set from Python (``control.value = ...``, ``button.click()``), which fires the
same callbacks as in JupyterLab. Numbers: the example chain's are regression values (see
tests/test_chain_file.py); the rest are exact analytic relations of the chain's model
(step_up_chain: C₁ = ν_w (1 + α_w δT)/t₁, so at δT = 0 the constants do not depend on the
thermometer, and ∂ln C_N/∂δT = α_w).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from viscometry.io.chain import load_chain, load_chain_file
from viscometry.widgets.chain_panel import ChainPanel, chain_panel

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "chains" / "ashcombe_step_up_chain.toml"
BUDGET_EXAMPLE = ROOT / "examples" / "calibration_lab_viscometer_constant.toml"


@pytest.fixture()
def panel() -> ChainPanel:
    return chain_panel(EXAMPLE)


def _fingerprint(p: ChainPanel) -> str:
    chain = p.current_chain()
    assert chain is not None
    return chain.budget.fingerprint


def test_loaded_panel_shows_the_files_chain(panel: ChainPanel) -> None:
    chain = load_chain(EXAMPLE)
    assert _fingerprint(panel) == chain.budget.fingerprint  # the same budget, exactly
    r = panel.result()
    assert r is not None and r.measurand == "C10"
    assert r.value == chain.budget.evaluate().value  # same path, same number
    assert panel.warnings() == ()
    assert "loaded" in panel.start_message.value and panel.message("start") == ""
    # the document is the file's, untouched by loading
    import tomllib

    assert panel.document() == tomllib.loads(EXAMPLE.read_text(encoding="utf-8"))
    assert "C10 = (45.604 ± 0.096) mm²/s²" in panel.statement_html.value  # regression value
    assert "checks passed" in panel.warnings_html.value


def test_the_table_of_constants(panel: ChainPanel) -> None:
    table = panel.table()
    assert list(table["master"]) == list(range(1, 11))
    assert list(table["liquid"])[:3] == ["water", "S2", "S3"]
    # regression values (workbook 03's printed table: U/C in %, 4 decimals; water share 1 decimal)
    assert f"{100 * table['relative_expanded_uncertainty'].iloc[0]:.4f}" == "0.1723"
    assert f"{100 * table['relative_expanded_uncertainty'].iloc[-1]:.4f}" == "0.2100"
    assert f"{100 * table['water_share'].iloc[0]:.1f}" == "97.4"
    assert f"{100 * table['water_share'].iloc[-1]:.1f}" == "66.0"
    # regression values (workbook 03's printed step factors C_k/C_(k−1))
    assert [f"{x:.4f}" for x in table["step_factor"].iloc[1:4]] == ["2.8850", "2.8913", "2.9246"]
    # each C_k is the chain's own constant (same model, same numbers)
    constants = [c * 1e6 for c in load_chain(EXAMPLE).constants()]  # mm²/s²
    assert list(table["constant"]) == pytest.approx(constants, rel=1e-12)
    html = panel.table_html.value
    assert ">C / (mm²/s²)</th>" in html and ">45.6036</td>" in html
    assert "color:#a00" not in html  # no step beyond a factor 3


def test_water_readings_edit_and_refusal(panel: ChainPanel) -> None:
    before = _fingerprint(panel)
    panel.water_readings.value = "300.0\n300.2"
    c1 = panel.results()[0].value
    assert c1 == pytest.approx(1.0034 / 300.1, rel=1e-13)  # exact analytic: ν_w/t̄₁ at δT = 0
    assert panel.document()["water"]["readings"] == [300.0, 300.2]
    edited = _fingerprint(panel)
    assert edited != before
    panel.water_readings.value = "300.0\nfast"
    assert panel.message("water") == "water readings[1]: 'fast' is not a number"
    assert "fast" in panel.water_message.value and "color:#a00" in panel.water_message.value
    assert _fingerprint(panel) == edited  # the last good chain stays
    assert panel.document()["water"]["readings"] == [300.0, 300.2]  # nothing half-written
    assert "showing the last chain that could be built" in panel.statement_html.value
    panel.water_readings.value = "300.0"
    assert panel.message("water").startswith("[water] readings: t1.readings: a Type A evaluation "
                                             "needs at least 2 readings, got 1")  # fmt: skip
    assert _fingerprint(panel) == edited
    panel.water_readings.value = "334.47\n334.55\n334.54\n334.44\n334.45"
    assert panel.message("water") == "" and panel.water_message.value == ""
    assert _fingerprint(panel) == before


def test_a_short_flow_time_and_a_big_step_warn_in_colour(panel: ChainPanel) -> None:
    row = panel.step_row(3)  # S5: master 4 → master 5
    assert row.label.value == "S5" and row.new.description == "t in master 5 / s"
    row.new.value = "190.1\n190.2\n190.0"
    warnings = panel.warnings()
    # ISO 3104 minimum flow time; ASTM D2162 factor 3 (the chain budget's own checks)
    assert (
        "t5: flow time 190.1 s is below the minimum 200 s (ISO 3104 / ASTM D445, manual timing)"
        in warnings
    )
    assert any(w.startswith("step 5: step-up ratio 3.146 ") for w in warnings)  # regression value
    assert warnings == tuple(panel.result().warnings)
    assert (
        "color:#a60" in panel.warnings_html.value and "step-up ratio" in panel.warnings_html.value
    )
    assert ";color:#a00'>5</td>" in panel.table_html.value  # the row of master 5 in red
    row.new.value = "190.1\nabc"
    assert panel.message("steps.3") == "readings in master 5[1]: 'abc' is not a number"
    assert "abc" in row.message.value
    assert panel.warnings() == warnings  # the last good chain stays


def test_thermometer_u_and_k(panel: ChainPanel) -> None:
    before = _fingerprint(panel)
    assert (panel.thermometer_u.text.value, panel.thermometer_k.text.value) == ("0.01", "2")
    c10 = panel.result().value
    panel.thermometer_u.text.value = "0.02"
    r = panel.result()
    assert r.value == c10  # exact analytic: δT = 0 leaves the constants alone
    assert panel.document()["thermometer_error"] == {
        "value": 0.0, "unit": "K", "expanded_uncertainty": 0.02, "coverage_factor": 2.0,
        "source": "thermometer certificate (invented demo)",
    }  # fmt: skip
    alpha_w = load_chain_file(EXAMPLE).water_temperature_coefficient.value
    # exact analytic: ∂C10/∂δT = α_w C10, and u(δT) = U/k = 0.01 K
    assert r.contribution("dT_th").contribution == pytest.approx(alpha_w * c10 * 0.01, rel=1e-9)
    panel.thermometer_k.text.value = ""
    assert panel.message("thermometer") == "k: give the coverage factor of U(δT) (e.g. 2)"
    panel.thermometer_k.text.value = "2"
    panel.thermometer_u.text.value = "0.01"
    assert panel.message("thermometer") == ""
    assert _fingerprint(panel) == before  # the certificate's own table is back


def test_removing_the_thermometer_needs_both_terms_gone(panel: ChainPanel) -> None:
    c10 = panel.result().value
    panel.thermometer_u.text.value = ""
    assert "go together: give both or neither" in panel.message("thermometer")
    assert "dT_th" in panel.current_chain().budget.input_names  # last good chain
    panel.u_alpha_w.text.value = ""
    assert panel.message("thermometer") == ""
    names = panel.current_chain().budget.input_names
    assert "dT_th" not in names and "alpha_w" not in names
    assert panel.result().value == c10  # exact analytic: δT was 0


def test_step_alpha_fields(panel: ChainPanel) -> None:
    row = panel.step_row(0)
    assert (row.alpha.text.value, row.u_alpha.text.value, row.u_dt.text.value) == (
        "-0.025", "0.0025", "0.002",
    )  # fmt: skip
    before = _fingerprint(panel)
    row.u_alpha.text.value = ""
    assert panel.message("steps.0").startswith("α and u(α) go together")
    row.u_alpha.text.value = "0.005"
    assert panel.document()["steps"][0]["temperature_coefficient"] == {
        "value": -0.025, "unit": "1/K", "standard_uncertainty": 0.005,
    }  # fmt: skip
    assert panel.result().contribution("alpha2").standard_uncertainty == 0.005
    row.u_alpha.text.value = "0.0025"
    assert _fingerprint(panel) == before


def test_add_and_remove_a_step(panel: ChainPanel) -> None:
    before = _fingerprint(panel)
    panel.add_step_button.click()
    assert panel.message("steps.9").startswith(
        "[[steps]] entry 10 (S11) readings_in_known must be a non-empty list of numbers, got []"
    )
    assert panel.current_file().masters == 10  # the last good chain
    new = panel.step_row(9)
    assert new.known.description == "t′ in master 10 / s"
    new.known.value = "600.0\n600.2"
    new.new.value = "205.0\n205.2"
    assert panel.message("steps.9") == ""
    assert panel.current_file().masters == 11 and panel.result().measurand == "C11"
    new.remove.click()
    assert panel.current_file().masters == 10
    assert _fingerprint(panel) == before
    panel.remove_step(0)
    assert panel.step_row(0).label.value == "S3"
    assert panel.step_row(0).known.description == "t′ in master 1 / s"
    assert panel.table()["liquid"].tolist()[1] == "S3"


def test_a_refused_field_keeps_its_message_when_another_step_goes(panel: ChainPanel) -> None:
    panel.step_row(4).new.value = "x"
    assert panel.message("steps.4").startswith("readings in master 6[0]")
    panel.remove_step(1)
    assert panel.message("steps.3").startswith("readings in master 6[0]")
    assert panel.message("steps.4") == ""


def test_load_button_and_load_refusals(tmp_path: Path) -> None:
    p = chain_panel()
    assert p.current_chain() is None and p.table().empty
    assert "load a chain file" in p.start_message.value
    p.path.value = str(EXAMPLE)
    p.load_button.click()
    assert p.current_file() is not None and p.current_file().masters == 10
    before = _fingerprint(p)
    assert not p.load_file(tmp_path / "missing.toml")
    assert "missing.toml: cannot read the file" in p.message("start")
    assert not p.load_file(BUDGET_EXAMPLE)
    assert p.message("start").endswith(
        "format = 'viscometry-budget/1' is not supported; expected 'viscometry-chain/1'"
    )
    bad = tmp_path / "bad.toml"
    bad.write_text('format = "viscometry-chain/1"\n[water\n', encoding="utf-8")
    assert not p.load_file(bad)
    assert "not valid TOML" in p.message("start") and "color:#a00" in p.start_message.value
    assert _fingerprint(p) == before  # nothing changed


def test_panel_from_fields_alone_equals_the_file() -> None:
    p = chain_panel()
    p.water_readings.value = "334.47\n334.55\n334.54"
    p.add_step()
    row = p.step_row(0)
    row.known.value = "610.09 610.16 609.95"  # separated by spaces also works
    row.new.value = "211.50; 211.42; 211.46"
    from viscometry.io.chain import loads_chain

    text = (
        'format = "viscometry-chain/1"\n[water]\nreadings = [334.47, 334.55, 334.54]\n'
        '[[steps]]\nlabel = "S2"\nreadings_in_known = [610.09, 610.16, 609.95]\n'
        "readings_in_new = [211.50, 211.42, 211.46]\n"
    )
    assert _fingerprint(p) == loads_chain(text).budget.fingerprint  # one path, one budget


def test_certified_liquid_row(tmp_path: Path) -> None:
    text = EXAMPLE.read_text(encoding="utf-8") + (
        '\n[certified]\nlabel = "R50 (invented)"\nreadings = [233.64, 233.71, 233.60]\n'
        'temperature_coefficient = { value = -0.05, standard_uncertainty = 0.005, unit = "1/K" }\n'
    )
    path = tmp_path / "certified.toml"
    path.write_text(text, encoding="utf-8")
    p = chain_panel(path)
    r = p.result()
    assert r.measurand == "nu_X" and "ν_X = (" in p.statement_html.value
    c10 = p.results()[-1].value  # mm²/s²
    assert r.value == pytest.approx(c10 * (233.64 + 233.71 + 233.60) / 3, rel=1e-12)  # exact
    assert "R50 (invented)" in p.table_html.value and len(p.table()) == 10


def test_the_panel_never_writes_the_file(panel: ChainPanel) -> None:
    before = EXAMPLE.read_bytes()
    panel.water_readings.value = "300.0\n300.2"
    panel.thermometer_u.text.value = "0.05"
    panel.add_step()
    assert EXAMPLE.read_bytes() == before


def test_layout_wraps(panel: ChainPanel) -> None:
    # rows wrap and columns keep a readable width (usable from 1024 px; common practice)
    boxes = [c for c in panel.widget.children if hasattr(c, "layout")]
    assert any(getattr(b.layout, "flex_flow", None) == "row wrap" for b in boxes)
    row_box = panel.step_row(0).box.children[0]
    assert row_box.layout.flex_flow == "row wrap"
    assert row_box.children[-1].layout.min_width == "15em"  # the α column keeps its width
    water_row = panel.water_readings
    columns = [b for b in boxes if getattr(b, "children", None) and any(
        water_row in getattr(c, "children", ()) for c in b.children)]  # fmt: skip
    assert columns and columns[0].children[0].layout.min_width == "22em"  # controls_column
