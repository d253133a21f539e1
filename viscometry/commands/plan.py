"""``viscometry plan FILE CANDIDATES.toml``: upgrade candidates ranked by the new U and by cost.

The candidates file is described in :mod:`viscometry.io.candidates` (and shown by
``viscometry plan --help``). The text output lists each candidate alone, the cost–U frontier
(the sets no cheaper set beats; ``--all`` ranks every set), the best reduction per unit cost,
the cheapest set reaching ``--target`` and, per input, the u(xᵢ) that would reach it alone.
"""

from __future__ import annotations

import argparse
import math
from typing import Any

NAME = "plan"
HELP = "rank upgrade candidates (new U, reduction per cost, cheapest set for a target U)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry plan``."""
    from viscometry.commands.simulate import whole_number
    from viscometry.io import candidates

    parser.description = (
        (__doc__ or HELP).split("\n", 1)[-1].strip()
        + "\n\n"
        + ((candidates.__doc__ or "").split("\n", 2)[-1].strip())
    )
    parser.add_argument("file", metavar="FILE", help="budget file (TOML, viscometry-budget/1)")
    parser.add_argument(
        "candidates", metavar="CANDIDATES.toml", help="upgrade candidates file (format above)"
    )
    parser.add_argument(
        "--target", metavar="U",
        help="target expanded uncertainty in the measurand's unit (e.g. 0.05), or relative "
        "to the value with a percent sign (e.g. 0.3%%)",
    )  # fmt: skip
    parser.add_argument(
        "--all", action="store_true", help="rank every evaluated set, not only the frontier"
    )
    parser.add_argument(
        "--top",
        type=whole_number,
        default=15,
        metavar="N",
        help="rows of the ranking to print (default 15; 0 = all)",
    )
    parser.add_argument("--max-exhaustive", type=whole_number, default=12, metavar="N",
                        help="evaluate every combination up to N candidates, else a greedy "
                        "search by reduction per cost (default 12, at most 16)")  # fmt: skip
    parser.add_argument(
        "--json", action="store_true", help="print one JSON object instead (keys in docs/json.md)"
    )


def parse_target(text: str | None, value: float) -> float | None:
    """The target U from the option text: a number, or a percentage of |value|."""
    from viscometry.errors import InputError

    if text is None:
        return None
    s = text.strip()
    relative = s.endswith("%")
    s = s[:-1].strip() if relative else s
    from viscometry.commands.simulate import shown_option

    try:
        x = float(s)
    except ValueError:
        raise InputError(
            f"--target must be a number or a percentage like 0.3%, got {shown_option(text)}"
        ) from None
    if not math.isfinite(x):
        raise InputError(f"--target must be a finite number, got {shown_option(text)}")
    if x <= 0:
        raise InputError(f"--target must be positive, got {shown_option(text)}")
    if relative:
        if value == 0:
            raise InputError("--target as a percentage needs a non-zero measured value")
        return x / 100.0 * abs(value)
    return x


def _option(o: Any) -> dict[str, Any] | None:
    if o is None:
        return None
    return {
        "candidates": list(o.candidates), "cost": o.cost, "value": o.value,
        "expanded_uncertainty": o.expanded_uncertainty,
        "relative_expanded_uncertainty": o.relative_expanded_uncertainty,
        "reduction": o.reduction, "reduction_per_cost": o.reduction_per_cost,
        "coverage_factor": o.coverage_factor, "dominant": o.dominant,
        "reaches_target": o.reaches_target,
    }  # fmt: skip


def _json(plan: Any, needs: Any, currency: str) -> dict[str, Any]:
    from viscometry.io.json_out import schema
    from viscometry.text import statement

    base = plan.baseline
    return {
        "schema": schema("plan"), "measurand": base.measurand, "unit": base.unit,
        "currency": currency, "search": plan.search,
        "baseline": {"value": base.value, "expanded_uncertainty": base.expanded_uncertainty,
                     "coverage_factor": base.coverage_factor, "statement": statement(base)},
        "target": plan.target,
        "combination_rule": "smallest standard uncertainty wins when candidates share an input",
        "candidates": [{"name": c.name, "cost": c.cost, "description": c.description,
                        "changes": sorted(c.changes)} for c in plan.candidates],
        "options": [_option(o) for o in plan.ranked],
        "frontier": [_option(o) for o in plan.frontier],
        "best_per_cost": _option(plan.best_per_cost),
        "cheapest_reaching_target": _option(plan.cheapest),
        "required_uncertainties": None if needs is None else [
            {"input": r.name, "unit": r.unit, "current_uncertainty": r.current_uncertainty,
             "required_uncertainty": r.required_uncertainty, "floor": r.floor,
             "reachable": r.reachable, "solver": r.solver} for r in needs
        ],
        "warnings": list(plan.warnings), "fingerprint": base.fingerprint,
    }  # fmt: skip


def _print(plan: Any, needs: Any, currency: str, args: argparse.Namespace) -> None:
    from viscometry.text import (
        format_cost,
        one_line,
        per_cost_text,
        required_text,
        statement,
        unit_suffix,
    )

    unit, cur = unit_suffix(plan.unit), f" {one_line(currency, 40)}" if currency else ""
    print(f"baseline: {statement(plan.baseline)}")
    print(f"{len(plan.candidates)} candidates, {len(plan.options)} sets evaluated ({plan.search})")
    ids = {c.name: str(i) for i, c in enumerate(plan.candidates, start=1)}
    print("candidates alone:")
    for c, o in zip(plan.candidates, plan.singles, strict=True):
        print(f"  {ids[c.name]:>2}  {one_line(c.name, 60)}: cost {format_cost(c.cost)}{cur}, U = "
              f"{o.expanded_uncertainty:.4g}{unit} (reduction {o.reduction:.3g}, "
              f"{per_cost_text(o.reduction_per_cost)} per unit cost)")  # fmt: skip
    ranked = plan.ranked if args.all else plan.frontier
    shown = ranked if args.top <= 0 else ranked[: args.top]
    what = (
        "every set, ranked by U" if args.all else "the cost–U frontier (sets no cheaper set beats)"
    )
    print(f"{what}; candidate numbers as above{'; ✓ reaches the target' if plan.target else ''}:")
    print(f"  {'set':<18} {'cost':>10} {'U':>11} {'rel. U':>8} {'reduction':>10}  dominant")
    for o in shown:
        label = "+".join(ids[n] for n in o.candidates) or "(baseline)"
        print(f"  {label:<18} {format_cost(o.cost):>10} {o.expanded_uncertainty:>11.4g} "
              f"{100 * o.relative_expanded_uncertainty:>7.3g}% {o.reduction:>10.3g}  "
              f"{o.dominant}{' ✓' if o.reaches_target else ''}")  # fmt: skip
    if len(shown) < len(ranked):
        print(f"  ... {len(ranked) - len(shown)} more sets (use --top 0 for all)")
    b = plan.best_per_cost
    print(f"best reduction per cost: {one_line(b.label)}: U {b.expanded_uncertainty:.4g}{unit} "
          f"(−{b.reduction:.3g}) for {format_cost(b.cost)}{cur}" if b else "no single candidate reduces U")  # fmt: skip
    if plan.target is not None:
        c = plan.cheapest
        print(f"cheapest set reaching U ≤ {plan.target:.4g}{unit}: {one_line(c.label)} for "
              f"{format_cost(c.cost)}{cur} (U = {c.expanded_uncertainty:.4g}{unit})" if c
              else f"no evaluated set reaches U ≤ {plan.target:.4g}{unit}")  # fmt: skip
        print("required u per input, all else unchanged:")
        for r in needs:
            print(f"  {r.name}: {required_text(r)}")
    for w in plan.warnings:
        print(f"warning: {one_line(w)}")


def run(args: argparse.Namespace) -> int:
    """Evaluate the candidates; print the ranking (or JSON). Returns 0."""
    from viscometry.commands._common import evaluate_file, located, print_json
    from viscometry.errors import ViscometryError
    from viscometry.io.candidates import load_candidates
    from viscometry.planning import evaluate_upgrades, required_uncertainties

    bf, base = evaluate_file(args.file)
    candidates, currency = load_candidates(args.candidates, bf.budget)
    try:
        target = parse_target(args.target, base.value)
        plan = evaluate_upgrades(
            bf.budget, candidates, target=target, max_exhaustive=args.max_exhaustive
        )
        needs = required_uncertainties(bf.budget, target) if target is not None else None
    except ViscometryError as exc:
        raise located(bf, exc) from exc
    if args.json:
        print_json(_json(plan, needs, currency), source=bf.source)
    else:
        _print(plan, needs, currency, args)
    return 0
