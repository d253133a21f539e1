"""A panel for a step-up chain's data: load a chain file, edit the flow times, see the constants.

:func:`chain_panel` starts from a chain file (``viscometry-chain/1``, see
``docs/chain-files.md``) named in a path field, and edits the chain's data: the flow times of
water in master 1 (a pasted column), the bath thermometer's expanded uncertainty U and its
k with water's temperature coefficient α_w, and per step the liquid's label, its readings in
the known and in the new master, its α with u(α) and u(ΔT) of a temperature difference; steps
can be added and removed. The optional correction terms (σ and ρ of each liquid, E and the
meniscus geometry of each master, σ and ρ of a certified liquid) sit in a collapsible part of
``[water]``, of each step and of ``[certified]`` (:mod:`viscometry.widgets.chain_terms`), open
when the file has them; a blank value and u leave the term out. Below, a table of the constants C₁ … C_N with the relative expanded
uncertainty of each, the share of the water reference in it and the step factors, the result
statement and the chain's warnings (flow times, factor-3 steps) in colour.

The panel edits the chain-file *document* and builds the chain with the file reader
(:func:`viscometry.io.chain.read_chain_document`), so a chain entered here and the same
chain loaded from its file are one and the same, with the same messages. A refused field
shows the message next to it and the last good chain stays on screen; nothing is clamped or
ignored. A field that is not edited keeps the quantity exactly as the file states it (a
certificate's U and k stay U and k). Everything runs without a browser: setting a control's
``value`` or calling ``button.click()`` fires the same callbacks in plain pytest.
"""

from __future__ import annotations

import copy
import html
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import ipywidgets as widgets

from viscometry import units as _units
from viscometry.errors import InputError, ViscometryError
from viscometry.gum.budget import BudgetResult
from viscometry.gum.inputs import InputQuantity
from viscometry.io.chain import CHAIN_FORMAT, ChainFile, read_chain_document
from viscometry.io.reader import parse_toml, read_text_file
from viscometry.methods.calibration import StepUpChain
from viscometry.text import (
    format_number,
    format_significant,
    format_unit,
    statement,
    unit_suffix,
)
from viscometry.widgets.builder_rows import NumberField
from viscometry.widgets.chain_terms import TERMS, TermFields, quantities_of
from viscometry.widgets.fields import (
    LABEL_WIDTH,
    SCROLL_STYLE,
    controls_column,
    error_html,
    heading,
    message_label,
    parse_readings,
    scrolling_html,
    warning_lines,
    wrap_row,
)

__all__ = ["ChainPanel", "StepRow", "chain_panel"]

_SOURCE = "chain panel"
_STYLE = {"description_width": LABEL_WIDTH}


# ============================================================================ one step
@dataclass(eq=False)
class StepRow:
    """The fields of one ``[[steps]]`` entry; :meth:`spec` turns them into its table."""

    label: widgets.Text
    known: widgets.Textarea
    new: widgets.Textarea
    alpha: NumberField
    u_alpha: NumberField
    u_dt: NumberField
    remove: widgets.Button
    message: widgets.HTML
    box: widgets.VBox
    terms: TermFields
    original: dict[str, Any] = field(default_factory=dict)
    shown: dict[str, tuple[float | None, ...]] = field(default_factory=dict)
    master: int = 2

    @classmethod
    def make(cls, spec: Mapping[str, Any], step: Any = None) -> StepRow:
        """A row showing the step table ``spec`` (``step``: its StepUpStep, if built)."""
        num = NumberField.make
        row = cls(
            label=_text("liquid", str(spec.get("label", "")), "14em"),
            known=_readings_area("in master k−1"), new=_readings_area("in master k"),
            alpha=num("α / (1/K)", optional=True), u_alpha=num("u(α) / (1/K)", optional=True),
            u_dt=num("u(ΔT) / K", optional=True),
            remove=widgets.Button(description="Remove step", layout=widgets.Layout(width="auto")),
            message=message_label(), box=widgets.VBox(), terms=TermFields.make(),
            original=copy.deepcopy(dict(spec)),
        )  # fmt: skip
        row.box.add_class("viscometry-step")  # a stable hook for browser tests
        row.known.value = _column(spec.get("readings_in_known", ()))
        row.new.value = _column(spec.get("readings_in_new", ()))
        if step is not None:
            row.shown["alpha"] = _value_and_u(step.temperature_coefficient, "1/K")
            row.shown["dt"] = _value_and_u(step.temperature_difference, "K")
        row.alpha.set(row.shown.get("alpha", (None, None))[0])
        row.u_alpha.set(row.shown.get("alpha", (None, None))[1])
        row.u_dt.set(row.shown.get("dt", (None, None))[1])
        row.terms.fill(spec, {} if step is None else quantities_of(
            step.surface, step.geometry, step.kinetic_energy))  # fmt: skip
        row.box.children = (
            wrap_row([_column_of([row.label, row.remove]), row.known, row.new,
                      _column_of([row.alpha.text, row.u_alpha.text, row.u_dt.text])]),
            row.terms.box, row.message,
        )  # fmt: skip
        return row

    def number(self, master: int) -> None:
        """Name the readings fields after the masters of this step (master k−1 → k)."""
        self.master = master
        self.known.description = f"t′ in master {master - 1} / s"
        self.new.description = f"t in master {master} / s"
        self.terms.name(f"liquid {self.label.value.strip() or master}", master)

    def spec(self) -> dict[str, Any]:
        """The ``[[steps]]`` table of the fields; :class:`InputError` naming a field whose
        text is not a number."""
        out: dict[str, Any] = {}
        if self.label.value.strip():
            out["label"] = self.label.value.strip()
        k = self.master
        out["readings_in_known"] = parse_readings(self.known.value, f"readings in master {k - 1}")
        out["readings_in_new"] = parse_readings(self.new.value, f"readings in master {k}")
        alpha, u = self.alpha.get(), self.u_alpha.get()
        if (alpha is None) != (u is None):
            raise InputError(f"α and u(α) go together: give both or neither, got α = "
                             f"{self.alpha.text.value!r}, u(α) = {self.u_alpha.text.value!r}")  # fmt: skip
        if alpha is not None:
            out["temperature_coefficient"] = self._kept(
                "alpha", "temperature_coefficient", (alpha, u), "1/K"
            )
        u_dt = self.u_dt.get()
        if u_dt is not None:
            value = self.shown.get("dt", (None, None))[0]
            value = 0.0 if value is None else value
            out["temperature_difference"] = self._kept(
                "dt", "temperature_difference", (value, u_dt), "K"
            )
        self.terms.apply(out, f"step {k}")
        self.terms.name(f"liquid {out.get('label', k)}", k)
        return out

    def _kept(self, key: str, file_key: str, now: tuple[Any, Any], unit: str) -> dict[str, Any]:
        """The file's own table when the fields still show it, else the fields' numbers."""
        before = self.original.get(file_key)
        return _kept(before, self.shown.get(key), now) or _standard(now[0], now[1], unit, before)

    def watched(self) -> list[Any]:
        return [
            self.label,
            self.known,
            self.new,
            self.alpha.text,
            self.u_alpha.text,
            self.u_dt.text,
            *self.terms.watched(),
        ]


def _text(label: str, value: str, width: str) -> widgets.Text:
    return widgets.Text(value=value, description=label, continuous_update=False, style=_STYLE,
                        layout=widgets.Layout(width=width, min_width="12em"))  # fmt: skip


def _column_of(children: list[Any]) -> widgets.VBox:
    """A narrow column of fields that keeps its width (buttons are not stretched)."""
    return widgets.VBox(children, layout=widgets.Layout(flex="0 0 auto", min_width="15em",
                                                        align_items="flex-start"))  # fmt: skip


def _readings_area(label: str) -> widgets.Textarea:
    return widgets.Textarea(description=label, placeholder="paste a column of readings (s)",
                            continuous_update=False, style={"description_width": "10.5em"},
                            layout=widgets.Layout(width="20em", min_width="17em", height="6em"))  # fmt: skip


def _column(values: Any) -> str:
    if not isinstance(values, list | tuple):
        return ""
    return "\n".join(repr(v) if isinstance(v, float) else str(v) for v in values)


def _scale(unit: str, target: str) -> float:
    """Factor from ``unit`` to ``target`` for a coefficient or a difference (no offset)."""
    return _units.si_conversion(unit)[0] / _units.si_conversion(target)[0]


def _value_and_u(q: InputQuantity | None, target: str) -> tuple[float | None, float | None]:
    if q is None:
        return (None, None)
    s = _scale(q.unit, target)
    return (q.value * s, q.standard_uncertainty * s)


def _standard(value: float | None, u: float | None, unit: str, before: Any) -> dict[str, Any]:
    """A quantity table in the standard-uncertainty form, keeping description and source."""
    out: dict[str, Any] = {} if value is None else {"value": value}
    return {**out, "unit": unit, "standard_uncertainty": u, **_notes(before)}


# ============================================================================ the panel
class _State:
    """The one mutable part of a panel: the document, the last good chain and messages."""

    def __init__(self) -> None:
        self.document: dict[str, Any] = {"format": CHAIN_FORMAT, "water": {}}
        self.file: ChainFile | None = None
        self.results: tuple[BudgetResult, ...] = ()
        self.result: BudgetResult | None = None
        self.messages: dict[str, str] = {}
        self.fields: dict[str, str] = {}
        self.rows: list[StepRow] = []
        self.shown: dict[str, tuple[float | None, ...]] = {}
        self.original: dict[str, Any] = {}
        self.hold = False


@dataclass(frozen=True, eq=False)
class ChainPanel:
    """Handle of a chain panel made by :func:`chain_panel` (controls by name).

    ``widget`` is the whole tree for ``display``. Query the state with
    :meth:`current_chain`, :meth:`current_file`, :meth:`results`, :meth:`result`,
    :meth:`warnings`, :meth:`table`, :meth:`message`, :meth:`document` and
    :meth:`step_row`; act with :meth:`load_file`, :meth:`add_step` and
    :meth:`remove_step` (or the buttons).
    """

    widget: widgets.VBox
    path: widgets.Text
    load_button: widgets.Button
    start_message: widgets.HTML
    water_readings: widgets.Textarea
    water_message: widgets.HTML
    water_terms: TermFields
    thermometer_u: NumberField
    thermometer_k: NumberField
    alpha_w: NumberField
    u_alpha_w: NumberField
    thermometer_message: widgets.HTML
    steps_box: widgets.VBox
    add_step_button: widgets.Button
    steps_message: widgets.HTML
    certified_terms: TermFields
    certified_message: widgets.HTML
    general_message: widgets.HTML
    statement_html: widgets.HTML
    warnings_html: widgets.HTML
    table_html: widgets.HTML
    _state: _State = field(repr=False, default=None)  # type: ignore[assignment]

    # ------------------------------------------------------------------ queries
    def current_file(self) -> ChainFile | None:
        """The last chain that could be built, with its parts (None before the first)."""
        return self._state.file

    def current_chain(self) -> StepUpChain | None:
        """The last chain that could be built (None before the first)."""
        f = self._state.file
        return None if f is None else f.chain

    def results(self) -> tuple[BudgetResult, ...]:
        """The evaluated chain up to each master: C₁ … C_N (one result per master)."""
        return self._state.results

    def result(self) -> BudgetResult | None:
        """The evaluated chain: C_N, or ν_X of the certified liquid."""
        return self._state.result

    def warnings(self) -> tuple[str, ...]:
        """The chain's warnings (flow times, factor-3 steps), as its evaluation gives them."""
        r = self._state.result
        return () if r is None else tuple(r.warnings)

    def message(self, where: str) -> str:
        """The refusal shown for a part: ``"start"``, ``"general"``, ``"water"``,
        ``"thermometer"``, ``"steps"``, ``"steps.<i>"`` (the i-th step, from 0) or
        ``"certified"``; or ``""``."""
        state = self._state
        return state.fields.get(where) or state.messages.get(where, "")

    def document(self) -> dict[str, Any]:
        """A copy of the chain-file document being edited."""
        return copy.deepcopy(self._state.document)

    def step_row(self, i: int) -> StepRow:
        """The fields of the i-th step (from 0; it calibrates master i + 2)."""
        return self._state.rows[i]

    def table(self) -> Any:
        """The constants as numbers (pandas DataFrame, one row per master): ``master``,
        ``liquid``, ``constant`` (in the chain's unit), ``unit``,
        ``relative_expanded_uncertainty``, ``water_share`` and ``step_factor``."""
        import pandas as pd

        return pd.DataFrame(_rows(self), columns=list(_COLUMNS))

    # ------------------------------------------------------------------ actions
    def load_file(self, path: str | Path) -> bool:
        """Start from a chain file; on a refusal the message shows and nothing changes."""
        name = str(path)
        try:
            doc = parse_toml(read_text_file(path, "a chain file"), name)
            chain_file = read_chain_document(copy.deepcopy(doc), name)
        except ViscometryError as exc:
            return _refuse_start(self, str(exc))
        state = self._state
        state.document = doc  # the chain itself is replaced once it has been evaluated
        state.messages.clear()
        state.fields.clear()
        _fill(self, chain_file)
        self.start_message.value = f"<span style='color:#060'>loaded {html.escape(name)}</span>"
        return self.rebuild()

    def add_step(self) -> None:
        """Append an empty step (its readings are to be pasted)."""
        state = self._state
        k = len(state.rows) + 2
        spec = {"label": f"S{k}", "readings_in_known": [], "readings_in_new": []}
        state.document.setdefault("steps", []).append(spec)
        state.rows.append(_step_row(self, spec, None))
        _number_steps(self)
        self.rebuild()

    def remove_step(self, i: int) -> None:
        """Remove the i-th step (from 0)."""
        state = self._state
        if not 0 <= i < len(state.rows):
            raise InputError(f"step index must be 0 to {len(state.rows) - 1}, got {i!r}")
        state.rows.pop(i)
        state.document.setdefault("steps", []).pop(i)
        state.fields = {_shifted(k, i): v for k, v in state.fields.items() if k != f"steps.{i}"}
        _number_steps(self)
        self.rebuild()

    def rebuild(self) -> bool:
        """Build and evaluate the document; on a refusal keep the last good chain."""
        state = self._state
        state.messages = {k: v for k, v in state.messages.items() if k == "start"}
        try:
            chain_file = read_chain_document(copy.deepcopy(state.document), _SOURCE)
            results = tuple(
                chain_file.chain_to(n).evaluate() for n in range(1, chain_file.masters + 1)
            )
            certified = chain_file.certified is not None
            result = chain_file.chain.evaluate() if certified else results[-1]
        except ViscometryError as exc:
            where = _group(getattr(exc, "where", None) or "general")
            state.messages[where] = str(exc).removeprefix(f"{_SOURCE}: ")
            _show_messages(self)
            return False
        state.file, state.results, state.result = chain_file, results, result
        _show_messages(self)
        _redraw(self)
        return True


# ============================================================================ messages
def _shifted(where: str, removed: int) -> str:
    """``where`` of a step's message after step ``removed`` is taken out."""
    if where.startswith("steps."):
        i = int(where.removeprefix("steps."))
        return f"steps.{i - 1}" if i > removed else where
    return where


def _group(where: str) -> str:
    """The part of the panel that shows a refusal about ``where`` (a chain reader's part)."""
    if where.startswith("steps."):
        return where
    return {
        "water": "water", "water.reference": "water", "steps": "steps",
        "water.temperature_coefficient": "thermometer", "thermometer_error": "thermometer",
        "certified": "certified",
    }.get(where, "general")  # fmt: skip


def _refuse_start(panel: ChainPanel, text: str) -> bool:
    panel._state.messages["start"] = text
    panel.start_message.value = error_html([text])
    return False


def _show_messages(panel: ChainPanel) -> None:
    state = panel._state
    for name, target in (
        ("water", panel.water_message), ("thermometer", panel.thermometer_message),
        ("steps", panel.steps_message), ("certified", panel.certified_message),
        ("general", panel.general_message),
    ):  # fmt: skip
        text = panel.message(name)
        target.value = error_html([text] if text else [])
    for i, row in enumerate(state.rows):
        text = panel.message(f"steps.{i}")
        row.message.value = error_html([text] if text else [])
    if state.result is not None:
        panel.statement_html.value = _statement_html(panel)


def _field_edit(panel: ChainPanel, where: str, edit: Any) -> None:
    """Apply one field edit to the document; a field that refuses its text says why."""
    state = panel._state
    if state.hold:
        return
    try:
        edit()
    except ViscometryError as exc:
        state.fields[where] = str(exc)
        _show_messages(panel)
        return
    state.fields.pop(where, None)
    panel.rebuild()


# ============================================================================ drawing
_COLUMNS = (
    "master", "liquid", "constant", "unit", "relative_expanded_uncertainty", "water_share",
    "step_factor",
)  # fmt: skip


def _rows(panel: ChainPanel) -> list[tuple[Any, ...]]:
    state = panel._state
    if state.file is None:
        return []
    out = []
    labels = state.file.labels()
    for n, r in enumerate(state.results, start=1):
        factor = r.value / state.results[n - 2].value if n > 1 else float("nan")
        share = r.contribution("nu_w").variance_share
        out.append(
            (n, labels[n - 1], r.value, r.unit, r.relative_expanded_uncertainty, share, factor)
        )
    return out


def _percent(x: float) -> str:
    return format_significant(100.0 * x, 3) + " %"


#: Style of a table cell: numbers stay on one line.
_CELL = "padding:0.1em 0.45em;white-space:nowrap;text-align:right"


def _table_html(panel: ChainPanel) -> str:
    e = html.escape
    rows = _rows(panel)
    unit = format_unit(rows[0][3]) if rows else ""
    head = ["master", "liquid", f"C / ({unit})" if unit else "C", "U/C",
            "water's share", "step factor"]  # fmt: skip
    body = []
    for n, label, value, _u, rel, share, factor in rows:
        cells = [str(n), e(label), format_number(value, 6), _percent(rel),
                 f"{100.0 * share:.1f} %", "" if n == 1 else f"{factor:.4f}"]  # fmt: skip
        style = _CELL + (";color:#a00" if n > 1 and not factor <= 3.0 else "")
        body.append("<tr>" + "".join(f"<td style='{style}'>{c}</td>" for c in cells) + "</tr>")
    f = panel._state.file
    r = panel._state.result
    if f is not None and f.certified is not None and r is not None:
        name = e(f.certified_label or "certified liquid")
        body.append(f"<tr><td style='{_CELL}'>ν_X</td><td style='{_CELL}'>{name}</td><td style='{_CELL}' colspan='4'>"
                    f"{e(format_number(r.value, 6) + unit_suffix(r.unit))}, U/ν = "
                    f"{_percent(r.relative_expanded_uncertainty)}</td></tr>")  # fmt: skip
    return (
        "<div style='overflow-x:auto'><table class='viscometry-chain-table'><thead><tr>"
        + "".join(f"<th style='{_CELL}'>{e(h)}</th>" for h in head)
        + "</tr></thead><tbody>" + "".join(body) + "</tbody></table></div>"
        + "<small>U/C: relative expanded uncertainty of C_k, from the chain up to master k; "
        "water's share: (c·u(ν_w))²/u_c²; step factor C_k/C_(k−1), at most 3 (ASTM D2162)</small>"
    )  # fmt: skip


def _statement_html(panel: ChainPanel) -> str:
    state = panel._state
    r = state.result
    assert r is not None
    lines = [f"<b>{html.escape(statement(r))}</b>"]
    if state.fields or any(k != "start" for k in state.messages):
        lines.append(
            "<span style='color:#a00'>showing the last chain that could be built; a field "
            "refuses its value (see the red message next to it)</span>"
        )
    return "<div class='viscometry-statement'>" + "<br>".join(lines) + "</div>"


def _warnings_html(panel: ChainPanel) -> str:
    found = panel.warnings()
    if not found:
        t_min = panel._state.file.minimum_flow_time if panel._state.file else 200.0
        return (
            "<span style='color:#060'>checks passed: every flow time at least "
            f"{format_number(t_min)} s, every step within a factor 3</span>"
        )
    return "<br>".join(warning_lines(found))


def _redraw(panel: ChainPanel) -> None:
    panel.table_html.value = SCROLL_STYLE + _table_html(panel)
    panel.statement_html.value = _statement_html(panel)
    panel.warnings_html.value = _warnings_html(panel)


# ============================================================================ filling and edits
def _fill(panel: ChainPanel, chain_file: ChainFile) -> None:
    """Show the document (and the chain built from it) in every field."""
    state = panel._state
    doc = state.document
    water = doc.get("water", {})
    q = chain_file.thermometer_error
    state.original = {
        "thermometer": copy.deepcopy(doc.get("thermometer_error")),
        "alpha_w": copy.deepcopy(water.get("temperature_coefficient")),
    }
    state.shown = {
        "thermometer": _u_and_k(q), "value": _value_and_u(q, "K")[:1],
        "alpha_w": _value_and_u(chain_file.water_temperature_coefficient, "1/K"),
    }  # fmt: skip
    state.hold = True
    try:
        panel.water_readings.value = _column(water.get("readings", ()))
        panel.water_terms.fill(water, quantities_of(
            chain_file.water_surface, chain_file.first_master_geometry,
            chain_file.first_master_kinetic_energy))  # fmt: skip
        panel.thermometer_u.set(state.shown["thermometer"][0])
        panel.thermometer_k.set(state.shown["thermometer"][1])
        panel.alpha_w.set(state.shown["alpha_w"][0])
        panel.u_alpha_w.set(state.shown["alpha_w"][1])
        _fill_certified(panel, chain_file)
        specs = doc.get("steps", [])
        state.rows = [
            _step_row(panel, s, st) for s, st in zip(specs, chain_file.steps, strict=True)
        ]
    finally:
        state.hold = False
    _number_steps(panel)


def _fill_certified(panel: ChainPanel, chain_file: ChainFile) -> None:
    """σ and ρ of the certified liquid: shown when the document has a ``[certified]``."""
    terms = panel.certified_terms
    table = panel._state.document.get("certified")
    surface = None if chain_file.certified is None else chain_file.certified.surface
    terms.fill(table if isinstance(table, dict) else {}, quantities_of(surface, None, None))
    terms.name(chain_file.certified_label or "the certified liquid", None)
    terms.box.layout.display = None if isinstance(table, dict) else "none"


def _u_and_k(q: InputQuantity | None) -> tuple[float | None, float | None]:
    """U and k of δT in K: as the certificate states them, else U = 2u with k = 2."""
    if q is None:
        return (None, None)
    s = _scale(q.unit, "K")
    stated = q.statement
    if "expanded_uncertainty" in stated and "coverage_factor" in stated:
        return (float(stated["expanded_uncertainty"]) * s, float(stated["coverage_factor"]))
    return (2.0 * q.standard_uncertainty * s, 2.0)


def _step_row(panel: ChainPanel, spec: Mapping[str, Any], step: Any) -> StepRow:
    row = StepRow.make(spec, step)
    for w in row.watched():
        w.observe(lambda _c, row=row: _step_changed(panel, row), names="value")
    row.remove.on_click(lambda _b, row=row: panel.remove_step(panel._state.rows.index(row)))
    return row


def _number_steps(panel: ChainPanel) -> None:
    rows = panel._state.rows
    for i, row in enumerate(rows):
        row.number(i + 2)
    panel.steps_box.children = tuple(r.box for r in rows)


def _step_changed(panel: ChainPanel, row: StepRow) -> None:
    state = panel._state
    i = state.rows.index(row)

    def edit() -> None:
        state.document.setdefault("steps", [])[i] = row.spec()

    _field_edit(panel, f"steps.{i}", edit)


def _water_changed(panel: ChainPanel) -> None:
    def edit() -> None:
        readings = parse_readings(panel.water_readings.value, "water readings")
        water = copy.deepcopy(panel._state.document.get("water", {}))
        water["readings"] = readings
        panel.water_terms.apply(water, "[water]")
        panel._state.document["water"] = water

    _field_edit(panel, "water", edit)


def _certified_changed(panel: ChainPanel) -> None:
    """σ and ρ of the certified liquid (blank: the term left out)."""

    def edit() -> None:
        table = panel._state.document.get("certified")
        if not isinstance(table, dict):
            return
        certified = copy.deepcopy(table)
        panel.certified_terms.apply(certified, "[certified]")
        panel._state.document["certified"] = certified

    _field_edit(panel, "certified", edit)


def _thermometer_changed(panel: ChainPanel) -> None:
    """U and k of δT, α_w and u(α_w): blank U and u(α_w) leave both terms out."""
    state = panel._state

    def edit() -> None:
        big_u, k = panel.thermometer_u.get(), panel.thermometer_k.get()
        alpha, u_alpha = panel.alpha_w.get(), panel.u_alpha_w.get()
        if big_u is not None and k is None:
            raise InputError("k: give the coverage factor of U(δT) (e.g. 2)")
        before = state.original.get("thermometer")
        thermometer = None
        if big_u is not None:
            thermometer = _kept(before, state.shown.get("thermometer"), (big_u, k))
            if thermometer is None:
                value = (state.shown.get("value") or (None,))[0]
                thermometer = {
                    "value": 0.0 if value is None else value, "unit": "K",
                    "expanded_uncertainty": big_u, "coverage_factor": k, **_notes(before),
                }  # fmt: skip
        alpha_w = None
        if u_alpha is not None:
            before_a = state.original.get("alpha_w")
            alpha_w = _kept(before_a, state.shown.get("alpha_w"), (alpha, u_alpha))
            alpha_w = alpha_w or _standard(alpha, u_alpha, "1/K", before_a)
        _put(state.document, "thermometer_error", thermometer)
        _put(state.document.setdefault("water", {}), "temperature_coefficient", alpha_w)

    _field_edit(panel, "thermometer", edit)


def _kept(before: Any, shown: Any, now: tuple[Any, ...]) -> dict[str, Any] | None:
    """The file's own table while the fields still show its numbers, else None."""
    return copy.deepcopy(before) if before is not None and shown == now else None


def _notes(before: Any) -> dict[str, Any]:
    keys = ("description", "source")
    return {k: before[k] for k in keys if k in before} if isinstance(before, dict) else {}


def _put(table: dict[str, Any], key: str, value: Any) -> None:
    if value is None:
        table.pop(key, None)
    else:
        table[key] = value


# ============================================================================ constructor
def _controls(path: str) -> dict[str, Any]:
    num = NumberField.make
    button = widgets.Layout(width="auto", min_width="8em")
    return {
        "path": _text("chain file", path, "34em"),
        "load_button": widgets.Button(description="Load", tooltip="read the chain file named on the left",
                                      layout=button),
        "start_message": message_label(),
        "water_readings": widgets.Textarea(description="t₁ in master 1 / s",
                                           placeholder="paste the flow times of water (s), one per line",
                                           continuous_update=False, style=_STYLE,
                                           layout=widgets.Layout(width="22em", min_width="16em", height="8em")),
        "water_message": message_label(),
        "water_terms": _water_terms(),
        "thermometer_u": num("U(δT) / K", optional=True, tooltip="expanded uncertainty of the bath thermometer's error"),
        "thermometer_k": num("k", optional=True, tooltip="coverage factor of U(δT)"),
        "alpha_w": num("α_w / (1/K)", optional=True, tooltip="blank: water at 20 °C (IAPWS)"),
        "u_alpha_w": num("u(α_w) / (1/K)", optional=True),
        "thermometer_message": message_label(),
        "steps_box": widgets.VBox(),
        "add_step_button": widgets.Button(description="Add step", tooltip="a new master at the top of the chain",
                                          layout=widgets.Layout(width="auto", min_width="8em",
                                                                align_self="flex-start")),
        "steps_message": message_label(), "general_message": message_label(),
        "certified_terms": _certified_terms(), "certified_message": message_label(),
        "statement_html": widgets.HTML(), "warnings_html": widgets.HTML(),
        "table_html": scrolling_html(),
    }  # fmt: skip


def _water_terms() -> TermFields:
    terms = TermFields.make()
    terms.name("water", 1)
    return terms


def _certified_terms() -> TermFields:
    terms = TermFields.make(TERMS[:2])
    terms.name("the certified liquid", None)
    terms.box.layout.display = "none"  # shown when a chain file has a [certified]
    return terms


def _layout(c: dict[str, Any]) -> widgets.VBox:
    h = heading
    c["statement_html"].add_class("viscometry-statement")
    c["table_html"].add_class("viscometry-chain-table")
    therm = [
        c["thermometer_u"].text,
        c["thermometer_k"].text,
        c["alpha_w"].text,
        c["u_alpha_w"].text,
    ]
    tree = widgets.VBox([
        h("Start from a chain file"), wrap_row([c["path"], c["load_button"]]), c["start_message"],
        h("Water in master 1, and the bath thermometer (shared by every step)"),
        wrap_row([controls_column([c["water_readings"], c["water_terms"].box,
                                   c["water_message"]]),
                  controls_column([*therm, c["thermometer_message"]])]),
        h("Steps: a liquid in the known master k−1 and in the new master k"),
        c["steps_box"], c["add_step_button"], c["steps_message"],
        c["certified_terms"].box, c["certified_message"],
        h("The constants"), c["general_message"], c["statement_html"], c["warnings_html"],
        c["table_html"],
    ], layout=widgets.Layout(width="100%"))  # fmt: skip
    tree.add_class("viscometry-chain-panel")
    return tree


def _wire(panel: ChainPanel) -> None:
    panel.load_button.on_click(lambda _b: panel.load_file(panel.path.value.strip()))
    panel.add_step_button.on_click(lambda _b: panel.add_step())
    panel.water_readings.observe(lambda _c: _water_changed(panel), names="value")
    for w in panel.water_terms.watched():
        w.observe(lambda _c: _water_changed(panel), names="value")
    for w in panel.certified_terms.watched():
        w.observe(lambda _c: _certified_changed(panel), names="value")
    for f in (panel.thermometer_u, panel.thermometer_k, panel.alpha_w, panel.u_alpha_w):
        f.text.observe(lambda _c: _thermometer_changed(panel), names="value")


def chain_panel(path: str | Path | None = None) -> ChainPanel:
    """Build a chain panel, loaded with the chain file ``path`` (or empty).

    Parameters
    ----------
    path : path, optional
        A chain file (``viscometry-chain/1``) to start from; it is also shown in the path
        field, from which **Load** reads another one.

    Returns
    -------
    ChainPanel

    Notes
    -----
    Each change builds the chain anew from the edited document (the model's derivatives are
    cached per structure, so only new numbers are evaluated) and the chain up to each master
    for the table. The relative expanded uncertainty of C_k is that of the chain up to master
    k (JCGM 100:2008, 6.2.1); the water's share is (c u(ν_w))²/u_c².

    Examples
    --------
    >>> panel = chain_panel()
    >>> panel.water_readings.value = "334.47\\n334.55\\n334.54"
    >>> f"{panel.results()[0].value:.6g}", panel.message("water")
    ('0.00299952', '')
    >>> panel.water_readings.value = "334.47\\nfast"
    >>> panel.message("water")
    "water readings[1]: 'fast' is not a number"
    >>> f"{panel.results()[0].value:.6g}"  # the last good chain stays
    '0.00299952'
    """
    c = _controls("" if path is None else str(path))
    panel = ChainPanel(widget=_layout(c), _state=_State(), **c)
    _wire(panel)
    if path is not None:
        panel.load_file(path)
    else:
        panel.start_message.value = html.escape(
            "load a chain file, or paste the flow times of water in master 1 below"
        )
    return panel
