"""viscometry: GUM uncertainty budgets for capillary viscometry.

Layers (data flows one way):

* core — :mod:`viscometry.gum` (inputs, whitelist formula parser, models with symbolic
  sensitivities, propagation, Monte Carlo, rounding), :mod:`viscometry.methods` (viscometer
  measurement equations and flow checks), :mod:`viscometry.properties` (water, gravity,
  temperature models), planning and conformity;
* edges — :mod:`viscometry.units`, budget files, the command line, reports, widgets.
"""

from importlib.metadata import PackageNotFoundError, version

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
from viscometry.gum import (
    Budget,
    BudgetResult,
    Constant,
    Correlation,
    InputQuantity,
    MeasurementModel,
)

try:
    __version__ = version("viscometry")
except PackageNotFoundError:  # pragma: no cover - running from a source tree without install
    __version__ = "0.0.0+unknown"

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
