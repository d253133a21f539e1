"""Atomic file writes: the one helper every write in the package goes through.

A write goes to a temporary file in the target's own directory (so the final rename stays on
one file system), is flushed and fsync'ed, and then replaces the target with
:func:`os.replace`, which is atomic on POSIX and Windows. A reader therefore sees either the
old file or the complete new one, never a partial file; when anything fails, the temporary
file is removed and an existing target is left untouched.

Before anything is written, :func:`check_output_path` refuses a target that would lose data
or is not a file (:class:`~viscometry.errors.OutputError`, naming the path and the reason):

* an input of the same run (the ``protect`` argument) under any name: the same path spelled
  differently, a symbolic link to it or a hard link to it (same device and inode);
* a write-protected file (no write bit, or not writable for this user), and a file in a
  write-protected folder; the mode bits are checked as well as :func:`os.access`, because
  the super-user may write anything and would otherwise replace a protected file silently;
* a folder, a named pipe (FIFO), a device or a socket (checked with ``stat``, never opened,
  so a pipe cannot block the write);
* a symbolic link that leads nowhere (dangling, or a loop).

A symbolic link to a regular file is followed: its final target is replaced atomically and
the link stays a link. A target with further hard links is replaced under the name given
only; its other names keep the old content (that is what an atomic replacement means).

The temporary file is named ``.<target name>.<random>.tmp``; the target name in it is
shortened where needed so that the temporary name fits the file system's limit on names
(``NAME_MAX``, 255 bytes on common systems) for every legal target name.
"""

from __future__ import annotations

import contextlib
import os
import stat
import tempfile
from collections.abc import Iterable, Mapping
from pathlib import Path

from viscometry.errors import OutputError

__all__ = ["atomic_write_bytes", "atomic_write_text", "check_output_path"]

PathLike = str | os.PathLike[str]
#: Paths a write must not replace: a sequence of paths ("the input file"), or a mapping of
#: path -> how the message calls it (e.g. ``{"pc.toml": "the budget file"}``).
Protected = PathLike | Iterable[PathLike] | Mapping[PathLike, str]

_TMP_SUFFIX = ".tmp"
# Room kept in a temporary name for tempfile's random part (8 characters) and its two dots.
_RANDOM_ROOM = 16
_NOT_FILES = (
    (stat.S_ISDIR, "a folder"),
    (stat.S_ISFIFO, "a named pipe (FIFO)"),
    (stat.S_ISCHR, "a device"),
    (stat.S_ISBLK, "a device"),
    (stat.S_ISSOCK, "a socket"),
)


def _default_mode() -> int:
    # os.umask can only be read by setting it; restore it at once.
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


def check_output_path(
    path: PathLike, *, protect: Protected = (), what: str = "output file"
) -> Path:
    """Refuse an output path that would lose data; return the file a write would replace.

    Parameters
    ----------
    path : path-like
        The output path as the user gave it.
    protect : path-like, sequence of path-like, or mapping of path-like to str
        Files the output must not be (the inputs of the run); a mapping also says how the
        message calls each (``"the budget file"``). Missing files are ignored.
    what : str
        How the message calls the output (``"report path"``, ``"budget file"``).

    Returns
    -------
    pathlib.Path
        ``path`` itself, or the final target when ``path`` is a symbolic link.

    Raises
    ------
    OutputError
        When ``path`` is a protected input (also through a symbolic or hard link), a
        write-protected file or lies in a write-protected folder, is not a regular file
        (folder, FIFO, device, socket), or is a dangling symbolic link. A missing folder or
        a name too long for the file system is left to the write, which raises ``OSError``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     src = pathlib.Path(d) / "in.toml"
    ...     _ = src.write_text("x = 1\\n")
    ...     check_output_path(pathlib.Path(d) / "out.md", protect=[src]).name
    'out.md'
    """
    given = Path(path)
    try:
        st = os.lstat(given)
    except (FileNotFoundError, NotADirectoryError):
        _check_folder(given, given, what)
        return given
    final, shown = given, repr(str(given))
    if stat.S_ISLNK(st.st_mode):
        try:
            final = Path(os.path.realpath(given, strict=True))
            st = os.stat(final)
        except OSError:
            raise OutputError(
                f"{what} {shown} is a symbolic link to {os.readlink(given)!r}, which does not "
                "lead to an existing file (missing, or a loop of links); refusing to follow it"
            ) from None
        shown += f" (a symbolic link to {str(final)!r})"
    for test, kind in _NOT_FILES:
        if test(st.st_mode):
            raise OutputError(f"{what} {shown} is {kind}, not a file; refusing to write to it")
    _check_protected(given, st, protect, what)
    if _write_protected(final, st, os.W_OK):
        raise OutputError(
            f"{what} {shown} is write-protected (mode {stat.S_IMODE(st.st_mode):04o}); "
            "refusing to replace it"
        )
    _check_folder(given, final, what)
    return final


def _write_protected(path: Path, st: os.stat_result, access: int) -> bool:
    """True when nobody may write ``path``, its owner (we) may not, or we may not."""
    if not st.st_mode & 0o222:
        return True
    geteuid = getattr(os, "geteuid", None)
    if geteuid is not None and st.st_uid == geteuid() and not st.st_mode & stat.S_IWUSR:
        return True
    return not os.access(path, access)


def _check_folder(given: Path, final: Path, what: str) -> None:
    """Refuse a write-protected folder; a missing one is left to the write (OSError)."""
    folder = final.parent
    try:
        st = os.stat(folder)
    except OSError:
        return
    if stat.S_ISDIR(st.st_mode) and _write_protected(folder, st, os.W_OK | os.X_OK):
        raise OutputError(
            f"{what} {str(given)!r}: the folder {str(folder)!r} is write-protected "
            f"(mode {stat.S_IMODE(st.st_mode):04o}); refusing to write into it"
        )


def _protected_items(protect: Protected) -> list[tuple[PathLike, str]]:
    if isinstance(protect, (str, bytes, os.PathLike)):
        return [(protect, "the input file")]
    if isinstance(protect, Mapping):
        return list(protect.items())
    return [(p, "the input file") for p in protect]


def _check_protected(given: Path, st: os.stat_result, protect: Protected, what: str) -> None:
    """Refuse when the existing output (stat ``st``) is one of the protected files."""
    for src, label in _protected_items(protect):
        try:
            other = os.stat(src)
        except (OSError, ValueError):
            continue
        if (other.st_dev, other.st_ino) != (st.st_dev, st.st_ino):
            continue
        if os.path.islink(given):
            how = f"a symbolic link to {str(src)!r}"
        elif os.path.normpath(given) == os.path.normpath(src):
            how = "the same path"
        elif os.path.realpath(given) == os.path.realpath(src):
            how = f"{str(src)!r} named another way"
        else:
            how = f"a hard link to {str(src)!r}: the same file under another name"
        raise OutputError(f"{what} {str(given)!r} is {label} itself ({how}); choose another name")


def _name_max(directory: Path) -> int:
    """The longest file name (bytes) the file system of ``directory`` accepts."""
    try:
        limit = int(os.pathconf(directory, "PC_NAME_MAX"))
    except (OSError, ValueError, AttributeError):  # pragma: no cover - Windows, odd systems
        limit = 255
    return limit if limit > 0 else 255


def _temporary_prefix(name: str, directory: Path) -> str:
    """``.<name>.``, with ``name`` shortened so the temporary name fits ``NAME_MAX``."""
    room = max(_name_max(directory) - len(_TMP_SUFFIX) - _RANDOM_ROOM, 0)
    while name and len(os.fsencode(name)) > room:
        name = name[:-1]
    return f".{name}."


def atomic_write_bytes(
    path: PathLike, data: bytes, *, protect: Protected = (), what: str = "output file"
) -> Path:
    """Write ``data`` to ``path`` atomically (temporary file, fsync, rename).

    Parameters
    ----------
    path : path-like
        Target file. Its directory must exist. A symbolic link is followed: its final target
        is replaced and the link is kept.
    data : bytes
        The complete new content.
    protect : path-like, sequence or mapping
        Files the target must not be (see :func:`check_output_path`).
    what : str
        How a refusal calls the target.

    Returns
    -------
    pathlib.Path
        The target path as given.

    Raises
    ------
    OutputError
        When :func:`check_output_path` refuses the target; nothing is written.
    OSError
        When the directory is missing or not writable, the disk is full, ...; the target is
        then unchanged and no temporary file is left behind.

    Notes
    -----
    An existing target keeps its permission bits; a new file gets the usual ``0o666`` minus
    the process umask.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = atomic_write_bytes(pathlib.Path(d) / "a.txt", b"hello")
    ...     p.read_bytes()
    b'hello'
    """
    target = Path(path)
    if not isinstance(data, (bytes, bytearray, memoryview)):
        raise TypeError(f"data must be bytes, got {type(data).__name__}")
    final = check_output_path(target, protect=protect, what=what)
    directory = final.parent
    try:
        mode = stat.S_IMODE(final.stat().st_mode)
    except FileNotFoundError:
        mode = _default_mode()
    fd, tmp_name = tempfile.mkstemp(
        prefix=_temporary_prefix(final.name, directory), suffix=_TMP_SUFFIX, dir=directory
    )
    tmp = Path(tmp_name)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, final)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    _fsync_directory(directory)
    return target


def atomic_write_text(
    path: PathLike,
    text: str,
    encoding: str = "utf-8",
    *,
    protect: Protected = (),
    what: str = "output file",
) -> Path:
    """Write ``text`` to ``path`` atomically; see :func:`atomic_write_bytes`.

    Newlines are written as ``\\n`` on every platform, so files are byte-identical everywhere.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = atomic_write_text(pathlib.Path(d) / "b.toml", "x = 1\\n")
    ...     p.read_text()
    'x = 1\\n'
    """
    if not isinstance(text, str):
        raise TypeError(f"text must be a str, got {type(text).__name__}")
    return atomic_write_bytes(path, text.encode(encoding), protect=protect, what=what)


def _fsync_directory(directory: Path) -> None:
    """Make the rename itself durable where the platform allows it (best effort)."""
    if os.name != "posix":  # pragma: no cover - Windows cannot open directories
        return
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:  # pragma: no cover - unusual file systems
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover
        pass
    finally:
        os.close(fd)
