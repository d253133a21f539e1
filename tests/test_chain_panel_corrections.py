"""The chain panel's optional correction terms (σ, ρ, E, meniscus geometry), in plain pytest.

Controls are set from Python (``control.value = ...``), which fires the same callbacks as in
JupyterLab. The reference numbers are not stored values: each check builds the same chain
through the library directly (``step_up_chain`` with quantities made here, in SI units, while
the panel works in mN/m, kg/m³, mm²·s and mm) or reads the chain file without the terms, and
compares — an independent path through the same model.
"""

from __future__ import annotations

import dataclasses
import html
import re
import tomllib
from pathlib import Path
from typing import Any

import ipywidgets as widgets
import pytest

from viscometry.gum import InputQuantity
from viscometry.io.chain import ChainFile, load_chain, load_chain_file
from viscometry.methods.calibration import CertifiedLiquid, LiquidSurface, step_up_chain
from viscometry.text import statement
from viscometry.widgets.chain_panel import ChainPanel, chain_panel
from viscometry.widgets.chain_terms import TERMS, TermFields

ROOT = Path(__file__).resolve().parents[1]
SURFACE = ROOT / "examples" / "chains" / "ashcombe_chain_surface_tension.toml"
PLAIN = ROOT / "examples" / "chains" / "ashcombe_step_up_chain.toml"


@pytest.fixture()
def panel() -> ChainPanel:
    return chain_panel(SURFACE)


def _library(parts: ChainFile, **changes: Any) -> Any:
    """The chain of ``parts`` built by step_up_chain directly, with some parts changed."""
    kw: dict[str, Any] = {
        "thermometer_error": parts.thermometer_error,
        "water_temperature_coefficient": parts.water_temperature_coefficient,
        "certified": parts.certified, "unit": parts.chain.budget.unit,
        "minimum_flow_time": parts.minimum_flow_time, "water_surface": parts.water_surface,
        "first_master_geometry": parts.first_master_geometry,
        "first_master_kinetic_energy": parts.first_master_kinetic_energy,
    }  # fmt: skip
    steps = changes.pop("steps", parts.steps)
    kw.update(changes)
    return step_up_chain(parts.water_value, parts.water_flow_time, steps, **kw)


def _shown(terms: TermFields) -> dict[str, tuple[str, str]]:
    return {
        k: (terms.values[k].text.value, terms.uncertainties[k].text.value) for k in terms.values
    }


def _clear(terms: TermFields) -> None:
    for key, _symbol, _unit in terms.terms:
        terms.values[key].text.value = ""
        terms.uncertainties[key].text.value = ""


def test_the_fields_show_the_files_terms(panel: ChainPanel) -> None:
    # the file's numbers as the fields show them (four significant digits); E of master 2 is
    # rectangular with half-width 10 mm²·s: u = 10/√3 = 5.774 (exact analytic)
    assert _shown(panel.step_row(0).terms) == {
        "surface_tension": ("29.6", "0.3"), "density": ("864", "0.5"),
        "kinetic_energy": ("20", "5.774"), "upper_radius": ("8", "0.2"),
        "lower_radius": ("12", "0.3"), "driving_head": ("405", "3"),
    }  # fmt: skip
    assert _shown(panel.water_terms)["surface_tension"] == ("72.74", "0.1")
    assert _shown(panel.water_terms)["kinetic_energy"] == ("30", "8.66")  # 15/√3, exact analytic
    assert _shown(panel.certified_terms) == {"surface_tension": ("30.9", "0.3"),
                                             "density": ("874", "0.5")}  # fmt: skip
    # shown filled and open, because the file has them
    assert panel.step_row(0).terms.box.selected_index == 0
    assert panel.certified_terms.box.layout.display is None
    # the same chain as the file's, and the document is the file's
    assert panel.result().value == load_chain(SURFACE).evaluate().value  # same path
    assert panel.document() == tomllib.loads(SURFACE.read_text(encoding="utf-8"))


def test_editing_another_field_keeps_the_files_term_tables(panel: ChainPanel) -> None:
    before = tomllib.loads(SURFACE.read_text(encoding="utf-8"))
    panel.step_row(1).label.value = "S3 (lot 2)"
    step = panel.document()["steps"][1]
    assert step["label"] == "S3 (lot 2)"
    for key, _symbol, _unit in TERMS:  # each table as the file states it (E stays rectangular)
        assert step[key] == before["steps"][1][key]
    assert panel.result().value == load_chain(SURFACE).evaluate().value


def test_a_file_without_terms_shows_empty_closed_parts() -> None:
    p = chain_panel(PLAIN)
    assert set(_shown(p.step_row(0).terms).values()) == {("", "")}
    assert p.step_row(0).terms.box.selected_index is None
    assert p.certified_terms.box.layout.display == "none"  # no [certified] in this file


def test_loading_another_file_refills_the_parts(panel: ChainPanel) -> None:
    panel.step_row(0).label.value = "S2 (lot 7)"
    assert "liquid S2 (lot 7)" in panel.step_row(0).terms.box.get_title(0)
    assert panel.load_file(PLAIN)
    assert set(_shown(panel.water_terms).values()) == {("", "")}
    assert panel.water_terms.box.selected_index is None
    assert panel.certified_terms.box.layout.display == "none"
    assert panel.result().value == load_chain(PLAIN).evaluate().value
    assert panel.load_file(SURFACE)
    assert _shown(panel.water_terms)["driving_head"] == ("400", "3")
    assert panel.certified_terms.box.layout.display is None


def test_a_changed_surface_tension_equals_the_librarys(panel: ChainPanel) -> None:
    panel.step_row(0).terms.values["surface_tension"].text.value = "29.9"
    assert panel.message("steps.0") == ""
    parts = load_chain_file(SURFACE)
    sigma = InputQuantity.from_standard("sigma2", 0.0299, 0.0003, "N/m")  # SI, not mN/m
    step = dataclasses.replace(
        parts.steps[0], surface=LiquidSurface(sigma, parts.steps[0].surface.density)
    )
    expected = _library(parts, steps=(step, *parts.steps[1:])).evaluate()
    got = panel.result()
    assert got.value == pytest.approx(expected.value, rel=1e-12)  # mN/m vs N/m rounding only
    assert got.expanded_uncertainty == pytest.approx(expected.expanded_uncertainty, rel=1e-9)
    assert html.escape(statement(expected)) in panel.statement_html.value
    assert got.value != load_chain(SURFACE).evaluate().value  # the change acted
    # written in the standard-uncertainty form, in the fields' unit
    assert panel.document()["steps"][0]["surface_tension"] == {
        "value": 29.9, "unit": "mN/m", "standard_uncertainty": 0.3}  # fmt: skip


def test_a_changed_kinetic_energy_of_master_1_equals_the_librarys(panel: ChainPanel) -> None:
    panel.water_terms.values["kinetic_energy"].text.value = "40"
    panel.water_terms.uncertainties["kinetic_energy"].text.value = "10"
    assert panel.message("water") == ""
    parts = load_chain_file(SURFACE)
    energy = InputQuantity.from_standard("E1", 40e-6, 10e-6, "m^2*s")  # SI
    expected = _library(parts, first_master_kinetic_energy=energy).evaluate()
    assert panel.result().value == pytest.approx(expected.value, rel=1e-12)
    assert html.escape(statement(expected)) in panel.statement_html.value
    table = panel.document()["water"]["kinetic_energy"]
    assert table["description"] == "E of master 1"  # the file's notes stay
    assert (table["value"], table["standard_uncertainty"]) == (40.0, 10.0)


@pytest.mark.parametrize(
    ("text", "reason"),
    [
        ("-29.6", "step 2 surface_tension must be positive (in mN/m), got -29.6"),
        ("0", "step 2 surface_tension must be positive (in mN/m), got 0.0"),
        ("oily", "σ / (mN/m): 'oily' is not a number"),
    ],
)
def test_a_refused_surface_tension_keeps_the_last_good_chain(
    panel: ChainPanel, text: str, reason: str
) -> None:
    good = panel.result()
    row = panel.step_row(0)
    row.terms.values["surface_tension"].text.value = text
    assert panel.message("steps.0") == reason
    assert html.escape(reason) in row.message.value  # the step's own message, under its fields
    assert panel.result() is good  # the last good chain stays on screen
    assert "showing the last chain that could be built" in panel.statement_html.value
    assert html.escape(statement(good)) in panel.statement_html.value
    row.terms.values["surface_tension"].text.value = "29.6"  # back to the file's number
    assert panel.message("steps.0") == "" and row.message.value == ""
    assert panel.result().value == good.value


def test_refusals_of_water_and_of_the_certified_liquid_show_beside_their_fields(
    panel: ChainPanel,
) -> None:
    good = panel.result()
    panel.water_terms.uncertainties["density"].text.value = ""  # ρ without u(ρ)
    assert "ρ and u(ρ) go together" in panel.message("water")
    assert "go together" in panel.water_message.value
    panel.water_terms.uncertainties["density"].text.value = "-0.01"  # the reader's refusal
    assert "must be non-negative" in panel.message("water")
    panel.water_terms.uncertainties["density"].text.value = "0.01"
    assert panel.message("water") == ""
    last = panel.result()
    assert last.value == good.value  # the file's table again
    panel.certified_terms.values["surface_tension"].text.value = "-1"
    assert panel.message("certified") == (
        "[certified] surface_tension must be positive (in mN/m), got -1.0"
    )
    assert "must be positive" in panel.certified_message.value
    assert panel.result() is last
    # σ without ρ: the reader's message, in the step's place
    panel.certified_terms.values["surface_tension"].text.value = "30.9"
    row = panel.step_row(1)
    row.terms.values["density"].text.value = ""
    row.terms.uncertainties["density"].text.value = ""
    assert "surface_tension needs density too" in panel.message("steps.1")
    assert panel.result().value == good.value


def test_clearing_every_term_gives_the_chain_without_them(panel: ChainPanel) -> None:
    for terms in (panel.water_terms, panel.certified_terms,
                  *(panel.step_row(i).terms for i in range(2))):  # fmt: skip
        _clear(terms)
    for where in ("water", "steps.0", "steps.1", "certified", "general"):
        assert panel.message(where) == "", where
    doc = panel.document()
    for part in (doc["water"], *doc["steps"], doc["certified"]):
        assert not any(key in part for key, _s, _u in TERMS)
    # the library's chain of the same data without the terms: the same numbers, exactly
    parts = load_chain_file(SURFACE)
    bare = [dataclasses.replace(s, surface=None, geometry=None, kinetic_energy=None)
            for s in parts.steps]  # fmt: skip
    certified = CertifiedLiquid(parts.certified.flow_time, parts.certified.temperature_coefficient)
    expected = _library(
        parts, steps=bare, certified=certified, water_surface=None,
        first_master_geometry=None, first_master_kinetic_energy=None,
    ).evaluate()  # fmt: skip
    got = panel.result()
    assert (got.value, got.expanded_uncertainty) == (expected.value, expected.expanded_uncertainty)
    # masters 1–3 of this file are those of the plain example chain: its C3, exactly
    plain = load_chain_file(PLAIN).chain_to(3).evaluate()
    c3 = panel.results()[2]
    assert (c3.value, c3.expanded_uncertainty) == (plain.value, plain.expanded_uncertainty)


def test_the_parts_fit_a_narrow_window(panel: ChainPanel) -> None:
    """No fixed width of the new fields is wider than 40em (a 1024 px window)."""
    boxes = [panel.water_terms.box, panel.certified_terms.box, panel.step_row(0).terms.box]
    seen = 0
    for box in boxes:
        stack: list[Any] = [box]
        while stack:
            w = stack.pop()
            stack.extend(getattr(w, "children", ()))
            width = getattr(getattr(w, "layout", None), "width", None) or ""
            m = re.fullmatch(r"([\d.]+)em", width)
            if m:
                seen += 1
                assert float(m.group(1)) <= 40.0, (w, width)
            assert not re.fullmatch(r"[\d.]+px", width), (w, width)
    assert seen > 0
    assert isinstance(panel.step_row(0).terms.box, widgets.Accordion)
