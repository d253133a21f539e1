"""``viscometry score KIND``: proficiency-test performance scores (ISO 13528, ISO/IEC 17043).

Kinds and the options each needs (all values in one unit):

  en      --value --expanded-uncertainty --assigned --assigned-expanded-uncertainty
          satisfactory when |E_n| ≤ 1
  z       --value --assigned --sigma-pt                          satisfactory when |z| ≤ 2
  zprime  --value --assigned --sigma-pt --assigned-uncertainty   satisfactory when |z′| ≤ 2
  zeta    --value --standard-uncertainty --assigned --assigned-uncertainty
          satisfactory when |ζ| ≤ 2

For z, z′ and ζ: 2 < |s| < 3 is questionable (warning signal), |s| ≥ 3 unsatisfactory
(action signal). ``--assigned`` is the assigned (reference) value; ``--assigned-uncertainty``
its standard uncertainty, ``--assigned-expanded-uncertainty`` its expanded uncertainty.
"""

from __future__ import annotations

import argparse

NAME = "score"
HELP = "proficiency-test score: E_n, z, z′ or zeta with its classification"

_NEEDS = {
    "en": ("value", "expanded_uncertainty", "assigned", "assigned_expanded_uncertainty"),
    "z": ("value", "assigned", "sigma_pt"),
    "zprime": ("value", "assigned", "sigma_pt", "assigned_uncertainty"),
    "zeta": ("value", "standard_uncertainty", "assigned", "assigned_uncertainty"),
}


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry score``."""
    parser.description = (__doc__ or HELP).split("\n", 1)[-1].strip() or HELP
    parser.add_argument("kind", choices=tuple(_NEEDS), help="which score")
    parser.add_argument("--value", type=float, metavar="X", help="the laboratory's result x")
    parser.add_argument("--standard-uncertainty", "-u", type=float, metavar="u",
                        help="the laboratory's standard uncertainty (zeta)")  # fmt: skip
    parser.add_argument("--expanded-uncertainty", "-U", type=float, metavar="U",
                        help="the laboratory's expanded uncertainty (E_n)")  # fmt: skip
    parser.add_argument("--assigned", "--reference", type=float, metavar="X_PT",
                        help="assigned (reference) value")  # fmt: skip
    parser.add_argument("--assigned-uncertainty", type=float, metavar="u_PT",
                        help="standard uncertainty of the assigned value (z′, zeta)")  # fmt: skip
    parser.add_argument("--assigned-expanded-uncertainty", "--reference-expanded-uncertainty",
                        type=float, metavar="U_REF",
                        help="expanded uncertainty of the reference value (E_n)")  # fmt: skip
    parser.add_argument("--sigma-pt", type=float, metavar="SIGMA",
                        help="standard deviation for proficiency assessment (z, z′)")  # fmt: skip
    parser.add_argument("--json", action="store_true", help="print one JSON object instead")


def run(args: argparse.Namespace) -> int:
    """Compute and print the score (or JSON). Returns 0 whatever the classification."""
    from viscometry import proficiency as pt
    from viscometry.commands._common import json_text
    from viscometry.errors import InputError
    from viscometry.io.json_out import schema
    from viscometry.text import score_statement

    need = _NEEDS[args.kind]
    missing = [f"--{n.replace('_', '-')}" for n in need if getattr(args, n) is None]
    if missing:
        raise InputError(f"score {args.kind} needs {', '.join(missing)}")
    all_opts = {n for v in _NEEDS.values() for n in v}
    extra = [
        f"--{n.replace('_', '-')}"
        for n in sorted(all_opts - set(need))
        if getattr(args, n) is not None
    ]
    if extra:
        raise InputError(f"score {args.kind} does not use {', '.join(extra)}")
    a = args
    if a.kind == "en":
        s = pt.en_score(
            a.value, a.expanded_uncertainty, a.assigned, a.assigned_expanded_uncertainty
        )
    elif a.kind == "z":
        s = pt.z_score(a.value, a.assigned, a.sigma_pt)
    elif a.kind == "zprime":
        s = pt.z_prime_score(a.value, a.assigned, a.sigma_pt, a.assigned_uncertainty)
    else:
        s = pt.zeta_score(a.value, a.standard_uncertainty, a.assigned, a.assigned_uncertainty)
    if args.json:
        out = {"schema": schema("score"), "kind": s.kind, "value": s.value,
               "classification": s.classification, "statement": score_statement(s),
               "inputs": {n: getattr(a, n) for n in need}}  # fmt: skip
        print(json_text(out))
        return 0
    print(score_statement(s))
    return 0
