"""``viscometry plan FILE CANDIDATES.toml``: upgrade candidates ranked by the new U and by cost.

Candidates file (TOML, read with Python's tomllib)::

    title = "Upgrades considered for 2025"      # optional
    currency = "EUR"                            # optional label, never converted

    [[candidate]]
    name = "bath thermometer 2 mK"              # unique
    cost = 4200                                 # number >= 0
    description = "SPRT readout, fictional quote"   # optional
    [candidate.changes]
    T = 0.002                                   # new standard uncertainty, input's own unit

    [[candidate]]
    name = "re-certify constant"
    cost = 900
    [candidate.changes]
    C = { expanded_uncertainty = 2e-6, coverage_factor = 2, dof = 50 }

A change is a number (the new standard uncertainty u(xᵢ) in the input's own unit; estimate,
distribution and dof stay) or a table with ``standard_uncertainty`` or
``expanded_uncertainty`` + ``coverage_factor``, optionally ``value``, ``unit``, ``dof``
(a number or "inf"), ``distribution``, ``source`` (a replacement of the input). When two
candidates of a set change the same input, the smaller standard uncertainty is applied.
"""

from __future__ import annotations

import argparse
import math
from typing import Any

NAME = "plan"
HELP = "rank upgrade candidates (new U, reduction per cost, cheapest set for a target U)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry plan``."""
    parser.description = (__doc__ or "").split("\n", 1)[1].strip() if __doc__ else HELP
    parser.add_argument("file", metavar="FILE", help="budget file (TOML, viscometry-budget/1)")
    parser.add_argument("candidates", metavar="CANDIDATES.toml",
                        help="upgrade candidates file (format above)")  # fmt: skip
    parser.add_argument(
        "--target", metavar="U",
        help="target expanded uncertainty in the measurand's unit (e.g. 0.05), or relative "
        "to the value with a percent sign (e.g. 0.3%%)",
    )  # fmt: skip
    parser.add_argument("--top", type=int, default=15, metavar="N",
                        help="rows of the ranked table to print (default 15; 0 = all)")  # fmt: skip
    parser.add_argument("--max-exhaustive", type=int, default=12, metavar="N",
                        help="evaluate every combination up to N candidates, else a greedy "
                        "search by reduction per cost (default 12)")  # fmt: skip
    parser.add_argument("--json", action="store_true", help="print one JSON object instead")


def parse_target(text: str | None, value: float) -> float | None:
    """The target U from the option text: a number, or a percentage of |value|."""
    from viscometry.errors import InputError

    if text is None:
        return None
    s = text.strip()
    relative = s.endswith("%")
    if relative:
        s = s[:-1].strip()
    try:
        x = float(s)
    except ValueError:
        raise InputError(
            f"--target must be a number or a percentage like 0.3%, got {text!r}"
        ) from None
    if not math.isfinite(x) or x <= 0:
        raise InputError(f"--target must be positive, got {text!r}")
    if relative:
        if value == 0:
            raise InputError("--target as a percentage needs a non-zero measured value")
        return x / 100.0 * abs(value)
    return x


def read_candidates(path: str, budget: Any) -> tuple[Any, str]:
    """Read a candidates TOML file into UpgradeCandidate objects (and the currency label)."""
    import tomllib
    from pathlib import Path

    from viscometry.errors import BudgetFileError
    from viscometry.planning import candidates_from_mapping

    p = Path(path)
    try:
        raw = p.read_bytes()
    except IsADirectoryError:
        raise BudgetFileError(f"{p}: is a directory, not a candidates file") from None
    except OSError as exc:
        raise BudgetFileError(f"{p}: cannot read the file: {exc.strerror or exc}") from None
    try:
        data = tomllib.loads(raw.decode("utf-8"))
    except UnicodeDecodeError:
        raise BudgetFileError(f"{p}: not UTF-8 text; save the file as UTF-8") from None
    except tomllib.TOMLDecodeError as exc:
        raise BudgetFileError(f"{p}: not valid TOML: {exc}") from None
    return candidates_from_mapping(data, budget, source=str(p))


def run(args: argparse.Namespace) -> int:
    """Evaluate the candidates; print the ranked table (or JSON). Returns 0."""
    from viscometry.errors import BudgetFileError, ViscometryError
    from viscometry.io.budget_file import load_budget
    from viscometry.io.json_out import dumps
    from viscometry.planning import evaluate_upgrades, required_uncertainties
    from viscometry.units import format_unit

    bf = load_budget(args.file)
    budget = bf.budget
    candidates, currency = read_candidates(args.candidates, budget)
    try:
        base = budget.evaluate()
        target = parse_target(args.target, base.value)
        plan = evaluate_upgrades(
            budget, candidates, target=target, max_exhaustive=args.max_exhaustive
        )
        needs = required_uncertainties(budget, target) if target is not None else None
    except BudgetFileError:
        raise
    except ViscometryError as exc:
        raise type(exc)(f"{bf.source}: {exc}") from exc
    unit = format_unit(budget.unit) if budget.unit else ""
    if args.json:
        table = plan.table()
        out = {
            "measurand": budget.measurand,
            "unit": budget.unit,
            "currency": currency,
            "method": plan.method,
            "baseline": {
                "value": base.value,
                "expanded_uncertainty": base.expanded_uncertainty,
                "coverage_factor": base.coverage_factor,
                "statement": base.statement(),
            },  # fmt: skip
            "target": target,
            "combination_rule": "smallest standard uncertainty wins when candidates share an input",
            "candidates": [
                {
                    "name": c.name,
                    "cost": c.cost,
                    "description": c.description,
                    "changes": sorted(c.changes),
                }
                for c in candidates
            ],  # fmt: skip
            "options": table.to_dict(orient="records"),
            "best_per_cost": _opt(plan.best_per_cost),
            "cheapest_reaching_target": _opt(plan.cheapest),
            "required_uncertainties": None if needs is None else needs.to_dict(orient="records"),
            "source": bf.source,
            "fingerprint": bf.fingerprint,
        }
        print(dumps(out))
        return 0
    cur = f" {currency}" if currency else ""
    print(f"baseline: {base.statement()}")
    print(f"{len(candidates)} candidates, {len(plan.options)} sets evaluated ({plan.method}); "
          f"U in {unit or 'the measurand unit'}, cost in{cur or ' the currency of the file'}")  # fmt: skip
    ids = {c.name: str(i) for i, c in enumerate(candidates, start=1)}
    print("candidates alone:")
    for c, o in zip(candidates, plan.singles, strict=True):
        print(f"  {ids[c.name]:>2}  {c.name}: cost {c.cost:g}, U = {o.expanded_uncertainty:.4g} {unit} "
              f"(reduction {o.reduction:.3g}, {o.reduction_per_cost:.3g} per unit cost)")  # fmt: skip
    ranked = sorted(plan.options, key=lambda o: (o.expanded_uncertainty, o.cost, len(o.candidates)))
    shown = ranked if args.top <= 0 else ranked[: args.top]
    print(
        f"sets ranked by U (candidate numbers as above{'; ✓ reaches the target' if target else ''}):"
    )
    print(f"  {'set':<18} {'cost':>10} {'U':>11} {'rel. U':>8} {'reduction':>10}  dominant")
    for o in shown:
        label = "+".join(ids[n] for n in o.candidates) or "(baseline)"
        mark = " ✓" if o.reaches_target else ""
        print(f"  {label:<18} {o.cost:>10g} {o.expanded_uncertainty:>11.4g} "
              f"{100 * o.relative_expanded_uncertainty:>7.3g}% {o.reduction:>10.3g}  {o.dominant}{mark}")  # fmt: skip
    if len(shown) < len(ranked):
        print(f"  ... {len(ranked) - len(shown)} more sets (use --top 0 for all)")
    b = plan.best_per_cost
    if b is not None:
        print(f"best reduction per cost: {b.label}: U {b.expanded_uncertainty:.4g} {unit} "
              f"(−{b.reduction:.3g}) for {b.cost:g}{cur}")  # fmt: skip
    else:
        print("no single candidate reduces U")
    if target is not None:
        if plan.cheapest is not None:
            c = plan.cheapest
            print(f"cheapest set reaching U ≤ {target:.4g} {unit}: {c.label} for {c.cost:g}{cur} "
                  f"(U = {c.expanded_uncertainty:.4g} {unit})")  # fmt: skip
        else:
            print(f"no evaluated set reaches U ≤ {target:.4g} {unit}")
        print("required u per input, all else unchanged:")
        assert needs is not None
        for row in needs.itertuples(index=False):
            print(f"  {row.input}: {row.message}")
    return 0


def _opt(o: Any) -> Any:
    if o is None:
        return None
    return {"candidates": list(o.candidates), "cost": o.cost,
            "expanded_uncertainty": o.expanded_uncertainty, "reduction": o.reduction,
            "reduction_per_cost": o.reduction_per_cost}  # fmt: skip
