"""Small argument checks shared by the core modules (messages name the field and the value)."""

from __future__ import annotations

import math
import numbers
import os

from viscometry.errors import InputError

__all__ = [
    "available_cores",
    "degrees_of_freedom",
    "finite",
    "non_negative",
    "positive",
    "worker_count",
]


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


def available_cores() -> int:
    """The number of CPU cores this process may use (at least 1).

    ``os.process_cpu_count()`` (Python 3.13), else the process's CPU affinity where the
    system has one (Linux), else ``os.cpu_count()``.

    Examples
    --------
    >>> available_cores() >= 1
    True
    """
    counter = getattr(os, "process_cpu_count", None)
    if counter is not None:  # pragma: no cover - Python 3.13
        return max(1, counter() or 1)
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # pragma: no cover - not on Linux
        return max(1, os.cpu_count() or 1)


def worker_count(value: object, field: str, most: int) -> int:
    """A number of workers (threads or processes): ``None`` means every available core; a
    whole number of at least 1, capped at ``most``; else :class:`InputError` naming ``field``.

    Examples
    --------
    >>> worker_count(2, "jobs", 64), worker_count(1000, "jobs", 64)
    (2, 64)
    >>> worker_count(0, "--jobs", 64)
    Traceback (most recent call last):
    ...
    viscometry.errors.InputError: --jobs must be a whole number of at least 1, got 0
    """
    if value is None:
        return min(available_cores(), most)
    if isinstance(value, bool) or not isinstance(value, numbers.Integral) or value < 1:
        raise InputError(f"{field} must be a whole number of at least 1, got {_shown(value)}")
    return min(int(value), most)
