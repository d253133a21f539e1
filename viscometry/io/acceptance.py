"""Reading the raw flow timings of duplicate determinations (CSV, ``viscometry-timings/1``).

The format (described with an example in ``docs/evidence.md``) follows the calibration
history's (:mod:`viscometry.io.history`): UTF-8 CSV, ``#`` comment lines, a preamble of
``key,value`` rows — ``format,viscometry-timings/1`` (required, first), ``sample,<text>``,
``constant,<C>`` and ``unit,<unit of C>`` (default ``mm^2/s^2``) — then the header
``determination,flow_time`` and one row per timing in seconds, labelled with its
determination (1, 2, ...; the rows of one determination together)::

    format,viscometry-timings/1
    sample,base oil at 40 °C
    constant,0.030035
    determination,flow_time
    1,1042.31
    1,1042.55
    2,1043.02
    2,1042.80

With a ``constant``, each determination's result is ν = C·t̄ in mm²/s (for C in mm²/s²;
no kinetic-energy correction); without, the determinations are compared as mean flow times
in s. Errors name the file, the row and the column, on one line
(:class:`~viscometry.errors.BudgetFileError`).
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass
from pathlib import Path

from viscometry import units as _units
from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.evidence.acceptance import MAX_RESULTS
from viscometry.io import _records_csv as rc
from viscometry.io.reader import read_text_file

__all__ = ["TIMINGS_FORMAT", "TimingsFile", "load_timings", "loads_timings"]

#: Most rows read: a preamble and every timing of the most determinations.
_MAX_ROWS = MAX_RESULTS * MAX_RESULTS + 10

#: The format tag of the first row.
TIMINGS_FORMAT = "viscometry-timings/1"
#: The columns of the header row.
TIMINGS_COLUMNS = ("determination", "flow_time")
PREAMBLE_KEYS = ("format", "sample", "constant", "unit")


@dataclass(frozen=True)
class TimingsFile:
    """Timings of duplicate determinations read from a file (immutable).

    Attributes
    ----------
    sample : str
    constant : float or None
        The viscometer constant C, in ``unit``.
    unit : str
        Unit of C.
    determinations : tuple of tuple of float
        The flow times of each determination, in file order [s].
    labels : tuple of str
        Each determination's label.
    source : str
    """

    sample: str
    constant: float | None
    unit: str
    determinations: tuple[tuple[float, ...], ...]
    labels: tuple[str, ...]
    source: str

    def results(self) -> tuple[float, ...]:
        """ν = C·t̄ of each determination in mm²/s (or t̄ in s without a constant)."""
        means = [math.fsum(t) / len(t) for t in self.determinations]
        if self.constant is None:
            return tuple(means)
        c = _units.convert(self.constant, self.unit, "mm^2/s^2")
        return tuple(c * m for m in means)

    @property
    def result_unit(self) -> str:
        """Unit of :meth:`results`: ``"mm^2/s"`` with a constant, else ``"s"``."""
        return "s" if self.constant is None else "mm^2/s"


def load_timings(path: str | os.PathLike[str]) -> TimingsFile:
    """Read and validate a timings file (UTF-8 CSV, at most 1 MB)."""
    return loads_timings(read_text_file(path, "a timings file"), str(Path(path)))


def loads_timings(text: str, source_name: str = "<string>") -> TimingsFile:
    """Validate a timings file given as text; see :func:`load_timings`.

    Examples
    --------
    >>> f = loads_timings("format,viscometry-timings/1\\ndetermination,flow_time\\n"
    ...                   "1,300.1\\n1,300.3\\n2,300.6\\n2,300.4\\n")
    >>> f.determinations, [round(r, 9) for r in f.results()], f.result_unit
    (((300.1, 300.3), (300.6, 300.4)), [300.2, 300.5], 's')
    """
    src = source_name
    rows = rc.csv_rows(text, src, TIMINGS_FORMAT, _MAX_ROWS, "a timings file")
    meta, start = _preamble(rows, src)
    labels, groups = _groups(rows[start:], src)
    return TimingsFile(
        sample=meta.get("sample", ""), constant=meta.get("constant"), unit=meta["unit"],
        determinations=tuple(tuple(g) for g in groups), labels=tuple(labels), source=src,
    )  # fmt: skip


def _preamble(rows: list[tuple[int, list[str]]], src: str) -> tuple[dict, int]:
    meta: dict = {"unit": "mm^2/s^2"}
    for i, (line, cells) in enumerate(rows):
        key = cells[0]
        if i == 0 and key != "format":
            raise BudgetFileError(
                f"{src}: row {line}, column 1: expected format,{TIMINGS_FORMAT} first, "
                f"got {rc.show(key)}"
            )
        if key == TIMINGS_COLUMNS[0]:
            if meta.get("format") != TIMINGS_FORMAT:
                raise BudgetFileError(
                    f"{src}: format {rc.show(meta.get('format', ''))} is not supported; "
                    f"expected {TIMINGS_FORMAT}"
                )
            _check_unit(meta["unit"], src)
            if tuple(cells) != TIMINGS_COLUMNS:
                raise BudgetFileError(
                    f"{src}: row {line}: header must be {','.join(TIMINGS_COLUMNS)}, "
                    f"got {rc.show(','.join(cells))}"
                )
            return meta, i + 1
        if key not in PREAMBLE_KEYS or len(cells) != 2 or key in meta and key != "unit":
            raise BudgetFileError(
                f"{src}: row {line}, column 1: {rc.show(key)} is not a preamble key "
                f"({', '.join(PREAMBLE_KEYS)}, each once as key,value)"
            )
        meta[key] = rc.number(src, line, "constant", cells[1]) if key == "constant" else cells[1]
    raise BudgetFileError(f"{src}: no header row {','.join(TIMINGS_COLUMNS)}")


def _check_unit(unit: str, src: str) -> None:
    try:
        ok = _units.same_dimension(unit, "m^2/s^2")
    except ViscometryError:
        ok = False
    if not ok:
        raise BudgetFileError(f"{src}: unit {rc.show(unit)} is not a unit of a viscometer constant")


def _groups(rows: list[tuple[int, list[str]]], src: str) -> tuple[list[str], list[list[float]]]:
    labels: list[str] = []
    groups: list[list[float]] = []
    for line, cells in rows:
        if len(cells) != 2:
            raise BudgetFileError(f"{src}: row {line}: {len(cells)} cells; expected 2")
        label, t = cells[0], rc.number(src, line, "flow_time", cells[1])
        if not labels or label != labels[-1]:
            if label in labels:
                raise BudgetFileError(
                    f"{src}: row {line}, column determination: {rc.show(label)} appeared before; "
                    "keep the rows of one determination together"
                )
            if len(labels) == MAX_RESULTS:
                raise BudgetFileError(f"{src}: row {line}: more than {MAX_RESULTS} determinations")
            labels.append(label)
            groups.append([])
        if len(groups[-1]) == MAX_RESULTS:
            raise BudgetFileError(f"{src}: row {line}: more than {MAX_RESULTS} timings")
        groups[-1].append(t)
    if not groups:
        raise BudgetFileError(f"{src}: a header but no timing rows")
    for label, g in zip(labels, groups, strict=True):
        if len(g) < 2:
            raise BudgetFileError(
                f"{src}: determination {rc.show(label)} has one timing; time each filling at "
                "least twice"
            )
    return labels, groups
