"""Small building blocks shared by the widgets: number fields, error labels, layouts, links.

* Numbers are shown with about four significant digits (:func:`viscometry.text.format_number`)
  while the exact value stays in the model; a field only changes the model when a person types
  a new number. Text that is not a number is refused with a message, never ignored or clamped.
* Layouts wrap: controls and charts sit side by side when there is room and stack when the
  page is narrow (1024 px and up), charts keep their aspect ratio, labels are never cut.
"""

from __future__ import annotations

import base64
import html
import math
import re
from collections.abc import Sequence
from typing import Any

import ipywidgets as widgets

from viscometry.errors import InputError
from viscometry.text import format_number

__all__ = [
    "chart_image",
    "controls_column",
    "download_link",
    "error_html",
    "heading",
    "message_label",
    "number_text",
    "parse_number",
    "parse_readings",
    "SCROLL_STYLE",
    "WARNING_COLOUR",
    "warning_lines",
    "scrolling_html",
    "show_number",
    "wrap_row",
]

#: Width of a label column [CSS], so labels are never squeezed to nothing.
LABEL_WIDTH = "9em"


def show_number(x: float | None) -> str:
    """A number as a field shows it: four significant digits, ``inf`` as ``inf``, None blank."""
    if x is None:
        return ""
    if isinstance(x, float) and math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return format_number(float(x), 4)


def parse_number(text: str, field: str, *, allow_inf: bool = False) -> float:
    """The number typed in a field, or :class:`InputError` naming the field and the text.

    Examples
    --------
    >>> parse_number(" 1.5e-3 ", "u(r)")
    0.0015
    >>> parse_number("abc", "u(r)")
    Traceback (most recent call last):
    ...
    viscometry.errors.InputError: u(r): 'abc' is not a number
    """
    t = str(text).strip().replace("−", "-")
    if t.count(",") == 1 and "." not in t:  # a decimal comma: 0,5
        t = t.replace(",", ".")
    if t.lower() in ("inf", "infinity", "∞") and allow_inf:
        return math.inf
    try:
        x = float(t)
    except ValueError:
        raise InputError(f"{field}: {text[:40]!r} is not a number") from None
    if not math.isfinite(x):
        raise InputError(f"{field}: {text[:40]!r} is not a finite number")
    return x


_SEPARATORS = re.compile(r"[\s;,]+")


def parse_readings(text: str, field: str = "readings") -> list[float]:
    """Readings pasted as a column (or separated by spaces, commas or semicolons).

    Examples
    --------
    >>> parse_readings("459.82\\n460.11\\n 459.95 ")
    [459.82, 460.11, 459.95]
    """
    parts = [p for p in _SEPARATORS.split(str(text).strip()) if p]
    return [parse_number(p, f"{field}[{i}]") for i, p in enumerate(parts)]


def number_text(
    label: str, value: float | None, *, tooltip: str = "", width: str = "15em"
) -> widgets.Text:
    """A text field for a number, showing four significant digits; edits sync on Enter/blur."""
    return widgets.Text(
        value=show_number(value),
        description=label,
        description_allow_html=False,
        tooltip=tooltip or label,
        continuous_update=False,
        style={"description_width": LABEL_WIDTH},
        layout=widgets.Layout(width=width, min_width="12em"),
    )


def message_label() -> widgets.HTML:
    """An (initially empty) place for a refusal message next to a group of fields."""
    out = widgets.HTML(layout=widgets.Layout(width="auto", min_width="10em"))
    out.add_class("viscometry-field-message")
    return out


def error_html(messages: Sequence[str]) -> str:
    """Messages in red, one per line (escaped), or ``""``."""
    return "".join(f"<div style='color:#a00'>{html.escape(m)}</div>" for m in messages)


#: Colour of a warning (a legal but doubtful result); refusals are red (:func:`error_html`).
WARNING_COLOUR = "#a60"


def warning_lines(warnings: Sequence[str]) -> list[str]:
    """Each warning as an HTML line in the warning colour (escaped)."""
    return [
        f"<span style='color:{WARNING_COLOUR}'>warning: {html.escape(w)}</span>" for w in warnings
    ]


def heading(text: str) -> widgets.HTML:
    """A small section heading inside a widget (``text`` is escaped)."""
    return widgets.HTML(f"<h4 style='margin:0.8em 0 0.2em'>{html.escape(text)}</h4>")


def wrap_row(children: Sequence[Any], *, gap: str = "0.3em 1.2em") -> widgets.Box:
    """Children side by side, wrapping onto new lines when the page is narrow."""
    return widgets.Box(
        list(children),
        layout=widgets.Layout(
            display="flex", flex_flow="row wrap", align_items="flex-start", grid_gap=gap,
            width="100%",
        ),
    )  # fmt: skip


def controls_column(children: Sequence[Any]) -> widgets.VBox:
    """A column of controls that never shrinks below a readable width."""
    return widgets.VBox(
        list(children), layout=widgets.Layout(flex="1 1 24em", min_width="22em", max_width="44em")
    )


def chart_image(max_width: str = "560px") -> widgets.Image:
    """A PNG chart that scales with the page and keeps its aspect ratio."""
    return widgets.Image(
        format="png",
        layout=widgets.Layout(
            flex="1 1 22em", width="100%", max_width=max_width, height="auto",
            min_width="18em", object_fit="contain",
        ),
    )  # fmt: skip


def download_link(name: str, data: bytes, label: str, mime: str = "text/plain") -> str:
    """An HTML link that downloads ``data`` as the file ``name`` (a data URL, no server)."""
    b64 = base64.b64encode(data).decode("ascii")
    safe = html.escape(name, quote=True)
    return f"<a download='{safe}' href='data:{mime};base64,{b64}'>{html.escape(label)}</a>"


#: A style that lets a wide table scroll sideways inside its HTML widget instead of being cut
#: (the widget's content box would otherwise grow to the table's width).
SCROLL_STYLE = "<style>.viscometry-scroll-x > .widget-html-content{min-width:0}</style>"


def scrolling_html() -> widgets.HTML:
    """An HTML output for a wide table: full width, scrolling sideways when narrow; give it
    ``SCROLL_STYLE + html`` as its value."""
    out = widgets.HTML(layout=widgets.Layout(width="100%"))
    out.add_class("viscometry-scroll-x")
    return out
