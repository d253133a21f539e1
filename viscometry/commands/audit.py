"""``viscometry audit PATH...``: recompute budget files and compare with their records.

A thin layer over :mod:`viscometry.audit` (the comparison rules are documented there).
Exit code: 0 all match, 1 any differs (or, with ``--strict``, a file has no record), 2 any
error. When a folder is scanned, TOML files of another kind (lists of upgrade candidates)
are skipped; a file named explicitly is always audited.
"""

from __future__ import annotations

import argparse

NAME = "audit"
HELP = "recompute budget files and compare with their [recorded] results (exit 0 match, 1 differ, 2 error)"


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


def run(args: argparse.Namespace) -> int:
    """Audit every file; print a verdict line per file (or JSON). Returns 0, 1 or 2."""
    from viscometry import __version__
    from viscometry.audit import VERDICTS, audit_paths, exit_code
    from viscometry.commands._common import print_json
    from viscometry.io.json_out import schema
    from viscometry.text import one_line

    verdicts = audit_paths(args.paths)
    code = exit_code(verdicts, strict=args.strict)
    if args.json:
        print_json({"schema": schema("audit"), "verdicts": [v.to_dict() for v in verdicts],
                    "exit_code": code, "version": __version__})  # fmt: skip
        return code
    width = max((len(v.status) for v in verdicts), default=0)
    for v in verdicts:
        print(f"{v.status.upper():<{width}}  {one_line(v.path)}: {one_line('; '.join(v.messages))}")
    counts = {s: sum(v.status == s for v in verdicts) for s in VERDICTS}
    print(f"{len(verdicts)} file(s): " + ", ".join(f"{n} {s}" for s, n in counts.items() if n))
    return code
