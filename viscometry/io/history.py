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

import os
from dataclasses import dataclass
from pathlib import Path

from viscometry import units as _units
from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.evidence.history import MAX_RECORDS, CalibrationHistory, CalibrationRecord
from viscometry.io import _records_csv as rc
from viscometry.io.reader import read_text_file

__all__ = ["HISTORY_COLUMNS", "HISTORY_FORMAT", "HistoryFile", "load_history", "loads_history"]

#: The format tag of the first row.
HISTORY_FORMAT = "viscometry-history/1"
#: The columns of the header row.
HISTORY_COLUMNS = ("date", "C", "U", "k", "source")
#: Keys of the preamble.
PREAMBLE_KEYS = ("format", "viscometer", "unit")
#: Default unit of C and U.
DEFAULT_UNIT = "mm^2/s^2"
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
    rows = rc.csv_rows(text, src, HISTORY_FORMAT, MAX_RECORDS, "a calibration history")
    found, header_at = rc.preamble(rows, src, HISTORY_FORMAT, PREAMBLE_KEYS, HISTORY_COLUMNS)
    meta = {"viscometer": "", "unit": DEFAULT_UNIT, **found}
    records, lines = _records(rows[header_at:], src, meta)
    return HistoryFile(
        history=CalibrationHistory(meta["viscometer"], meta["unit"], tuple(records)),
        source=src,
        fingerprint=rc.fingerprint(text),
        rows=tuple(lines),
    )


def _check_meta(meta: dict[str, str], src: str) -> None:
    try:
        ok = _units.same_dimension(meta["unit"], "m^2/s^2")
    except ViscometryError:
        ok = False
    if not ok:
        raise BudgetFileError(
            f"{src}: unit {rc.show(meta['unit'])} is not a unit of a viscometer constant "
            f"(like {DEFAULT_UNIT})"
        )


def _records(
    rows: list[tuple[int, list[str]]], src: str, meta: dict[str, str]
) -> tuple[list[CalibrationRecord], list[int]]:
    line, cells = rows[0]
    _check_meta(meta, src)
    col = rc.header(line, cells, src, HISTORY_COLUMNS)
    records: list[CalibrationRecord] = []
    lines: list[int] = []
    for line, cells in rows[1:]:
        rc.cells_of(line, cells, src, HISTORY_COLUMNS)
        date = rc.date(src, line, cells[col["date"]])
        if records and date == records[-1].date:
            raise BudgetFileError(
                f"{src}: row {line}, column date: {date} repeats the date of row {lines[-1]}"
            )
        if records and date < records[-1].date:
            raise BudgetFileError(
                f"{src}: row {line}, column date: {date} is before {records[-1].date} "
                f"(row {lines[-1]}); list the certificates oldest first"
            )
        c, u, k = (rc.number(src, line, name, cells[col[name]]) for name in ("C", "U", "k"))
        source = cells[col["source"]][: rc.MAX_TEXT]
        try:
            records.append(CalibrationRecord(date, c, u, k, source))
        except ViscometryError as exc:
            column = next((col for key, col in _FIELD_COLUMNS if str(exc).startswith(key)), "C")
            raise BudgetFileError(f"{src}: row {line}, column {column}: {exc}") from None
        lines.append(line)
    if not records:
        raise BudgetFileError(f"{src}: row {line}: a header but no certificate rows")
    return records, lines
