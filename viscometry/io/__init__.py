"""Edges of the package that touch files: budget files, fingerprints, JSON output, atomic writes."""

from viscometry.io.atomic import atomic_write_bytes, atomic_write_text
from viscometry.io.budget_file import (
    FORMAT,
    BudgetFile,
    Recorded,
    budget_to_document,
    dumps_budget,
    load_budget,
    loads_budget,
    save_budget,
)
from viscometry.io.fingerprint import canonical_json, fingerprint
from viscometry.io.json_out import dumps, result_to_dict

__all__ = [
    "FORMAT",
    "BudgetFile",
    "Recorded",
    "atomic_write_bytes",
    "atomic_write_text",
    "budget_to_document",
    "canonical_json",
    "dumps",
    "dumps_budget",
    "fingerprint",
    "load_budget",
    "loads_budget",
    "result_to_dict",
    "save_budget",
]
