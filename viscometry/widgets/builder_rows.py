"""The editable rows of the budget builder: one input, one correlation, one check-context value.

Each row edits one table of the budget-file document (``[inputs.NAME]``, one
``[[correlations]]`` entry, one ``[checks]`` key) with the file's own keys, so the builder
stays a thin layer over :mod:`viscometry.io.reader` and :mod:`viscometry.io.writer`. A row
turns its fields into that table with :meth:`spec`, which refuses text that is not a number
with a message naming the field (nothing is clamped or ignored).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import ipywidgets as widgets

from viscometry.gum.inputs import DISTRIBUTIONS
from viscometry.io.schema import BOUNDED
from viscometry.widgets.fields import (
    LABEL_WIDTH,
    message_label,
    number_text,
    parse_number,
    parse_readings,
    show_number,
    wrap_row,
)

__all__ = ["NumberField", "InputRow", "CorrelationRow", "CheckRow", "FORM_LABELS"]

#: The uncertainty forms of the file format, as the builder offers them.
FORM_LABELS = {
    "standard": "standard uncertainty u",
    "expanded": "expanded uncertainty U with k or p",
    "bounds": "bounds: half-width a of a distribution",
    "readings": "readings (Type A)",
}

_STYLE = {"description_width": LABEL_WIDTH}


@dataclass(eq=False)
class NumberField:
    """A text field showing a number to four digits while keeping the exact number.

    :meth:`get` returns the exact number while the text still shows it, and parses the text
    once a person has typed something else.
    """

    text: widgets.Text
    exact: float | None = None
    allow_inf: bool = False
    optional: bool = False

    @classmethod
    def make(cls, label: str, value: float | None = None, **kw: Any) -> NumberField:
        tooltip = kw.pop("tooltip", "")
        return cls(number_text(label, value, tooltip=tooltip), value, **kw)

    def set(self, value: float | None) -> None:
        self.exact = value
        self.text.value = show_number(value)

    def get(self) -> float | None:
        shown = self.text.value.strip()
        if self.exact is not None and shown == show_number(self.exact):
            return self.exact
        if not shown and self.optional:
            return None
        return parse_number(shown, self.text.description, allow_inf=self.allow_inf)


def _dropdown(label: str, options: Any, value: Any, width: str = "22em") -> widgets.Dropdown:
    return widgets.Dropdown(
        options=options, value=value, description=label, style=_STYLE,
        layout=widgets.Layout(width=width, min_width="14em"),
    )  # fmt: skip


def _text(label: str, value: str = "", width: str = "22em", placeholder: str = "") -> widgets.Text:
    return widgets.Text(
        value=value, description=label, placeholder=placeholder, continuous_update=False,
        style=_STYLE, layout=widgets.Layout(width=width, min_width="14em"),
    )  # fmt: skip


@dataclass(eq=False)
class InputRow:
    """The fields of one input quantity (its ``[inputs.NAME]`` table)."""

    key: str
    name: widgets.Text
    value: NumberField
    unit: widgets.Text
    form: widgets.Dropdown
    u: NumberField
    distribution: widgets.Dropdown
    evaluation: widgets.Dropdown
    big_u: NumberField
    k_or_p: widgets.Dropdown
    k_value: NumberField
    half_width: NumberField
    bounded: widgets.Dropdown
    beta: NumberField
    readings: widgets.Textarea
    pooled_s: NumberField
    pooled_dof: NumberField
    dof: NumberField
    description: widgets.Text
    source: widgets.Text
    remove: widgets.Button
    message: widgets.HTML
    form_box: widgets.Box
    box: widgets.VBox
    extra: dict[str, Any] = field(default_factory=dict)

    # ------------------------------------------------------------------ building
    @classmethod
    def make(cls, key: str, spec: Mapping[str, Any]) -> InputRow:
        """A row showing the input ``key`` as the file table ``spec`` states it."""
        num = NumberField.make
        row = cls(
            key=key, name=_text("name", key, "14em"), value=num("estimate x"),
            unit=_text("unit", "1", "17em"),
            form=_dropdown("uncertainty as", [(v, k) for k, v in FORM_LABELS.items()], "standard", "24em"),
            u=num("u(x)"), distribution=_dropdown("distribution", list(DISTRIBUTIONS), "normal"),
            evaluation=_dropdown("evaluation", [("Type B", "B"), ("Type A", "A")], "B", "15em"),
            big_u=num("U(x)"), k_or_p=_dropdown("stated with", [("coverage factor k", "k"),
                                                                ("coverage probability p", "p")], "k"),
            k_value=num("k or p"), half_width=num("half-width a"),
            bounded=_dropdown("distribution", list(BOUNDED), "rectangular"),
            beta=num("β (trapezoid)", optional=True),
            readings=widgets.Textarea(description="readings", placeholder="paste a column of readings",
                                      continuous_update=False, style=_STYLE,
                                      layout=widgets.Layout(width="22em", height="7em")),
            pooled_s=num("pooled s_p", optional=True), pooled_dof=num("pooled ν_p", optional=True),
            dof=num("dof ν", optional=True, allow_inf=True),
            description=_text("description", "", "30em"), source=_text("source", "", "30em"),
            remove=widgets.Button(description="Remove input", tooltip=f"remove {key}",
                                  layout=widgets.Layout(width="auto")),
            message=message_label(), form_box=wrap_row([]), box=widgets.VBox(),
        )  # fmt: skip
        row.box.add_class(f"viscometry-input-{key}")
        for attr in ("name", "value", "unit", "form", "u", "distribution", "evaluation", "big_u",
                     "k_or_p", "k_value", "half_width", "bounded", "beta", "readings", "pooled_s",
                     "pooled_dof", "dof", "description", "source", "remove", "message"):  # fmt: skip
            control = getattr(row, attr)  # stable hooks for browser tests: viscometry-field-big-u
            widget = control.text if isinstance(control, NumberField) else control
            widget.add_class(f"viscometry-field-{attr.replace('_', '-')}")
        row.load(spec)
        return row

    def load(self, spec: Mapping[str, Any]) -> None:
        """Show the file table ``spec`` (its form chosen by the keys it has)."""
        s = dict(spec)
        self.value.set(s.get("value"))
        self.unit.value = str(s.get("unit", "1"))
        form = _form_of(s)
        self.form.value = form
        self.u.set(s.get("standard_uncertainty"))
        if form == "bounds":
            self.bounded.value = s.get("distribution", "rectangular")
        else:
            self.distribution.value = s.get("distribution", "normal")
        self.evaluation.value = s.get("evaluation", "B")
        self.big_u.set(s.get("expanded_uncertainty"))
        self.k_or_p.value = "p" if "coverage_probability" in s else "k"
        self.k_value.set(s.get("coverage_probability", s.get("coverage_factor", 2.0)))
        self.half_width.set(s.get("half_width"))
        self.beta.set(s.get("beta"))
        self.readings.value = "\n".join(repr(float(r)) for r in s.get("readings", ()))
        self.pooled_s.set(s.get("pooled_standard_deviation"))
        self.pooled_dof.set(s.get("pooled_dof"))
        self.dof.set(s.get("dof"))
        self.extra = {
            k: s[k] for k in ("lower", "upper", "relative_uncertainty_of_uncertainty") if k in s
        }
        self.description.value = str(s.get("description", ""))
        self.source.value = str(s.get("source", ""))
        self.show_form()

    def show_form(self) -> None:
        """Show the fields of the chosen form only."""
        form = self.form.value
        parts: dict[str, list[Any]] = {
            "standard": [self.u.text, self.distribution, self.evaluation, self.dof.text],
            "expanded": [self.big_u.text, self.k_or_p, self.k_value.text, self.dof.text],
            "bounds": [self.bounded, self.half_width.text, self.beta.text, self.dof.text],
            "readings": [self.readings, self.pooled_s.text, self.pooled_dof.text],
        }
        first = (
            [self.name, self.unit]
            if form == "readings"
            else [self.name, self.value.text, self.unit]
        )
        self.form_box.children = tuple(parts[form])
        self.box.children = (
            wrap_row([*first, self.form]), self.form_box,
            wrap_row([self.description, self.source, self.remove]), self.message,
        )  # fmt: skip

    # ------------------------------------------------------------------ reading
    def spec(self) -> dict[str, Any]:
        """The ``[inputs.NAME]`` table of the fields; :class:`InputError` for text that is
        not a number (naming the field)."""
        form = self.form.value
        out: dict[str, Any] = {}
        if form != "readings" and not ("lower" in self.extra and form == "bounds"):
            out["value"] = self.value.get()
        out["unit"] = self.unit.value.strip() or "1"
        out.update(_FORM_SPECS[form](self))
        for key, widget in (("description", self.description), ("source", self.source)):
            if widget.value.strip():
                out[key] = widget.value
        return out

    def widgets_to_watch(self) -> list[Any]:
        """Every control whose change edits the input (the name and form are watched apart)."""
        return [
            self.value.text, self.unit, self.u.text, self.distribution, self.evaluation,
            self.big_u.text, self.k_or_p, self.k_value.text, self.half_width.text, self.bounded,
            self.beta.text, self.readings, self.pooled_s.text, self.pooled_dof.text, self.dof.text,
            self.description, self.source,
        ]  # fmt: skip


def _form_of(spec: Mapping[str, Any]) -> str:
    if "readings" in spec:
        return "readings"
    if "expanded_uncertainty" in spec:
        return "expanded"
    if "half_width" in spec or "lower" in spec:
        return "bounds"
    return "standard"


def _dof(row: InputRow) -> dict[str, Any]:
    if "relative_uncertainty_of_uncertainty" in row.extra and not row.dof.text.value.strip():
        return {
            "relative_uncertainty_of_uncertainty": row.extra["relative_uncertainty_of_uncertainty"]
        }
    nu = row.dof.get()
    return {} if nu is None else {"dof": nu}


def _standard(row: InputRow) -> dict[str, Any]:
    out: dict[str, Any] = {"standard_uncertainty": row.u.get()}
    if row.distribution.value != "normal":
        out["distribution"] = row.distribution.value
    if row.distribution.value == "trapezoidal":
        out["beta"] = row.beta.get()
    if row.evaluation.value != "B":
        out["evaluation"] = row.evaluation.value
    return {**out, **_dof(row)}


def _expanded(row: InputRow) -> dict[str, Any]:
    key = "coverage_factor" if row.k_or_p.value == "k" else "coverage_probability"
    return {"expanded_uncertainty": row.big_u.get(), key: row.k_value.get(), **_dof(row)}


def _bounds(row: InputRow) -> dict[str, Any]:
    out: dict[str, Any] = {"distribution": row.bounded.value}
    if "lower" in row.extra and not row.half_width.text.value.strip():
        out.update(lower=row.extra["lower"], upper=row.extra["upper"])
    else:
        out["half_width"] = row.half_width.get()
    if row.bounded.value == "trapezoidal":
        out["beta"] = row.beta.get()
    return {**out, **_dof(row)}


def _readings(row: InputRow) -> dict[str, Any]:
    out: dict[str, Any] = {"readings": parse_readings(row.readings.value, "readings")}
    s_p, nu_p = row.pooled_s.get(), row.pooled_dof.get()
    if s_p is not None or nu_p is not None:
        out.update(pooled_standard_deviation=s_p, pooled_dof=nu_p)
    return out


_FORM_SPECS: dict[str, Callable[[InputRow], dict[str, Any]]] = {
    "standard": _standard, "expanded": _expanded, "bounds": _bounds, "readings": _readings,
}  # fmt: skip


def converted(spec: Mapping[str, Any], form: str, u: float | None) -> dict[str, Any]:
    """The table of an input switched to another form, keeping its standard uncertainty ``u``
    (U = 2u with k = 2; a rectangular half-width a = u√3; readings to be pasted)."""
    out = {k: spec[k] for k in ("value", "unit", "description", "source") if k in spec}
    u = 0.0 if u is None else u
    if form == "standard":
        out["standard_uncertainty"] = u
    elif form == "expanded":
        out.update(expanded_uncertainty=2.0 * u, coverage_factor=2.0)
    elif form == "bounds":
        out.update(distribution="rectangular", half_width=u * math.sqrt(3.0))
    else:
        out.pop("value", None)
        out["readings"] = []
    return out


@dataclass(eq=False)
class CorrelationRow:
    """One ``[[correlations]]`` entry: two inputs and a coefficient."""

    first: widgets.Dropdown
    second: widgets.Dropdown
    coefficient: NumberField
    remove: widgets.Button
    box: widgets.Box

    @classmethod
    def make(cls, names: list[str], first: str, second: str, coefficient: float) -> CorrelationRow:
        a = _dropdown("between", names, first, "16em")
        b = _dropdown("and", names, second, "16em")
        r = NumberField.make("coefficient r", coefficient)
        rm = widgets.Button(description="Remove", layout=widgets.Layout(width="auto"))
        return cls(a, b, r, rm, wrap_row([a, b, r.text, rm]))

    def spec(self) -> dict[str, Any]:
        return {
            "between": [self.first.value, self.second.value],
            "coefficient": self.coefficient.get(),
        }


@dataclass(eq=False)
class CheckRow:
    """One ``[checks]`` key of a built-in model: a value (blank: not given) and its unit."""

    key: str
    value: NumberField
    unit: widgets.Text
    box: widgets.Box

    @classmethod
    def make(cls, key: str, description: str, value: float | None, unit: str) -> CheckRow:
        v = NumberField.make(key, value, optional=True, tooltip=description)
        v.text.layout.width = "22em"
        u = _text("unit", unit, "16em")
        note = widgets.HTML(
            f"<small>{description}</small>", layout=widgets.Layout(min_width="14em")
        )
        return cls(key, v, u, wrap_row([v.text, u, note]))

    def spec(self) -> dict[str, Any] | None:
        v = self.value.get()
        return None if v is None else {"value": v, "unit": self.unit.value.strip() or "1"}
