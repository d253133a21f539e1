"""``viscometry demo [FOLDER]``: evaluate and print the bundled demo budgets (invented labs)."""

from __future__ import annotations

import argparse
from pathlib import Path

NAME = "demo"
HELP = (
    "evaluate every budget file of the examples folder and print the budgets (chain and "
    "series files in the summary)"
)

#: Printed once after the budgets: the work behind them can hurt people.
CAUTION = (
    "Caution: viscometry work involves hot baths, solvents (for polymers also hot phenol "
    "mixtures, acids and chlorinated solvents), glassware under suction and, in some set-ups, "
    "mercury. Follow local codes, your laboratory's own procedures and "
    "accredited practice; the demo budgets are invented examples (apart from the GUM H.1 "
    "reference file), not procedures."
)


def default_folder() -> Path:
    """The example budgets shipped with the package (the repository's ``examples/``)."""
    from viscometry.workspace import bundled

    return bundled("examples")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry demo``."""
    parser.add_argument(
        "folder",
        metavar="FOLDER",
        nargs="?",
        default=None,
        help="folder of budget files, searched recursively for *.toml; step-up chain files and "
        "dilution series get a result line in the summary, other TOML files are listed as "
        "skipped (default: the example budgets shipped with the package)",
    )


def run(args: argparse.Namespace) -> int:
    """Print each budget (header line, table, fingerprint), then a summary and the caution.

    Returns 0, or 2 when a file could not be evaluated (the others are still shown).
    """
    from viscometry.audit import scan_paths
    from viscometry.errors import InputError, ViscometryError
    from viscometry.io.reader import load_budget
    from viscometry.text import budget_text, message_line, one_line, statement

    folder = Path(args.folder) if args.folder else default_folder()
    if not folder.is_dir():
        raise InputError(
            f"the given folder {folder} does not exist; give a folder of budget files: "
            "viscometry demo FOLDER"
        )
    # The audit's folder search: no hidden folders, no links to folders, every skip listed.
    scan = scan_paths([folder])
    files = list(scan.files)
    skipped = [(_relative(s.path, folder), s.reason) for s in scan.skipped]
    if not files:
        raise InputError(f"no budget files (*.toml) found under {folder}")
    summary: list[str] = []
    failed = 0
    for i, path in enumerate(files):
        label = one_line(path.relative_to(folder).as_posix())
        if i:
            print()
        print(f"=== {label} " + "=" * max(3, 76 - len(label)))
        try:
            bf = load_budget(path)
            result = bf.budget.evaluate()
        except ViscometryError as exc:
            failed += 1
            print(f"error: {message_line(str(exc))}")
            summary.append(f"{label}: error")
            continue
        print(budget_text(result))
        print(f"fingerprint: {bf.fingerprint}")
        summary.append(f"{label}: {statement(result)}")
    print()
    print("=== summary " + "=" * 68)
    for line in summary:
        print(line)
    for (label, reason), path in zip(skipped, (s.path for s in scan.skipped), strict=True):
        line = _other_file_line(label, reason, Path(path))
        failed += line.startswith(f"{label}: error: ")
        print(line)
    print()
    print(CAUTION)
    return 2 if failed else 0


def _other_file_line(label: str, reason: str, path: Path) -> str:
    """The summary line of a file that is not a budget: a step-up chain file or a dilution
    series is evaluated with its own reader (its result, in one line); others are skipped."""
    import warnings

    from viscometry.errors import ValidityWarning, ViscometryError
    from viscometry.text import message_line, one_line, statement

    try:
        if "viscometry-chain/" in reason:
            from viscometry.io.chain import load_chain

            return f"{label}: step-up chain, {statement(load_chain(path).budget.evaluate())}"
        if "viscometry-series/" in reason:
            from viscometry.io.series import load_series
            from viscometry.polymer import extrapolate
            from viscometry.polymer_text import (
                concentration_scale,
                estimate_statement,
                intrinsic_unit,
            )

            sf = load_series(path)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", ValidityWarning)  # `viscometry dilute` lists them
                fit = extrapolate(sf.series).huggins
            c_unit = sf.concentration_unit
            shown = estimate_statement(
                "[η]", fit.intrinsic, concentration_scale(c_unit), intrinsic_unit(c_unit)
            )
            return f"{label}: dilution series, Huggins {shown}"
    except ViscometryError as exc:
        return f"{label}: error: {message_line(str(exc))}"
    return f"{label}: skipped, {one_line(reason)}"


def _relative(path: str, folder: Path) -> str:
    from viscometry.text import one_line

    try:
        return one_line(Path(path).relative_to(folder).as_posix())
    except ValueError:
        return one_line(path)
