"""``viscometry decide``: conformity of a result with specification limits (JCGM 106, ILAC G8).

Give the result directly (``--value`` with ``--standard-uncertainty`` or
``--expanded-uncertainty`` and ``--coverage-factor``) or take it from a budget file
(``--budget FILE``: value, u_c, k and ν_eff of its first-order evaluation). Limits and the
result are in the same unit (the measurand's). Rules: ``simple`` (accept inside the
tolerance interval) or ``guarded`` (accept inside it shrunk by w = r·U). The conformance
probability uses a normal PDF, or a t PDF with ``--dof``.

The decision rule is agreed with the customer beforehand and follows the laboratory's own
procedures and accredited practice; the computed decision supports that judgement.
"""

from __future__ import annotations

import argparse
import math

NAME = "decide"
HELP = "conformity decision of a result against limits (simple or guarded acceptance)"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry decide``."""
    parser.description = (__doc__ or HELP).split("\n", 1)[-1].strip() or HELP
    src = parser.add_argument_group("the result (give --budget, or --value with an uncertainty)")
    src.add_argument(
        "--budget", metavar="FILE", help="take value, u_c, k and ν_eff from a budget file"
    )
    src.add_argument("--value", type=float, metavar="Y", help="measured value y")
    src.add_argument(
        "--standard-uncertainty", "-u", type=float, metavar="u", help="standard uncertainty u(y)"
    )
    src.add_argument("--expanded-uncertainty", "-U", type=float, metavar="U",
                     help="expanded uncertainty U (u = U/k)")  # fmt: skip
    src.add_argument("--coverage-factor", "-k", type=float, metavar="K",
                     help="coverage factor k (default 2, or the budget's)")  # fmt: skip
    src.add_argument("--dof", type=float, metavar="NU",
                     help="degrees of freedom of the t PDF (default: normal, or the budget's ν_eff)")  # fmt: skip
    lim = parser.add_argument_group("limits and rule")
    lim.add_argument("--lower", type=float, metavar="TL", help="lower tolerance limit")
    lim.add_argument("--upper", type=float, metavar="TU", help="upper tolerance limit")
    lim.add_argument("--rule", choices=("simple", "guarded"), default="simple",
                     help="decision rule (default simple)")  # fmt: skip
    lim.add_argument("--guard-factor", "-r", type=float, default=1.0, metavar="R",
                     help="r in the guard band w = r·U for --rule guarded (default 1)")  # fmt: skip
    lim.add_argument("--unit", default=None, metavar="TEXT",
                     help="unit label for the statement (default: the budget's unit)")  # fmt: skip
    parser.add_argument("--json", action="store_true", help="print one JSON object instead")


def run(args: argparse.Namespace) -> int:
    """Decide and print the verdict (or JSON). Returns 0 whatever the verdict."""
    from viscometry.commands._common import json_text
    from viscometry.conformity import DECISION_CAUTION, decide
    from viscometry.errors import InputError
    from viscometry.io.json_out import schema
    from viscometry.text import decision_statement, unit_label

    unit = args.unit
    dof = args.dof
    k = args.coverage_factor
    if args.budget is not None:
        if any(
            v is not None
            for v in (args.value, args.standard_uncertainty, args.expanded_uncertainty)
        ):
            raise InputError("give either --budget or --value with an uncertainty, not both")
        from viscometry.commands._common import evaluate_file

        _bf, result = evaluate_file(args.budget)
        value, u = result.value, result.standard_uncertainty
        k = result.coverage_factor if k is None else k
        if dof is None:
            dof = result.effective_dof
        if unit is None:
            unit = result.unit
    else:
        if args.value is None:
            raise InputError("--value is required (or --budget FILE)")
        value = args.value
        k = 2.0 if k is None else k
        if (args.standard_uncertainty is None) == (args.expanded_uncertainty is None):
            raise InputError(
                "give exactly one of --standard-uncertainty (-u) or --expanded-uncertainty (-U)"
            )
        if args.standard_uncertainty is not None:
            u = args.standard_uncertainty
        else:
            if not k > 0:
                raise InputError(f"--coverage-factor must be positive, got {k!r}")
            u = args.expanded_uncertainty / k
    d = decide(value, u, args.lower, args.upper, coverage_factor=k,
               dof=math.inf if dof is None else dof, rule=args.rule,
               guard_factor=args.guard_factor)  # fmt: skip
    unit = unit or ""
    if args.json:
        out = {
            "schema": schema("decide"),
            **{key: getattr(d, key) for key in d.__dataclass_fields__},
        }
        out.update(unit=unit, statement=decision_statement(d, unit), caution=DECISION_CAUTION)
        print(json_text(out))
        return 0
    lbl = f" {unit_label(unit)}" if unit else ""
    lo = "—" if d.lower is None else f"{d.lower:g}"
    up = "—" if d.upper is None else f"{d.upper:g}"
    alo = "—" if d.acceptance_lower is None else f"{d.acceptance_lower:.6g}"
    aup = "—" if d.acceptance_upper is None else f"{d.acceptance_upper:.6g}"
    print(f"result: y = {d.value:.6g}{lbl}, u = {d.standard_uncertainty:.3g}{lbl}, "
          f"k = {d.coverage_factor:.3g}, U = {d.expanded_uncertainty:.3g}{lbl}")  # fmt: skip
    print(f"tolerance interval: [{lo}, {up}]{lbl}; acceptance interval: [{alo}, {aup}]{lbl}")
    print(f"verdict: {d.verdict.upper()}")
    print(decision_statement(d, unit))
    print(f"note: {DECISION_CAUTION}")
    return 0
