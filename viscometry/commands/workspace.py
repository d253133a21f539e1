"""``viscometry workspace DEST``: copy the workbooks, example budgets and docs into DEST.

Opening the copies (``jupyter lab DEST``, start with ``workbooks/00_start_here.ipynb``)
keeps the shipped workbooks — and, in a repository, the regression tests' stored outputs —
untouched. A file that exists already in DEST is kept (it may be your work); only missing
files are copied, so running the command again restores a deleted workbook.
"""

from __future__ import annotations

import argparse

NAME = "workspace"
HELP = "copy the workbooks, example budgets and docs into a folder of your own to work in"


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
    print(
        f"start here: {one_line(str(ws.start))} (open the folder with: jupyter lab {one_line(str(ws.folder))})"
    )
    return 0
