"""Small argument checks shared by the core modules (messages name the field and the value)."""

from __future__ import annotations

import math

from viscometry.errors import InputError

__all__ = ["finite", "positive", "non_negative", "degrees_of_freedom"]


def _shown(value: object) -> str:
    """``repr`` of a value for a message, shortened (a 5000-digit integer has no repr)."""
    if isinstance(value, int) and abs(value).bit_length() > 200:
        return f"an integer of about {int(abs(value).bit_length() * math.log10(2)) + 1} digits"
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def finite(value: object, field: str) -> float:
    """``value`` as a finite float, else :class:`InputError` naming ``field`` and the value.

    Examples
    --------
    >>> finite(2, "x")
    2.0
    >>> finite("abc", "x")
    Traceback (most recent call last):
    ...
    viscometry.errors.InputError: x must be a number, got 'abc'
    """
    if isinstance(value, bool):
        raise InputError(f"{field} must be a number, got {value!r}")
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise InputError(f"{field} must be a number, got {_shown(value)}") from None
    except OverflowError:  # an integer beyond the range of a float
        raise InputError(f"{field} must be finite, got {_shown(value)}") from None
    if not math.isfinite(x):
        raise InputError(f"{field} must be finite, got {x!r}")
    return x


def positive(value: object, field: str, *, allow_zero: bool = False) -> float:
    """A finite float > 0 (≥ 0 with ``allow_zero``), else :class:`InputError`."""
    x = finite(value, field)
    if x < 0 or (x == 0 and not allow_zero):
        raise InputError(
            f"{field} must be {'non-negative' if allow_zero else 'positive'}, got {x!r}"
        )
    return x


def non_negative(value: object, field: str) -> float:
    """A finite float ≥ 0, else :class:`InputError`."""
    return positive(value, field, allow_zero=True)


def degrees_of_freedom(value: object, field: str = "dof") -> float:
    """Degrees of freedom: a positive number, or ``inf`` (also ``None`` or the text "inf").

    Examples
    --------
    >>> degrees_of_freedom(None), degrees_of_freedom("inf"), degrees_of_freedom(4)
    (inf, inf, 4.0)
    """
    if value is None or (isinstance(value, str) and value.strip().lower() in {"inf", "infinity"}):
        return math.inf
    if isinstance(value, bool):
        raise InputError(f"{field} must be a positive number or 'inf', got {value!r}")
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise InputError(
            f"{field} must be a positive number or 'inf', got {_shown(value)}"
        ) from None
    except OverflowError:  # an integer beyond the range of a float: as good as infinite
        x = math.inf if value > 0 else -math.inf  # type: ignore[operator]
    if math.isnan(x) or x <= 0:
        raise InputError(f"{field} must be positive, got {x!r}")
    return x
