"""The budget-file format ``viscometry-budget/1``: its tables, keys and uncertainty forms.

One place for what a budget file may contain, shared by the reader
(:mod:`viscometry.io.reader`) and the writer (:mod:`viscometry.io.writer`). The format is
documented with examples in ``docs/budget-files.md``.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = [
    "FORMAT",
    "MAX_FILE_BYTES",
    "TOP_KEYS",
    "MEASURAND_KEYS",
    "INPUT_KEYS",
    "CONSTANT_KEYS",
    "CORRELATION_KEYS",
    "CHECK_KEYS",
    "RECORDED_KEYS",
    "BOUNDED",
    "FORMS",
    "FORM_KEYS",
    "Recorded",
]

#: The format tag every budget file starts with.
FORMAT = "viscometry-budget/1"
#: Largest budget file accepted, in bytes (a budget is a page of text, not a data set).
MAX_FILE_BYTES = 1_000_000

TOP_KEYS = (
    "format", "title", "measurand", "constants", "inputs", "correlations", "checks", "recorded",
)  # fmt: skip
MEASURAND_KEYS = (
    "name", "unit", "model", "method", "coverage_probability", "coverage_factor", "rounding",
    "description",
)  # fmt: skip
INPUT_KEYS = (
    "value", "unit", "standard_uncertainty", "distribution", "evaluation",
    "expanded_uncertainty", "coverage_factor", "coverage_probability",
    "half_width", "lower", "upper", "beta",
    "readings", "pooled_standard_deviation", "pooled_dof",
    "dof", "relative_uncertainty_of_uncertainty", "description", "source",
)  # fmt: skip
CONSTANT_KEYS = ("value", "unit", "description", "source")
CORRELATION_KEYS = ("between", "coefficient")
#: Keys of one entry of the ``[checks]`` table (the check context of a built-in model).
CHECK_KEYS = ("value", "unit", "source")
RECORDED_KEYS = (
    "value", "expanded_uncertainty", "coverage_factor", "coverage_probability", "unit",
    "propagation", "fingerprint", "version", "statement", "date", "note",
)  # fmt: skip
#: Distributions given by a half-width or bounds.
BOUNDED = ("rectangular", "triangular", "arcsine", "trapezoidal")
#: The uncertainty forms of an input, by the keys that announce them.
FORMS = {
    "standard_uncertainty": ("standard_uncertainty",),
    "expanded_uncertainty": ("expanded_uncertainty",),
    "half_width": ("half_width", "lower", "upper"),
    "readings": ("readings",),
}
#: Keys allowed with each uncertainty form, besides value, unit, description and source.
FORM_KEYS = {
    "standard_uncertainty": {
        "standard_uncertainty", "distribution", "evaluation", "beta", "dof",
        "relative_uncertainty_of_uncertainty",
    },
    "expanded_uncertainty": {
        "expanded_uncertainty", "coverage_factor", "coverage_probability", "dof",
        "relative_uncertainty_of_uncertainty",
    },
    "half_width": {
        "half_width", "lower", "upper", "distribution", "beta", "dof",
        "relative_uncertainty_of_uncertainty",
    },
    "readings": {"readings", "pooled_standard_deviation", "pooled_dof"},
}  # fmt: skip


@dataclass(frozen=True, slots=True)
class Recorded:
    """The result a budget file says was reported (its ``[recorded]`` table).

    All numbers are in the measurand's unit. ``fingerprint`` is the fingerprint of the
    budget the record was computed from, if it was stored; ``propagation`` is
    ``"first-order"`` or ``"higher-order"``.
    """

    value: float
    expanded_uncertainty: float
    coverage_factor: float | None = None
    coverage_probability: float | None = None
    unit: str | None = None
    propagation: str | None = None
    fingerprint: str | None = None
    version: str | None = None
    statement: str | None = None
    date: str | None = None
    note: str | None = None
