"""The budget builder, driven as a person would, in plain pytest (no kernel, no browser).

Setting a control's ``value`` or calling ``button.click()`` fires the same callbacks as in
JupyterLab. Check values: the example budgets' recorded fingerprints and results (regression
values of this tool, stored in examples/), and exact analytic results of y = x.
"""

from __future__ import annotations

import base64
import html
import re
from datetime import UTC, datetime
from pathlib import Path

import pytest

from viscometry.io import load_budget
from viscometry.text import statement
from viscometry.widgets.builder import budget_builder

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
OIL = EXAMPLES / "lubricant_lab_kinematic_viscosity.toml"


@pytest.fixture
def blank():
    return budget_builder(folder=EXAMPLES, show_chart=False)


@pytest.fixture
def oil(tmp_path: Path):
    return budget_builder(OIL, folder=EXAMPLES, save_path=tmp_path / "oil.toml",
                          export_folder=tmp_path / "reports", show_chart=False)  # fmt: skip


# ----------------------------------------------------------------------------- starting
def test_blank_start_is_y_equals_x(blank) -> None:
    r = blank.current_result()
    # y = x, u(x) = 0.1, k = 2 (exact analytic)
    assert (r.value, round(r.standard_uncertainty, 12)) == (1.0, 0.1)
    assert blank.formula.value == "x" and "blank" in blank.start_message.value


def test_loading_a_file_gives_the_files_budget_and_fingerprint(oil) -> None:
    bf = load_budget(OIL)
    assert oil.current_budget().fingerprint == bf.fingerprint == bf.recorded.fingerprint
    assert statement(oil.current_result()) == bf.recorded.statement  # regression value
    assert oil.title.value == bf.budget.title
    assert list(oil.document()["inputs"]) == ["C", "t", "E", "T", "a_T"]
    assert oil.files.options and str(OIL) in oil.files.options


def test_load_refusals_keep_the_budget(oil, tmp_path: Path) -> None:
    before = oil.current_budget()
    assert not oil.load_file(tmp_path / "missing.toml")
    assert "cannot read the file" in oil.message("start")
    bad = tmp_path / "bad.toml"
    bad.write_text('format = "viscometry-budget/1"\n[measurand]\nname = "y"\n', encoding="utf-8")
    assert not oil.load_file(bad)
    assert "[measurand] needs exactly one of model or method" in oil.message("start")
    assert "needs exactly one of model or method" in oil.start_message.value
    assert oil.current_budget() is before


def _upload(name: str, data: bytes) -> tuple[dict, ...]:
    return ({"name": name, "type": "", "size": len(data), "last_modified": datetime.now(UTC),
             "content": memoryview(data)},)  # fmt: skip


def test_upload_loads_the_bytes(blank) -> None:
    blank.upload.value = _upload("oil.toml", OIL.read_bytes())
    assert blank.current_budget().fingerprint == load_budget(OIL).fingerprint
    blank.upload.value = _upload("latin.toml", b"title = '\xe9'")
    assert "not UTF-8" in blank.message("start")


def test_start_from_a_built_in_model_uses_its_example_and_its_checks(blank) -> None:
    blank.start_from_method("glass_capillary_kinetic")
    budget = blank.current_budget()
    assert budget.method.name == "glass_capillary_kinetic"
    assert "example values" in budget.title
    assert "flow_volume" in [row.key for row in blank._state.checks.values()]


# ----------------------------------------------------------------------------- editing
def test_changing_an_input_changes_the_table(oil) -> None:
    before = oil.table_html.value
    oil.input_row("C").big_u.text.value = "0.0004"
    assert oil.current_budget().input("C").standard_uncertainty == pytest.approx(0.0002, rel=1e-12)
    assert oil.table_html.value != before


def test_number_fields_show_four_digits_but_keep_the_exact_value(oil) -> None:
    row = oil.input_row("C")
    assert row.value.text.value == "0.1003"  # 0.10034 shown to four digits
    assert oil.current_budget().input("C").value == 0.10034  # exact value kept
    row.description.value = "changed description"  # any other edit keeps the exact value
    assert oil.current_budget().input("C").value == 0.10034


@pytest.mark.parametrize(
    ("field", "text", "message"),
    [
        ("big_u", "-0.5", "must be non-negative"),
        ("big_u", "abc", "'abc' is not a number"),
        ("value", "1e999", "not a finite number"),
        ("k_value", "0", "coverage_factor must be positive"),
    ],
)
def test_refused_fields_show_the_message_and_keep_the_last_good_budget(oil, field, text, message):
    good = oil.current_result()
    getattr(oil.input_row("C"), field).text.value = text
    assert message in oil.message("inputs.C")
    assert message in html.unescape(oil.input_row("C").message.value)
    assert oil.current_result() is good
    assert "last budget that could be built" in oil.statement_html.value


def test_formula_typing_errors_are_shown(blank) -> None:
    blank.formula.value = "x +"
    assert "syntax error" in blank.message("measurand")
    assert "syntax error" in blank.header_message.value
    blank.formula.value = "2 * x"
    assert blank.message("measurand") == "" and blank.current_result().value == 2.0


def test_sign_bound_plausibility_warning_is_shown(blank) -> None:
    blank.formula.value = "x**4"
    blank.input_row("x").u.text.value = "1.5"
    assert "u(x) = 1.5 is at least |x| = 1" in blank.statement_html.value


def test_rename_add_and_remove_inputs(blank) -> None:
    blank.input_row("x").name.value = "r"
    assert blank.formula.value == "r" and "r" in blank.document()["inputs"]
    blank.new_input.value = "9z"
    blank.add_input.click()
    assert "identifier" in blank.message("inputs")
    blank.new_input.value = "t"
    blank.add_input.click()
    assert "input t is not used by the model" in blank.statement_html.value
    blank.formula.value = "r * t"
    assert blank.current_result().value == 1.0
    blank.input_row("r").name.value = "t"
    assert "used already" in blank.message("inputs.r")
    blank.input_row("t").remove.click()
    assert "no input quantity for t" in blank.message("measurand") or blank.message("measurand")
    blank.formula.value = "r"
    assert list(blank.document()["inputs"]) == ["r"]
    blank.input_row("r").remove.click()
    assert "at least one input" in blank.message("inputs.r")


def test_switching_forms_keeps_the_standard_uncertainty(blank) -> None:
    row = blank.input_row("x")
    row.form.value = "expanded"
    spec = blank.document()["inputs"]["x"]
    assert spec["expanded_uncertainty"] == pytest.approx(0.2) and spec["coverage_factor"] == 2.0
    assert blank.current_budget().input("x").standard_uncertainty == pytest.approx(0.1)
    row.form.value = "bounds"
    assert blank.current_budget().input("x").standard_uncertainty == pytest.approx(0.1)
    row.form.value = "readings"
    assert "paste at least two readings" in blank.message("inputs.x")
    row.readings.value = "1.0\n1.2\n0.8\n1.0"
    q = blank.current_budget().input("x")
    # mean 1.0, s = 0.16330, u = s/2 (exact analytic, JCGM 100:2008 4.2)
    assert (q.value, q.dof, q.evaluation) == (1.0, 3.0, "A")
    assert q.standard_uncertainty == pytest.approx(0.0816496580927726)
    row.readings.value = "1.0\nabc"
    assert "'abc' is not a number" in blank.message("inputs.x")


def test_correlations_can_be_added_refused_and_removed(oil) -> None:
    assert len(oil._state.correlations) == 1
    row = oil._state.correlations[0]
    row.coefficient.text.value = "1.5"
    assert "lies outside [-1, 1]" in oil.message("correlations")
    row.coefficient.text.value = "0.5"
    assert oil.current_budget().correlations[0].coefficient == 0.5
    oil.add_correlation.click()
    assert len(oil.current_budget().correlations) == 2
    oil._state.correlations[-1].remove.click()
    assert len(oil.current_budget().correlations) == 1


def test_check_context_of_a_built_in_model(blank) -> None:
    blank.start_from_method("glass_capillary_kinetic")
    row = blank._state.checks["minimum_flow_time"]
    row.value.text.value = "600"
    assert "flow time 460 s is below the minimum 600 s" in blank.statement_html.value
    row.value.text.value = "-1"
    assert "must be positive" in blank.message("checks")
    row.value.text.value = ""
    assert "below the minimum" not in blank.statement_html.value


def test_a_short_flow_time_warns_as_on_every_path(blank) -> None:
    blank.start_from_method("glass_capillary_kinetic")
    blank.input_row("t").readings.value = "150.01\n149.95\n150.02"
    warning = blank.current_result().warnings
    assert warning == blank.current_budget().evaluate().warnings
    assert any(w.startswith("flow time 150 s is below the minimum 200 s") for w in warning)
    assert "flow time 150 s is below the minimum 200 s" in blank.statement_html.value


def test_model_choice_switches_to_a_formula_with_the_same_numbers(blank) -> None:
    blank.start_from_method("glass_capillary_kinetic")
    value = blank.current_result().value
    blank.model_kind.value = "formula"
    assert blank.current_budget().method is None
    assert blank.formula.value == "C*t - E/t**2"
    assert blank.current_result().value == value


# ----------------------------------------------------------------------------- save, export
def test_save_reload_gives_the_same_fingerprint_and_refuses_to_overwrite(oil, tmp_path) -> None:
    oil.input_row("t").readings.value = "451.62\n451.88\n451.47"
    path = oil.save()
    assert path == tmp_path / "oil.toml"
    again = load_budget(path)
    assert again.fingerprint == oil.current_budget().fingerprint
    assert again.recorded.fingerprint == again.fingerprint
    assert again.recorded.statement == statement(oil.current_result())
    assert "download" in oil.save_html.value
    data = re.search(r"base64,([A-Za-z0-9+/=]+)", oil.save_html.value).group(1)
    assert base64.b64decode(data) == path.read_bytes()
    before = path.read_bytes()
    oil.input_row("C").big_u.text.value = "0.0004"
    assert oil.save() is None and "exists already" in oil.message("save")
    assert path.read_bytes() == before
    oil.overwrite.value = True
    oil.save_button.click()
    assert load_budget(path).fingerprint == oil.current_budget().fingerprint


def test_export_writes_every_format_where_the_user_keeps_it(oil, tmp_path) -> None:
    written = oil.export()
    assert sorted(p.suffix for p in written) == [".csv", ".html", ".json", ".md", ".tex"]
    assert all(p.parent == tmp_path / "reports" and p.stat().st_size > 0 for p in written)
    fingerprint = oil.current_budget().fingerprint
    assert fingerprint in (tmp_path / "reports" / "oil.html").read_text(encoding="utf-8")
    assert oil.export_html.value.count("download=") == 5


def test_export_refuses_a_folder_that_is_a_file(oil, tmp_path) -> None:
    blocker = tmp_path / "blocker"
    blocker.write_text("x", encoding="utf-8")
    oil.export_folder.value = str(blocker)
    assert oil.export() == [] and "cannot export" in oil.message("export")


# ----------------------------------------------------------------------------- layout
def test_layout_wraps_and_the_chart_keeps_its_aspect(oil) -> None:
    assert oil.chart.layout.height == "auto" and oil.chart.layout.width == "100%"
    rows = [c for c in oil.widget.children if getattr(c.layout, "flex_flow", None)]
    assert rows and all(c.layout.flex_flow == "row wrap" for c in rows)
    fields = [oil.title, oil.measurand, oil.unit, oil.formula, oil.save_path, oil.path]
    assert all(f.layout.min_width for f in fields)
