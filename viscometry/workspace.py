"""The files shipped with the package, and a working folder of one's own to open them in.

Edge layer (files). The example budgets (invented labs, plus the GUM H.1 reference case),
the workbooks and the docs ship inside the package (``viscometry/_files/``, put there by the
build); in a source checkout they are the repository's own folders. :func:`bundled` finds
them either way. :func:`make_workspace` copies them into a folder of the user's choice
(``viscometry workspace DEST``; ``make lab`` uses ``lab/`` in the repository), so that
working in the workbooks never rewrites the stored outputs that the regression tests
compare against, and a user's edited copy is never overwritten. :func:`guard_shipped_workbooks`
is the Jupyter server hook with which ``make lab`` refuses saves into the stored workbooks.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from viscometry.errors import InputError
from viscometry.io.atomic import atomic_write_bytes

__all__ = [
    "SHIPPED",
    "SHIPPED_FILES",
    "Workspace",
    "bundled",
    "guard_shipped_workbooks",
    "make_workspace",
    "shipped_files",
]

#: The shipped folders, in the layout a workspace repeats (workbooks read ``../examples``).
SHIPPED = ("examples", "workbooks", "docs")

#: Shipped folder → the file patterns shipped from it. The build (``setup.py``) ships the
#: same patterns (a test compares them), so a workspace made from a source checkout holds the
#: same files as one made from an installed package.
SHIPPED_FILES = {
    "examples": ("**/*.toml", "**/*.csv"),
    "workbooks": ("*.ipynb", "sanitize.cfg"),
    "docs": ("*.md",),
}


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


def shipped_files(name: str) -> list[Path]:
    """The files shipped in folder ``name``, relative to it and sorted.

    Only the patterns of :data:`SHIPPED_FILES`; hidden files and folders (such as Jupyter's
    ``.ipynb_checkpoints``) are never shipped.

    Examples
    --------
    >>> Path("sanitize.cfg") in shipped_files("workbooks")
    True
    """
    src_root = bundled(name)
    found = {
        p.relative_to(src_root)
        for pattern in SHIPPED_FILES[name]
        for p in src_root.glob(pattern)
        if p.is_file()
    }
    return sorted(p for p in found if not any(part.startswith(".") for part in p.parts))


@dataclass(frozen=True)
class Workspace:
    """What :func:`make_workspace` did: the folder, the files copied and those kept.

    ``differing`` lists the kept files whose content is not the shipped one: the user's
    changes, or a copy made before the shipped file changed (delete it and run again to get
    the shipped version).
    """

    folder: Path
    copied: tuple[Path, ...]
    kept: tuple[Path, ...]
    differing: tuple[Path, ...] = ()

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
        When ``folder`` is a file, or a file cannot be copied into it (the message names
        the folder and, where known, the file).
    OutputError
        When a folder of the workspace is write-protected (the mode bits are checked, so
        this holds for the super-user too; :func:`viscometry.io.atomic.check_output_path`).
    """
    root = Path(folder)
    if root.exists() and not root.is_dir():
        raise InputError(f"workspace {str(root)!r} is a file, not a folder")
    copied: list[Path] = []
    kept: list[Path] = []
    differing: list[Path] = []
    try:
        for name in SHIPPED:
            src_root = bundled(name)
            for rel in shipped_files(name):
                src, dest = src_root / rel, root / name / rel
                if dest.exists() or dest.is_symlink():
                    kept.append(dest)
                    if not dest.is_file() or dest.read_bytes() != src.read_bytes():
                        differing.append(dest)
                    continue
                dest.parent.mkdir(parents=True, exist_ok=True)
                atomic_write_bytes(dest, src.read_bytes(), what="workspace file")
                copied.append(dest)
    except OSError as exc:
        where = f" {str(exc.filename)!r}" if exc.filename else ""
        raise InputError(
            f"workspace {str(root)!r}: cannot copy into{where}: {exc.strerror or exc}"
        ) from None
    return Workspace(root, tuple(copied), tuple(kept), tuple(differing))


def guard_shipped_workbooks(*, path: str, contents_manager: object, **_: object) -> None:
    """Jupyter server pre-save hook: refuse to save into the shipped workbooks folder.

    The shipped workbooks (in a source checkout: ``workbooks/``) hold the stored outputs the
    regression tests compare against, so interactive work happens in a workspace's copies.
    ``make lab`` serves the whole repository and passes this hook
    (``--ContentsManager.pre_save_hook=viscometry.workspace.guard_shipped_workbooks``), so
    an open stored workbook is never rewritten by a save or an autosave; every other save
    goes through unchanged. A refused save shows the message in JupyterLab.

    Raises
    ------
    tornado.web.HTTPError
        403, when ``path`` (relative to the server's root) lies in the shipped workbooks
        folder of this installation.
    """
    root = getattr(contents_manager, "root_dir", None)
    if root is None:
        return
    try:
        shipped = bundled("workbooks").resolve()
    except InputError:
        return
    target = (Path(root) / path.strip("/")).resolve()
    if target != shipped and shipped not in target.parents:
        return
    from tornado.web import HTTPError

    shown = path.strip("/").replace("%", "%%")  # tornado formats log messages with %
    raise HTTPError(
        403,
        f"{shown} is in the stored workbooks folder: its outputs are what the regression "
        "tests compare against, so it is not saved from here. Work in your copy instead "
        "(make lab: lab/workbooks/; elsewhere: viscometry workspace DEST). To change a stored "
        "workbook on purpose, open it with .venv/bin/jupyter lab workbooks and refresh its "
        "outputs as DEVELOPERS.md describes.",
    )
