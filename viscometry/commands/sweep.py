"""``viscometry sweep FILE --over NAME --from A --to B``: U across a range of one input.

Every point is the first-order budget with the input's estimate replaced (its uncertainty
unchanged), evaluated in one vectorised pass. To cover a range of the measurand, sweep the
input that drives it. ``--scope`` adds a scope table: the largest relative U in each
sub-range of the measurand, rounded up to two significant digits (common practice).
"""

from __future__ import annotations

import argparse

NAME = "sweep"
HELP = "evaluate a budget file across a range of one input (U, relative U, dominant input)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry sweep``."""
    parser.description = (__doc__ or HELP).split("\n", 1)[-1].strip() or HELP
    parser.add_argument("file", metavar="FILE", help="budget file (TOML, viscometry-budget/1)")
    parser.add_argument(
        "--over", required=True, metavar="NAME", help="input whose estimate is swept"
    )
    parser.add_argument("--from", dest="start", required=True, type=float, metavar="A",
                        help="first estimate, in the input's own unit")  # fmt: skip
    parser.add_argument("--to", dest="stop", required=True, type=float, metavar="B",
                        help="last estimate, in the input's own unit")  # fmt: skip
    parser.add_argument(
        "--points", type=int, default=50, metavar="N", help="number of points (default 50)"
    )
    parser.add_argument("--log", action="store_true", help="geometric spacing (A and B > 0)")
    parser.add_argument(
        "--scope", metavar="EDGES",
        help="comma-separated sub-range edges of the measurand (its unit), e.g. 1,10,100: "
        "print the stated relative U per sub-range",
    )  # fmt: skip
    parser.add_argument("--json", action="store_true", help="print one JSON object instead")


def _edges(text: str) -> list[float]:
    from viscometry.errors import InputError

    try:
        return [float(p) for p in text.split(",") if p.strip()]
    except ValueError:
        raise InputError(f"--scope must be comma-separated numbers, got {text!r}") from None


def run(args: argparse.Namespace) -> int:
    """Sweep and print the table (or JSON). Returns 0."""
    import pandas as pd

    from viscometry.errors import BudgetFileError, ViscometryError
    from viscometry.io.budget_file import load_budget
    from viscometry.io.json_out import dumps
    from viscometry.planning import scope_table, sweep
    from viscometry.units import format_unit

    bf = load_budget(args.file)
    try:
        res = sweep(bf.budget, args.over, args.start, args.stop, points=args.points,
                    spacing="log" if args.log else "linear")  # fmt: skip
        scope = scope_table(res, _edges(args.scope)) if args.scope else None
    except BudgetFileError:
        raise
    except ViscometryError as exc:
        raise type(exc)(f"{bf.source}: {exc}") from exc
    table = res.table()
    if args.json:
        print(dumps({
            "measurand": res.measurand, "unit": res.unit, "over": res.over,
            "over_unit": res.over_unit, "points": table.to_dict(orient="records"),
            "scope": None if scope is None else scope.to_dict(orient="records"),
            "source": bf.source, "fingerprint": bf.fingerprint,
        }))  # fmt: skip
        return 0
    unit = format_unit(res.unit) if res.unit else "1"
    over_unit = format_unit(res.over_unit) if res.over_unit else "1"
    print(f"{res.measurand} [{unit}] across {res.over} [{over_unit}] from {args.start:g} to "
          f"{args.stop:g}, {len(table)} points")  # fmt: skip
    with pd.option_context("display.max_rows", None, "display.width", 160):
        print(table.to_string(index=False, float_format=lambda v: f"{v:.5g}"))
    if scope is not None:
        print(f"\nscope table ({res.measurand} in {unit}; largest relative U per sub-range, "
              "rounded up to two significant digits):")  # fmt: skip
        print(scope.to_string(index=False, float_format=lambda v: f"{v:.5g}"))
    return 0
