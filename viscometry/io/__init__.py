"""Edges of the package that touch files: budget files, candidates files, JSON, atomic writes.

* :mod:`viscometry.io.schema` — the budget-file format (tables, keys, forms);
* :mod:`viscometry.io.reader` — a budget file onto the budget's constructors;
* :mod:`viscometry.io.writer` — a budget back onto the format, atomically;
* :mod:`viscometry.io.candidates` — the lab manager's upgrade-candidates file;
* :mod:`viscometry.io.json_out` — JSON output of every command;
* :mod:`viscometry.io.atomic` — the one atomic writer.
"""

from viscometry._lazy import lazy_names

#: Where each public name lives; imported on first use (see :mod:`viscometry._lazy`).
_LAZY = {
    "viscometry.io.atomic": ("atomic_write_bytes", "atomic_write_text"),
    "viscometry.io.reader": ("BudgetFile", "is_budget_file", "load_budget", "loads_budget"),
    "viscometry.io.schema": ("FORMAT", "MAX_FILE_BYTES", "Recorded"),
    "viscometry.io.writer": (
        "budget_to_document",
        "dumps_budget",
        "recorded_from",
        "recorded_table",
        "save_budget",
    ),
}
__getattr__, __dir__ = lazy_names(globals(), _LAZY)


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
