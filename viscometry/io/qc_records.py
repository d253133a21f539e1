"""Reading quality-control records: a check standard's control chart
(``viscometry-control/1``) and proficiency rounds (``viscometry-proficiency/1``).

Both formats (described with examples in ``docs/evidence-topdown.md``) are UTF-8 CSV like the
calibration history (:mod:`viscometry.io.history`): lines starting with ``#`` and blank lines
are ignored; a preamble of ``key,value`` rows, the first ``format,<tag>``; then a header row
holding exactly the format's columns (any order) and one row per record, oldest first.

``viscometry-control/1`` — preamble ``check_standard`` and ``unit`` (optional; default
``mm^2/s``, a unit of kinematic or dynamic viscosity); columns ``date,value,note``::

    format,viscometry-control/1
    check_standard,check oil CS-46
    unit,mm^2/s
    date,value,note
    2025-09-01,45.900,AB

``viscometry-proficiency/1`` — preamble ``scheme`` and ``unit`` (optional); columns
``round,date,x,U,x_pt,u_x_pt,sigma_pt``: the laboratory's result x and its reported U
(k = 2), the assigned value x_pt, its standard uncertainty u(x_pt) and the standard deviation
for proficiency assessment σ_pt, all positive, in the unit.

A malformed file is refused with one line naming the file, the row (its line number) and the
column (:class:`~viscometry.errors.BudgetFileError`). Files are read through
:func:`viscometry.io.reader.read_text_file` (regular files, size limit); nothing in them is
ever run.
"""

from __future__ import annotations

import datetime as dt
import os
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from viscometry import units as _units
from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.evidence.control import (
    MAX_CONTROL_POINTS,
    ControlChart,
    ControlPoint,
    ControlRecord,
    control_chart,
)
from viscometry.evidence.topdown import (
    MAX_ROUNDS,
    BudgetClaim,
    ProficiencyHistory,
    ProficiencyRound,
    Reconciliation,
    reconcile,
)
from viscometry.io import _records_csv as rc
from viscometry.io.reader import read_text_file

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.evidence.history import DriftFit, Prediction, RecalibrationInterval
    from viscometry.gum.result import BudgetResult
    from viscometry.io.history import HistoryFile
    from viscometry.io.reader import BudgetFile

__all__ = [
    "CONTROL_COLUMNS",
    "CONTROL_FORMAT",
    "PROFICIENCY_COLUMNS",
    "PROFICIENCY_FORMAT",
    "ControlFile",
    "Evidence",
    "ProficiencyFile",
    "load_control",
    "load_evidence",
    "load_proficiency",
    "loads_control",
    "loads_proficiency",
]

CONTROL_FORMAT = "viscometry-control/1"
CONTROL_COLUMNS = ("date", "value", "note")
PROFICIENCY_FORMAT = "viscometry-proficiency/1"
PROFICIENCY_COLUMNS = ("round", "date", "x", "U", "x_pt", "u_x_pt", "sigma_pt")
#: Default unit of both files.
DEFAULT_UNIT = "mm^2/s"
#: A round's field → its column (for refusals from the round's own checks).
_ROUND_COLUMNS = {"value": "x", "expanded_uncertainty": "U", "assigned_value": "x_pt",
                  "assigned_uncertainty": "u_x_pt", "sd_for_pt": "sigma_pt"}  # fmt: skip


@dataclass(frozen=True)
class ControlFile:
    """A control record read from a file: the record, the file, its fingerprint, the line
    number of each value."""

    record: ControlRecord
    source: str
    fingerprint: str
    rows: tuple[int, ...]


@dataclass(frozen=True)
class ProficiencyFile:
    """Proficiency rounds read from a file: the history, the scheme, the file, its
    fingerprint, the line number of each round."""

    history: ProficiencyHistory
    scheme: str
    source: str
    fingerprint: str
    rows: tuple[int, ...]


def _unit(meta: dict[str, str], src: str) -> str:
    unit = meta.get("unit", DEFAULT_UNIT)
    try:
        ok = _units.same_dimension(unit, "m^2/s") or _units.same_dimension(unit, "Pa*s")
    except ViscometryError:
        ok = False
    if not ok:
        raise BudgetFileError(
            f"{src}: unit {rc.show(unit)} is not a unit of viscosity (like {DEFAULT_UNIT})"
        )
    return unit


def load_control(path: str | os.PathLike[str]) -> ControlFile:
    """Read and validate a control-chart file (UTF-8 CSV, at most 1 MB).

    Raises
    ------
    BudgetFileError
        One line naming the file, row and column of the first problem.
    """
    return loads_control(read_text_file(path, "a control chart"), str(Path(path)))


def loads_control(text: str, source_name: str = "<string>") -> ControlFile:
    """Validate a control-chart file given as text; see :func:`load_control`.

    Examples
    --------
    >>> f = loads_control('''format,viscometry-control/1
    ... date,value,note
    ... 2025-09-01,45.90,AB
    ... 2025-09-03,45.93,CD
    ... ''')
    >>> len(f.record.points), f.record.unit, f.rows
    (2, 'mm^2/s', (3, 4))
    """
    src = source_name
    what = "a control chart"
    rows = rc.csv_rows(text, src, CONTROL_FORMAT, MAX_CONTROL_POINTS, what)
    keys = ("format", "check_standard", "unit")
    meta, at = rc.preamble(rows, src, CONTROL_FORMAT, keys, CONTROL_COLUMNS)
    unit = _unit(meta, src)
    line, cells = rows[at]
    col = rc.header(line, cells, src, CONTROL_COLUMNS)
    points: list[ControlPoint] = []
    lines: list[int] = []
    for line, cells in rows[at + 1 :]:
        rc.cells_of(line, cells, src, CONTROL_COLUMNS)
        day = rc.date(src, line, cells[col["date"]])
        rc.not_before(src, line, day, (points[-1].date, lines[-1]) if points else None)
        value = rc.number(src, line, "value", cells[col["value"]])
        points.append(ControlPoint(day, value, cells[col["note"]][: rc.MAX_TEXT]))
        lines.append(line)
    if len(points) < 2:
        raise BudgetFileError(f"{src}: row {line}: a control chart needs at least two values")
    record = ControlRecord(meta.get("check_standard", ""), unit, tuple(points))
    return ControlFile(record, src, rc.fingerprint(text), tuple(lines))


def load_proficiency(path: str | os.PathLike[str]) -> ProficiencyFile:
    """Read and validate a proficiency-rounds file (UTF-8 CSV, at most 1 MB).

    Raises
    ------
    BudgetFileError
        One line naming the file, row and column of the first problem.
    """
    return loads_proficiency(read_text_file(path, "proficiency rounds"), str(Path(path)))


def loads_proficiency(text: str, source_name: str = "<string>") -> ProficiencyFile:
    """Validate a proficiency-rounds file given as text; see :func:`load_proficiency`.

    Examples
    --------
    >>> f = loads_proficiency('''format,viscometry-proficiency/1
    ... round,date,x,U,x_pt,u_x_pt,sigma_pt
    ... R1,2025-03-10,32.44,0.066,32.41,0.020,0.10
    ... ''')
    >>> f.history.rounds[0].name, round(f.history.rounds[0].relative_bias, 6)
    ('R1', 0.000926)
    """
    src = source_name
    what = "proficiency rounds"
    rows = rc.csv_rows(text, src, PROFICIENCY_FORMAT, MAX_ROUNDS, what)
    keys = ("format", "scheme", "unit")
    meta, at = rc.preamble(rows, src, PROFICIENCY_FORMAT, keys, PROFICIENCY_COLUMNS)
    unit = _unit(meta, src)
    line, cells = rows[at]
    col = rc.header(line, cells, src, PROFICIENCY_COLUMNS)
    rounds: list[ProficiencyRound] = []
    lines: list[int] = []
    for line, cells in rows[at + 1 :]:
        rc.cells_of(line, cells, src, PROFICIENCY_COLUMNS)
        day = rc.date(src, line, cells[col["date"]])
        rc.not_before(src, line, day, (rounds[-1].date, lines[-1]) if rounds else None)
        x, u, xpt, upt, spt = (
            rc.number(src, line, c, cells[col[c]]) for c in PROFICIENCY_COLUMNS[2:]
        )
        name = cells[col["round"]][: rc.MAX_TEXT]
        try:
            rounds.append(ProficiencyRound(name, day, x, u, xpt, upt, spt))
        except ViscometryError as exc:
            column = next((c for k, c in _ROUND_COLUMNS.items() if str(exc).startswith(k)), "x")
            raise BudgetFileError(f"{src}: row {line}, column {column}: {exc}") from None
        lines.append(line)
    if not rounds:
        raise BudgetFileError(f"{src}: row {line}: a header but no rounds")
    history = ProficiencyHistory(unit, tuple(rounds))
    return ProficiencyFile(history, meta.get("scheme", ""), src, rc.fingerprint(text), tuple(lines))


@dataclass(frozen=True, eq=False)
class Evidence:
    """A laboratory's records read and evaluated together (immutable): the viscometer's
    calibration history with its drift fit, prediction and interval (when given), the check
    standard's chart, the proficiency rounds, the budget with its result, and the
    reconciliation."""

    history: HistoryFile | None
    drift: DriftFit | None
    prediction: Prediction | None
    interval: RecalibrationInterval | None
    control: ControlFile
    chart: ControlChart
    proficiency: ProficiencyFile
    budget: BudgetFile
    result: BudgetResult
    reconciliation: Reconciliation


def load_evidence(
    control: str | os.PathLike[str],
    proficiency: str | os.PathLike[str],
    budget: str | os.PathLike[str],
    *,
    history: str | os.PathLike[str] | None = None,
    date: dt.date | None = None,
    alpha: float = 0.05,
) -> Evidence:
    """Read the files and compute everything the top-down check shows (see
    ``docs/evidence-topdown.md``); the prediction is for ``date`` (default today).

    Raises
    ------
    ViscometryError
        A malformed file (one line naming file, row and column) or a bad argument; errors
        of a computation name the file.
    """
    from viscometry.evidence.history import fit_drift
    from viscometry.io.reader import load_budget

    cf, pf, bf = load_control(control), load_proficiency(proficiency), load_budget(budget)
    try:
        result = bf.budget.evaluate()
    except ViscometryError as exc:
        raise type(exc)(f"{bf.source}: {exc}") from exc
    chart = control_chart(cf.record)
    claim = BudgetClaim.from_result(result, bf.source)
    try:
        rec = reconcile(chart, pf.history, claim, alpha=alpha)
    except ViscometryError as exc:  # e.g. records and budget of different quantities
        raise type(exc)(f"{cf.source}, {pf.source}, {bf.source}: {exc}") from exc
    hf = fit = prediction = interval = None
    if history is not None:
        from viscometry.io.history import load_history

        hf = load_history(history)
        try:
            fit = fit_drift(hf.history)
            prediction = fit.predict(date or dt.date.today())
            interval = fit.recalibration_interval()
        except ViscometryError as exc:
            raise type(exc)(f"{hf.source}: {exc}") from exc
    return Evidence(hf, fit, prediction, interval, cf, chart, pf, bf, result, rec)
