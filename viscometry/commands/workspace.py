"""``viscometry workspace DEST``: copy the workbooks, example budgets and docs into DEST.

Opening the copies (``jupyter lab DEST``, start with ``workbooks/00_start_here.ipynb``)
keeps the shipped workbooks — and, in a repository, the regression tests' stored outputs —
untouched. A file that exists already in DEST is kept (it may be your work); only missing
files are copied, so running the command again restores a deleted workbook. Kept files that
differ from the shipped version are listed: delete one and run again to get the shipped one.
"""

from __future__ import annotations

import argparse

NAME = "workspace"
HELP = "copy the workbooks, example budgets and docs into a folder of your own to work in"

#: How many differing kept files are named one by one before the rest are counted.
_LISTED = 10


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry workspace``."""
    parser.description = (__doc__ or HELP).split("\n", 1)[-1].strip() or HELP
    parser.add_argument("folder", metavar="DEST", help="the folder to create or complete")


def run(args: argparse.Namespace) -> int:
    """Copy the missing files; print what was copied and where to start. Returns 0."""
    from viscometry.text import one_line
    from viscometry.workspace import make_workspace

    ws = make_workspace(args.folder)
    print(f"workspace {one_line(str(ws.folder.resolve()))}: {len(ws.copied)} file(s) copied, "
          f"{len(ws.kept)} kept as they were")  # fmt: skip
    if ws.differing:
        print(
            f"{len(ws.differing)} kept file(s) differ from the shipped version (your changes, "
            "or a copy older than the shipped file); delete one and run again to get the "
            "shipped version:"
        )
        for path in ws.differing[:_LISTED]:
            print(f"  {one_line(str(path))}")
        if len(ws.differing) > _LISTED:
            print(f"  ... and {len(ws.differing) - _LISTED} more")
    start = ws.start if ws.start.is_file() else ws.folder / "workbooks"
    print(
        f"start here: {one_line(str(start))} (open the folder with: jupyter lab {one_line(str(ws.folder))})"
    )
    return 0
