"""``viscometry evaluate FILE``: the budget table and result statement of a budget file."""

from __future__ import annotations

import argparse

NAME = "evaluate"
HELP = "evaluate a budget file: print its budget table and result statement (or JSON)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry evaluate``."""
    parser.add_argument(
        "file", metavar="FILE", help="budget file (TOML, format viscometry-budget/1)"
    )
    parser.add_argument(
        "--json",
        action="store_true",
        help="print one JSON object (value, uncertainties, inputs, warnings, fingerprint, "
        "version) instead of the table",
    )
    parser.add_argument(
        "--higher-order",
        action="store_true",
        help="add the second-order terms of the law of propagation (JCGM 100:2008 eq. 10; "
        "uncorrelated inputs only)",
    )


def run(args: argparse.Namespace) -> int:
    """Evaluate the file; print the table or JSON on standard output. Returns 0."""
    from viscometry import __version__
    from viscometry.errors import BudgetFileError, ViscometryError
    from viscometry.io.budget_file import load_budget
    from viscometry.io.json_out import dumps, result_to_dict

    bf = load_budget(args.file)
    try:
        result = bf.evaluate(higher_order=args.higher_order)
    except BudgetFileError:
        raise
    except ViscometryError as exc:
        raise BudgetFileError(f"{bf.source}: {exc}") from exc
    if args.json:
        print(dumps(result_to_dict(result, fingerprint=bf.fingerprint)))
    else:
        print(result.to_text())
        print(f"source: {bf.source}")
        print(f"fingerprint: {bf.fingerprint}")
        print(f"version: viscometry {__version__}")
    return 0
