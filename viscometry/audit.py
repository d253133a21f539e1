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
nothing to confirm) and ``error`` (the file cannot be read or evaluated). The ``viscometry
audit`` command and workbook 06 are thin layers over this module.

A file named explicitly is always audited. A folder is searched (:func:`scan_paths`) for files
whose name ends in ``.toml`` (any case), and **every file left out is listed** with its
reason (:class:`Skipped`, kinds :data:`SKIP_KINDS`); nothing is left out silently:

* ``other``: a TOML file of another kind — a step-up chain file (its ``format``), a list of
  upgrade candidates (only ``title``, ``currency`` and ``[[candidate]]``), a Python project
  file (only ``[build-system]``, ``[project]``, ``[tool]``), a file whose ``format`` names
  something that is not ``viscometry-…``, or a file without ``format`` none of whose keys
  belongs to a budget (``title`` alone counts as no budget key);
* ``hidden``: a hidden folder (not searched) or a hidden file ending in ``.toml``;
* ``link``: a symbolic link to a folder, which is never followed (so a loop cannot make the
  search endless), or a link that leads nowhere;
* ``name``: a name with ``.toml`` inside but another ending (``budget.toml~``, ``.bak``);
* ``damaged``: only with ``skip_damaged=True``, see below.

A *damaged* file is one found in a folder that cannot be read as a TOML document of a known
kind: not a regular file (a FIFO, a device, a link to one; refused before it is opened), not
readable, over the size limit, not UTF-8, not valid TOML, empty or only comments, without
``format`` but with a budget's tables (a budget that lost its format line), or with a
``format`` that is not text or an unknown ``viscometry-…`` name. It is audited — an
``error`` (exit code 2) — unless ``skip_damaged`` lists it as skipped. A file whose ``format``
names a budget format (also another version such as ``viscometry-budget/2``) is always
audited. At most :data:`MAX_SCAN_ENTRIES` folder entries are looked at below one folder.

Files are evaluated on every core (:func:`run_audit`'s ``jobs``, through
:func:`viscometry.parallel.map_files`): the folder search and the order of the verdicts are
the same for any number of processes, a short audit starts no worker process, and a file
whose evaluation fails unexpectedly or kills its worker is an ``error`` verdict of its own.
"""

from __future__ import annotations

import math
import os
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.gum.rounding import round_result
from viscometry.io.chain import CHAIN_FORMAT
from viscometry.io.reader import BudgetFile, load_budget, parse_toml, read_text_file
from viscometry.io.schema import FORMAT, TOP_KEYS
from viscometry.text import one_line, statement

if TYPE_CHECKING:
    from viscometry.parallel import Workers

__all__ = [
    "AUDIT_COLUMNS",
    "MAX_SCAN_ENTRIES",
    "SKIP_KINDS",
    "VERDICTS",
    "AuditRun",
    "AuditVerdict",
    "FolderScan",
    "Skipped",
    "audit_file",
    "audit_paths",
    "audit_table",
    "classify_toml",
    "collect_files",
    "exit_code",
    "fingerprint_status",
    "run_audit",
    "scan_paths",
    "warm_up",
]

#: The verdicts, in order of severity, with the exit code of ``viscometry audit``.
VERDICTS = {"match": 0, "unrecorded": 0, "differs": 1, "error": 2}
#: Columns of :func:`audit_table`, in order.
AUDIT_COLUMNS = ("file", "verdict", "recorded", "recomputed", "fingerprint", "detail")
#: Why a file or folder found in a searched folder was not audited (:attr:`Skipped.kind`).
SKIP_KINDS = {
    "other": "a TOML file of another kind",
    "hidden": "hidden, not searched",
    "link": "a symbolic link to a folder (never followed) or to nothing",
    "name": "the name does not end in .toml",
    "damaged": "damaged or of unknown kind, skipped on request",
}
#: Most folder entries looked at below one folder given to :func:`scan_paths` (a bound on
#: the time and memory of a search; a larger tree is an error, not a partial audit).
MAX_SCAN_ENTRIES = 100_000

#: Top-level keys of a list of upgrade candidates (:mod:`viscometry.io.candidates`).
_CANDIDATE_KEYS = frozenset({"title", "currency", "candidate"})
#: Top-level tables of a Python project file (PEP 518, PEP 621, PEP 735).
_PROJECT_KEYS = frozenset({"build-system", "project", "tool", "dependency-groups"})
#: Top-level keys only a budget file has (``title`` is common to many kinds of file).
_BUDGET_KEYS = frozenset(TOP_KEYS) - {"format", "title"}
_DAMAGED_NOTE = (
    "found in a folder and counted as a damaged budget file{reason} "
    "(skip damaged files to list it as skipped instead)"
)

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


@dataclass(frozen=True)
class Skipped:
    """A file or folder found while searching a folder and not audited, with the reason.

    Attributes
    ----------
    path : str
        As found (below the folder given).
    kind : str
        One of :data:`SKIP_KINDS`.
    reason : str
        In words, e.g. ``"not a budget file (a list of upgrade candidates)"``.
    """

    path: str
    kind: str
    reason: str

    def to_dict(self) -> dict[str, str]:
        return {"path": self.path, "kind": self.kind, "reason": self.reason}


@dataclass(frozen=True)
class FolderScan:
    """What :func:`scan_paths` found (immutable).

    Attributes
    ----------
    files : tuple of Path
        The files to audit: those named explicitly, then each folder's, sorted.
    skipped : tuple of Skipped
        Everything found and left out, sorted per folder.
    errors : tuple of AuditVerdict
        An ``error`` verdict for each folder without budget files, that cannot be listed, or
        with more than :data:`MAX_SCAN_ENTRIES` entries.
    damaged : tuple of (Path, str)
        The files among ``files`` that a folder search found damaged (audited as errors),
        each with the reason.
    """

    files: tuple[Path, ...]
    skipped: tuple[Skipped, ...] = ()
    errors: tuple[AuditVerdict, ...] = ()
    damaged: tuple[tuple[Path, str], ...] = ()


def _show(value: Any) -> str:
    """A value from a file, quoted and cut to a readable length."""
    return one_line(repr(value), 60)


def _by_format(fmt: str) -> tuple[str, str]:
    if fmt.startswith("viscometry-budget"):
        return "budget", ""
    if fmt.startswith(CHAIN_FORMAT.split("/")[0] + "/"):
        return "other", f"not a budget file (a step-up chain file, format = {_show(fmt)})"
    if fmt.startswith("viscometry-series/"):
        return "other", f"not a budget file (a dilution series file, format = {_show(fmt)})"
    if fmt.startswith("viscometry"):
        return "damaged", (
            f"format = {_show(fmt)} names no kind of viscometry file; a budget file has {FORMAT!r}"
        )
    return "other", f"not a budget file (format = {_show(fmt)})"


def classify_toml(path: PathLike) -> tuple[str, str]:
    """How a folder search treats a ``*.toml`` file: ``("budget", "")``, ``("other", reason)``
    (skipped) or ``("damaged", reason)`` (an error unless damaged files are skipped).

    The file is read with the budget reader's bounds (regular files only, at most 1 MB;
    nothing is run). The rules are listed in the module docstring.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = pathlib.Path(d) / "x.toml"
    ...     for text in ("", 'format = "viscometry-chain/1"', '[project]\\nname = "x"'):
    ...         _ = p.write_text(text)
    ...         print(classify_toml(p))
    ('damaged', 'empty (nothing but comments or blank lines)')
    ('other', "not a budget file (a step-up chain file, format = 'viscometry-chain/1')")
    ('other', 'not a budget file (a Python project file)')
    """
    label = str(path)
    try:
        text = read_text_file(path, "a budget file")
        if text.startswith("\ufeff"):
            return (
                "damaged",
                "starts with a byte-order mark (BOM); save the file as UTF-8 without it",
            )
        doc = parse_toml(text, label)
    except BudgetFileError as exc:
        return "damaged", one_line(str(exc)).removeprefix(f"{one_line(label)}: ")
    fmt = doc.get("format")
    if isinstance(fmt, str):
        return _by_format(fmt)
    if fmt is not None:
        return "damaged", f"format = {_show(fmt)} is not text; a budget file has {FORMAT!r}"
    keys = set(doc)
    if not keys:
        return "damaged", "empty (nothing but comments or blank lines)"
    if keys & _BUDGET_KEYS:
        tables = ", ".join(f"[{k}]" for k in sorted(keys & _BUDGET_KEYS))
        return "damaged", f"no format key but budget tables {tables} (lost its format line?)"
    if "candidate" in keys and keys <= _CANDIDATE_KEYS:
        return "other", "not a budget file (a list of upgrade candidates)"
    if keys <= _PROJECT_KEYS:
        return "other", "not a budget file (a Python project file)"
    shown = ", ".join(_show(k) for k in sorted(keys)[:5]) + (", …" if len(keys) > 5 else "")
    return "other", f"not a budget file (no format key and no budget table; keys {shown})"


def _real(path: Path) -> Path | None:
    try:
        return path.resolve(strict=True)
    except (OSError, RuntimeError):  # broken, or a loop of links
        return None


def _link_reason(link: Path, root: Path | None) -> str:
    """Why a symbolic link to a folder is not followed, and where it leads."""
    target, above = _real(link), _real(link.parent)
    if target is None:
        return "symbolic link that leads nowhere (broken, or a loop), not followed"
    if above is not None and (target == above or target in above.parents):
        return f"symbolic link loop: leads back to the folder {target} above it, not followed"
    if root is not None and (target == root or root in target.parents):
        return f"symbolic link to the folder {target} inside the search, not followed"
    return f"symbolic link to the folder {target} outside the search, not followed (name it to audit it)"


def _look(entry: os.DirEntry[str], folder: Path, root: Path | None) -> tuple[str, Any]:
    """What to do with one folder entry: ``("search", Path)``, ``("file", Path)``,
    ``("skip", Skipped)`` or ``("ignore", None)`` (not a TOML file at all)."""
    path, name = folder / entry.name, entry.name
    tomlish = name.lower().endswith(".toml")
    try:
        link = entry.is_symlink()
    except OSError:
        link = False
    try:
        is_dir = entry.is_dir()  # follows a link
    except OSError:  # a loop of links
        is_dir = False
    if link and is_dir:
        return "skip", Skipped(str(path), "link", _link_reason(path, root))
    if name.startswith("."):  # hidden; temporary files of the atomic writer are ignored
        if is_dir:
            return "skip", Skipped(
                str(path), "hidden", "hidden folder, not searched (name it to audit it)"
            )
        if tomlish:
            return "skip", Skipped(
                str(path), "hidden", "hidden file, not audited (name it to audit it)"
            )
        return "ignore", None
    if is_dir:
        return "search", path
    if tomlish:
        return "file", path  # also a FIFO, a device or a broken link: audited as an error
    if link and not os.path.exists(path):
        return "skip", Skipped(
            str(path), "link", "symbolic link that leads nowhere (broken, or a loop)"
        )
    if ".toml" in name.lower():
        return "skip", Skipped(str(path), "name", "name does not end in .toml (a backup copy?)")
    return "ignore", None


def _entries(folder: Path, budget: int) -> list[os.DirEntry[str]] | None:
    """The entries of a folder sorted by name, or None when there are more than ``budget``."""
    out = []
    with os.scandir(folder) as it:
        for entry in it:
            if len(out) >= budget:
                return None
            out.append(entry)
    return sorted(out, key=lambda e: e.name)


def _search(root: Path) -> tuple[list[Path], list[Skipped], list[AuditVerdict]]:
    """Candidate files below ``root``, what was skipped, and errors (bounded, no link followed)."""
    files: list[Path] = []
    skipped: list[Skipped] = []
    errors: list[AuditVerdict] = []
    seen: set[tuple[int, int]] = set()
    stack, left, real = [root], MAX_SCAN_ENTRIES, _real(root)
    while stack:
        folder = stack.pop()
        try:
            st = folder.stat()
            if (st.st_dev, st.st_ino) in seen:  # reached twice (a bind mount): stop here
                skipped.append(Skipped(str(folder), "link", "folder already searched, not again"))
                continue
            seen.add((st.st_dev, st.st_ino))
            entries = _entries(folder, left)
        except OSError as exc:
            errors.append(AuditVerdict(str(folder), "error", (
                f"cannot list the folder: {exc.strerror or exc}",)))  # fmt: skip
            continue
        if entries is None:
            message = (
                f"more than {MAX_SCAN_ENTRIES} entries below this folder; audit smaller folders"
            )
            return [], skipped, [AuditVerdict(str(root), "error", (message,))]
        left -= len(entries)
        for entry in reversed(entries):  # the stack pops the first name first
            what, item = _look(entry, folder, real)
            if what == "search":
                stack.append(item)
            elif what != "ignore":
                (files if what == "file" else skipped).append(item)
    return files, skipped, errors


def scan_paths(paths: Iterable[PathLike], *, skip_damaged: bool = False) -> FolderScan:
    """The files to audit below ``paths`` and every file or folder left out, with the reason.

    A file named in ``paths`` is always audited. A folder is searched for names ending in
    ``.toml`` (any case) without following symbolic links to folders and without entering
    hidden folders; each file found is sorted by :func:`classify_toml`. Damaged files are
    audited (errors) unless ``skip_damaged``, which lists them as skipped instead.
    """
    files: list[Path] = []
    skipped: list[Skipped] = []
    errors: list[AuditVerdict] = []
    damaged: list[tuple[Path, str]] = []
    for p in map(Path, paths):
        if not p.is_dir():
            files.append(p)  # named explicitly: always audited
            continue
        found, skips, problems = _search(p)
        budgets = []
        for f in sorted(found):
            kind, reason = classify_toml(f)
            if kind == "budget" or (kind == "damaged" and not skip_damaged):
                budgets.append(f)
                if kind == "damaged":
                    damaged.append((f, reason))
            elif kind == "damaged":
                skips.append(Skipped(str(f), kind, f"damaged, skipped as asked: {reason}"))
            else:
                skips.append(Skipped(str(f), kind, reason))
        if not budgets and not problems:
            note = f" ({len(skips)} skipped, listed)" if skips else ""
            errors.append(AuditVerdict(str(p), "error", (
                f"no budget files (*.toml) in this folder{note}",)))  # fmt: skip
        errors += problems
        files += budgets
        skipped += sorted(skips, key=lambda s: Path(s.path))
    return FolderScan(tuple(files), tuple(skipped), tuple(errors), tuple(damaged))


def collect_files(paths: Iterable[PathLike]) -> tuple[list[Path], list[AuditVerdict]]:
    """Files named directly, plus the budget files under each folder (sorted), and an
    ``error`` verdict for each folder without budget files (see :func:`scan_paths`, which
    also lists what was skipped)."""
    scan = scan_paths(paths)
    return list(scan.files), list(scan.errors)


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


def audit_paths(
    paths: Iterable[PathLike], *, skip_damaged: bool = False, jobs: int | None = None
) -> tuple[AuditVerdict, ...]:
    """Audit budget files and folders (searched recursively), in sorted order per folder.

    The verdicts of :func:`run_audit` (``jobs`` as there), which also lists the files a
    folder search skipped.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     _ = (pathlib.Path(d) / "other.toml").write_text('currency = "EUR"\\n')
    ...     [v.status for v in audit_paths([d])]
    ['error']
    """
    return run_audit(paths, skip_damaged=skip_damaged, jobs=jobs).verdicts


@dataclass(frozen=True)
class AuditRun:
    """An audit of files and folders (:func:`run_audit`): a verdict per audited file, and
    every file or folder a folder search left out (immutable)."""

    verdicts: tuple[AuditVerdict, ...]
    skipped: tuple[Skipped, ...] = ()

    def exit_code(self, *, strict: bool = False) -> int:
        """As :func:`exit_code` (skipped files do not change it)."""
        return exit_code(self.verdicts, strict=strict)

    def counts(self) -> dict[str, int]:
        """How many files had each verdict (:data:`VERDICTS`), and ``"skipped"``."""
        counts = {s: sum(v.status == s for v in self.verdicts) for s in VERDICTS}
        return {**counts, "skipped": len(self.skipped)}


def run_audit(
    paths: Iterable[PathLike],
    *,
    skip_damaged: bool = False,
    jobs: int | None = None,
    progress: Callable[[int, int], None] | None = None,
    workers: Workers | None = None,
) -> AuditRun:
    """Audit budget files and folders; list what a folder search left out and why.

    Folders are searched as :func:`scan_paths` does; a damaged file found in a folder is an
    ``error`` verdict (with a note saying so) unless ``skip_damaged``.

    Parameters
    ----------
    paths : iterable of path-like
        Budget files (always audited) and folders (searched).
    skip_damaged : bool
        List damaged files found in a folder as skipped instead of auditing them.
    jobs : int, optional
        Processes that evaluate files at the same time, this one included (default: every
        available core; 1: all in this process). The verdicts and their order do not depend
        on it. A short audit stays in this process whatever ``jobs`` says; see
        :func:`viscometry.parallel.map_files`, also for the ``if __name__ == "__main__":``
        guard a script needs to use more than one.
    progress : callable, optional
        ``progress(done, total)`` as files are evaluated
        (e.g. :class:`viscometry.parallel.TerminalProgress`).
    workers : viscometry.parallel.Workers, optional
        Worker processes started ahead (the command line starts them, with
        :func:`warm_up`, before it imports this module when a folder holds many files).

    Returns
    -------
    AuditRun

    Raises
    ------
    InputError
        ``jobs`` below 1 or not a whole number.

    Notes
    -----
    A file whose evaluation fails unexpectedly (an exception that is not a
    :class:`~viscometry.errors.ViscometryError`, ``MemoryError`` included) or whose worker
    process dies is an ``error`` verdict with the reason; the other files are audited as
    usual.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     _ = (pathlib.Path(d) / "emptied.toml").write_text("")
    ...     run = run_audit([d], skip_damaged=True)
    ...     [v.status for v in run.verdicts], [s.kind for s in run.skipped], run.exit_code()
    (['error'], ['damaged'], 2)
    """
    from viscometry.parallel import check_jobs, map_files

    jobs = check_jobs(jobs)
    scan = scan_paths(paths, skip_damaged=skip_damaged)
    damaged = dict(scan.damaged)
    evaluated = map_files(
        audit_file, scan.files, jobs, on_error=_failed, progress=progress, workers=workers
    )
    verdicts = []
    for f, v in zip(scan.files, evaluated, strict=True):
        if f in damaged and v.status == "error":
            said = any(damaged[f] in m for m in v.messages)
            note = _DAMAGED_NOTE.format(reason="" if said else f": {damaged[f]}")
            v = replace(v, messages=(*v.messages, note))
        verdicts.append(v)
    return AuditRun(scan.errors + tuple(verdicts), scan.skipped)


#: A small budget whose evaluation loads what auditing a file needs (invented numbers).
_WARM_UP = """
format = "viscometry-budget/1"
[measurand]
name = "y"
unit = "mm"
model = "a * b / c + d"
[inputs.a]
value = 2.0
unit = "mm"
standard_uncertainty = 0.01
[inputs.b]
value = 3.0
unit = "1"
distribution = "rectangular"
half_width = 0.02
[inputs.c]
unit = "1"
readings = [4.0, 4.1, 3.9]
[inputs.d]
value = 0.5
unit = "mm"
expanded_uncertainty = 0.01
coverage_factor = 2
[recorded]
value = 2.0
expanded_uncertainty = 0.1
"""


def warm_up() -> None:
    """Load and run what auditing a file needs, on a small budget held in memory (a worker
    process started ahead runs it while the files are being found).

    Examples
    --------
    >>> warm_up()
    """
    from viscometry.io.reader import loads_budget

    bf = loads_budget(_WARM_UP, "<warm-up>")
    result = bf.budget.evaluate()
    _compare(bf, result)
    statement(result)


def _failed(path: PathLike, reason: str) -> AuditVerdict:
    """The verdict on a file whose evaluation failed unexpectedly or whose worker died."""
    return AuditVerdict(str(path), "error", (one_line(reason),))


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
        try:  # the folder resolved, the name kept: a link is shown as itself, not its target
            full = p.resolve() if p.name in ("", "..") else p.parent.resolve() / p.name
            return full.relative_to(Path(relative_to).resolve()).as_posix()
        except (ValueError, OSError, RuntimeError):
            pass
    return p.as_posix()


def audit_table(
    verdicts: Sequence[AuditVerdict],
    relative_to: PathLike | None = None,
    skipped: Sequence[Skipped] = (),
) -> Any:
    """One row per audited file, every cell text (columns :data:`AUDIT_COLUMNS`).

    ``relative_to`` shows file names relative to a folder, so the table does not depend on
    where the files lie. The recorded result is shown as rounded for comparison
    (``"value ± U"``), the recomputed one as in the result statement. Each of ``skipped``
    (:attr:`AuditRun.skipped`) adds a row with the verdict ``"skipped"`` and its reason.
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
    for s in skipped:
        rows.append({"file": _label(s.path, relative_to), "verdict": "skipped", "recorded": "—",
                     "recomputed": "—", "fingerprint": "—", "detail": s.reason})  # fmt: skip
    return pd.DataFrame(rows, columns=list(AUDIT_COLUMNS))
