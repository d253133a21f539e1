"""Audits: re-run budget files and compare with the results they say were reported.

Edge layer (reads files). Each budget file is evaluated again and its result compared with
the file's ``[recorded]`` table *after the same rounding as the result statement*: both the
recorded and the recomputed value and expanded uncertainty go through
:func:`viscometry.gum.round_result` (JCGM 100:2008, 7.2.6, with the budget's rounding rule)
and the strings must agree. A recorded coverage factor is compared to two decimals (as
printed), a recorded coverage probability exactly. A recorded fingerprint must equal the
fingerprint of the budget the file describes now (:attr:`viscometry.gum.Budget.fingerprint`);
if it does not, the budget changed after the result was recorded.

Verdicts (:data:`VERDICTS`): ``match``, ``differs``, ``unrecorded`` (no ``[recorded]`` table:
nothing to confirm) and ``error`` (the file cannot be read or evaluated). When a folder is
scanned, TOML files of another kind (lists of upgrade candidates) are skipped; a file named
explicitly is always audited, and an emptied or broken budget file is reported as an error.
The ``viscometry audit`` command and workbook 06 are thin layers over this module.
"""

from __future__ import annotations

import math
import os
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from viscometry.errors import ViscometryError
from viscometry.gum.rounding import round_result
from viscometry.io.reader import BudgetFile, is_budget_file, load_budget
from viscometry.text import one_line, statement

__all__ = [
    "AUDIT_COLUMNS",
    "VERDICTS",
    "AuditVerdict",
    "audit_file",
    "audit_paths",
    "audit_table",
    "collect_files",
    "exit_code",
    "fingerprint_status",
]

#: The verdicts, in order of severity, with the exit code of ``viscometry audit``.
VERDICTS = {"match": 0, "unrecorded": 0, "differs": 1, "error": 2}
#: Columns of :func:`audit_table`, in order.
AUDIT_COLUMNS = ("file", "verdict", "recorded", "recomputed", "fingerprint", "detail")

PathLike = str | os.PathLike[str]


@dataclass(frozen=True)
class AuditVerdict:
    """Outcome of auditing one file (``status`` is one of :data:`VERDICTS`)."""

    path: str
    status: str
    messages: tuple[str, ...] = ()
    recorded: dict[str, Any] = field(default_factory=dict)
    recomputed: dict[str, Any] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {
            "path": self.path, "status": self.status, "messages": list(self.messages),
            "recorded": self.recorded, "recomputed": self.recomputed,
            "warnings": list(self.warnings),
        }  # fmt: skip


def collect_files(paths: Iterable[PathLike]) -> tuple[list[Path], list[AuditVerdict]]:
    """Files named directly, plus every budget file ``*.toml`` under each folder (sorted).

    Returns the files and an ``error`` verdict for each folder without budget files.
    """
    files: list[Path] = []
    empty: list[AuditVerdict] = []
    for p in map(Path, paths):
        if p.is_dir():
            found = [f for f in sorted(p.rglob("*.toml")) if is_budget_file(f)]
            if not found:
                empty.append(
                    AuditVerdict(str(p), "error", ("no budget files (*.toml) in this folder",))
                )
            files += found
        else:
            files.append(p)
    return files, empty


def _compare(bf: BudgetFile, result: Any) -> tuple[list[str], dict[str, Any], dict[str, Any]]:
    """Problems, and the recorded and recomputed numbers as compared."""
    rec = bf.recorded
    assert rec is not None
    recorded = {
        k: v for k, v in {
            "value": rec.value, "expanded_uncertainty": rec.expanded_uncertainty,
            "coverage_factor": rec.coverage_factor,
            "coverage_probability": rec.coverage_probability, "fingerprint": rec.fingerprint,
        }.items() if v is not None
    }  # fmt: skip
    rounding = bf.budget.rounding
    try:
        new = round_result(result.value, result.expanded_uncertainty, rounding=rounding)
        old = round_result(rec.value, rec.expanded_uncertainty, rounding=rounding)
        new_pair, old_pair = (new.value, new.uncertainty), (old.value, old.uncertainty)
    except ViscometryError:  # U = 0 on either side: compare the plain numbers
        new_pair = (repr(result.value), repr(result.expanded_uncertainty))
        old_pair = (repr(rec.value), repr(rec.expanded_uncertainty))
    recorded["rounded"] = {"value": old_pair[0], "expanded_uncertainty": old_pair[1]}
    rounded = {"value": new_pair[0], "expanded_uncertainty": new_pair[1]}
    problems = []
    if new_pair[0] != old_pair[0]:
        problems.append(f"value recorded {old_pair[0]}, recomputed {new_pair[0]}")
    if new_pair[1] != old_pair[1]:
        problems.append(f"expanded uncertainty recorded {old_pair[1]}, recomputed {new_pair[1]}")
    k_old, k_new = rec.coverage_factor, result.coverage_factor
    if k_old is not None and f"{k_old:.2f}" != f"{k_new:.2f}":
        problems.append(f"coverage factor recorded {k_old:.2f}, recomputed {k_new:.2f}")
    p_old = rec.coverage_probability
    if p_old is not None and not math.isclose(
        p_old, result.coverage_probability, rel_tol=0, abs_tol=1e-12
    ):
        problems.append(
            f"coverage probability recorded {p_old!r}, budget uses {result.coverage_probability!r}"
        )
    if rec.fingerprint is not None and rec.fingerprint != bf.fingerprint:
        problems.append(
            f"fingerprint recorded {rec.fingerprint} no longer matches the budget "
            f"({bf.fingerprint}): the file changed after the result was recorded"
        )
    return problems, recorded, rounded


def audit_file(path: PathLike) -> AuditVerdict:
    """Recompute one budget file and compare it with its ``[recorded]`` table.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = pathlib.Path(d) / "empty.toml"
    ...     _ = p.write_text("")
    ...     audit_file(p).status
    'error'
    """
    from viscometry import __version__

    label = str(path)
    try:
        bf = load_budget(path)
        rec = bf.recorded
        result = bf.budget.evaluate(
            higher_order=rec is not None and rec.propagation == "higher-order"
        )
    except ViscometryError as exc:
        return AuditVerdict(
            label, "error", (one_line(str(exc)).removeprefix(f"{one_line(label)}: "),)
        )
    recomputed: dict[str, Any] = {
        "value": result.value, "expanded_uncertainty": result.expanded_uncertainty,
        "coverage_factor": result.coverage_factor, "propagation": result.propagation,
        "statement": statement(result), "fingerprint": bf.fingerprint,
    }  # fmt: skip
    if rec is None:
        return AuditVerdict(label, "unrecorded", ("no [recorded] table: nothing to compare with",),
                            recomputed=recomputed, warnings=result.warnings)  # fmt: skip
    problems, recorded, rounded = _compare(bf, result)
    recomputed["rounded"] = rounded
    notes = [] if rec.fingerprint is not None else ["no fingerprint recorded"]
    if rec.version is not None and rec.version != __version__:
        notes.append(f"recorded with viscometry {rec.version}, recomputed with {__version__}")
    status = "differs" if problems else "match"
    messages = problems or [statement(result)]
    return AuditVerdict(
        label, status, tuple(messages + notes), recorded, recomputed, result.warnings
    )


def audit_paths(paths: Iterable[PathLike]) -> tuple[AuditVerdict, ...]:
    """Audit budget files and folders (searched recursively), in sorted order per folder.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     _ = (pathlib.Path(d) / "other.toml").write_text('currency = "EUR"\\n')
    ...     [v.status for v in audit_paths([d])]
    ['error']
    """
    files, empty = collect_files(paths)
    return tuple(empty) + tuple(audit_file(f) for f in files)


def exit_code(verdicts: Sequence[AuditVerdict], *, strict: bool = False) -> int:
    """0 all match, 1 a difference (or, ``strict``, an unrecorded file), 2 an error."""
    codes = dict(VERDICTS, unrecorded=1) if strict else VERDICTS
    return max((codes[v.status] for v in verdicts), default=2)


def fingerprint_status(verdict: AuditVerdict) -> str:
    """``"matches"``, ``"changed"``, ``"not recorded"`` or ``"—"`` (file not evaluated).

    Examples
    --------
    >>> v = AuditVerdict("f.toml", "match", (), {"fingerprint": "sha256:1"},
    ...                  {"fingerprint": "sha256:1"})
    >>> fingerprint_status(v)
    'matches'
    """
    if verdict.status == "error":
        return "—"
    old = verdict.recorded.get("fingerprint")
    if old is None:
        return "not recorded"
    return "matches" if old == verdict.recomputed.get("fingerprint") else "changed"


def _label(path: str, relative_to: PathLike | None) -> str:
    p = Path(path)
    if relative_to is not None:
        try:
            return p.resolve().relative_to(Path(relative_to).resolve()).as_posix()
        except ValueError:
            pass
    return p.as_posix()


def audit_table(verdicts: Sequence[AuditVerdict], relative_to: PathLike | None = None) -> Any:
    """One row per audited file, every cell text (columns :data:`AUDIT_COLUMNS`).

    ``relative_to`` shows file names relative to a folder, so the table does not depend on
    where the files lie. The recorded result is shown as rounded for comparison
    (``"value ± U"``), the recomputed one as in the result statement.
    """
    import pandas as pd

    rows = []
    for v in verdicts:
        rounded = v.recorded.get("rounded")
        recorded = f"{rounded['value']} ± {rounded['expanded_uncertainty']}" if rounded else "—"
        text = v.recomputed.get("statement")
        detail = {"match": "recorded result confirmed",
                  "unrecorded": "no [recorded] table: nothing to compare with"}.get(
            v.status, "; ".join(v.messages))  # fmt: skip
        rows.append({
            "file": _label(v.path, relative_to), "verdict": v.status, "recorded": recorded,
            "recomputed": text.split(", k = ")[0] if text else "—",
            "fingerprint": fingerprint_status(v), "detail": detail,
        })  # fmt: skip
    return pd.DataFrame(rows, columns=list(AUDIT_COLUMNS))
