"""Audit many budget files at once and tabulate the verdicts (edge layer: files, pandas).

A thin layer over :mod:`viscometry.commands.audit` for workbooks and reports: the same
file discovery (folders searched recursively for budget files; other TOML files such as
lists of upgrade candidates are skipped) and the same per-file comparison
(:func:`~viscometry.commands.audit.audit_file`: recorded and recomputed results compared
after the rounding of the result statement, JCGM 100:2008, 7.2.6, and the recorded
fingerprint against the present inputs). Only the presentation is added: one row per file
with every number already formatted as text, so a table prints the same on every machine.
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

from viscometry.commands.audit import AuditVerdict, audit_file, collect_files

__all__ = ["AUDIT_COLUMNS", "audit_paths", "audit_table", "fingerprint_status"]

#: Columns of :func:`audit_table`, in order.
AUDIT_COLUMNS = ("file", "verdict", "recorded", "recomputed", "fingerprint", "detail")

PathLike = str | os.PathLike[str]


def audit_paths(paths: Iterable[PathLike]) -> tuple[AuditVerdict, ...]:
    """Audit budget files and folders (searched recursively), in sorted order per folder.

    Parameters
    ----------
    paths : iterable of path-like
        Budget files (always audited) and folders (every ``*.toml`` below them that is a
        budget file, see :func:`viscometry.io.budget_file.is_budget_file`).

    Returns
    -------
    tuple of AuditVerdict
        One per file: ``status`` is ``"match"``, ``"differs"``, ``"unrecorded"`` or
        ``"error"``; a folder without budget files gives an ``"error"`` verdict for the folder.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     _ = (pathlib.Path(d) / "other.toml").write_text('currency = "EUR"\\n')
    ...     [v.status for v in audit_paths([d])]
    ['error']
    """
    names = [str(p) for p in paths]
    files = collect_files(names)
    verdicts: list[AuditVerdict] = []
    for p in names:
        if Path(p).is_dir() and not any(f.is_relative_to(Path(p)) for f in files):
            verdicts.append(AuditVerdict(p, "error", ("no budget files (*.toml) in this folder",)))
    verdicts += [audit_file(f) for f in files]
    return tuple(verdicts)


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


def _short_statement(statement: str) -> str:
    """``"eta = (1.0018 ± 0.0041) mPa·s"`` from a full result statement."""
    return statement.split(", k = ")[0]


def _label(path: str, relative_to: PathLike | None) -> str:
    p = Path(path)
    if relative_to is not None:
        try:
            return p.resolve().relative_to(Path(relative_to).resolve()).as_posix()
        except ValueError:
            pass
    return p.as_posix()


def audit_table(verdicts: Sequence[AuditVerdict], relative_to: PathLike | None = None) -> Any:
    """One row per audited file, every cell formatted as text.

    Parameters
    ----------
    verdicts : sequence of AuditVerdict
        From :func:`audit_paths` or :func:`~viscometry.commands.audit.audit_file`.
    relative_to : path-like, optional
        Show file names relative to this folder (e.g. the examples folder), so the table
        does not depend on where the files lie.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`AUDIT_COLUMNS`: the file; the verdict (``match``, ``differs``,
        ``unrecorded``, ``error``); the recorded result as rounded for comparison
        (``"value ± U"`` in the measurand unit, ``"—"`` when there is no record); the
        recomputed result (measurand, value ± U and unit as in the result statement); the
        fingerprint check (:func:`fingerprint_status`); and the first message (what
        differs, or why the file could not be evaluated).

    Notes
    -----
    The comparison itself is :func:`viscometry.commands.audit.audit_file` (rounding per
    JCGM 100:2008, 7.2.6 with the file's rounding rule).
    """
    import pandas as pd

    rows = []
    for v in verdicts:
        rounded = v.recorded.get("rounded")
        recorded = f"{rounded['value']} ± {rounded['expanded_uncertainty']}" if rounded else "—"
        statement = v.recomputed.get("statement")
        recomputed = _short_statement(statement) if statement else "—"
        if v.status == "match":
            detail = "recorded result confirmed"
        elif v.status == "unrecorded":
            detail = "no [recorded] table: nothing to compare with"
        else:
            detail = "; ".join(v.messages)
        rows.append(
            {
                "file": _label(v.path, relative_to),
                "verdict": v.status,
                "recorded": recorded,
                "recomputed": recomputed,
                "fingerprint": fingerprint_status(v),
                "detail": detail,
            }
        )
    return pd.DataFrame(rows, columns=list(AUDIT_COLUMNS))
