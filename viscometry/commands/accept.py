"""``viscometry accept KIND``: acceptance of flow timings and duplicate determinations.

Kinds:

  timings        VALUES are the flow times of one filling [s]; limit default flow_time_range
  duplicates     VALUES are determinations (2, or 4 after a repeat); needs a limit
  laboratories   VALUES are two laboratories' results; needs a limit (R)
  file           --file CSV with the raw timings of each determination (viscometry-timings/1,
                 docs/evidence.md): every determination's timings, then the determinations
  budget         --file TOML budget file: the timings of every input stated as readings
                 in a unit of time (e.g. [inputs.t] readings = [...])
  limits         list the built-in limits with their sources

A limit is one of the built-in ones (--limit NAME, listed by ``accept limits``) or the
laboratory's own: --relative-limit F (F·mean), --absolute-limit L, or --precision-sd S
(2.8·S: r from s_r, R from s_R; ISO 5725-6:1994, 4.1.4, from memory). For more than two
results the limit is scaled by f(n)/2.8 (ISO 5725-6:1994, Table 1, from memory). The verdict
says what to do: accept, repeat (how many more) or investigate.
"""

from __future__ import annotations

import argparse

NAME = "accept"
HELP = "acceptance of flow timings and duplicate determinations (accept, repeat, investigate)"

_KINDS = ("timings", "duplicates", "laboratories", "file", "budget", "limits")
_APPLIES = {"timings": "flow_time", "duplicates": "determination", "laboratories": "laboratories"}


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry accept``."""
    parser.description = (__doc__ or HELP).split("\n", 1)[-1].strip() or HELP
    parser.add_argument("kind", choices=_KINDS, help="what to check")
    parser.add_argument("values", nargs="*", type=float, metavar="VALUE",
                        help="the results (timings in s, or determinations)")  # fmt: skip
    parser.add_argument("--file", metavar="FILE",
                        help="timings file (kind 'file') or budget file (kind 'budget')")  # fmt: skip
    lim = parser.add_argument_group("the limit (for two results)")
    lim.add_argument("--limit", metavar="NAME", help="a built-in limit (see 'accept limits')")
    lim.add_argument("--relative-limit", type=float, metavar="F",
                     help="F times the mean (e.g. 0.002 for 0.2 %%)")  # fmt: skip
    lim.add_argument("--absolute-limit", type=float, metavar="L", help="L, in the results' unit")
    lim.add_argument("--precision-sd", type=float, metavar="S",
                     help="limit 2.8·S from s_r (or s_R for laboratories)")  # fmt: skip
    lim.add_argument("--timing-limit", metavar="NAME", default="flow_time_range",
                     help="kind 'file': the limit for the timings (default flow_time_range)")  # fmt: skip
    parser.add_argument("--most", type=int, default=4, metavar="N",
                        help="timings: the most timings of one filling (default 4)")  # fmt: skip
    parser.add_argument("--unit", default="", metavar="TEXT", help="unit label of the values")
    parser.add_argument("--json", action="store_true", help="print one JSON object instead")


def _limit(args: argparse.Namespace, applies: str, default: str | None):  # noqa: ANN202
    from viscometry.errors import InputError
    from viscometry.evidence.acceptance import LIMITS, AcceptanceLimit

    given = [o for o in ("limit", "relative_limit", "absolute_limit", "precision_sd")
             if getattr(args, o) is not None]  # fmt: skip
    if len(given) > 1:
        opts = ", ".join(f"--{o.replace('_', '-')}" for o in given)
        raise InputError(f"give one limit, got {opts}")
    src = "the laboratory's own limit (command line)"
    if args.relative_limit is not None:
        return AcceptanceLimit.relative("relative_limit", applies, args.relative_limit, source=src)
    if args.absolute_limit is not None:
        return AcceptanceLimit.absolute("absolute_limit", applies, args.absolute_limit, source=src)
    if args.precision_sd is not None:
        return AcceptanceLimit.from_precision("precision_sd", applies, args.precision_sd,
                                              source=src)  # fmt: skip
    name = args.limit or default
    if name is None:
        raise InputError(
            "give a limit: --limit NAME (see 'viscometry accept limits'), --relative-limit, "
            "--absolute-limit or --precision-sd"
        )
    if name not in LIMITS:
        raise InputError(f"--limit must be one of {', '.join(LIMITS)}, got {name!r}")
    return LIMITS[name]


def _verdicts(args: argparse.Namespace) -> tuple[list, str, dict]:
    """The verdicts of the kind asked for, the unit, and extra JSON keys."""
    from viscometry.errors import InputError
    from viscometry.evidence import acceptance as acc

    if args.kind == "file":
        return _file_verdicts(args)
    if args.kind == "budget":
        return _budget_verdicts(args)
    if args.file is not None:
        raise InputError(f"--file belongs to kind 'file', not {args.kind!r}")
    applies = _APPLIES[args.kind]
    if args.kind == "timings":
        limit = _limit(args, applies, "flow_time_range")
        return [acc.check_flow_times(args.values, limit, most=args.most)], args.unit or "s", {}
    limit = _limit(args, applies, None)
    if args.kind == "duplicates":
        return [acc.check_determinations(args.values, limit)], args.unit, {}
    if len(args.values) != 2:
        raise InputError(f"laboratories needs two results, got {len(args.values)}")
    return [acc.check_laboratories(*args.values, limit)], args.unit, {}


def _timing_limit(args: argparse.Namespace):  # noqa: ANN202
    from viscometry.errors import InputError
    from viscometry.evidence import acceptance as acc

    t_limit = acc.LIMITS.get(args.timing_limit)
    if t_limit is None or t_limit.applies_to != "flow_time":
        names = [n for n, v in acc.LIMITS.items() if v.applies_to == "flow_time"]
        raise InputError(f"--timing-limit must be one of {', '.join(names)}")
    return t_limit


def _budget_verdicts(args: argparse.Namespace) -> tuple[list, str, dict]:
    """Timings of a budget file: every input stated as readings in a unit of time."""
    from viscometry import units
    from viscometry.errors import InputError
    from viscometry.evidence import acceptance as acc
    from viscometry.io.reader import load_budget

    if args.file is None or args.values:
        raise InputError("kind 'budget' takes --file BUDGET.toml and no values")
    bf = load_budget(args.file)
    t_limit = _timing_limit(args)
    verdicts, names = [], []
    for q in bf.budget.inputs:
        if not q.readings or len(q.readings) < 2 or not units.same_dimension(q.unit or "1", "s"):
            continue
        times = [units.convert(r, q.unit, "s") for r in q.readings]
        if len(times) > acc.MAX_RESULTS:
            raise InputError(
                f"{bf.source}: inputs.{q.name} has {len(times)} readings; the agreement check "
                f"takes at most {acc.MAX_RESULTS}"
            )
        verdicts.append(acc.check_flow_times(times, t_limit, most=max(args.most, len(times))))
        names.append(q.name)
    if not verdicts:
        raise InputError(f"{bf.source}: no input is stated as readings in a unit of time")
    return verdicts, "s", {"inputs": names, "source": bf.source, "fingerprint": bf.fingerprint}


def _file_verdicts(args: argparse.Namespace) -> tuple[list, str, dict]:
    from viscometry.errors import InputError
    from viscometry.evidence import acceptance as acc
    from viscometry.io.acceptance import load_timings

    if args.file is None or args.values:
        raise InputError("kind 'file' takes --file CSV and no values")
    tf = load_timings(args.file)
    t_limit = _timing_limit(args)
    verdicts = [acc.check_flow_times(t, t_limit, most=args.most) for t in tf.determinations]
    extra = {"sample": tf.sample, "determination_labels": list(tf.labels), "source": tf.source}
    if len(tf.determinations) >= 2:
        limit = _limit(args, "determination", None)
        verdicts.append(acc.check_determinations(tf.results(), limit))
    return verdicts, tf.result_unit, extra


def run(args: argparse.Namespace) -> int:
    """Check and print the verdicts (or JSON). Returns 0 whatever the verdict."""
    from viscometry.commands._common import json_text
    from viscometry.evidence.acceptance import LIMITS
    from viscometry.evidence_text import ACCEPTANCE_CAUTION, limit_lines, verdict_statement
    from viscometry.text import one_line

    if args.kind == "limits":
        if args.json:
            print(json_text(_limits_json(LIMITS)))
        else:
            print("\n".join(limit_lines(LIMITS)))
        return 0
    verdicts, unit, extra = _verdicts(args)
    lines = []
    for v in verdicts:
        t_unit = "s" if v.check == "flow_time" else unit
        lines.append(verdict_statement(v, t_unit))
    if args.json:
        print(json_text(_json(verdicts, lines, unit, extra)))
        return 0
    labels = extra.get("inputs") or extra.get("determination_labels") or []
    for i, (v, line) in enumerate(zip(verdicts, lines, strict=True)):
        if v.check == "flow_time" and i < len(labels):
            what = "input" if "inputs" in extra else "determination"
            line = f"{what} {one_line(labels[i], 40)}: {line}"
        print(line)
        print(f"  limit: {v.limit_name} ({v.limit_source or 'source not stated'})")
    print(f"note: {ACCEPTANCE_CAUTION}")
    return 0


def _json(verdicts: list, lines: list[str], unit: str, extra: dict) -> dict:
    from viscometry import __version__
    from viscometry.evidence_text import ACCEPTANCE_CAUTION
    from viscometry.io.json_out import jsonable, schema

    rows = [
        {"check": v.check, "action": v.action, "reason": v.reason, "values": v.values,
         "spread": v.spread, "limit": v.limit, "ratio": v.ratio, "result": v.result,
         "more": v.more, "limit_name": v.limit_name, "limit_source": v.limit_source,
         "statement": line}
        for v, line in zip(verdicts, lines, strict=True)
    ]  # fmt: skip
    out = {"schema": schema("accept"), "unit": unit, "verdicts": rows, "warnings": [],
           "caution": ACCEPTANCE_CAUTION, **extra, "version": __version__}  # fmt: skip
    return jsonable(out)


def _limits_json(limits) -> dict:  # noqa: ANN001
    from viscometry import __version__
    from viscometry.io.json_out import jsonable, schema

    rows = [
        {"name": n, "applies_to": v.applies_to, "coefficient": v.coefficient,
         "offset": v.offset, "exponent": v.exponent, "description": v.description,
         "source": v.source}
        for n, v in limits.items()
    ]  # fmt: skip
    return jsonable({"schema": schema("accept_limits"), "limits": rows, "warnings": [],
                     "version": __version__})  # fmt: skip
