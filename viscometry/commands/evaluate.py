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
        "version; keys in docs/json.md) instead of the table",
    )
    parser.add_argument(
        "--higher-order",
        action="store_true",
        help="add the second-order terms of the law of propagation (JCGM 100:2008 eq. 10; "
        "uncorrelated inputs only)",
    )


def run(args: argparse.Namespace) -> int:
    """Evaluate the file; print the table or JSON on standard output. Returns 0."""
    from viscometry.commands._common import evaluate_file, print_json, provenance_lines
    from viscometry.io.json_out import result_to_dict
    from viscometry.text import budget_text

    bf, result = evaluate_file(args.file, higher_order=args.higher_order)
    if args.json:
        print_json(result_to_dict(result), source=bf.source)
    else:
        print(budget_text(result))
        print("\n".join(provenance_lines(bf)))
    return 0
