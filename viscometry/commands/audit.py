"""``viscometry audit PATH...``: recompute budget files and compare with their records.

A thin layer over :mod:`viscometry.audit` (the comparison rules are documented there).
Exit code: 0 all match, 1 any differs (or, with ``--strict``, a file has no record), 2 any
error. A file named explicitly is always audited. When a folder is searched, every file or
folder left out is listed on a ``SKIP`` line with the reason (another kind of TOML file, a
hidden folder, a symbolic link to a folder, a backup name); skipped files do not change the
exit code. A damaged file found in a folder (empty, not TOML, no format line, not a regular
file, ...) is an error unless ``--skip-damaged`` lists it as skipped.

Files are evaluated by ``--jobs`` processes (default: every core this process may use); the
output does not depend on the number. A long audit shows ``auditing N/M files`` on standard
error while it runs when standard error is a terminal (never with ``--json``, never when
piped); the line is cleared at the end (:class:`viscometry.parallel.TerminalProgress`).
"""

from __future__ import annotations

import argparse
from typing import Any

NAME = "audit"
HELP = "recompute budget files and compare with their [recorded] results (exit 0 match, 1 differ, 2 error)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry audit``."""
    from viscometry.commands.simulate import whole_number

    parser.add_argument(
        "paths",
        metavar="PATH",
        nargs="+",
        help="budget file (always audited), or folder searched recursively for *.toml files; "
        "every file or folder left out is listed on a SKIP line with the reason (another kind "
        "of TOML file such as a candidates or chain file, a hidden folder, a symbolic link to a "
        "folder, which is never followed, a backup name such as *.toml~); skipped files do not "
        "change the exit code",
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
    parser.add_argument(
        "--skip-damaged",
        action="store_true",
        help="list a damaged file found in a folder (empty, only comments, not UTF-8 or not "
        "TOML, no format line, not a regular file, unreadable) as skipped instead of counting "
        "it as an error (exit 2); a file whose format line names a budget is always audited",
    )
    parser.add_argument(
        "--jobs",
        type=whole_number,
        default=None,
        metavar="N",
        help="processes that evaluate files at the same time, this one included (default: "
        "every core this process may use, at most 61; 1: no worker processes); a short audit "
        "starts none; the output is the same for any N; on a terminal a long audit shows "
        "'auditing N/M files' on standard error while it runs",
    )


def run(args: argparse.Namespace) -> int:
    """Audit every file; print a verdict line per file (or JSON). Returns 0, 1 or 2."""
    import sys

    from viscometry.parallel import TerminalProgress, Workers, check_jobs

    jobs = check_jobs(args.jobs, "--jobs")
    # Worker processes start now, in the background, when the folders hold many files, and
    # load the engine while this process does the same and searches the folders.
    ahead = jobs if _many_files(args.paths, EARLY_FILES) else 1
    with Workers(ahead, warm_up="audit") as ready:
        from viscometry.audit import run_audit

        with TerminalProgress("auditing", "files", sys.stderr) as bar:  # on a terminal only
            progress = bar if bar.enabled and not args.json else None
            audit = run_audit(args.paths, skip_damaged=args.skip_damaged, jobs=jobs,
                              progress=progress, workers=ready)  # fmt: skip
    return _show(args, audit)


#: Files (named, or with names ending in .toml below the folders) from which worker processes
#: are started before the engine is loaded and the folders searched (a short look, at most
#: 20 × EARLY_FILES folder entries).
EARLY_FILES = 200


def _many_files(paths: list[str], limit: int) -> bool:
    """Whether ``paths`` name or hold at least ``limit`` files (in folders: names ending in
    .toml, hidden folders and links to folders left out; a bounded look, not the search)."""
    import os

    stack = [p for p in paths if os.path.isdir(p)]
    found, looked = len(paths) - len(stack), 0
    if found >= limit:
        return True
    while stack and looked < 20 * limit:
        try:
            with os.scandir(stack.pop()) as entries:
                for entry in entries:
                    looked += 1
                    if entry.name.startswith("."):
                        continue
                    if entry.is_dir(follow_symlinks=False):
                        stack.append(entry.path)
                    elif entry.name.lower().endswith(".toml"):
                        found += 1
                        if found >= limit:
                            return True
        except OSError:
            continue
    return False


def _show(args: argparse.Namespace, audit: Any) -> int:
    """Print the audit (text lines or JSON); returns the exit code."""
    from viscometry import __version__
    from viscometry.commands._common import print_json
    from viscometry.io.json_out import schema
    from viscometry.text import one_line

    verdicts, skipped = audit.verdicts, audit.skipped
    code = audit.exit_code(strict=args.strict)
    if args.json:
        print_json({"schema": schema("audit"), "verdicts": [v.to_dict() for v in verdicts],
                    "skipped": [s.to_dict() for s in skipped],
                    "exit_code": code, "version": __version__})  # fmt: skip
        return code
    width = max((len(v.status) for v in verdicts), default=0)
    for v in verdicts:
        print(f"{v.status.upper():<{width}}  {one_line(v.path)}: {one_line('; '.join(v.messages))}")
    for s in skipped:
        print(f"{'SKIP':<{width}}  {one_line(s.path)}: {one_line(s.reason)}")
    counts = audit.counts()
    skips = counts.pop("skipped")
    line = f"{len(verdicts)} file(s): " + ", ".join(f"{n} {s}" for s, n in counts.items() if n)
    print(line + (f"; {skips} skipped (listed above, not audited)" if skips else ""))
    return code
