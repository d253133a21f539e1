"""The package's error hierarchy and domain warnings.

Every error raised on bad input derives from :class:`ViscometryError` and also from the
matching builtin (``ValueError``, ``TypeError``), so callers can catch either. Messages name
the offending field and its value.
"""

from __future__ import annotations

__all__ = [
    "ViscometryError",
    "InputError",
    "FormulaError",
    "UnitError",
    "CorrelationError",
    "BudgetFileError",
    "OutputError",
    "ModelError",
    "ViscometryWarning",
    "ValidityWarning",
    "CorrelationWarning",
]


class ViscometryError(Exception):
    """Base class of every error this package raises on purpose.

    Parameters
    ----------
    *args
        The message (one string that names the field and the value).
    where : str, optional
        The part of a budget the error is about, as a budget file names it: ``"inputs.r"``,
        ``"constants.T_ref"``, ``"checks.flow_volume"``, ``"correlations"`` or
        ``"measurand"``. Readers of files and widgets use it to point at the right table or
        field; the message itself never depends on it.
    """

    def __init__(self, *args: object, where: str | None = None) -> None:
        super().__init__(*args)
        self.where = where


class InputError(ViscometryError, ValueError):
    """An input quantity or parameter is invalid (negative radius, one reading, dof <= 0...)."""


class FormulaError(ViscometryError, ValueError):
    """A formula typed by a user was rejected by the whitelist parser."""


class UnitError(ViscometryError, ValueError):
    """A unit is unknown or of the wrong dimension."""


class CorrelationError(ViscometryError, ValueError):
    """A correlation coefficient or matrix is invalid (|r| > 1, asymmetric, not PSD)."""


class ModelError(ViscometryError, ValueError):
    """A measurement model cannot be evaluated (unknown name, non-finite result...)."""


class BudgetFileError(ViscometryError, ValueError):
    """A budget file is malformed; the message names the file, table and key."""


class OutputError(ViscometryError, ValueError):
    """An output path is refused before anything is written: it is an input file itself (also
    through a link), write-protected, a folder, a device or a pipe, or a dangling link."""


class ViscometryWarning(UserWarning):
    """Base class of the package's warnings."""


class ValidityWarning(ViscometryWarning):
    """Legal input outside a model's validity (turbulent flow, short flow time, ...)."""


class CorrelationWarning(ViscometryWarning):
    """Correlated inputs make an approximation (e.g. Welch-Satterthwaite) questionable."""
