"""The hook for a store of compiled models, kept between processes by an edge.

The engine does no file input or output. A store that keeps compiled models elsewhere (the
command line and the workbooks install :class:`viscometry.cache.DiskStore`, under the
user's cache folder) is handed to the engine with :func:`set_compiled_store`; the engine
then asks it for an entry before compiling a model and gives it each model it compiled.
Entries are plain data (dicts, lists, strings, integers): the engine checks every entry it
gets (:func:`viscometry.gum.model.programs_from_entry`) and never runs anything from one.
This module imports nothing heavy, so installing a store costs nothing.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Protocol

__all__ = ["CompiledStore", "set_compiled_store", "compiled_store"]


class CompiledStore(Protocol):
    """Where compiled models are kept between processes.

    A store must not raise: a failed read is a miss (None), a failed write is dropped.
    """

    def get(self, key: str) -> Any:
        """The entry stored under ``key`` (plain data), or None."""

    def put(self, key: str, entry: Mapping[str, Any]) -> None:
        """Keep ``entry`` (plain data) under ``key``, best effort."""


_STORE: list[CompiledStore | None] = [None]


def set_compiled_store(store: CompiledStore | None) -> CompiledStore | None:
    """Install the store of compiled models (None: none, the default); returns the one
    installed before, so a caller can put it back.

    Without a store, compiled models are kept in memory for the process only.
    """
    previous = _STORE[0]
    _STORE[0] = store
    return previous


def compiled_store() -> CompiledStore | None:
    """The installed store of compiled models, or None."""
    return _STORE[0]
