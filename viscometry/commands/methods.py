"""``viscometry methods [NAME] [--json]``: list the built-in measurement models.

Without NAME every model is listed with its equation, inputs (SI units) and references; with
NAME one model is shown in full (also its validity and the optional check context).
"""

from __future__ import annotations

import argparse
import sys
import textwrap
from typing import TYPE_CHECKING, Any

from viscometry.units import format_unit

if TYPE_CHECKING:
    from viscometry.methods import Method

NAME = "methods"
HELP = "list the built-in viscometer models with their inputs, units and references"

__all__ = ["NAME", "HELP", "add_arguments", "run", "render_text"]


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Add the ``methods`` subcommand's arguments."""
    parser.description = (
        'List the built-in measurement models usable as [measurand] method = "NAME" in a '
        "budget file: equation, inputs with their SI units, references."
    )
    parser.add_argument(
        "name",
        nargs="?",
        metavar="NAME",
        help="show only this model, in full (validity and optional check context too)",
    )
    parser.add_argument(
        "--json",
        action="store_true",
        help="print JSON: a list of models, or one object when NAME is given",
    )


def _unit(text: str) -> str:
    return format_unit(text) or "1"


def render_text(method: Method, full: bool = False) -> str:
    """Plain-text description of one model."""
    lines = [f"{method.name} — {method.title}"]
    lines.append(f"  {method.equation}    [{_unit(method.output_unit)}]")
    lines.append("  inputs:")
    width = max(len(n) for n in method.input_names)
    uwidth = max(len(_unit(method.input_units[n])) for n in method.input_names)
    for n in method.input_names:
        lines.append(
            f"    {n:<{width}}  {_unit(method.input_units[n]):<{uwidth}}  "
            f"{method.input_descriptions[n]}"
        )
    if full:
        lines.append("  validity:")
        lines += textwrap.wrap(method.validity, 92, initial_indent="    ", subsequent_indent="    ")
        if method.context_keys:
            lines.append("  optional check context:")
            for k, d in method.context_keys.items():
                lines.append(f"    {k}: {d}")
    lines.append("  references:")
    for ref in method.references:
        lines += textwrap.wrap(ref, 92, initial_indent="    - ", subsequent_indent="      ")
    return "\n".join(lines)


def _dumps(obj: Any) -> str:
    from viscometry.commands._common import json_text

    return json_text(obj)


def _with_schema(obj: dict[str, Any]) -> dict[str, Any]:
    from viscometry.io.json_out import schema

    return {"schema": schema("methods"), **obj}


def run(args: argparse.Namespace) -> int:
    """Print the models; exit code 0. An unknown NAME raises ModelError."""
    from viscometry.methods import get_method, list_methods

    name = getattr(args, "name", None)
    as_json = getattr(args, "json", False)
    if name:
        method = get_method(name)
        out = _dumps(_with_schema(method.describe())) if as_json else render_text(method, full=True)
    else:
        methods = list_methods()
        if as_json:
            out = _dumps(_with_schema({"methods": [m.describe() for m in methods]}))
        else:
            out = "\n\n".join(render_text(m) for m in methods)
            out += "\n\nUse `viscometry methods NAME` for a model's validity and check options."
    sys.stdout.write(out + "\n")
    return 0
