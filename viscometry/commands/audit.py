"""``viscometry audit PATH...``: recompute budget files and compare with their records.

Each budget file is evaluated again and its result compared with the file's ``[recorded]``
table *after the same rounding as the result statement*: both the recorded and the
recomputed value and expanded uncertainty go through
:func:`viscometry.gum.round_result` (JCGM 100:2008, 7.2.6, with the file's rounding rule)
and the strings must agree. A recorded coverage factor is compared to two decimals (as
printed), a recorded coverage probability exactly. A recorded fingerprint must equal the
fingerprint of the file's present model, constants, inputs and settings; if it does not,
the inputs changed after the result was recorded.

Verdicts: ``match``, ``differs``, ``unrecorded`` (no ``[recorded]`` table: nothing to
confirm; a difference only with ``--strict``) and ``error`` (the file cannot be read or
evaluated). Exit code: 0 all match, 1 any differs, 2 any error. When a folder is scanned,
TOML files that are not budget files (no ``format = "viscometry-budget/1"``, e.g. lists of
upgrade candidates) are skipped; a file named explicitly is always audited.
"""

from __future__ import annotations

import argparse
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

NAME = "audit"
HELP = "recompute budget files and compare with their [recorded] results (exit 0 match, 1 differ, 2 error)"

STATUS_EXIT = {"match": 0, "differs": 1, "unrecorded": 0, "error": 2}


@dataclass(frozen=True)
class AuditVerdict:
    """Outcome of auditing one file (``status`` is match, differs, unrecorded or error)."""

    path: str
    status: str
    messages: tuple[str, ...] = ()
    recorded: dict[str, Any] = field(default_factory=dict)
    recomputed: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {
            "path": self.path,
            "status": self.status,
            "messages": list(self.messages),
            "recorded": self.recorded,
            "recomputed": self.recomputed,
        }


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry audit``."""
    parser.add_argument(
        "paths",
        metavar="PATH",
        nargs="+",
        help="budget file, or folder searched recursively for *.toml files",
    )
    parser.add_argument(
        "--json",
        action="store_true",
        help="print one JSON object with a verdict per file instead of text lines",
    )
    parser.add_argument(
        "--strict",
        action="store_true",
        help="count a file without a [recorded] table as a difference (exit 1)",
    )


def collect_files(paths: list[str]) -> list[Path]:
    """Files named directly, plus every budget file ``*.toml`` under each folder (sorted)."""
    from viscometry.io.budget_file import is_budget_file

    out: list[Path] = []
    for p in map(Path, paths):
        if p.is_dir():
            out.extend(f for f in sorted(p.rglob("*.toml")) if is_budget_file(f))
        else:
            out.append(p)
    return out


def audit_file(path: str | Path) -> AuditVerdict:
    """Recompute one budget file and compare it with its ``[recorded]`` table.

    Parameters
    ----------
    path : path-like
        The budget file.

    Returns
    -------
    AuditVerdict
    """
    from viscometry.errors import ViscometryError
    from viscometry.gum.rounding import round_result

    label = str(path)
    try:
        bf = _load_quietly(path)
        rec = bf.recorded
        higher = rec is not None and rec.method == "higher-order"
        result = bf.evaluate(higher_order=higher)
    except ViscometryError as exc:
        message = " ".join(str(exc).split())
        if message.startswith(f"{label}: "):
            message = message[len(label) + 2 :]
        return AuditVerdict(label, "error", (message,))
    recomputed: dict[str, Any] = {
        "value": result.value,
        "expanded_uncertainty": result.expanded_uncertainty,
        "coverage_factor": result.coverage_factor,
        "method": result.method,
        "statement": result.statement(),
        "fingerprint": bf.fingerprint,
    }
    if rec is None:
        return AuditVerdict(
            label, "unrecorded", ("no [recorded] table: nothing to compare with",),
            recomputed=recomputed,
        )  # fmt: skip
    recorded = {
        k: v for k, v in {
            "value": rec.value, "expanded_uncertainty": rec.expanded_uncertainty,
            "coverage_factor": rec.coverage_factor,
            "coverage_probability": rec.coverage_probability, "fingerprint": rec.fingerprint,
        }.items() if v is not None
    }  # fmt: skip
    problems: list[str] = []
    notes: list[str] = []
    rounding = bf.rounding
    try:
        new = round_result(result.value, result.expanded_uncertainty, rounding=rounding)  # type: ignore[arg-type]
        old = round_result(rec.value, rec.expanded_uncertainty, rounding=rounding)  # type: ignore[arg-type]
        new_pair, old_pair = (new.value, new.uncertainty), (old.value, old.uncertainty)
    except ViscometryError:  # U = 0 on either side: compare the plain numbers
        new_pair = (repr(result.value), repr(result.expanded_uncertainty))
        old_pair = (repr(rec.value), repr(rec.expanded_uncertainty))
    recomputed["rounded"] = {"value": new_pair[0], "expanded_uncertainty": new_pair[1]}
    recorded["rounded"] = {"value": old_pair[0], "expanded_uncertainty": old_pair[1]}
    if new_pair[0] != old_pair[0]:
        problems.append(f"value recorded {old_pair[0]}, recomputed {new_pair[0]}")
    if new_pair[1] != old_pair[1]:
        problems.append(f"expanded uncertainty recorded {old_pair[1]}, recomputed {new_pair[1]}")
    if (
        rec.coverage_factor is not None
        and f"{rec.coverage_factor:.2f}" != f"{result.coverage_factor:.2f}"
    ):
        problems.append(
            f"coverage factor recorded {rec.coverage_factor:.2f}, recomputed {result.coverage_factor:.2f}"
        )
    if rec.coverage_probability is not None and not math.isclose(
        rec.coverage_probability, result.coverage_probability, rel_tol=0, abs_tol=1e-12
    ):
        problems.append(
            f"coverage probability recorded {rec.coverage_probability!r}, "
            f"budget uses {result.coverage_probability!r}"
        )
    if rec.fingerprint is not None and rec.fingerprint != bf.fingerprint:
        problems.append(
            f"fingerprint recorded {rec.fingerprint} no longer matches the inputs "
            f"({bf.fingerprint}): the file changed after the result was recorded"
        )
    if rec.fingerprint is None:
        notes.append("no fingerprint recorded")
    from viscometry import __version__

    if rec.version is not None and rec.version != __version__:
        notes.append(f"recorded with viscometry {rec.version}, recomputed with {__version__}")
    status = "differs" if problems else "match"
    if not problems:
        problems.append(f"{result.statement()}")
    return AuditVerdict(label, status, tuple(problems + notes), recorded, recomputed)


def _load_quietly(path: str | Path) -> Any:
    """Load a budget file; its warnings are not the audit's business (they stay in results)."""
    import warnings

    from viscometry.errors import ViscometryWarning
    from viscometry.io.budget_file import load_budget

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ViscometryWarning)
        return load_budget(path)


def run(args: argparse.Namespace) -> int:
    """Audit every file; print a verdict line per file (or JSON). Returns 0, 1 or 2."""
    from viscometry import __version__
    from viscometry.io.json_out import dumps

    files = collect_files(args.paths)
    verdicts: list[AuditVerdict] = []
    for p in args.paths:
        if Path(p).is_dir() and not any(f.is_relative_to(Path(p)) for f in files):
            verdicts.append(
                AuditVerdict(str(p), "error", ("no budget files (*.toml) in this folder",))
            )
    verdicts += [audit_file(f) for f in files]
    exits = dict(STATUS_EXIT, unrecorded=1) if args.strict else STATUS_EXIT
    code = max((exits[v.status] for v in verdicts), default=2)
    if args.json:
        print(
            dumps(
                {
                    "verdicts": [v.to_dict() for v in verdicts],
                    "exit_code": code,
                    "version": __version__,
                }
            )
        )
        return code
    width = max(len(v.status) for v in verdicts) if verdicts else 0
    for v in verdicts:
        print(f"{v.status.upper():<{width}}  {v.path}: {'; '.join(v.messages)}")
    counts = {s: sum(v.status == s for v in verdicts) for s in STATUS_EXIT}
    print(f"{len(verdicts)} file(s): " + ", ".join(f"{n} {s}" for s, n in counts.items() if n))
    return code
