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
        "existing file is replaced only after the report is complete",
    )
    parser.add_argument(
        "--higher-order",
        action="store_true",
        help="add the second-order terms of the law of propagation (JCGM 100:2008 eq. 10; "
        "uncorrelated inputs only)",
    )
    parser.add_argument(
        "--no-figures",
        action="store_true",
        help="leave the Pareto chart out of an HTML report",
    )


def run(args: argparse.Namespace) -> int:
    """Load and evaluate the budget file, then write the report. Returns 0.

    Nothing is written when the extension is unknown or loading or evaluation fails.
    """
    from viscometry.errors import BudgetFileError, ViscometryError
    from viscometry.io.budget_file import load_budget
    from viscometry.report import format_for_path, write_report

    kind = format_for_path(args.output)  # refuse an unknown extension before any work
    bf = load_budget(args.file)
    try:
        result = bf.evaluate(higher_order=args.higher_order)
    except BudgetFileError:
        raise
    except ViscometryError as exc:
        raise BudgetFileError(f"{bf.source}: {exc}") from exc
    path = write_report(
        result, args.output, fingerprint=bf.fingerprint, figures=not args.no_figures
    )
    print(f"wrote {path} ({kind} report of {bf.source})")
    return 0
