"""``viscometry dilute FILE``: [η] of a dilute polymer solution series, with its uncertainty.

Reads a series file (``viscometry-series/1``, docs/polymer.md), extrapolates η_sp/c
(Huggins) and ln(η_rel)/c (Kraemer) to zero concentration with the uncertainty propagated
through the whole chain, checks that the two intercepts agree, compares single-point
estimates with the extrapolated value, repeats the chain by Monte Carlo and, when the file
gives Mark–Houwink constants, states the molar mass.
"""

from __future__ import annotations

import argparse

NAME = "dilute"
HELP = "dilute polymer solutions: intrinsic viscosity [η] with U from a series file"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry dilute``."""
    parser.description = (__doc__ or HELP).split("\n", 1)[-1].strip() or HELP
    parser.add_argument("file", metavar="FILE", help="series file (TOML, viscometry-series/1)")
    parser.add_argument("--json", action="store_true",
                        help="print one JSON object (keys in docs/polymer.md) instead of the report")  # fmt: skip
    parser.add_argument("--trials", type=int, default=100_000, metavar="M",
                        help="Monte Carlo trials of the whole chain (0: none; default 100000)")  # fmt: skip
    parser.add_argument("--seed", type=int, default=1, metavar="S",
                        help="seed of the Monte Carlo draws (default 1)")  # fmt: skip


def run(args: argparse.Namespace) -> int:
    """Evaluate the series; print the report or JSON on standard output. Returns 0."""
    import warnings

    from viscometry.commands._common import print_json
    from viscometry.errors import InputError, ValidityWarning
    from viscometry.io.series import load_series, result_to_dict
    from viscometry.polymer import extrapolate, molar_mass, monte_carlo_check
    from viscometry.polymer_text import series_text

    if args.trials < 0:
        raise InputError(f"--trials must be 0 or positive, got {args.trials}")
    sf = load_series(args.file)
    kwargs = (
        {} if sf.coverage_probability is None else {"coverage_probability": sf.coverage_probability}
    )
    with warnings.catch_warnings():
        # Listed in the report and the JSON "warnings" list; on standard error only in text mode.
        warnings.simplefilter("ignore" if args.json else "default", ValidityWarning)
        ext = extrapolate(sf.series, **kwargs)
    mc = monte_carlo_check(ext, trials=args.trials, seed=args.seed) if args.trials else None
    mm = None
    if sf.mark_houwink is not None:
        k, a, r, _src = sf.mark_houwink
        mm = molar_mass(ext.huggins.intrinsic, k, a, correlation=r,
                        coverage_probability=ext.coverage_probability)  # fmt: skip
    if args.json:
        print_json(result_to_dict(sf, ext, mc, mm))
        return 0
    print(series_text(ext, concentration_unit=sf.concentration_unit, title=sf.title,
                      monte_carlo=mc, molar_mass=mm))  # fmt: skip
    from viscometry import __version__
    from viscometry.text import one_line

    print(f"source: {one_line(sf.source)}\nversion: viscometry {__version__}")
    return 0
