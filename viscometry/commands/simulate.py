"""``viscometry simulate FILE``: Monte Carlo propagation (JCGM 101) and validation of a budget."""

from __future__ import annotations

import argparse
import math

NAME = "simulate"
HELP = (
    "propagate the distributions of a budget file by the Monte Carlo method (JCGM 101) and "
    "validate its first-order result"
)


def shown_option(text: str, limit: int = 40) -> str:
    """``repr`` of an option's text for a message, cut to ``limit`` characters."""
    return repr(text if len(text) <= limit else text[: limit - 3] + "...")


def whole_number(text: str) -> int:
    """An option's whole number (``12``, ``-3``, ``1_000``); a message that echoes at most 40
    characters of anything else (a 5000-digit number included)."""
    try:
        return int(text.strip().replace("_", ""))
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"must be a whole number, got {shown_option(text)}"
        ) from None


def _trials(text: str) -> int:
    """Parse a number of trials written as ``1000000``, ``1_000_000`` or ``1e6`` (the engine
    refuses more than its limit, :data:`viscometry.gum.montecarlo.MAX_TRIALS`)."""
    cleaned = text.strip().replace("_", "")
    try:
        return int(cleaned)
    except ValueError:
        pass
    try:
        x = float(cleaned)
    except ValueError:
        x = math.nan
    if not math.isfinite(x) or x != int(x):
        raise argparse.ArgumentTypeError(f"trials must be a whole number, got {shown_option(text)}")
    return int(x)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry simulate``."""
    parser.add_argument(
        "file", metavar="FILE", help="budget file (TOML, format viscometry-budget/1)"
    )
    how = parser.add_mutually_exclusive_group()
    how.add_argument(
        "--trials",
        type=_trials,
        default=None,
        metavar="N",
        help="fixed number of Monte Carlo trials (default 1e6, at most 1e7)",
    )
    how.add_argument(
        "--adaptive",
        action="store_true",
        help="add batches of trials until the results are stable to --digits significant "
        "digits of u (JCGM 101:2008 7.9), at most 1e7 trials in all",
    )
    parser.add_argument(
        "--digits",
        type=whole_number,
        default=2,
        metavar="N",
        help="significant digits of u for the numerical tolerance δ of the validation and of "
        "the adaptive stopping rule (default 2)",
    )
    parser.add_argument(
        "--seed",
        type=whole_number,
        default=None,
        metavar="S",
        help="seed of the random number generator (same seed, same numbers; without it a "
        "seed is drawn at random and printed)",
    )
    parser.add_argument(
        "--interval",
        choices=("symmetric", "shortest"),
        default="symmetric",
        help="coverage interval to report: probabilistically symmetric (default) or shortest; "
        "the validation always uses the symmetric one",
    )
    parser.add_argument(
        "--higher-order",
        action="store_true",
        help="validate the result with the second-order terms of JCGM 100:2008 eq. 10 "
        "(uncorrelated inputs only) instead of the first-order one",
    )
    parser.add_argument(
        "--jobs",
        type=whole_number,
        default=None,
        metavar="N",
        help="threads that draw and evaluate trials at the same time (default: every core "
        "this process may use, at most 64; 1: no threads); a seeded result is the same for "
        "any N",
    )
    parser.add_argument(
        "--json",
        action="store_true",
        help="print one JSON object (trials, seed, value, standard_uncertainty, "
        "coverage_probability, interval, validation, first_order, warnings, fingerprint, "
        "version; keys in docs/json.md)",
    )


def run(args: argparse.Namespace) -> int:
    """Simulate the file's budget; print the summary or JSON on standard output.

    Returns 0 whether or not the first-order result is validated (the verdict is part of
    the output); errors raise :class:`~viscometry.errors.ViscometryError`.
    """
    from viscometry.commands._common import located, print_json, provenance_lines
    from viscometry.errors import ViscometryError
    from viscometry.gum.montecarlo import check_jobs
    from viscometry.gum.simulation import simulate_budget
    from viscometry.io.reader import load_budget
    from viscometry.text import simulation_lines

    jobs = check_jobs(args.jobs, "--jobs")  # before the file: it is not about the file
    bf = load_budget(args.file)
    # Without --seed, a seed is drawn and shown, so that every run can be repeated exactly.
    seed = args.seed if args.seed is not None else _random_seed()
    try:
        sim = simulate_budget(
            bf.budget, trials=args.trials, adaptive=args.adaptive,
            significant_digits=args.digits, seed=seed, interval=args.interval,
            higher_order_reference=args.higher_order, jobs=jobs,
        )  # fmt: skip
    except ViscometryError as exc:
        raise located(bf, exc) from exc
    if args.json:
        from viscometry import __version__
        from viscometry.io.json_out import schema

        out = {"schema": schema("simulate"), **sim.to_dict()}
        out.update(warnings=list(sim.warnings), fingerprint=bf.fingerprint, version=__version__)
        print_json(out, source=bf.source)
    else:
        print("\n".join(simulation_lines(sim)))
        if args.seed is None:
            print(f"seed drawn at random; repeat this run with --seed {seed}")
        print("\n".join(provenance_lines(bf)))
    return 0


def _random_seed() -> int:
    """A seed drawn from the operating system's randomness (32 bits)."""
    import secrets

    return secrets.randbits(32)
