"""Reading the calibration history of a viscometer constant (CSV, ``viscometry-history/1``).

The format (described with an example in ``docs/evidence.md``): UTF-8 text, comma-separated
(quotes as in RFC 4180 for a ``source`` with commas); lines starting with ``#`` and blank
lines are ignored. First a preamble of ``key,value`` rows — ``format,viscometry-history/1``
(required, first), ``viscometer,<name>`` and ``unit,<unit of C and U>`` (optional; default
``mm^2/s^2``) — then the header row ``date,C,U,k,source`` (these five columns, in any
order) and one row per certificate, oldest first::

    format,viscometry-history/1
    viscometer,Ubbelohde 1C no. 4471
    unit,mm^2/s^2
    date,C,U,k,source
    2019-03-14,0.0100231,0.0000150,2,certificate 19-0311

``date`` is an ISO date (YYYY-MM-DD), ``C`` and ``U`` positive numbers in the unit, ``k`` a
positive coverage factor. A malformed file is refused with one line naming the file, the row
(the line number in the file) and the column (:class:`~viscometry.errors.BudgetFileError`).
The file is read through :func:`viscometry.io.reader.read_text_file` (regular files, size
limit); nothing in it is ever run.
"""

from __future__ import annotations

import csv
import datetime as dt
import hashlib
import io
import math
import os
from dataclasses import dataclass
from pathlib import Path

from viscometry import units as _units
from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.evidence.history import MAX_RECORDS, CalibrationHistory, CalibrationRecord
from viscometry.io.reader import read_text_file
from viscometry.io.schema import MAX_FILE_BYTES

__all__ = ["HISTORY_COLUMNS", "HISTORY_FORMAT", "HistoryFile", "load_history", "loads_history"]

#: The format tag of the first row.
HISTORY_FORMAT = "viscometry-history/1"
#: The columns of the header row.
HISTORY_COLUMNS = ("date", "C", "U", "k", "source")
#: Keys of the preamble.
PREAMBLE_KEYS = ("format", "viscometer", "unit")
#: Default unit of C and U.
DEFAULT_UNIT = "mm^2/s^2"
_MAX_TEXT = 200
#: A record's field → the column a refusal names.
_FIELD_COLUMNS = (("constant", "C"), ("expanded_uncertainty", "U"), ("coverage_factor", "k"))


@dataclass(frozen=True)
class HistoryFile:
    """A calibration history read from a file (immutable).

    Attributes
    ----------
    history : CalibrationHistory
    source : str
        The file (or name) it was read from.
    fingerprint : str
        ``sha256:`` of the file's text (UTF-8), for provenance.
    rows : tuple of int
        The line number of each certificate in the file.
    """

    history: CalibrationHistory
    source: str
    fingerprint: str
    rows: tuple[int, ...]


def load_history(path: str | os.PathLike[str]) -> HistoryFile:
    """Read and validate a calibration-history file (UTF-8 CSV, at most 1 MB).

    Raises
    ------
    BudgetFileError
        One line naming the file, row and column of the first problem.
    """
    return loads_history(read_text_file(path, "a calibration history"), str(Path(path)))


def loads_history(text: str, source_name: str = "<string>") -> HistoryFile:
    """Validate a calibration history given as text; see :func:`load_history`.

    Examples
    --------
    >>> h = loads_history('''format,viscometry-history/1
    ... date,C,U,k,source
    ... 2020-01-10,0.010021,0.000015,2,cert A
    ... 2022-01-12,0.010026,0.000015,2,cert B
    ... ''')
    >>> len(h.history.records), h.history.unit, h.rows
    (2, 'mm^2/s^2', (3, 4))
    """
    src = source_name
    if not isinstance(text, str):
        raise BudgetFileError(f"{src}: history text must be a str, got {type(text).__name__}")
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise BudgetFileError(f"{src}: more than {MAX_FILE_BYTES} bytes; too large for a history")
    rows = _rows(text, src)
    if not rows:
        raise BudgetFileError(
            f"{src}: empty; a calibration history starts with the row format,{HISTORY_FORMAT}"
        )
    meta, header_at = _preamble(rows, src)
    records, lines = _records(rows[header_at:], src, meta)
    digest = hashlib.sha256(text.encode("utf-8", "surrogatepass")).hexdigest()
    return HistoryFile(
        history=CalibrationHistory(meta["viscometer"], meta["unit"], tuple(records)),
        source=src,
        fingerprint=f"sha256:{digest}",
        rows=tuple(lines),
    )


def _show(value: str) -> str:
    text = repr(value)
    return text if len(text) <= 40 else text[:37] + "...'"


def _rows(text: str, src: str) -> list[tuple[int, list[str]]]:
    """(line number, cells) of every row that is not blank or a comment."""
    if text.startswith("\ufeff"):
        raise BudgetFileError(f"{src}: row 1: starts with a byte-order mark; save as UTF-8 without")
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    out: list[tuple[int, list[str]]] = []
    try:
        for cells in reader:
            line = reader.line_num
            cells = [c.strip() for c in cells]
            if not any(cells) or cells[0].startswith("#"):
                continue
            out.append((line, cells))
            if len(out) > MAX_RECORDS + 10:
                raise BudgetFileError(
                    f"{src}: row {line}: more than {MAX_RECORDS} certificates in one history"
                )
    except csv.Error as exc:
        raise BudgetFileError(f"{src}: row {reader.line_num}: not valid CSV ({exc})") from None
    return out


def _preamble(rows: list[tuple[int, list[str]]], src: str) -> tuple[dict[str, str], int]:
    """The ``key,value`` rows before the header; returns them and the header's index."""
    line, first = rows[0]
    if first[0] != "format":
        raise BudgetFileError(
            f"{src}: row {line}, column 1: expected format,{HISTORY_FORMAT} first, "
            f"got {_show(first[0])}"
        )
    meta = {"viscometer": "", "unit": DEFAULT_UNIT}
    seen: set[str] = set()
    for i, (line, cells) in enumerate(rows):
        key = cells[0]
        if key in HISTORY_COLUMNS:
            return meta, i
        if key not in PREAMBLE_KEYS:
            raise BudgetFileError(
                f"{src}: row {line}, column 1: unknown key {_show(key)}; before the header row "
                f"({','.join(HISTORY_COLUMNS)}) come only {', '.join(PREAMBLE_KEYS)}"
            )
        if len(cells) != 2 or key in seen:
            raise BudgetFileError(f"{src}: row {line}: write {key},<value> once (two cells)")
        seen.add(key)
        meta[key] = cells[1][:_MAX_TEXT]
    raise BudgetFileError(
        f"{src}: no header row {','.join(HISTORY_COLUMNS)} (and so no certificates)"
    )


def _check_meta(meta: dict[str, str], src: str) -> None:
    if meta.get("format") != HISTORY_FORMAT:
        raise BudgetFileError(
            f"{src}: format {_show(meta.get('format', ''))} is not supported; "
            f"expected {HISTORY_FORMAT}"
        )
    try:
        ok = _units.same_dimension(meta["unit"], "m^2/s^2")
    except ViscometryError:
        ok = False
    if not ok:
        raise BudgetFileError(
            f"{src}: unit {_show(meta['unit'])} is not a unit of a viscometer constant "
            f"(like {DEFAULT_UNIT})"
        )


def _header(line: int, cells: list[str], src: str) -> dict[str, int]:
    missing = [c for c in HISTORY_COLUMNS if c not in cells]
    if missing:
        raise BudgetFileError(
            f"{src}: row {line}: header misses column {', '.join(missing)} "
            f"(expected {','.join(HISTORY_COLUMNS)})"
        )
    extra = [c for c in cells if c not in HISTORY_COLUMNS]
    if extra or len(cells) != len(HISTORY_COLUMNS):
        shown = _show(extra[0]) if extra else "a repeated column"
        raise BudgetFileError(
            f"{src}: row {line}: header has {shown}; expected exactly {','.join(HISTORY_COLUMNS)}"
        )
    return {c: cells.index(c) for c in HISTORY_COLUMNS}


def _number(src: str, line: int, column: str, cell: str) -> float:
    try:
        x = float(cell)
    except ValueError:
        raise BudgetFileError(
            f"{src}: row {line}, column {column}: not a number: {_show(cell)}"
        ) from None
    if not math.isfinite(x) or x <= 0:
        raise BudgetFileError(f"{src}: row {line}, column {column}: must be positive, got {cell}")
    return x


def _date(src: str, line: int, cell: str) -> dt.date:
    try:
        if len(cell) != 10:
            raise ValueError(cell)
        return dt.date.fromisoformat(cell)
    except ValueError:
        raise BudgetFileError(
            f"{src}: row {line}, column date: not a date (YYYY-MM-DD): {_show(cell)}"
        ) from None


def _records(
    rows: list[tuple[int, list[str]]], src: str, meta: dict[str, str]
) -> tuple[list[CalibrationRecord], list[int]]:
    line, cells = rows[0]
    _check_meta(meta, src)
    col = _header(line, cells, src)
    records: list[CalibrationRecord] = []
    lines: list[int] = []
    for line, cells in rows[1:]:
        if len(cells) != len(HISTORY_COLUMNS):
            raise BudgetFileError(
                f"{src}: row {line}: {len(cells)} cells; expected {len(HISTORY_COLUMNS)} "
                f"({','.join(HISTORY_COLUMNS)})"
            )
        date = _date(src, line, cells[col["date"]])
        if records and date == records[-1].date:
            raise BudgetFileError(
                f"{src}: row {line}, column date: {date} repeats the date of row {lines[-1]}"
            )
        if records and date < records[-1].date:
            raise BudgetFileError(
                f"{src}: row {line}, column date: {date} is before {records[-1].date} "
                f"(row {lines[-1]}); list the certificates oldest first"
            )
        c, u, k = (_number(src, line, name, cells[col[name]]) for name in ("C", "U", "k"))
        source = cells[col["source"]][:_MAX_TEXT]
        try:
            records.append(CalibrationRecord(date, c, u, k, source))
        except ViscometryError as exc:
            column = next((col for key, col in _FIELD_COLUMNS if str(exc).startswith(key)), "C")
            raise BudgetFileError(f"{src}: row {line}, column {column}: {exc}") from None
        lines.append(line)
    if not records:
        raise BudgetFileError(f"{src}: row {line}: a header but no certificate rows")
    return records, lines
