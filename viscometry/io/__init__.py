"""Edges of the package that touch files: budget files, candidates files, JSON, atomic writes.

* :mod:`viscometry.io.schema` — the budget-file format (tables, keys, forms);
* :mod:`viscometry.io.reader` — a budget file onto the budget's constructors;
* :mod:`viscometry.io.writer` — a budget back onto the format, atomically;
* :mod:`viscometry.io.candidates` — the lab manager's upgrade-candidates file;
* :mod:`viscometry.io.json_out` — JSON output of every command;
* :mod:`viscometry.io.atomic` — the one atomic writer.
"""

from viscometry.io.atomic import atomic_write_bytes, atomic_write_text
from viscometry.io.reader import BudgetFile, is_budget_file, load_budget, loads_budget
from viscometry.io.schema import FORMAT, MAX_FILE_BYTES, Recorded
from viscometry.io.writer import (
    budget_to_document,
    dumps_budget,
    recorded_from,
    recorded_table,
    save_budget,
)

__all__ = [
    "FORMAT",
    "MAX_FILE_BYTES",
    "BudgetFile",
    "Recorded",
    "atomic_write_bytes",
    "atomic_write_text",
    "budget_to_document",
    "dumps_budget",
    "is_budget_file",
    "load_budget",
    "loads_budget",
    "recorded_from",
    "recorded_table",
    "save_budget",
]
