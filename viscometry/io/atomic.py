"""Atomic file writes: the one helper every write in the package goes through.

A write goes to a temporary file in the target's own directory (so the final rename stays on
one file system), is flushed and fsync'ed, and then replaces the target with
:func:`os.replace`, which is atomic on POSIX and Windows. A reader therefore sees either the
old file or the complete new one, never a partial file; when anything fails, the temporary
file is removed and an existing target is left untouched.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path

__all__ = ["atomic_write_bytes", "atomic_write_text"]


def _default_mode() -> int:
    # os.umask can only be read by setting it; restore it at once.
    mask = os.umask(0o022)
    os.umask(mask)
    return 0o666 & ~mask


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically (temporary file, fsync, rename).

    Parameters
    ----------
    path : path-like
        Target file. Its directory must exist.
    data : bytes
        The complete new content.

    Returns
    -------
    pathlib.Path
        The target path.

    Raises
    ------
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
    directory = target.parent if str(target.parent) else Path(".")
    try:
        mode = target.stat().st_mode & 0o7777
    except FileNotFoundError:
        mode = _default_mode()
    fd, tmp_name = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=directory)
    tmp = Path(tmp_name)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise
    _fsync_directory(directory)
    return target


def atomic_write_text(path: str | os.PathLike[str], text: str, encoding: str = "utf-8") -> Path:
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
    return atomic_write_bytes(path, text.encode(encoding))


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
