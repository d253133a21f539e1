"""Units at the edges: one pint registry, conversion factors to SI, dimension checks.

The engine works on SI floats. This module is where unit strings typed by users (budget
files, widgets, the API) are parsed and turned into plain conversion factors:
``x_SI = scale * x + offset``. Uncertainties, being differences, use ``scale`` only — so a
temperature given in ``degC`` has its estimate shifted by 273.15 K while its uncertainty is
a temperature difference in kelvin.

The registry (:func:`registry`, also reachable as ``ureg``) is built once, on first use, not
when this module is imported: importing :mod:`viscometry.units` costs no pint, numpy or sympy,
so that a command's ``--help`` starts at once. Pint's own definition cache
(``UnitRegistry(cache_folder=...)``) is not used: it stores pickles, which run code when
loaded, and a damaged cache file makes pint raise instead of rebuilding.
"""

from __future__ import annotations

import functools
import re
import threading
from collections.abc import Callable, Mapping
from typing import TYPE_CHECKING, Any

from viscometry.errors import UnitError

if TYPE_CHECKING:
    import pint
    import sympy as sp

__all__ = [
    "registry",
    "ureg",
    "parse_unit",
    "si_conversion",
    "si_unit_label",
    "same_dimension",
    "check_model_dimensions",
    "check_offset_unit",
    "format_unit",
    "convert",
    "canonical_unit",
]

#: The package's single unit registry, built on first use (module ``__getattr__`` below).
ureg: pint.UnitRegistry
_REGISTRY: pint.UnitRegistry | None = None
_REGISTRY_LOCK = threading.Lock()


def registry() -> pint.UnitRegistry:
    """The package's single unit registry, built on the first call and kept.

    Also reachable as ``viscometry.units.ureg``. Built under a lock, so threads that ask at
    once get the same registry (units of two registries cannot be combined).

    Examples
    --------
    >>> registry() is registry()
    True
    """
    global _REGISTRY
    if _REGISTRY is None:
        with _REGISTRY_LOCK:
            if _REGISTRY is None:
                import pint

                reg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
                reg.formatter.default_format = "~P"
                _REGISTRY = reg
    return _REGISTRY


def __getattr__(name: str) -> Any:
    # PEP 562: ``ureg``, the package's single unit registry, is built on first use.
    if name == "ureg":
        return registry()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted({*globals(), "ureg"})


_UNIT_TEXT = re.compile(r"^[A-Za-z0-9_ *./^()\-+µμ°%·²³]*$")
_MAX_UNIT_LENGTH = 80
#: A number raised to a power (``10**3``, ``9**9**9``), which a unit never needs.
_NUMBER_POWER = re.compile(r"[0-9.]\s*(\*\*|\^)")


@functools.lru_cache(maxsize=512)
def _parse(text: str) -> pint.Unit:
    ureg = registry()
    q = ureg.Quantity(1.0, text) if text else ureg.Quantity(1.0)
    return q.units


def parse_unit(text: str, field: str = "unit") -> pint.Unit:
    """Parse a unit string; ``""`` or ``"1"`` is dimensionless.

    Raises
    ------
    UnitError
        Naming the field and the text when the unit is unknown or malformed.

    Examples
    --------
    >>> str(parse_unit("mm^2/s"))
    'mm²/s'
    """
    if not isinstance(text, str):
        raise UnitError(f"{field} must be a string, got {text!r}")
    t = text.strip()
    if t in ("1", "-"):
        t = ""
    if len(t) > _MAX_UNIT_LENGTH or not _UNIT_TEXT.match(t):
        raise UnitError(f"{field}: {text[:40]!r} is not a unit expression")
    if _NUMBER_POWER.search(t):  # ``9**9**9`` would be computed exactly, for minutes
        raise UnitError(f"{field}: {text[:40]!r} raises a number to a power; write the unit")
    t = (
        t.replace("·", "*")
        .replace("²", "^2")
        .replace("³", "^3")
        .replace("μ", "u")
        .replace("µ", "u")
    )
    import pint

    try:
        unit = _parse(t)
    except (pint.errors.PintError, AttributeError, TypeError, ValueError, SyntaxError, KeyError):
        raise UnitError(f"{field}: unknown unit {text!r}") from None
    except Exception:  # pint's parser may raise odd errors on odd text
        raise UnitError(f"{field}: unknown unit {text!r}") from None
    return unit


@functools.lru_cache(maxsize=512)
def _conversion(unit_text: str) -> tuple[float, float]:
    unit = parse_unit(unit_text)
    ureg = registry()
    zero = ureg.Quantity(0.0, unit).to_base_units().magnitude
    one = ureg.Quantity(1.0, unit).to_base_units().magnitude
    return float(one - zero), float(zero)


def si_conversion(unit: str, field: str = "unit") -> tuple[float, float]:
    """Scale and offset with x_SI = scale·x + offset (offset is non-zero only for degC, degF).

    Examples
    --------
    >>> si_conversion("mm")
    (0.001, 0.0)
    >>> si_conversion("degC")
    (1.0, 273.15)
    """
    if isinstance(unit, str):
        hit = _KNOWN_CONVERSIONS.get(unit)
        if hit is not None:
            return hit
    parse_unit(unit, field)
    result = _conversion(unit.strip())
    if len(_KNOWN_CONVERSIONS) < 4096:
        _KNOWN_CONVERSIONS[unit] = result
    return result


_KNOWN_CONVERSIONS: dict[str, tuple[float, float]] = {}


def si_unit_label(unit: str) -> str:
    """The SI base unit that a unit converts to (for labels), e.g. ``'kg / m / s'``."""
    u = registry().Quantity(1.0, parse_unit(unit)).to_base_units().units
    return format_unit(u)


_SUPERSCRIPTS = str.maketrans("0123456789-.", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻·")


def _power(symbol: str, exponent: float) -> str:
    if exponent == 1:
        return symbol
    if float(exponent).is_integer():
        return symbol + str(int(exponent)).translate(_SUPERSCRIPTS)
    return f"{symbol}^{exponent:g}"


def format_unit(unit: pint.Unit | str) -> str:
    """Compact, readable unit text with at most one slash; ``''`` for dimensionless.

    Factors above the line first, then ``/`` and the factors below it, in parentheses when
    there are several (``mm²/(s·K)``, never ``mm²/K/s``).

    Examples
    --------
    >>> format_unit("mm^2/s"), format_unit("mPa*s"), format_unit("mm^2/s/K"), format_unit("1/K")
    ('mm²/s', 'mPa·s', 'mm²/(s·K)', '1/K')
    """
    u = parse_unit(unit) if isinstance(unit, str) else unit
    if u == registry().dimensionless:
        return ""
    items = list(u._units.items())
    up = [_power(_symbol(n), e) for n, e in items if e > 0]
    down = [_power(_symbol(n), -e) for n, e in items if e < 0]
    text = "·".join(up) or "1"
    if down:
        below = "·".join(down)
        text += "/" + (f"({below})" if len(down) > 1 else below)
    return text


@functools.lru_cache(maxsize=256)
def _symbol(name: str) -> str:
    return str(registry().get_symbol(name))


@functools.lru_cache(maxsize=1024)
def canonical_unit(unit: str, field: str = "unit") -> str:
    """A spelling-free key of a unit: its dimension, SI scale (12 digits) and offset.

    Two unit texts that denote the same unit (``"mm^2/s"``, ``"mm**2 / s"``, ``"mm²/s"``,
    ``"cSt"``) get the same key, so a fingerprint does not depend on how a unit was typed.

    Examples
    --------
    >>> canonical_unit("mm^2/s") == canonical_unit("mm² / s") == canonical_unit("cSt")
    True
    >>> canonical_unit("degC")
    '[temperature]*1+273.15'
    """
    dims = parse_unit(unit, field).dimensionality
    dim = "*".join(
        name if exp == 1 else f"{name}^{exp:g}" for name, exp in sorted(dict(dims).items())
    )
    scale, offset = si_conversion(unit, field)
    return f"{dim or '1'}*{scale:.12g}" + (f"+{offset:.12g}" if offset else "")


def same_dimension(a: str, b: str) -> bool:
    """True when two unit strings measure the same kind of quantity."""
    return parse_unit(a).dimensionality == parse_unit(b).dimensionality


def convert(value: float, from_unit: str, to_unit: str) -> float:
    """Convert a value between compatible units (offsets handled)."""
    if not same_dimension(from_unit, to_unit):
        raise UnitError(f"cannot convert {from_unit!r} to {to_unit!r}: different dimensions")
    s1, o1 = si_conversion(from_unit)
    s2, o2 = si_conversion(to_unit)
    return (value * s1 + o1 - o2) / s2


@functools.lru_cache(maxsize=1024)
def sensitivity_unit(output_unit: str, input_unit: str) -> str:
    """Unit of a sensitivity coefficient: output unit per input unit.

    For an offset input unit (degC) the coefficient is per kelvin-sized step, so the base
    unit is used. A ratio of like units that does not cancel exactly (mm/m) is kept as text.

    Examples
    --------
    >>> sensitivity_unit("mPa*s", "mm")
    'mPa·s/mm'
    >>> sensitivity_unit("mm", "1/K")
    'mm·K'
    >>> sensitivity_unit("mm^2/s", "degC")
    'mm²/(s·K)'
    >>> sensitivity_unit("mm", "mm")
    '1'
    """
    ureg = registry()
    out = parse_unit(output_unit)
    inp = parse_unit(input_unit)
    if si_conversion(input_unit)[1] != 0.0:  # offset unit: per degree of difference
        inp = ureg.Unit(f"delta_{inp}")
        if inp == ureg.Unit("delta_degC"):
            inp = ureg.kelvin  # a Celsius degree of difference is a kelvin
    ratio = out / inp
    if ratio == ureg.dimensionless:
        return "1"
    if ratio.dimensionless:
        return f"{format_unit(out)}/{_wrap(format_unit(inp))}"
    return format_unit(ratio)


def _wrap(text: str) -> str:
    return f"({text})" if any(c in text for c in "/·*") else text


def check_offset_unit(unit: str, field: str = "unit") -> None:
    """Refuse a product of an offset temperature unit with other units, such as ``degC*m``.

    A lone ``degC`` is a Celsius temperature (converted with its 273.15 K offset). Inside a
    compound unit pint reads ``degC`` as a temperature *difference*; that is what a rate
    (``degC/min``) or a coefficient (``1/degC``) means, but a product (``degC*m``,
    ``degC^2``) is ambiguous — an absolute temperature times a length, or a difference? —
    so it is refused; write ``K*m`` or ``delta_degC*m``.

    Raises
    ------
    UnitError
        Naming the field and the unit.

    Examples
    --------
    >>> check_offset_unit("degC/min")
    >>> check_offset_unit("degC*m", "[inputs.x] unit")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    viscometry.errors.UnitError: [inputs.x] unit 'degC*m' multiplies the offset temperature unit degC ...
    """
    if not isinstance(unit, str) or "delta_" in unit:
        return
    items = dict(parse_unit(unit, field)._units)
    deltas = {n: e for n, e in items.items() if n.startswith("delta_")}
    for name, exponent in deltas.items():
        others_up = any(e > 0 for n, e in items.items() if n != name)
        if exponent > 0 and (exponent != 1 or others_up):
            scale = name.removeprefix("delta_").replace("degree_", "deg").replace("Celsius", "C")
            scale = scale.replace("Fahrenheit", "F")
            raise UnitError(
                f"{field} {unit!r} multiplies the offset temperature unit {scale} with other "
                f"units, which is ambiguous (an absolute temperature or a difference?); write "
                f"K for an absolute temperature or delta_{scale} for a difference, e.g. "
                f"{unit.replace(scale, 'K')!r}"
            )


def check_model_dimensions(
    expression: sp.Expr,
    units: Mapping[str, str],
    measurand_unit: str,
    *,
    function_placeholders: Mapping[sp.Symbol, tuple[sp.Expr, str, str]] | None = None,
    field: str = "[measurand] model",
) -> None:
    """Check that a model's dimensions agree with the measurand's unit.

    The expression is evaluated once with pint quantities of magnitude 1 in each name's unit
    (converted to base units), so an addition of unlike dimensions or the exponential of a
    dimensioned quantity is found, and the result's dimension is compared with the
    measurand's.

    Parameters
    ----------
    expression : sympy.Expr
    units : mapping name → unit string
    measurand_unit : str
    function_placeholders : mapping, optional
        Symbols standing for calls of reference-data functions: symbol → (argument
        expression, argument unit, result unit). Each argument is checked against its unit and
        the symbol takes the result unit.

    Raises
    ------
    UnitError
        Naming the measurand unit and the model's dimension, or the inconsistent operation.
    """
    if not function_placeholders:
        _check_cached(expression, tuple(sorted(units.items())), measurand_unit, field)
        return
    _check_uncached(expression, units, measurand_unit, function_placeholders, field)


@functools.lru_cache(maxsize=256)
def _check_cached(
    expression: sp.Expr, units: tuple[tuple[str, str], ...], measurand_unit: str, field: str
) -> None:
    _check_uncached(expression, dict(units), measurand_unit, None, field)


def _check_uncached(
    expression: sp.Expr,
    units: Mapping[str, str],
    measurand_unit: str,
    function_placeholders: Mapping[sp.Symbol, tuple[sp.Expr, str, str]] | None,
    field: str,
) -> None:
    import numpy as np

    ureg = registry()
    placeholders = dict(function_placeholders or {})
    values: dict[sp.Symbol, object] = {}
    needed = set(expression.free_symbols).union(
        *(arg.free_symbols for arg, _a, _r in placeholders.values())
    )
    for s in needed:
        if s in placeholders:
            continue
        if s.name not in units:
            raise UnitError(f"{field}: no unit known for {s.name!r}")
        # numpy magnitudes: a division by zero or log(0) gives inf/nan instead of raising;
        # only the units matter here.
        values[s] = ureg.Quantity(
            np.float64(1.0), parse_unit(units[s.name], f"unit of {s.name}")
        ).to_base_units()
    for s, (arg, arg_unit, result_unit) in placeholders.items():
        got = _evaluate_with_units(arg, values, field)
        want = ureg.Quantity(1.0, parse_unit(arg_unit))
        if _dimensionality(got) != want.dimensionality:
            raise UnitError(
                f"{field}: argument {arg} has dimension {_dimensionality(got)}, expected {arg_unit!r}"
            )
        values[s] = ureg.Quantity(1.0, parse_unit(result_unit)).to_base_units()
    result = _evaluate_with_units(expression, values, field)
    want = parse_unit(measurand_unit, "[measurand] unit")
    got_dim = _dimensionality(result)
    if got_dim != ureg.Quantity(1.0, want).dimensionality:
        base = _base_label(result)
        raise UnitError(
            f"{field} has units of {base} (dimension {got_dim or 'dimensionless'}), which do not "
            f"match the measurand unit {measurand_unit!r} "
            f"(dimension {ureg.Quantity(1.0, want).dimensionality or 'dimensionless'})"
        )


def _dimensionality(x: object) -> object:
    ureg = registry()
    return x.dimensionality if isinstance(x, ureg.Quantity) else ureg.dimensionless.dimensionality


def _base_label(x: object) -> str:
    if isinstance(x, registry().Quantity):
        return format_unit(x.to_base_units().units) or "1"
    return "1"


def _evaluate_with_units(expr: sp.Expr, values: Mapping[sp.Symbol, object], field: str) -> object:
    import numpy as np
    import pint
    import sympy as sp

    syms = sorted(expr.free_symbols, key=lambda s: s.name)
    fn: Callable = sp.lambdify(syms, expr, modules="numpy")
    try:
        with np.errstate(all="ignore"):
            return fn(*(values[s] for s in syms))
    except pint.errors.DimensionalityError as exc:
        raise UnitError(f"{field} is dimensionally inconsistent: {exc}") from None
    except (
        pint.errors.OffsetUnitCalculusError
    ) as exc:  # pragma: no cover - base units remove offsets
        raise UnitError(f"{field}: offset units misused: {exc}") from None
    except (ArithmeticError, TypeError, ValueError) as exc:
        raise UnitError(f"{field}: its dimensions could not be checked ({exc})") from None
