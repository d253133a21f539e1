"""``viscometry scope FILE --over NAME --from A --to B``: U across the working range.

Every point is the first-order budget with the estimate of one input replaced (its
uncertainty unchanged), evaluated in one vectorised pass. To cover a range of the measurand,
run the input that drives it (the flow time of a glass viscometer). ``--edges`` adds the
scope table: the largest relative U in each sub-range of the measurand, rounded up to two
significant digits — the uncertainty a lab can state for that part of its scope of
accreditation (common practice).
"""

from __future__ import annotations

import argparse

NAME = "scope"
HELP = (
    "U across the working range of one input, and the stated uncertainty per sub-range of the scope"
)


#: The engine's limit on points (:data:`viscometry.planning.MAX_POINTS`, which refuses more),
#: written here so that ``--help`` needs no engine import; tests/test_startup.py checks it.
MAX_POINTS_SHOWN = 100_000


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry scope``."""
    parser.description = (__doc__ or HELP).split("\n", 1)[-1].strip() or HELP
    parser.add_argument("file", metavar="FILE", help="budget file (TOML, viscometry-budget/1)")
    parser.add_argument(
        "--over", required=True, metavar="NAME", help="input whose estimate runs across the range"
    )
    parser.add_argument("--from", dest="start", required=True, type=float, metavar="A",
                        help="first estimate, in the input's own unit")  # fmt: skip
    parser.add_argument("--to", dest="stop", required=True, type=float, metavar="B",
                        help="last estimate, in the input's own unit")  # fmt: skip
    parser.add_argument("--points", type=int, default=50, metavar="N",
                        help=f"number of points (default 50, at most {MAX_POINTS_SHOWN})")  # fmt: skip
    parser.add_argument("--log", action="store_true", help="geometric spacing (A and B > 0)")
    parser.add_argument(
        "--edges", metavar="EDGES",
        help="comma-separated sub-range edges of the measurand (its unit), e.g. 1,10,100: "
        "print the stated relative U per sub-range",
    )  # fmt: skip
    parser.add_argument(
        "--json", action="store_true", help="print one JSON object instead (keys in docs/json.md)"
    )


def _edges(text: str) -> list[float]:
    from viscometry.errors import InputError

    try:
        return [float(p) for p in text.split(",") if p.strip()]
    except ValueError:
        raise InputError(f"--edges must be comma-separated numbers, got {text[:60]!r}") from None


def run(args: argparse.Namespace) -> int:
    """Evaluate the range and print the table (or JSON). Returns 0."""
    import pandas as pd

    from viscometry.commands._common import located, print_json
    from viscometry.errors import ViscometryError
    from viscometry.io.json_out import schema
    from viscometry.io.reader import load_budget
    from viscometry.planning import scope_table, working_range
    from viscometry.text import format_exact_percent, format_unit, one_line

    bf = load_budget(args.file)
    try:
        res = working_range(bf.budget, args.over, args.start, args.stop, points=args.points,
                            spacing="log" if args.log else "linear")  # fmt: skip
        scope = scope_table(res, _edges(args.edges)) if args.edges else None
    except ViscometryError as exc:
        raise located(bf, exc) from exc
    table = res.table()
    if args.json:
        print_json({
            "schema": schema("scope"), "measurand": res.measurand, "unit": res.unit,
            "over": res.over, "over_unit": res.over_unit, "points": table.to_dict(orient="records"),
            "scope": None if scope is None else scope.to_dict(orient="records"),
            "warnings": list(res.warnings), "point_warnings": list(res.point_warnings),
            "fingerprint": bf.fingerprint,
        }, source=bf.source)  # fmt: skip
        return 0
    unit, over_unit = format_unit(res.unit) or "1", format_unit(res.over_unit) or "1"
    print(f"{res.measurand} [{unit}] across {res.over} [{over_unit}] from {args.start:g} to "
          f"{args.stop:g}, {len(table)} points")  # fmt: skip
    shown = table.rename(columns={"input_value": res.over, "value": res.measurand})
    with pd.option_context("display.max_rows", None, "display.width", 160):
        print(shown.to_string(index=False, float_format=lambda v: f"{v:.5g}"))
    if scope is not None:
        stated = scope["stated_relative_expanded_uncertainty"]
        scope = scope.assign(stated=[f"{format_exact_percent(v)} %" for v in stated])
        print(f"\nscope table ({res.measurand} in {unit}; largest relative U per sub-range, "
              "rounded up to two significant digits):")  # fmt: skip
        print(scope.to_string(index=False, float_format=lambda v: f"{v:.5g}"))
    for w in res.warnings:
        print(f"warning: {one_line(w)}")
    for w in res.point_warnings:  # "at t = 1.0 (point 1 of the range) and 4 more ...: ..."
        print(f"warning {one_line(w)}")
    return 0
