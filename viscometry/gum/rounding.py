"""Rounding of a result and its uncertainty for reporting — done once, here.

The expanded uncertainty is given to at most two significant digits and the value to the
same decimal place (JCGM 100:2008, 7.2.6). Ordinary rounding uses round-half-even on the
exact decimal form of the number (ISO 80000-1:2009, Annex B, rule B). The documented option
``rounding="ea-4/02"`` rounds U *up* whenever ordinary rounding would lower it by more than
5 % (EA-4/02 M:2022, 5.4, from memory); ``rounding="up"`` always rounds U up. With two
significant digits ordinary rounding lowers U by at most 0.5/10.5 ≈ 4.8 %, so
``"ea-4/02"`` then equals ``"nearest"``; it differs when one digit is kept.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import ROUND_CEILING, ROUND_HALF_EVEN, Decimal, localcontext
from typing import Literal

from viscometry.errors import InputError

__all__ = [
    "ROUNDINGS",
    "Rounding",
    "RoundedResult",
    "round_result",
    "significant_decimal_places",
]

Rounding = Literal["nearest", "up", "ea-4/02"]
#: The rounding rules of a result statement (see :func:`round_result`).
ROUNDINGS: tuple[str, ...] = ("nearest", "up", "ea-4/02")


@dataclass(frozen=True, slots=True)
class RoundedResult:
    """A value and its expanded uncertainty rounded for a statement.

    ``value`` and ``uncertainty`` are the decimal strings to print; ``decimals`` the number
    of decimal places (negative for tens, hundreds...).
    """

    value: str
    uncertainty: str
    decimals: int

    @property
    def value_float(self) -> float:
        return float(self.value)

    @property
    def uncertainty_float(self) -> float:
        return float(self.uncertainty)


def significant_decimal_places(uncertainty: float, digits: int = 2) -> int:
    """Decimal places that keep ``digits`` significant digits of ``uncertainty``.

    Examples
    --------
    >>> significant_decimal_places(0.01234), significant_decimal_places(93.4), significant_decimal_places(1234.0)
    (3, 0, -2)
    """
    if not (math.isfinite(uncertainty) and uncertainty > 0):
        raise InputError(f"uncertainty to round must be positive and finite, got {uncertainty!r}")
    if digits not in (1, 2, 3):
        raise InputError(f"significant digits must be 1, 2 or 3, got {digits!r}")
    d = Decimal(repr(float(uncertainty)))
    exponent = d.adjusted()  # position of the leading digit
    return digits - 1 - exponent


def _quantize(x: Decimal, decimals: int, mode: str) -> Decimal:
    q = Decimal(1).scaleb(-decimals)
    with localcontext() as context:  # every digit down to 10^-decimals (a float has < 800)
        context.prec = max(context.prec, x.adjusted() + decimals + 2)
        return x.quantize(q, rounding=mode)


def round_result(
    value: float, expanded_uncertainty: float, *, digits: int = 2, rounding: Rounding = "nearest"
) -> RoundedResult:
    """Round U to ``digits`` significant digits and the value to the same decimal place.

    Parameters
    ----------
    value : float
        Estimate of the measurand.
    expanded_uncertainty : float
        U > 0, same unit as ``value``.
    digits : int
        Significant digits kept in U (1 to 3; 2 is the usual choice).
    rounding : {"nearest", "up", "ea-4/02"}
        How U is rounded (see module docstring). The value is always rounded to nearest.

    Examples
    --------
    >>> r = round_result(50.000838, 0.0000934)
    >>> r.value, r.uncertainty
    ('50.000838', '0.000093')
    >>> round_result(41.2745, 0.1512).uncertainty
    '0.15'
    >>> round_result(41.2745, 0.1049, rounding="ea-4/02").uncertainty
    '0.10'
    >>> round_result(41.2745, 0.1151, rounding="up").uncertainty
    '0.12'
    """
    if not math.isfinite(value):
        raise InputError(f"value to round must be finite, got {value!r}")
    if rounding not in ROUNDINGS:
        raise InputError(f"rounding must be 'nearest', 'up' or 'ea-4/02', got {rounding!r}")
    decimals = significant_decimal_places(expanded_uncertainty, digits)
    u_exact = Decimal(repr(float(expanded_uncertainty)))
    u_near = _quantize(u_exact, decimals, ROUND_HALF_EVEN)
    if u_near.adjusted() > u_exact.adjusted():  # 0.0995 -> 0.100: one digit more
        decimals -= 1
        u_near = _quantize(u_exact, decimals, ROUND_HALF_EVEN)
    if rounding == "up":
        u_out = _quantize(u_exact, decimals, ROUND_CEILING)
    elif rounding == "ea-4/02" and u_near < u_exact * Decimal("0.95"):
        u_out = _quantize(u_exact, decimals, ROUND_CEILING)
    else:
        u_out = u_near
    if u_out.adjusted() > u_exact.adjusted() and rounding != "nearest":
        decimals = min(decimals, significant_decimal_places(float(u_out), digits))
        u_out = _quantize(u_out, decimals, ROUND_CEILING)
    v_out = _quantize(Decimal(repr(float(value))), decimals, ROUND_HALF_EVEN)
    if v_out == 0:
        v_out = abs(v_out)
    return RoundedResult(_plain(v_out), _plain(u_out), decimals)


def _plain(d: Decimal) -> str:
    """Decimal to a plain (non-scientific) string, keeping trailing zeros."""
    return f"{d:f}"
