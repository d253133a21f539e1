"""viscometry: GUM uncertainty budgets for capillary viscometry.

Layers (data flows one way):

* core — :mod:`viscometry.gum` (inputs, whitelist formula parser, models with symbolic
  sensitivities, propagation, Monte Carlo, rounding), :mod:`viscometry.methods` (viscometer
  measurement equations and flow checks), :mod:`viscometry.properties` (water, gravity,
  temperature models), planning and conformity;
* edges — :mod:`viscometry.units`, budget files, the command line, reports, widgets.
"""

from typing import Any

from viscometry._lazy import lazy_names
from viscometry.errors import (
    BudgetFileError,
    CorrelationError,
    FormulaError,
    InputError,
    ModelError,
    UnitError,
    ValidityWarning,
    ViscometryError,
    ViscometryWarning,
)

# The engine's names are imported on first use (see :mod:`viscometry._lazy`): ``import
# viscometry`` costs the error classes only; sympy, numpy and scipy come with the first budget.
_LAZY = {
    "viscometry.gum": (
        "Budget",
        "BudgetResult",
        "Constant",
        "Correlation",
        "InputQuantity",
        "MeasurementModel",
    ),
}
_names_getattr, _names_dir = lazy_names(globals(), _LAZY)


def __getattr__(name: str) -> Any:
    # PEP 562: the engine's names on first use; ``__version__`` read from the installed
    # package's metadata on first use (importlib.metadata is not free to import).
    if name == "__version__":
        from importlib.metadata import PackageNotFoundError, version

        try:
            value = version("viscometry")
        except PackageNotFoundError:  # pragma: no cover - a source tree without install
            value = "0.0.0+unknown"
        globals()["__version__"] = value
        return value
    return _names_getattr(name)


def __dir__() -> list[str]:
    return sorted({*_names_dir(), "__version__"})


__all__ = [
    "Budget",
    "BudgetFileError",
    "BudgetResult",
    "Constant",
    "Correlation",
    "CorrelationError",
    "FormulaError",
    "InputError",
    "InputQuantity",
    "MeasurementModel",
    "ModelError",
    "UnitError",
    "ValidityWarning",
    "ViscometryError",
    "ViscometryWarning",
    "__version__",
]
