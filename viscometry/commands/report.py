"""``viscometry report FILE -o OUT``: write a report of a budget file (format from OUT's extension)."""

from __future__ import annotations

import argparse

NAME = "report"
HELP = (
    "write a report of a budget file; the format follows the extension of OUT "
    "(.html, .md, .tex, .csv, .json)"
)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry report``."""
    parser.add_argument(
        "file", metavar="FILE", help="budget file (TOML, format viscometry-budget/1)"
    )
    parser.add_argument(
        "-o",
        "--output",
        metavar="OUT",
        required=True,
        help="report file to write: .html (self-contained, with chart), .md, .tex (tabular "
        "fragment), .csv (budget table) or .json (as 'viscometry evaluate --json'); an "
        "existing file is replaced only after the report is complete, never the budget file "
        "or a write-protected file; a symbolic link is followed to its file",
    )
    parser.add_argument(
        "--higher-order",
        action="store_true",
        help="add the second-order terms of the law of propagation (JCGM 100:2008 eq. 10; "
        "uncorrelated inputs only)",
    )
    parser.add_argument(
        "--no-figures", action="store_true", help="leave the Pareto chart out of an HTML report"
    )


def run(args: argparse.Namespace) -> int:
    """Load and evaluate the budget file, then write the report. Returns 0.

    Nothing is written when the extension is unknown, the output is the budget file itself
    (also through a symbolic or hard link), write-protected or not a file, or loading or
    evaluation fails. An output that is a symbolic link to a file is followed: the file it
    leads to is replaced, the link is kept.
    """
    import contextlib

    from viscometry.commands._common import evaluate_file
    from viscometry.io.atomic import check_output_path
    from viscometry.report import format_for_path, write_report
    from viscometry.text import one_line

    kind = format_for_path(args.output)  # refuse an unknown extension before any work
    # ... and an output that is the budget file (under any name, through any link), is
    # write-protected or is not a file; a path the system cannot use is named by the write
    protect = {args.file: "the budget file"}
    with contextlib.suppress(OSError):
        check_output_path(args.output, protect=protect, what="report path")
    bf, result = evaluate_file(args.file, higher_order=args.higher_order)
    path = write_report(result, args.output, figures=not args.no_figures, protect=protect)
    print(f"wrote {one_line(str(path))} ({kind} report of {one_line(bf.source)})")
    return 0
