"""Shared parts of the small CSV record files (calibration histories, timings, control charts,
proficiency rounds): CSV rows, a
``key,value`` preamble, a header of fixed columns, numbers and dates, each refusal one line
naming the file, the row (its line number) and the column."""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import io
import math

from viscometry.errors import BudgetFileError
from viscometry.io.schema import MAX_FILE_BYTES

#: Longest text kept from a cell (names, notes).
MAX_TEXT = 200
Rows = list[tuple[int, list[str]]]


def show(value: str) -> str:
    """A cell for a message: ``repr``, at most 40 characters."""
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "...'"


def fingerprint(text: str) -> str:
    """``sha256:`` of the text (UTF-8)."""
    return "sha256:" + hashlib.sha256(text.encode("utf-8", "surrogatepass")).hexdigest()


def csv_rows(text: str, src: str, fmt: str, max_rows: int, what: str) -> Rows:
    """(line number, stripped cells) of every row that is not blank or a ``#`` comment."""
    if not isinstance(text, str):
        raise BudgetFileError(f"{src}: {what} text must be a str, got {type(text).__name__}")
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise BudgetFileError(f"{src}: more than {MAX_FILE_BYTES} bytes; too large for {what}")
    if text.startswith("\ufeff"):
        raise BudgetFileError(f"{src}: row 1: starts with a byte-order mark; save as UTF-8 without")
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    out: Rows = []
    try:
        for cells in reader:
            line = reader.line_num
            cells = [c.strip() for c in cells]
            if not any(cells) or cells[0].startswith("#"):
                continue
            out.append((line, cells))
            if len(out) > max_rows + 10:
                raise BudgetFileError(f"{src}: row {line}: more than {max_rows} rows in {what}")
    except csv.Error as exc:
        raise BudgetFileError(f"{src}: row {reader.line_num}: not valid CSV ({exc})") from None
    if not out:
        raise BudgetFileError(f"{src}: empty; {what} starts with the row format,{fmt}")
    return out


def preamble(
    rows: Rows, src: str, fmt: str, keys: tuple[str, ...], columns: tuple[str, ...]
) -> tuple[dict[str, str], int]:
    """The ``key,value`` rows before the header (the first must be ``format,<fmt>``); returns
    them and the index of the header row."""
    line, first = rows[0]
    if first[0] == "format" and len(first) == 2 and first[1] != fmt:
        raise BudgetFileError(
            f"{src}: row {line}, column 2: format {show(first[1])} is not supported; expected {fmt}"
        )
    if first[0] != "format" or len(first) != 2:
        raise BudgetFileError(
            f"{src}: row {line}, column 1: expected format,{fmt} first, got {show(','.join(first))}"
        )
    meta: dict[str, str] = {}
    for i, (line, cells) in enumerate(rows):
        key = cells[0]
        if key in columns:
            return meta, i
        if key not in keys:
            raise BudgetFileError(
                f"{src}: row {line}, column 1: unknown key {show(key)}; before the header row "
                f"({','.join(columns)}) come only {', '.join(keys)}"
            )
        if len(cells) != 2 or key in meta:
            raise BudgetFileError(f"{src}: row {line}: write {key},<value> once (two cells)")
        meta[key] = cells[1][:MAX_TEXT]
    raise BudgetFileError(f"{src}: no header row {','.join(columns)} (and so no data rows)")


def header(line: int, cells: list[str], src: str, columns: tuple[str, ...]) -> dict[str, int]:
    """Column → index of a header row that holds exactly ``columns`` (any order)."""
    missing = [c for c in columns if c not in cells]
    if missing:
        raise BudgetFileError(
            f"{src}: row {line}: header misses column {', '.join(missing)} "
            f"(expected {','.join(columns)})"
        )
    extra = [c for c in cells if c not in columns]
    if extra or len(cells) != len(columns):
        shown = show(extra[0]) if extra else "a repeated column"
        raise BudgetFileError(
            f"{src}: row {line}: header has {shown}; expected exactly {','.join(columns)}"
        )
    return {c: cells.index(c) for c in columns}


def cells_of(line: int, cells: list[str], src: str, columns: tuple[str, ...]) -> None:
    """Refuse a data row with the wrong number of cells."""
    if len(cells) != len(columns):
        raise BudgetFileError(
            f"{src}: row {line}: {len(cells)} cells; expected {len(columns)} ({','.join(columns)})"
        )


def number(src: str, line: int, column: str, cell: str) -> float:
    """A positive finite number, else a refusal naming row and column."""
    try:
        x = float(cell)
    except ValueError:
        raise BudgetFileError(
            f"{src}: row {line}, column {column}: not a number: {show(cell)}"
        ) from None
    if not math.isfinite(x) or x <= 0:
        raise BudgetFileError(
            f"{src}: row {line}, column {column}: must be positive, got {show(cell)}"
        )
    return x


def date(src: str, line: int, cell: str, column: str = "date") -> dt.date:
    """An ISO date YYYY-MM-DD, else a refusal naming row and column."""
    try:
        if len(cell) != 10:
            raise ValueError(cell)
        return dt.date.fromisoformat(cell)
    except ValueError:
        raise BudgetFileError(
            f"{src}: row {line}, column {column}: not a date (YYYY-MM-DD): {show(cell)}"
        ) from None


def not_before(src: str, line: int, day: dt.date, previous: tuple[dt.date, int] | None) -> None:
    """Refuse a date before the previous row's (rows are oldest first)."""
    if previous is not None and day < previous[0]:
        raise BudgetFileError(
            f"{src}: row {line}, column date: {day} is before {previous[0]} "
            f"(row {previous[1]}); list the rows oldest first"
        )
