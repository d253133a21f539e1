"""The on-disk cache of compiled models (an edge: it reads and writes files).

Compiling a measurement model (its value and gradient programs, :mod:`viscometry.gum.program`)
is done once per model and kept in the user's cache folder, so the next process that meets
the same model (the same canonical expression and names, whatever file or workbook it came
from) reads it instead of compiling it. The engine knows only the store protocol
(:mod:`viscometry.gum.store`); :func:`install_store` puts a :class:`DiskStore` there. The
command line calls it when ``$VISCOMETRY_CACHE`` is set.

Where, and when
    Off unless asked for. ``$VISCOMETRY_CACHE`` names the folder; ``VISCOMETRY_CACHE=on``
    (or ``1``, ``yes``, ``true``) uses ``$XDG_CACHE_HOME/viscometry/compiled`` (when
    ``XDG_CACHE_HOME`` is an absolute path), else ``~/.cache/viscometry/compiled``. Unset,
    empty or ``off`` (``0``, ``no``, ``false``, ``none``): nothing is read or written, models
    are compiled in every process. Off by default because compiling is now about as quick as
    computing an entry's key (a 100-input product/ratio model: about 16 ms cold, 17 ms from
    the cache; ``benchmarks/bench_compile.py``), and a folder of numbers that later
    processes trust is one more thing a lab has to protect; it pays for very large models
    evaluated again and again.

What an entry is
    One JSON file per model, named by the model's SHA-256 key. It holds data only: the
    steps of two straight-line programs (operation names, register numbers, integers and
    hexadecimal floats), the names of the inputs and constants, the format version and a
    SHA-256 checksum of its content. No pickle, no Python code: the engine checks every
    part against its whitelist of operations before use (:meth:`Program.from_data`).

Safety
    An entry that is not a regular file (a link, a pipe, a device), larger than
    :data:`MAX_ENTRY_BYTES`, not valid JSON, of another format version, with a wrong
    checksum, for another model or with a malformed program is ignored, and the model is
    compiled and written anew. A write goes through the package's atomic writer
    (:func:`viscometry.io.atomic.atomic_write_bytes`: a temporary file in the cache folder
    replaces the entry by :func:`os.replace`), so a reader never sees a partial
    entry and two processes that compile the same model at once both succeed (the last
    rename wins; both wrote the same content). A cache that cannot be read or written
    (read-only folder, full disk) only costs the compilation.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import re
import stat
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from viscometry.gum.store import set_compiled_store
from viscometry.io.atomic import atomic_write_bytes

__all__ = ["ENVIRONMENT_VARIABLE", "FORMAT", "DiskStore", "cache_directory", "install_store"]

#: The environment variable that relocates the cache (a folder) or turns it off (``off``).
ENVIRONMENT_VARIABLE = "VISCOMETRY_CACHE"
#: Format name and version of an entry file.
FORMAT = "viscometry-compiled-cache/1"
#: Largest entry file read, in bytes (the largest formula's programs take a few MB).
MAX_ENTRY_BYTES = 32 * 1024 * 1024
_OFF = frozenset({"", "off", "0", "no", "false", "none"})
_ON = frozenset({"on", "1", "yes", "true"})
_KEY = re.compile(r"sha256:([0-9a-f]{64})")


def cache_directory(environ: Mapping[str, str] | None = None) -> Path | None:
    """The folder of the compiled-model cache, or None when it is off (the default).

    Parameters
    ----------
    environ : mapping, optional
        The environment to read (default: ``os.environ``).

    Examples
    --------
    >>> cache_directory({}) is None
    True
    >>> cache_directory({"VISCOMETRY_CACHE": "off"}) is None
    True
    >>> str(cache_directory({"VISCOMETRY_CACHE": "/tmp/vc"}))
    '/tmp/vc'
    >>> str(cache_directory({"VISCOMETRY_CACHE": "on", "XDG_CACHE_HOME": "/var/c"}))
    '/var/c/viscometry/compiled'
    """
    env = os.environ if environ is None else environ
    value = env.get(ENVIRONMENT_VARIABLE, "").strip()
    if value.lower() in _OFF:
        return None
    if value.lower() not in _ON:
        return Path(value).expanduser()
    xdg = env.get("XDG_CACHE_HOME", "")
    base = Path(xdg) if xdg and os.path.isabs(xdg) else Path("~/.cache").expanduser()
    return base / "viscometry" / "compiled"


def _digest(payload: Any) -> str:
    text = json.dumps(payload, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(text.encode("ascii")).hexdigest()


class DiskStore:
    """A store of compiled models in a folder, one checked JSON file per model.

    Parameters
    ----------
    directory : path-like
        The folder; created (mode 0o700) on the first write.
    """

    def __init__(self, directory: str | os.PathLike[str]) -> None:
        self.directory = Path(directory)

    def path(self, key: str) -> Path | None:
        """The entry file of ``key`` (``"sha256:<64 hex digits>"``), None for other keys."""
        match = _KEY.fullmatch(key) if isinstance(key, str) else None
        return self.directory / f"{match.group(1)}.json" if match else None

    def get(self, key: str) -> Any:
        """The payload stored under ``key``, or None (missing, damaged or foreign)."""
        path = self.path(key)
        if path is None:
            return None
        try:
            raw = _read_regular(path)
            if raw is None:
                return None
            data = json.loads(raw.decode("utf-8"))
        except (OSError, ValueError, RecursionError, MemoryError):
            return None
        if not isinstance(data, dict) or data.get("format") != FORMAT:
            return None
        payload = data.get("payload")
        if data.get("key") != key or data.get("sha256") != _digest(payload):
            return None
        return payload

    def put(self, key: str, entry: Mapping[str, Any]) -> None:
        """Write ``entry`` under ``key`` atomically; a failure is dropped silently."""
        path = self.path(key)
        if path is None:
            return
        payload = dict(entry)
        record = {"format": FORMAT, "key": key, "sha256": _digest(payload), "payload": payload}
        data = json.dumps(record, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
        with contextlib.suppress(OSError, ValueError):  # OutputError is a ValueError
            self.directory.mkdir(mode=0o700, parents=True, exist_ok=True)
            _replace(path, data.encode("ascii"))


def _read_regular(path: Path) -> bytes | None:
    """The bytes of a regular file of at most :data:`MAX_ENTRY_BYTES`, else None (a link,
    pipe or device is never opened: checked without following links first)."""
    try:
        if not stat.S_ISREG(os.lstat(path).st_mode):
            return None
        with open(path, "rb") as handle:
            st = os.fstat(handle.fileno())
            if not stat.S_ISREG(st.st_mode) or st.st_size > MAX_ENTRY_BYTES:
                return None
            raw = handle.read(MAX_ENTRY_BYTES + 1)
    except FileNotFoundError:
        return None
    return raw if len(raw) <= MAX_ENTRY_BYTES else None


def _replace(path: Path, data: bytes) -> None:
    """Write ``data`` over ``path`` with the package's atomic writer (temporary file, fsync,
    :func:`os.replace`). A link (which the writer would follow) or a pipe at ``path`` is
    removed first; a folder there stays, and nothing is written."""
    with contextlib.suppress(FileNotFoundError):
        if not stat.S_ISREG(os.lstat(path).st_mode):
            if path.is_dir() and not path.is_symlink():
                return
            path.unlink()
    atomic_write_bytes(path, data, what="compiled-model cache entry")


def install_store(environ: Mapping[str, str] | None = None) -> DiskStore | None:
    """Install the compiled-model cache of :func:`cache_directory` in the engine (or none
    when it is turned off) and return it.

    Examples
    --------
    >>> from viscometry.gum.store import compiled_store, set_compiled_store
    >>> previous = compiled_store()
    >>> install_store({"VISCOMETRY_CACHE": "off"}) is None
    True
    >>> _ = set_compiled_store(previous)
    """
    directory = cache_directory(environ)
    store = DiskStore(directory) if directory is not None else None
    set_compiled_store(store)
    return store
