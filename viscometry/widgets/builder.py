"""The budget builder: a metrologist's own budget, built, loaded, saved and exported in a workbook.

:func:`budget_builder` starts from a budget file (a path, a list of the lab's folder, or an
upload), from a built-in viscometer model, or from a blank formula, and edits every part of
the budget: title, measurand name and unit, the model (a formula, parsed as it is typed, or a
built-in model), the inputs (add, remove, rename; estimate, unit, every uncertainty form of
the file format, readings pasted as a column, degrees of freedom, description, source), the
correlations, the coverage settings, the rounding and the check context of a built-in model.
The budget table, the statement, the warnings and a Pareto chart follow every change.
**Save** writes the budget file atomically with its recorded result and fingerprint (an
existing file only with the "overwrite" tick) and offers a download link; **Export** writes
the report in every format to a folder the user keeps.

The builder edits the budget-file *document* (the same tables and keys as a file) and builds
the budget with the file reader (:func:`viscometry.io.reader.read_document`), so a budget
made here and the same budget loaded from its file are one and the same, with one
fingerprint. A refused field shows the library's message next to it and the last good budget
stays on screen; nothing is clamped or ignored. Everything runs without a browser: setting a
control's ``value`` or calling ``button.click()`` fires the same callbacks in plain pytest.
"""

from __future__ import annotations

import copy
import html
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from types import MappingProxyType
from typing import Any

import ipywidgets as widgets

from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.gum.budget import Budget, BudgetResult
from viscometry.gum.inputs import check_name
from viscometry.io.reader import parse_toml, read_document, read_text_file
from viscometry.io.schema import FORMAT
from viscometry.io.writer import budget_to_document, dumps_budget, recorded_from, save_budget
from viscometry.plots import figure_png, pareto_figure
from viscometry.report import FORMATS, write_report
from viscometry.text import (
    budget_html,
    format_dof,
    format_number,
    statement,
    symbol,
    unit_suffix,
)
from viscometry.widgets.builder_rows import (
    CheckRow,
    CorrelationRow,
    InputRow,
    NumberField,
    converted,
)
from viscometry.widgets.fields import (
    SCROLL_STYLE,
    chart_image,
    controls_column,
    download_link,
    error_html,
    heading,
    message_label,
    scrolling_html,
    warning_lines,
    wrap_row,
)

__all__ = ["BudgetBuilder", "budget_builder", "BLANK_DOCUMENT"]

#: Where a fresh blank budget starts: y = x with one input.
BLANK_DOCUMENT: Mapping[str, Any] = MappingProxyType(
    {
        "format": FORMAT,
        "title": "New budget",
        "measurand": {"name": "y", "unit": "1", "model": "x"},
        "inputs": {"x": {"value": 1.0, "unit": "1", "standard_uncertainty": 0.1}},
    }
)
_SOURCE = "budget builder"
_REPORT_EXTENSIONS = tuple(dict.fromkeys(FORMATS.values()))  # html, md, tex, csv, json


class _State:
    """The one mutable part of a builder: the document, the last good budget and messages."""

    def __init__(self, document: dict[str, Any]) -> None:
        self.document = document
        self.budget: Budget | None = None
        self.result: BudgetResult | None = None
        self.messages: dict[str, str] = {}
        self.rows: dict[str, InputRow] = {}
        self.correlations: list[CorrelationRow] = []
        self.checks: dict[str, CheckRow] = {}
        self.hold = False


@dataclass(frozen=True, eq=False)
class BudgetBuilder:
    """Handle of a budget builder made by :func:`budget_builder` (controls by name).

    ``widget`` is the whole tree for ``display``; the other attributes are its controls and
    outputs. Query the state with :meth:`current_budget`, :meth:`current_result`,
    :meth:`document`, :meth:`input_row` and :meth:`message`.
    """

    widget: widgets.VBox
    folder: widgets.Text
    files: widgets.Dropdown
    path: widgets.Text
    load_button: widgets.Button
    upload: widgets.FileUpload
    model_choice: widgets.Dropdown
    start_button: widgets.Button
    blank_button: widgets.Button
    start_message: widgets.HTML
    title: widgets.Text
    measurand: widgets.Text
    unit: widgets.Text
    model_kind: widgets.Dropdown
    formula: widgets.Text
    coverage_kind: widgets.Dropdown
    coverage_value: NumberField
    rounding: widgets.Dropdown
    description: widgets.Text
    header_message: widgets.HTML
    inputs_box: widgets.VBox
    new_input: widgets.Text
    add_input: widgets.Button
    inputs_message: widgets.HTML
    correlations_box: widgets.VBox
    add_correlation: widgets.Button
    correlations_message: widgets.HTML
    checks_box: widgets.VBox
    checks_message: widgets.HTML
    statement_html: widgets.HTML
    table_html: widgets.HTML
    chart: widgets.Image
    save_path: widgets.Text
    overwrite: widgets.Checkbox
    save_button: widgets.Button
    save_html: widgets.HTML
    export_folder: widgets.Text
    export_button: widgets.Button
    export_html: widgets.HTML
    show_chart: bool = True
    _state: _State = field(repr=False, default=None)  # type: ignore[assignment]

    # ------------------------------------------------------------------ queries
    def current_budget(self) -> Budget | None:
        """The last budget that could be built (None before the first)."""
        return self._state.budget

    def current_result(self) -> BudgetResult | None:
        """The evaluated :meth:`current_budget`."""
        return self._state.result

    def document(self) -> dict[str, Any]:
        """A copy of the budget-file document being edited."""
        return copy.deepcopy(self._state.document)

    def input_row(self, name: str) -> InputRow:
        """The row of input ``name``."""
        return self._state.rows[name]

    def message(self, where: str) -> str:
        """The refusal shown for a part (``"inputs.r"``, ``"measurand"``, ``"correlations"``,
        ``"checks"``, ``"start"``, ``"save"``, ``"export"``), or ``""``."""
        return self._state.messages.get(where, "")

    # ------------------------------------------------------------------ starting points
    def load_file(self, path: str | Path) -> bool:
        """Start from a budget file; on a refusal the message shows and nothing changes."""
        try:
            text = read_text_file(path, "a budget file")
        except BudgetFileError as exc:
            return self._refuse_start(str(exc))
        return self.load_text(text, str(path))

    def load_text(self, text: str, name: str = "uploaded file") -> bool:
        """Start from the text of a budget file (an upload)."""
        try:
            doc = parse_toml(text, name)
            read_document(doc, name)
        except ViscometryError as exc:
            return self._refuse_start(str(exc))
        doc.pop("recorded", None)
        self._start(doc, f"loaded {name}")
        return True

    def start_from_method(self, name: str) -> None:
        """Start from a built-in viscometer model, with the invented values of its example
        budget where one is shipped (else placeholders of 1 in SI units, u = 0)."""
        from viscometry.methods import get_method

        method = get_method(name)
        doc = _example_document(name)
        if doc is None:
            inputs = {
                n: {"value": 1.0, "unit": method.input_units[n], "standard_uncertainty": 0.0}
                for n in method.input_names
            }
            m = {"name": method.output_name, "unit": method.output_unit, "method": name}
            doc = {"format": FORMAT, "measurand": m, "inputs": inputs}
        doc["title"] = f"{method.title} (example values: put in your own)"
        note = (
            f"started from the built-in model {name} with invented example values: put in "
            "your own estimates and uncertainties"
        )
        self._start(doc, note)

    def start_blank(self) -> None:
        """Start from a blank formula budget, y = x."""
        self._start(copy.deepcopy(dict(BLANK_DOCUMENT, measurand=dict(BLANK_DOCUMENT["measurand"]),
                                       inputs={"x": dict(BLANK_DOCUMENT["inputs"]["x"])})),
                    "started a blank budget: type the model and add inputs")  # fmt: skip

    def _refuse_start(self, text: str) -> bool:
        self._state.messages["start"] = text
        self.start_message.value = error_html([text])
        return False

    def _start(self, doc: dict[str, Any], note: str) -> None:
        state = self._state
        state.document = doc
        state.budget = state.result = None
        state.messages.clear()
        self.start_message.value = f"<span style='color:#060'>{html.escape(note)}</span>"
        _fill(self)
        self.rebuild()

    # ------------------------------------------------------------------ building
    def rebuild(self) -> bool:
        """Build and evaluate the document; on a refusal keep the last good budget."""
        state = self._state
        for key in [k for k in state.messages if k not in ("start", "save", "export")]:
            state.messages.pop(key)
        try:
            budget = read_document(copy.deepcopy(state.document), _SOURCE).budget
            result = budget.evaluate()
        except ViscometryError as exc:
            where = getattr(exc, "where", None) or "measurand"
            state.messages[_group(where)] = str(exc).removeprefix(f"{_SOURCE}: ")
            _show_messages(self)
            return False
        state.budget, state.result = budget, result
        _show_messages(self)
        _redraw(self)
        return True

    def edit(self, where: str, text: str) -> None:
        """Show a refusal of a field edit (the document is left as it was)."""
        self._state.messages[where] = text
        _show_messages(self)

    # ------------------------------------------------------------------ save and export
    def save(self) -> Path | None:
        """Save the current budget with its recorded result to :attr:`save_path`."""
        state = self._state
        state.messages.pop("save", None)
        if state.budget is None or state.result is None:
            return self._refuse("save", "nothing to save: the budget cannot be built yet")
        target = Path(self.save_path.value.strip() or "budget.toml")
        try:
            path = save_budget(state.budget, target, recorded=recorded_from(state.result),
                               overwrite=bool(self.overwrite.value))  # fmt: skip
        except ViscometryError as exc:
            return self._refuse("save", str(exc))
        data = path.read_bytes()
        self.save_html.value = (
            f"<span style='color:#060'>saved {html.escape(str(path))}</span> — fingerprint "
            f"<code>{state.budget.fingerprint}</code> — "
            + download_link(path.name, data, "download the file", "application/toml")
        )
        return path

    def export(self) -> list[Path]:
        """Write the report in every format into :attr:`export_folder` (created if missing)."""
        state = self._state
        state.messages.pop("export", None)
        if state.result is None:
            self._refuse("export", "nothing to export: the budget cannot be built yet")
            return []
        folder = Path(self.export_folder.value.strip() or "reports")
        saved = Path(self.save_path.value.strip() or "budget.toml")
        stem = Path(self.save_path.value.strip() or state.result.measurand).stem or "budget"
        written: list[Path] = []
        try:
            folder.mkdir(parents=True, exist_ok=True)
            for ext in _REPORT_EXTENSIONS:
                report = write_report(state.result, folder / f"{stem}.{ext}",
                                      protect={saved: "the budget file"})  # fmt: skip
                written.append(report)
        except (OSError, ViscometryError) as exc:
            self._refuse("export", f"cannot export to {folder}: {exc}")
            return written
        links = [download_link(p.name, p.read_bytes(), p.name) for p in written]
        self.export_html.value = (
            f"<span style='color:#060'>wrote {len(written)} reports to "
            f"{html.escape(str(folder.resolve()))}</span>: " + ", ".join(links)
        )
        return written

    def _refuse(self, where: str, text: str) -> None:
        self._state.messages[where] = text
        target = self.save_html if where == "save" else self.export_html
        target.value = error_html([text])
        return None


# ============================================================================ messages
def _group(where: str) -> str:
    """The part of the builder that shows a refusal about ``where``."""
    if where.startswith("inputs."):
        return where
    if where.startswith("checks"):
        return "checks"
    if where.startswith("correlations"):
        return "correlations"
    if where.startswith("constants"):
        return "measurand"
    return "inputs" if where == "inputs" else "measurand"


def _show_messages(b: BudgetBuilder) -> None:
    m = b._state.messages
    b.header_message.value = error_html([m["measurand"]] if "measurand" in m else [])
    b.inputs_message.value = error_html([m["inputs"]] if "inputs" in m else [])
    b.correlations_message.value = error_html([m["correlations"]] if "correlations" in m else [])
    b.checks_message.value = error_html([m["checks"]] if "checks" in m else [])
    for name, row in b._state.rows.items():
        text = m.get(f"inputs.{name}")
        row.message.value = error_html([text] if text else [])
    if b._state.budget is not None:
        b.statement_html.value = _statement_html(b)


# ============================================================================ drawing
def _redraw(b: BudgetBuilder) -> None:
    result = b._state.result
    assert result is not None
    b.table_html.value = SCROLL_STYLE + budget_html(result)
    b.statement_html.value = _statement_html(b)
    if b.show_chart:
        b.chart.value = figure_png(pareto_figure(result, figsize=(5.6, 3.4)), dpi=80.0)


def _statement_html(b: BudgetBuilder) -> str:
    state = b._state
    result, budget = state.result, state.budget
    assert result is not None and budget is not None
    e = html.escape
    unit = unit_suffix(result.unit)
    dom = result.dominant
    lines = [
        f"<b>{e(statement(result))}</b>",
        e(f"u_c = {format_number(result.standard_uncertainty, 2)}{unit}, ν_eff = "
          f"{format_dof(result.effective_dof)}, k = {result.coverage_factor:.3f}; largest share: "
          f"{symbol(dom.name)} ({100 * dom.variance_share:.1f} %)"),
        f"fingerprint <code>{e(budget.fingerprint)}</code>",
    ]  # fmt: skip
    lines += warning_lines(result.warnings)
    pending = [k for k in state.messages if k not in ("start", "save", "export")]
    if pending:
        lines.append(
            "<span style='color:#a00'>showing the last budget that could be built; "
            "a field above refuses its value (see the red message)</span>"
        )
    # the 71-character fingerprint may break anywhere, so a narrow column never cuts the text
    style = "overflow-wrap:anywhere"
    return f"<div class='viscometry-statement' style='{style}'>" + "<br>".join(lines) + "</div>"


# ============================================================================ filling the editor
def _fill(b: BudgetBuilder) -> None:
    """Show the document in the header, input, correlation and check fields."""
    state = b._state
    doc = state.document
    m = doc["measurand"]
    state.hold = True
    try:
        b.title.value = str(doc.get("title", ""))
        b.measurand.value = str(m.get("name", ""))
        b.unit.value = str(m.get("unit", "1"))
        b.model_kind.value = m.get("method", "formula") if "method" in m else "formula"
        b.formula.value = str(m.get("model", ""))
        b.formula.disabled = "method" in m
        b.coverage_kind.value = "k" if "coverage_factor" in m else "p"
        b.coverage_value.set(m.get("coverage_factor", m.get("coverage_probability", 0.9545)))
        b.rounding.value = m.get("rounding", "nearest")
        b.description.value = str(m.get("description", ""))
    finally:
        state.hold = False
    state.rows = {name: _input_row(b, name, spec) for name, spec in doc["inputs"].items()}
    b.inputs_box.children = tuple(r.box for r in state.rows.values())
    _fill_correlations(b)
    _fill_checks(b)


def _input_row(b: BudgetBuilder, name: str, spec: Mapping[str, Any]) -> InputRow:
    row = InputRow.make(name, spec)
    for w in row.widgets_to_watch():
        w.observe(lambda _c, row=row: _input_changed(b, row), names="value")
    row.name.observe(lambda _c, row=row: _renamed(b, row), names="value")
    row.form.observe(lambda c, row=row: _form_changed(b, row, c["new"]), names="value")
    row.remove.on_click(lambda _btn, row=row: _remove_input(b, row.key))
    return row


def _fill_correlations(b: BudgetBuilder) -> None:
    state = b._state
    names = list(state.document["inputs"])
    state.correlations = []
    for c in state.document.get("correlations", ()):
        first, second = c["between"]
        if first in names and second in names:
            state.correlations.append(_correlation_row(b, names, first, second, c["coefficient"]))
    b.correlations_box.children = tuple(r.box for r in state.correlations)


def _correlation_row(
    b: BudgetBuilder, names: list[str], first: str, second: str, r: float
) -> CorrelationRow:
    row = CorrelationRow.make(names, first, second, r)
    for w in (row.first, row.second, row.coefficient.text):
        w.observe(lambda _c: _correlations_changed(b), names="value")
    row.remove.on_click(lambda _btn, row=row: _remove_correlation(b, row))
    return row


def _fill_checks(b: BudgetBuilder) -> None:
    state = b._state
    m = state.document["measurand"]
    state.checks = {}
    if "method" in m:
        from viscometry.methods import get_method

        method = get_method(m["method"])
        given = state.document.get("checks", {})
        for key, text in method.context_keys.items():
            spec = given.get(key, {})
            value = spec.get("value") if isinstance(spec, dict) else spec
            unit = spec.get("unit", method.context_unit(key)) if isinstance(spec, dict) else "1"
            row = CheckRow.make(key, html.escape(text), value, unit)
            # the key is the label: 9em cut "minimum_flow_time" (17 characters) in the browser
            row.value.text.style.description_width = "12em"
            row.value.text.layout.width = row.value.text.layout.min_width = "25em"
            for w in (row.value.text, row.unit):
                w.observe(lambda _c: _checks_changed(b), names="value")
            state.checks[key] = row
    b.checks_box.children = tuple(r.box for r in state.checks.values()) or (
        widgets.HTML(
            "<i>a formula has no validity checks; a built-in model lists its check context here</i>"
        ),
    )


# ============================================================================ edits
def _header_changed(b: BudgetBuilder) -> None:
    state = b._state
    if state.hold:
        return
    doc, m = state.document, state.document["measurand"]
    try:
        k_or_p = b.coverage_value.get()
    except ViscometryError as exc:
        return b.edit("measurand", str(exc))
    doc["title"] = b.title.value
    m.update(name=b.measurand.value.strip(), unit=b.unit.value.strip() or "1")
    if "method" not in m:
        m["model"] = b.formula.value
    for key in ("coverage_factor", "coverage_probability", "rounding", "description"):
        m.pop(key, None)
    m["coverage_factor" if b.coverage_kind.value == "k" else "coverage_probability"] = k_or_p
    if b.rounding.value != "nearest":
        m["rounding"] = b.rounding.value
    if b.description.value.strip():
        m["description"] = b.description.value
    b.rebuild()


def _model_changed(b: BudgetBuilder, choice: str) -> None:
    """A built-in model starts its own inputs; "formula" writes the current model as one."""
    state = b._state
    if state.hold:
        return
    m = state.document["measurand"]
    if choice == "formula" and "method" in m:
        if state.budget is not None:
            formula = budget_to_document(state.budget.with_settings(method=None, checks=()))
            m["model"] = formula["measurand"]["model"]
        m.pop("method", None)
        state.document.pop("checks", None)
        _fill(b)
        b.rebuild()
    elif choice != "formula" and m.get("method") != choice:
        b.start_from_method(choice)


def _input_changed(b: BudgetBuilder, row: InputRow) -> None:
    if b._state.hold:
        return
    try:
        spec = row.spec()
    except ViscometryError as exc:
        return b.edit(f"inputs.{row.key}", str(exc))
    b._state.document["inputs"][row.key] = spec
    b.rebuild()


def _form_changed(b: BudgetBuilder, row: InputRow, form: str) -> None:
    state = b._state
    if state.hold:
        return
    u = None
    if state.budget is not None and row.key in state.budget.input_names:
        u = state.budget.input(row.key).standard_uncertainty
    spec = converted(state.document["inputs"].get(row.key, {}), form, u)
    state.hold = True
    try:
        row.load(spec)
    finally:
        state.hold = False
    if form == "readings":
        return b.edit(f"inputs.{row.key}", "paste at least two readings (one per line)")
    state.document["inputs"][row.key] = spec
    b.rebuild()


def _renamed(b: BudgetBuilder, row: InputRow) -> None:
    state = b._state
    if state.hold:
        return
    old, new = row.key, row.name.value.strip()
    if new == old:
        return
    try:
        check_name(new, "input name")
        if new in state.document["inputs"]:
            raise BudgetFileError(f"input name {new!r} is used already")
    except ViscometryError as exc:
        return b.edit(f"inputs.{old}", str(exc))
    doc = state.document
    doc["inputs"] = {(new if k == old else k): v for k, v in doc["inputs"].items()}
    word = re.compile(rf"\b{re.escape(old)}\b")
    if "model" in doc["measurand"]:
        doc["measurand"]["model"] = word.sub(new, doc["measurand"]["model"])
    for c in doc.get("correlations", ()):
        c["between"] = [new if n == old else n for n in c["between"]]
    _fill(b)
    b.rebuild()


def _add_input(b: BudgetBuilder) -> None:
    name = b.new_input.value.strip()
    try:
        check_name(name, "input name")
        if name in b._state.document["inputs"]:
            raise BudgetFileError(f"input name {name!r} is used already")
    except ViscometryError as exc:
        return b.edit("inputs", str(exc))
    b._state.document["inputs"][name] = {"value": 1.0, "unit": "1", "standard_uncertainty": 0.0}
    b.new_input.value = ""
    _fill(b)
    b.rebuild()


def _remove_input(b: BudgetBuilder, name: str) -> None:
    doc = b._state.document
    if len(doc["inputs"]) <= 1:
        return b.edit(f"inputs.{name}", "a budget needs at least one input")
    doc["inputs"].pop(name, None)
    doc["correlations"] = [c for c in doc.get("correlations", ()) if name not in c["between"]]
    _fill(b)
    b.rebuild()


def _correlations_changed(b: BudgetBuilder) -> None:
    try:
        specs = [r.spec() for r in b._state.correlations]
    except ViscometryError as exc:
        return b.edit("correlations", str(exc))
    b._state.document["correlations"] = specs
    b.rebuild()


def _add_correlation(b: BudgetBuilder) -> None:
    names = list(b._state.document["inputs"])
    if len(names) < 2:
        return b.edit("correlations", "a correlation needs two inputs")
    b._state.document.setdefault("correlations", []).append(
        {"between": [names[0], names[1]], "coefficient": 0.0}
    )
    _fill_correlations(b)
    b.rebuild()


def _remove_correlation(b: BudgetBuilder, row: CorrelationRow) -> None:
    state = b._state
    state.correlations = [r for r in state.correlations if r is not row]
    state.document["correlations"] = [r.spec() for r in state.correlations]
    b.correlations_box.children = tuple(r.box for r in state.correlations)
    b.rebuild()


def _checks_changed(b: BudgetBuilder) -> None:
    try:
        given = {k: r.spec() for k, r in b._state.checks.items()}
    except ViscometryError as exc:
        return b.edit("checks", str(exc))
    b._state.document["checks"] = {k: v for k, v in given.items() if v is not None}
    b.rebuild()


def _upload_changed(b: BudgetBuilder, files: Any) -> None:
    if not files:
        return
    item = files[0]
    try:
        text = bytes(item["content"]).decode("utf-8")
    except UnicodeDecodeError:
        b._refuse_start(f"{item['name']}: not UTF-8 text; save the file as UTF-8")
        return
    b.load_text(text, str(item["name"]))


def _example_document(method: str) -> dict[str, Any] | None:
    """The shipped example budget of a built-in model, as a document (None if there is none)."""
    from viscometry.workspace import bundled

    try:
        path = bundled("examples") / "methods" / f"{method}.toml"
        doc = parse_toml(read_text_file(path, "a budget file"), str(path))
    except ViscometryError:
        return None
    doc.pop("recorded", None)
    return doc if doc.get("measurand", {}).get("method") == method else None


def _budget_files(folder: str) -> list[str]:
    """The budget files below ``folder`` as the audit finds them (no hidden folders such as
    ``.ipynb_checkpoints``, no links to folders; damaged files are listed so that loading one
    says what is wrong with it)."""
    from viscometry.audit import scan_paths

    p = Path(folder.strip() or ".")
    if not p.is_dir():
        return []
    return [str(f) for f in scan_paths([p]).files]


# ============================================================================ constructor
def _button(text: str, tooltip: str = "", style: str = "") -> widgets.Button:
    return widgets.Button(description=text, tooltip=tooltip or text, button_style=style,
                          layout=widgets.Layout(width="auto", min_width="8em"))  # fmt: skip


def _field(label: str, value: str = "", width: str = "24em", **kw: Any) -> widgets.Text:
    return widgets.Text(value=value, description=label, continuous_update=kw.pop("continuous", False),
                        style={"description_width": "9em"},
                        layout=widgets.Layout(width=width, min_width="14em"), **kw)  # fmt: skip


def _controls(folder: str, save_path: str, export_folder: str) -> dict[str, Any]:
    """Every control of a builder, by the name it has on the handle."""
    from viscometry.methods import METHODS

    models = [("formula", "formula")] + [(n, n) for n in METHODS]
    choices = _budget_files(folder)
    return {
        "folder": _field("lab folder", folder), "path": _field("budget file", choices[0] if choices else "", "32em"),
        "files": widgets.Dropdown(options=choices, value=None, description="files there",
                                  style={"description_width": "9em"},
                                  layout=widgets.Layout(width="32em", min_width="14em")),
        "load_button": _button("Load", "read the budget file named on the left"),
        "upload": widgets.FileUpload(accept=".toml", multiple=False, description="Upload a file",
                                     layout=widgets.Layout(width="auto")),
        "model_choice": widgets.Dropdown(options=list(METHODS), description="built-in model",
                                         style={"description_width": "9em"},
                                         layout=widgets.Layout(width="32em", min_width="14em")),
        "start_button": _button("Start from this model"), "blank_button": _button("Blank formula"),
        "start_message": message_label(), "title": _field("title", "", "40em"),
        "measurand": _field("measurand", "", "16em"), "unit": _field("unit", "", "16em"),
        "model_kind": widgets.Dropdown(options=models, value="formula", description="model",
                                       style={"description_width": "9em"},
                                       layout=widgets.Layout(width="24em", min_width="14em")),
        "formula": _field("formula", "", "40em", continuous=True, placeholder="e.g. C * t - E / t**2"),
        "coverage_kind": widgets.Dropdown(options=[("coverage probability p", "p"), ("fixed k", "k")],
                                          value="p", description="coverage by",
                                          style={"description_width": "9em"},
                                          layout=widgets.Layout(width="24em", min_width="14em")),
        "coverage_value": NumberField.make("p or k", 0.9545),
        "rounding": widgets.Dropdown(options=["nearest", "up", "ea-4/02"], value="nearest",
                                     description="rounding of U", style={"description_width": "9em"},
                                     layout=widgets.Layout(width="20em", min_width="14em")),
        "description": _field("description", "", "40em"), "header_message": message_label(),
        "inputs_box": widgets.VBox(), "new_input": _field("new input", "", "20em", placeholder="name"),
        "add_input": _button("Add input"), "inputs_message": message_label(),
        "correlations_box": widgets.VBox(), "add_correlation": _button("Add correlation"),
        "correlations_message": message_label(), "checks_box": widgets.VBox(),
        "checks_message": message_label(), "statement_html": widgets.HTML(),
        "table_html": scrolling_html(),
        "chart": chart_image(), "save_path": _field("save as", save_path, "32em"),
        "overwrite": widgets.Checkbox(value=False, description="overwrite an existing file", indent=False,
                                      layout=widgets.Layout(width="auto")),
        "save_button": _button("Save", "write the budget file with its recorded result", "primary"),
        "save_html": widgets.HTML(), "export_folder": _field("export to folder", export_folder, "32em"),
        "export_button": _button("Export reports", "HTML, Markdown, LaTeX, CSV and JSON"),
        "export_html": widgets.HTML(),
    }  # fmt: skip


def _layout(c: dict[str, Any]) -> widgets.VBox:
    h = heading
    c["statement_html"].add_class("viscometry-statement")
    c["table_html"].add_class("viscometry-budget-table")
    c["chart"].add_class("viscometry-chart")
    for name, control in c.items():  # stable hooks for browser tests: viscometry-builder-save-path
        widget = control.text if isinstance(control, NumberField) else control
        widget.add_class(f"viscometry-builder-{name.replace('_', '-')}")
    tree = widgets.VBox([
        h("Start from a budget file, a built-in model or a blank formula"),
        wrap_row([c["folder"], c["files"]]), wrap_row([c["path"], c["load_button"], c["upload"]]),
        wrap_row([c["model_choice"], c["start_button"], c["blank_button"]]), c["start_message"],
        h("Measurand and model"),
        wrap_row([c["title"], c["measurand"], c["unit"], c["model_kind"], c["formula"],
                  c["coverage_kind"], c["coverage_value"].text, c["rounding"], c["description"]]),
        c["header_message"],
        h("Inputs"), c["inputs_box"], wrap_row([c["new_input"], c["add_input"]]), c["inputs_message"],
        h("Correlations"), c["correlations_box"], wrap_row([c["add_correlation"]]), c["correlations_message"],
        h("Check context of the built-in model"), c["checks_box"], c["checks_message"],
        h("Result"), wrap_row([controls_column([c["statement_html"]]), c["chart"]]), c["table_html"],
        h("Save and export"), wrap_row([c["save_path"], c["overwrite"], c["save_button"]]), c["save_html"],
        wrap_row([c["export_folder"], c["export_button"]]), c["export_html"],
    ], layout=widgets.Layout(width="100%"))  # fmt: skip
    tree.add_class("viscometry-builder")
    return tree


def _wire(b: BudgetBuilder) -> None:
    for w in (
        b.title,
        b.measurand,
        b.unit,
        b.formula,
        b.coverage_kind,
        b.coverage_value.text,
        b.rounding,
        b.description,
    ):
        w.observe(lambda _c: _header_changed(b), names="value")
    b.model_kind.observe(lambda c: _model_changed(b, c["new"]), names="value")
    b.files.observe(lambda c: setattr(b.path, "value", c["new"] or b.path.value), names="value")
    b.folder.observe(lambda c: setattr(b.files, "options", _budget_files(c["new"])), names="value")
    b.load_button.on_click(lambda _btn: b.load_file(b.path.value.strip()))
    b.upload.observe(lambda c: _upload_changed(b, c["new"]), names="value")
    b.start_button.on_click(lambda _btn: b.start_from_method(b.model_choice.value))
    b.blank_button.on_click(lambda _btn: b.start_blank())
    b.add_input.on_click(lambda _btn: _add_input(b))
    b.add_correlation.on_click(lambda _btn: _add_correlation(b))
    b.save_button.on_click(lambda _btn: b.save())
    b.export_button.on_click(lambda _btn: b.export())


def budget_builder(
    source: str | Path | Budget | None = None,
    *,
    folder: str | Path = "examples",
    save_path: str | Path = "my_budget.toml",
    export_folder: str | Path = "reports",
    show_chart: bool = True,
) -> BudgetBuilder:
    """Build a budget builder, starting from a file, a budget or a blank formula.

    Parameters
    ----------
    source : path, Budget or None
        A budget file to load, a :class:`~viscometry.gum.Budget` to edit, or None for a
        blank formula budget.
    folder : path
        The lab's folder of budget files, listed for loading.
    save_path, export_folder : path
        Where Save and Export write at first (editable in the builder).
    show_chart : bool
        Draw the Pareto chart on every change (False leaves it empty; the numbers are
        unaffected).

    Returns
    -------
    BudgetBuilder

    Examples
    --------
    >>> b = budget_builder(show_chart=False)
    >>> b.input_row("x").u.text.value = "0.2"
    >>> round(b.current_result().standard_uncertainty, 12)
    0.2
    >>> b.input_row("x").u.text.value = "-0.5"
    >>> "must be non-negative" in b.message("inputs.x"), b.current_result().standard_uncertainty
    (True, 0.2)
    """
    c = _controls(str(folder), str(save_path), str(export_folder))
    tree = _layout(c)
    b = BudgetBuilder(widget=tree, show_chart=show_chart, _state=_State({}), **c)
    _wire(b)
    if isinstance(source, Budget):
        b._start(budget_to_document(source), "editing the budget given")
    elif source is not None:
        if not b.load_file(source):
            b.start_blank()
    else:
        b.start_blank()
    return b


def document_text(b: BudgetBuilder) -> str:
    """The budget file the builder would save now, as text (for a preview)."""
    budget = b.current_budget()
    return "" if budget is None else dumps_budget(budget_to_document(budget))
