"""The files shipped with the package, and a working folder of one's own to open them in.

Edge layer (files). The example budgets (invented labs, plus the GUM H.1 reference case),
the workbooks and the docs ship inside the package (``viscometry/_files/``, put there by the
build); in a source checkout they are the repository's own folders. :func:`bundled` finds
them either way. :func:`make_workspace` copies them into a folder of the user's choice
(``viscometry workspace DEST``; ``make lab`` uses ``lab/`` in the repository), so that
working in the workbooks never rewrites the stored outputs that the regression tests
compare against, and a user's edited copy is never overwritten.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from viscometry.errors import InputError
from viscometry.io.atomic import atomic_write_bytes

__all__ = ["SHIPPED", "Workspace", "bundled", "make_workspace"]

#: The shipped folders, in the layout a workspace repeats (workbooks read ``../examples``).
SHIPPED = ("examples", "workbooks", "docs")


def bundled(name: str) -> Path:
    """The shipped folder ``name`` (one of :data:`SHIPPED`).

    Raises
    ------
    InputError
        When this installation has no such folder.

    Examples
    --------
    >>> (bundled("examples") / "reference" / "gum_h1_end_gauge.toml").is_file()
    True
    """
    if name not in SHIPPED:
        raise InputError(f"no shipped folder {name!r} (there are: {', '.join(SHIPPED)})")
    here = Path(__file__).resolve().parent
    for candidate in (here / "_files" / name, here.parent / name):
        if candidate.is_dir():
            return candidate
    raise InputError(f"this installation has no {name} folder (looked in {here / '_files'})")


@dataclass(frozen=True)
class Workspace:
    """What :func:`make_workspace` did: the folder, the files copied and those kept."""

    folder: Path
    copied: tuple[Path, ...]
    kept: tuple[Path, ...]

    @property
    def start(self) -> Path:
        """The start-here workbook of the workspace."""
        return self.folder / "workbooks" / "00_start_here.ipynb"


def make_workspace(folder: str | os.PathLike[str]) -> Workspace:
    """Copy the shipped examples, workbooks and docs into ``folder`` (created if missing).

    A file that exists already in ``folder`` is kept as it is (it may hold the user's work);
    only missing files are copied. Nothing outside ``folder`` is written.

    Raises
    ------
    InputError
        When ``folder`` is a file, or cannot be written (the message names it).
    """
    root = Path(folder)
    if root.exists() and not root.is_dir():
        raise InputError(f"workspace {str(root)!r} is a file, not a folder")
    copied: list[Path] = []
    kept: list[Path] = []
    try:
        for name in SHIPPED:
            src_root = bundled(name)
            shipped = (p for p in src_root.rglob("*") if p.is_file() and "checkpoint" not in str(p))
            for src in sorted(shipped):
                dest = root / name / src.relative_to(src_root)
                if dest.exists() or dest.is_symlink():
                    kept.append(dest)
                    continue
                dest.parent.mkdir(parents=True, exist_ok=True)
                atomic_write_bytes(dest, src.read_bytes())
                copied.append(dest)
    except OSError as exc:
        raise InputError(f"workspace {str(root)!r}: cannot write: {exc.strerror or exc}") from None
    return Workspace(root, tuple(copied), tuple(kept))
