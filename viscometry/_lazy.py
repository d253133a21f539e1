"""Public names of a package imported on first use (PEP 562), so that importing a package
costs only what is used.

A package lists where each public name lives and installs the module ``__getattr__`` and
``__dir__`` that this module makes::

    _LAZY = {"viscometry.gum.budget": ("Budget", "BudgetResult")}
    __getattr__, __dir__ = lazy_names(globals(), _LAZY)

``from viscometry.gum import Budget``, ``viscometry.gum.Budget`` and ``from viscometry.gum
import *`` work as with eager imports; the name is looked up once and then kept in the
package. A submodule is reached as an attribute too (``viscometry.gum.montecarlo``), imported
on first use; only the package's own module files are imported so. Where a package exports a
function named like the submodule that defines it (``viscometry.planning.working_range``),
the function stays the package's attribute after the submodule is imported, as it was with
eager imports.

``tests/test_startup.py`` checks every table: each module is a submodule of the package that
lists it (so the layer rules of ``tests/test_layers.py`` hold for these imports as well) and
each name is defined there.
"""

from __future__ import annotations

import importlib
import pkgutil
import sys
import types
from collections.abc import Callable, Mapping
from typing import Any

__all__ = ["lazy_names"]


class _KeepExports(types.ModuleType):
    """A package module whose exported names win over submodules of the same name.

    The import system binds a submodule to its package once it is loaded
    (``setattr(package, "working_range", module)``); for a name the package exports, the
    exported object is bound instead.
    """

    def __setattr__(self, name: str, value: Any) -> None:
        where = self.__dict__.get("_LAZY_WHERE", {})
        if (
            isinstance(value, types.ModuleType)
            and name in where
            and value.__name__ == f"{self.__name__}.{name}"
        ):
            value = getattr(importlib.import_module(where[name]), name)
        super().__setattr__(name, value)


def _submodules(namespace: dict[str, Any]) -> set[str]:
    """Names of the package's own modules and subpackages (its files, nothing else)."""
    return {m.name for m in pkgutil.iter_modules(namespace.get("__path__", []))}


def lazy_names(
    namespace: dict[str, Any], table: Mapping[str, tuple[str, ...]]
) -> tuple[Callable[[str], Any], Callable[[], list[str]]]:
    """The module ``__getattr__`` and ``__dir__`` of a package with lazily imported names.

    Parameters
    ----------
    namespace : dict
        The package's ``globals()``.
    table : mapping
        Full module name → the public names it defines that the package exports.

    Returns
    -------
    (__getattr__, __dir__)
        Functions to bind at the package's top level (PEP 562).
    """
    package = namespace["__name__"]
    where = {name: module for module, names in table.items() for name in names}
    namespace["_LAZY_WHERE"] = where
    if any(f"{package}.{name}" in table for name in where):
        sys.modules[package].__class__ = _KeepExports

    def __getattr__(name: str) -> Any:
        module_name = where.get(name)
        if module_name is not None:
            value = getattr(importlib.import_module(module_name), name)
            namespace[name] = value
            return value
        if name in _submodules(namespace):
            return importlib.import_module(f"{package}.{name}")
        raise AttributeError(f"module {package!r} has no attribute {name!r}")

    def __dir__() -> list[str]:
        return sorted({*namespace, *where})

    return __getattr__, __dir__
