"""The optional correction terms of one part of a chain, as fields of the chain panel.

A ``[water]`` table or a ``[[steps]]`` entry of a chain file (``docs/chain-files.md``) may
carry σ and ρ of its liquid (``surface_tension``, ``density``), the kinetic-energy term E of
the master it calibrates (``kinetic_energy``) and that master's meniscus geometry
(``upper_radius``, ``lower_radius``, ``driving_head``). :class:`TermFields` shows each as a
value and its standard uncertainty in a collapsible part, open when the file has any of them.
A blank pair leaves the term out (the chain's numbers without it); a pair the fields still
show as the file states it keeps the file's own table (a rectangular E stays rectangular);
an edited pair is written in the standard-uncertainty form, keeping ``description`` and
``source``. Pairs that go together (σ with ρ, the three lengths of a geometry) and positive
values are checked by the chain reader, so its messages are the file's; the one check made
here is that σ is positive, which the reader does not ask.
"""

from __future__ import annotations

import copy
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import ipywidgets as widgets

from viscometry import units as _units
from viscometry.errors import InputError
from viscometry.gum.inputs import InputQuantity
from viscometry.widgets.builder_rows import NumberField
from viscometry.widgets.fields import wrap_row

__all__ = ["TERMS", "TermFields", "quantities_of"]

#: The optional keys of a part: (file key, symbol, unit shown in the fields).
TERMS: tuple[tuple[str, str, str], ...] = (
    ("surface_tension", "σ", "mN/m"),
    ("density", "ρ", "kg/m^3"),
    ("kinetic_energy", "E", "mm^2*s"),
    ("upper_radius", "r_u", "mm"),
    ("lower_radius", "r_l", "mm"),
    ("driving_head", "h", "mm"),
)

_UNIT_LABELS = {"mN/m": "(mN/m)", "kg/m^3": "(kg/m³)", "mm^2*s": "(mm²·s)", "mm": "mm"}


@dataclass(eq=False)
class TermFields:
    """Value and u fields of the six optional keys of one part (``[water]`` or a step).

    ``box`` is the collapsible part for display; :meth:`fill` shows a part's table and the
    quantities read from it; :meth:`apply` writes the fields into a part's table.
    """

    values: dict[str, NumberField]
    uncertainties: dict[str, NumberField]
    note: widgets.HTML
    box: widgets.Accordion
    original: dict[str, Any] = field(default_factory=dict)
    shown: dict[str, tuple[float | None, float | None]] = field(default_factory=dict)
    terms: tuple[tuple[str, str, str], ...] = TERMS

    @classmethod
    def make(cls, terms: tuple[tuple[str, str, str], ...] = TERMS) -> TermFields:
        """Empty fields of ``terms`` (all six, or σ and ρ of a liquid) in a closed part."""
        values: dict[str, NumberField] = {}
        uncertainties: dict[str, NumberField] = {}
        pairs = []
        for key, symbol, unit in terms:
            label = _UNIT_LABELS[unit]
            tip = f"{key.replace('_', ' ')}; blank: term left out"
            values[key] = NumberField.make(f"{symbol} / {label}", optional=True, tooltip=tip)
            uncertainties[key] = NumberField.make(f"u({symbol}) / {label}", optional=True)
            column = widgets.VBox(
                [values[key].text, uncertainties[key].text],
                layout=widgets.Layout(flex="0 0 auto", min_width="15em"),
            )
            pairs.append(column)
        note = widgets.HTML()
        content = widgets.VBox([note, wrap_row(pairs)], layout=widgets.Layout(width="100%"))
        box = widgets.Accordion(children=[content], selected_index=None)
        box.add_class("viscometry-chain-terms")  # a stable hook for browser tests
        return cls(values, uncertainties, note, box, terms=terms)

    def name(self, liquid: str, master: int | None) -> None:
        """Say whose terms these are: the liquid's σ, ρ and master ``master``'s E and geometry
        (``master`` None: a liquid's σ and ρ alone)."""
        if master is None:
            self.box.set_title(0, f"optional corrections: σ, ρ of {liquid}")
            self.note.value = (
                f"<small>σ, ρ of {liquid} (both or neither), for the surface-tension term of "
                "the last master. A blank value and u leave the term out.</small>"
            )
            return
        self.box.set_title(
            0, f"optional corrections: σ, ρ of {liquid}; E and meniscus of master {master}"
        )
        self.note.value = (
            f"<small>σ, ρ: of {liquid} (both or neither); E, r_u, r_l, h: of master {master}, "
            "which this part calibrates (r_u, r_l and h all three or none). A blank value and "
            "u leave the term out.</small>"
        )

    def fill(self, table: Mapping[str, Any], quantities: Mapping[str, InputQuantity]) -> None:
        """Show the part's ``table`` and the ``quantities`` read from it (by file key)."""
        self.original = {k: copy.deepcopy(table[k]) for k, _s, _u in self.terms if k in table}
        self.shown = {}
        for key, _symbol, unit in self.terms:
            q = quantities.get(key)
            self.shown[key] = _value_and_u(q, unit)
            self.values[key].set(self.shown[key][0])
            self.uncertainties[key].set(self.shown[key][1])
        self.box.selected_index = 0 if self.original else None

    def apply(self, table: dict[str, Any], where: str) -> None:
        """Write the fields into ``table`` (a blank pair removes its key); :class:`InputError`
        naming the field for a text that is not a number, a value without its u (or the
        reverse) and a surface tension that is not positive. ``where`` names the part."""
        for key, symbol, unit in self.terms:
            value, u = self.values[key].get(), self.uncertainties[key].get()
            if value is None and u is None:
                table.pop(key, None)
                continue
            if value is None or u is None:
                raise InputError(
                    f"{where} {key}: {symbol} and u({symbol}) go together: give both or neither, "
                    f"got {symbol} = {self.values[key].text.value!r}, "
                    f"u({symbol}) = {self.uncertainties[key].text.value!r}"
                )
            if key == "surface_tension" and not value > 0:
                raise InputError(
                    f"{where} surface_tension must be positive (in {unit}), got {value!r}"
                )
            before = self.original.get(key)
            if before is not None and self.shown.get(key) == (value, u):
                table[key] = copy.deepcopy(before)
            else:
                notes = {k: before[k] for k in ("description", "source") if k in before} if (
                    isinstance(before, dict)
                ) else {}  # fmt: skip
                table[key] = {"value": value, "unit": unit, "standard_uncertainty": u, **notes}

    def watched(self) -> list[widgets.Text]:
        """The text fields whose edits change the part."""
        return [f.text for f in (*self.values.values(), *self.uncertainties.values())]


def quantities_of(surface: Any, geometry: Any, energy: InputQuantity | None) -> dict[str, Any]:
    """The quantities of a part by file key, from its LiquidSurface, MeniscusGeometry and E."""
    out: dict[str, Any] = {"kinetic_energy": energy}
    if surface is not None:
        out.update(surface_tension=surface.surface_tension, density=surface.density)
    if geometry is not None:
        out.update(
            upper_radius=geometry.upper_radius,
            lower_radius=geometry.lower_radius,
            driving_head=geometry.driving_head,
        )
    return {k: v for k, v in out.items() if v is not None}


def _value_and_u(q: InputQuantity | None, target: str) -> tuple[float | None, float | None]:
    if q is None:
        return (None, None)
    s = _units.si_conversion(q.unit)[0] / _units.si_conversion(target)[0]
    return (q.value * s, q.standard_uncertainty * s)
