"""What every command does alike: load and evaluate a budget file, print JSON, provenance.

Not a command itself (its name starts with ``_``, so the command line does not list it).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from viscometry.errors import BudgetFileError, ViscometryError

# The engine and the file reader are imported where they are used: commands that print JSON
# without a budget (score, decide) do not pay for them.
if TYPE_CHECKING:
    from viscometry.gum.budget import BudgetResult
    from viscometry.io.reader import BudgetFile

__all__ = ["evaluate_file", "json_text", "located", "print_json", "provenance_lines"]


def located(bf: BudgetFile, exc: ViscometryError) -> ViscometryError:
    """``exc`` with the file's name in front (a file error stays as it is)."""
    if isinstance(exc, BudgetFileError):
        return exc
    return type(exc)(f"{bf.source}: {exc}")


def evaluate_file(path: str, *, higher_order: bool = False) -> tuple[BudgetFile, BudgetResult]:
    """Load a budget file and evaluate its budget; errors name the file."""
    from viscometry.io.reader import load_budget

    bf = load_budget(path)
    try:
        return bf, bf.budget.evaluate(higher_order=higher_order)
    except ViscometryError as exc:
        raise located(bf, exc) from exc


def provenance_lines(bf: BudgetFile) -> list[str]:
    """``source:``, ``fingerprint:`` and ``version:`` lines for text output."""
    from viscometry import __version__
    from viscometry.text import one_line

    return [
        f"source: {one_line(bf.source)}",
        f"fingerprint: {bf.fingerprint}",
        f"version: viscometry {__version__}",
    ]


def json_text(obj: Any) -> str:
    """Exact JSON text of ``obj`` that standard output can encode: non-ASCII characters are
    written as ``\\uXXXX`` escapes when it cannot (an ASCII terminal, the C locale)."""
    import sys

    from viscometry.io.json_out import dumps

    text = dumps(obj)
    try:
        text.encode(getattr(sys.stdout, "encoding", None) or "utf-8")
    except (UnicodeEncodeError, LookupError):
        return dumps(obj, ascii_only=True)
    return text


def print_json(obj: dict[str, Any], *, source: str | None = None) -> None:
    """Print one JSON object (with ``source`` when given) on standard output, exact whatever
    the terminal (:func:`json_text`)."""
    if source is not None:
        obj = {**obj, "source": source}
    print(json_text(obj))
