"""Reading budget files (TOML, ``viscometry-budget/1``) onto the budget's constructors.

The reader checks the *shape* of the file — tables, keys, types, one uncertainty form per
input — and maps each part onto the engine's own constructors
(:class:`~viscometry.gum.InputQuantity` factories, :class:`~viscometry.gum.Constant`,
:class:`~viscometry.gum.Correlation`, :meth:`~viscometry.gum.Budget.from_formula` or
:meth:`~viscometry.gum.Budget.from_method`). Everything the numbers must satisfy is checked
by the budget itself, on every path; the reader only points its errors at the file, table and
key (:class:`~viscometry.errors.BudgetFileError`). Reading uses :mod:`tomllib` (data only);
nothing in a file is ever run. The budget's warnings come with its evaluation, not with
loading.
"""

from __future__ import annotations

import datetime as _dt
import math
import os
import re
import tomllib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from viscometry import units as _units
from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.gum.budget import Budget, Constant, Correlation
from viscometry.gum.inputs import DISTRIBUTIONS, InputQuantity
from viscometry.gum.propagation import DEFAULT_COVERAGE_PROBABILITY
from viscometry.gum.rounding import ROUNDINGS
from viscometry.io.schema import (
    BOUNDED,
    CHECK_KEYS,
    CONSTANT_KEYS,
    CORRELATION_KEYS,
    FORM_KEYS,
    FORMAT,
    FORMS,
    INPUT_KEYS,
    MAX_FILE_BYTES,
    MEASURAND_KEYS,
    RECORDED_KEYS,
    TOP_KEYS,
    Recorded,
)

__all__ = [
    "BudgetFile",
    "is_budget_file",
    "load_budget",
    "loads_budget",
    "parse_toml",
    "read_document",
    "read_quantity",
    "read_text_file",
]


@dataclass(frozen=True)
class BudgetFile:
    """A budget read from a file, with what the file says was reported (immutable).

    Attributes
    ----------
    budget : Budget
        The budget the file describes (its model, inputs, settings and check context; its
        fingerprint, warnings and evaluation all come from it).
    recorded : Recorded or None
        The reported result kept for audits (the ``[recorded]`` table).
    source : str
        Path (or name) the budget was read from.
    """

    budget: Budget
    recorded: Recorded | None
    source: str

    @property
    def fingerprint(self) -> str:
        """The budget's fingerprint (:attr:`viscometry.gum.Budget.fingerprint`)."""
        return self.budget.fingerprint


# --------------------------------------------------------------------------- entry points
def read_text_file(path: str | os.PathLike[str], what: str, limit: int = MAX_FILE_BYTES) -> str:
    """The UTF-8 text of a regular file of at most ``limit`` bytes, or a clear error.

    Devices, FIFOs and sockets (also behind a symbolic link) are refused before anything is
    read, so a path can neither block nor feed endless data.

    Raises
    ------
    BudgetFileError
        Naming the path and the reason (``what`` says which kind of file was expected).
    """
    p = Path(path)
    try:
        if p.is_dir():
            raise BudgetFileError(f"{p}: is a directory, not {what}")
        if p.exists() and not p.is_file():
            raise BudgetFileError(f"{p}: is not a regular file (a device, FIFO or socket?)")
        size = p.stat().st_size
        if size > limit:
            raise BudgetFileError(f"{p}: file is {size} bytes; {what} may be at most {limit} bytes")
        with p.open("rb") as handle:
            raw = handle.read(limit + 1)
    except BudgetFileError:
        raise
    except OSError as exc:
        raise BudgetFileError(f"{p}: cannot read the file: {exc.strerror or exc}") from None
    if len(raw) > limit:
        raise BudgetFileError(
            f"{p}: file is over {limit} bytes; {what} may be at most {limit} bytes"
        )
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise BudgetFileError(
            f"{p}: not UTF-8 text (byte {raw[exc.start]:#04x} at offset {exc.start}); "
            f"save the file as UTF-8"
        ) from None


def load_budget(path: str | os.PathLike[str]) -> BudgetFile:
    """Read and validate a budget file.

    Parameters
    ----------
    path : path-like
        A TOML file in the ``viscometry-budget/1`` format, UTF-8, at most 1 MB.

    Returns
    -------
    BudgetFile

    Raises
    ------
    BudgetFileError
        The file cannot be read, is too large, not UTF-8, not valid TOML (the message gives
        the line), or its content is invalid (the message names table, key and value).
    """
    return loads_budget(read_text_file(path, "a budget file"), str(Path(path)))


def is_budget_file(path: str | os.PathLike[str]) -> bool:
    """True unless ``path`` is clearly some other TOML file (used when scanning folders).

    A file counts as a budget file when its ``format`` key starts with
    ``"viscometry-budget"``, and also when it cannot be read or parsed, is empty, or has no
    ``format`` key but a ``[measurand]`` or ``[inputs]`` table (so that a broken or emptied
    budget file is reported, not skipped). A readable TOML file of another kind (say, a list
    of upgrade candidates) is not a budget file.
    """
    try:
        doc = tomllib.loads(read_text_file(path, "a budget file"))
    except (BudgetFileError, tomllib.TOMLDecodeError, RecursionError, ValueError):
        return True
    fmt = doc.get("format")
    if isinstance(fmt, str):
        return fmt.startswith("viscometry-budget")
    return not doc or "measurand" in doc or "inputs" in doc


def loads_budget(text: str, source_name: str = "<string>") -> BudgetFile:
    """Validate a budget given as TOML text; see :func:`load_budget`.

    Examples
    --------
    >>> bf = loads_budget('''
    ... format = "viscometry-budget/1"
    ... [measurand]
    ... name = "y"
    ... unit = "mm"
    ... model = "a + b"
    ... [inputs.a]
    ... value = 1.0
    ... unit = "mm"
    ... standard_uncertainty = 0.3
    ... [inputs.b]
    ... value = 2.0
    ... unit = "mm"
    ... standard_uncertainty = 0.4
    ... ''')
    >>> r = bf.budget.evaluate()
    >>> r.value, round(r.expanded_uncertainty, 4)
    (3.0, 1.0)
    """
    src = source_name
    if not isinstance(text, str):
        raise BudgetFileError(f"{src}: budget text must be a str, got {type(text).__name__}")
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise BudgetFileError(
            f"{src}: more than {MAX_FILE_BYTES} bytes; too large for a budget file"
        )
    return read_document(parse_toml(text, src), src)


def parse_toml(text: str, src: str) -> dict[str, Any]:
    """The data of a TOML text (read with :mod:`tomllib`: data only, nothing is run), or a
    :class:`~viscometry.errors.BudgetFileError` naming ``src`` and the line."""
    if text.startswith("\ufeff"):  # tomllib would say "Invalid statement at line 1"
        raise BudgetFileError(
            f"{src}: starts with a byte-order mark (BOM), which TOML does not allow; "
            "save the file as UTF-8 without BOM"
        )
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise BudgetFileError(f"{src}: not valid TOML: {exc}") from None
    except RecursionError:
        raise BudgetFileError(f"{src}: not valid TOML: nested too deeply") from None
    except ValueError:  # an integer of more digits than Python converts (4300)
        raise BudgetFileError(f"{src}: {_huge_integer(text)}") from None


#: An integer of 4300 digits or more (TOML allows single underscores between digits): the
#: most Python converts from text.
_LONG_INTEGER = re.compile(r"(?<![0-9_.])[0-9](?:_?[0-9]){4299,}(?![0-9_.eE])")
#: A table header line, ``[inputs.r]`` or ``[[candidate]]``.
_TABLE_HEADER = re.compile(r"^[ \t]*(\[\[?[^\]\n]*\]\]?)", re.MULTILINE)


def _huge_integer(text: str) -> str:
    """Where a TOML text has an integer too long to read: line, key, table and size."""
    found = _LONG_INTEGER.search(text)
    if found is None:  # pragma: no cover - tomllib raises ValueError only for long integers
        return "not valid TOML: a number is too long to read"
    before = text[: found.start()]
    line = before.count("\n") + 1
    assignment = before[before.rfind("\n") + 1 :]
    key = assignment.split("=")[0].strip() if "=" in assignment else ""
    tables = _TABLE_HEADER.findall(before)
    at = f", key {_show(key)}" if key else ""
    at += f" in {_show(tables[-1])[1:-1]}" if tables else ""
    digits = sum(c.isdigit() for c in found.group())
    return (
        f"line {line}{at}: a number with {digits} digits is too long to read (no float holds "
        "more than 309 digits; write it with an exponent, e.g. 1.5e3)"
    )


def read_document(doc: Mapping[str, Any], src: str) -> BudgetFile:
    """The :class:`BudgetFile` of a parsed budget document (``src`` names it in errors)."""
    r = _Reader(src)
    r.keys(doc, TOP_KEYS, "top level")
    fmt = doc.get("format")
    if fmt is None:
        raise BudgetFileError(f'{src}: missing key format (write format = "{FORMAT}" first)')
    if fmt != FORMAT:
        raise BudgetFileError(f"{src}: format = {_show(fmt)} is not supported; expected {FORMAT!r}")
    m = r.table(doc, "measurand", "[measurand]", required=True)
    r.keys(m, MEASURAND_KEYS, "[measurand]")
    settings = _settings(r, doc, m)
    inputs_table = r.table(doc, "inputs", "[inputs]", required=True)
    if not inputs_table:
        raise BudgetFileError(f"{src}: [inputs] is empty; a budget needs at least one input")
    inputs = tuple(_input(r, name, spec) for name, spec in inputs_table.items())
    parts = {
        "constants": _constants(r, doc),
        "correlations": _correlations(r, doc, {q.name for q in inputs}),
        **settings,
    }
    name = r.text(m, "name", "[measurand]", required=True)
    unit = r.unit(m, "[measurand]")
    if "method" in m:
        method = _get_method(src, r.text(m, "method", "[measurand]", required=True))
        checks = _checks(r, doc, method)
        build: Callable[[], Budget] = lambda: Budget.from_method(  # noqa: E731
            method, inputs, unit, measurand=name, checks=checks, **parts
        )
    else:
        formula = r.text(m, "model", "[measurand]", required=True)
        extra = {"checks": _checks(r, doc, None)} if "checks" in doc else {}
        build = lambda: Budget.from_formula(name, formula, inputs, unit, **parts, **extra)  # noqa: E731
    budget = _wrap(src, build)
    return BudgetFile(budget=budget, recorded=_recorded(r, doc, unit), source=src)


def _settings(r: _Reader, doc: Mapping[str, Any], m: Mapping[str, Any]) -> dict[str, Any]:
    """Title, description, coverage settings and rounding of a budget file."""
    src = r.src
    if ("model" in m) == ("method" in m):
        raise BudgetFileError(
            f"{src}: [measurand] needs exactly one of model or method, got "
            + ("both" if "model" in m else "neither")
        )
    if "coverage_probability" in m and "coverage_factor" in m:
        raise BudgetFileError(
            f"{src}: [measurand] give coverage_probability or coverage_factor, not both"
        )
    p = r.number(m, "coverage_probability", "[measurand]", default=DEFAULT_COVERAGE_PROBABILITY)
    if not 0.0 < p < 1.0:
        raise r.fail(
            "[measurand]", f"coverage_probability must lie strictly between 0 and 1, got {p!r}"
        )
    k = r.number(m, "coverage_factor", "[measurand]", default=None)
    if k is not None and not k > 0:
        raise r.fail("[measurand]", f"coverage_factor must be positive, got {k!r}")
    rounding = r.text(m, "rounding", "[measurand]", default="nearest")
    if rounding not in ROUNDINGS:
        raise r.fail(
            "[measurand]", f"rounding must be one of {', '.join(ROUNDINGS)}, got {_show(rounding)}"
        )
    return {
        "title": r.text(doc, "title", "top level", default=""),
        "description": r.text(m, "description", "[measurand]", default=""),
        "coverage_probability": p,
        "coverage_factor": k,
        "rounding": rounding,
    }


def _cut(location: str, limit: int = 80) -> str:
    """A location such as ``[inputs.<name>]`` shortened in the middle when a name is long
    (the error's ``where`` keeps the whole name)."""
    if len(location) <= limit:
        return location
    return location[: limit - 16] + "…" + location[-15:]


def _where_of(location: str) -> str:
    """The ``where`` of a file location: ``"[inputs.r]"`` → ``"inputs.r"``,
    ``"[checks] g_local"`` → ``"checks.g_local"``, ``"correlations[0].between"`` →
    ``"correlations"``."""
    if location.startswith("[inputs."):
        return location[1:].split("]")[0]
    for table in ("checks", "constants"):
        if location.startswith(f"[{table}] "):
            return f"{table}.{location.split(' ', 1)[1].split(',')[0]}"
    if location.startswith("correlations"):
        return "correlations"
    return location.strip("[]").split("]")[0].replace("top level", "top")


def _location(where: str) -> str:
    table, _, key = where.partition(".")
    if table == "inputs" and key:
        return f"[inputs.{key}]"
    if table in ("checks", "constants") and key:
        return f"[{table}] {key}"
    if table == "correlations":
        return "correlations"
    return f"[{table}]"


def _wrap(src: str, build: Callable[[], Any]) -> Any:
    """Run a constructor; its errors become file errors that name the table and key."""
    try:
        return build()
    except BudgetFileError:
        raise
    except ViscometryError as exc:
        where = getattr(exc, "where", None)
        if where:
            text = str(exc).removeprefix(f"{where}: ")
            raise BudgetFileError(f"{src}: {_cut(_location(where))} {text}", where=where) from exc
        raise BudgetFileError(f"{src}: {exc}", where="measurand") from exc


# --------------------------------------------------------------------------- typed access
class _Reader:
    """Typed access to the parsed TOML with messages naming file, table, key and value."""

    def __init__(self, src: str) -> None:
        self.src = src

    def fail(self, where: str, message: str) -> BudgetFileError:
        return BudgetFileError(f"{self.src}: {_cut(where)} {message}", where=_where_of(where))

    def keys(self, table: Mapping[str, Any], allowed: Sequence[str], where: str) -> None:
        for key in table:
            if key not in allowed:
                raise self.fail(
                    where, f"has unknown key {_show(key)} (allowed: {', '.join(allowed)})"
                )

    def table(
        self, doc: Mapping[str, Any], key: str, where: str, *, required: bool = False
    ) -> dict:
        if key not in doc:
            if required:
                raise BudgetFileError(f"{self.src}: missing table {where}")
            return {}
        t = doc[key]
        if not isinstance(t, dict):
            raise self.fail(where, f"must be a table, got {_show(t)}")
        return t

    def text(
        self, t: Mapping[str, Any], key: str, where: str, *, required: bool = False,
        default: str | None = None,
    ) -> str:  # fmt: skip
        if key not in t:
            if required:
                raise self.fail(where, f"is missing key {key}")
            return default  # type: ignore[return-value]
        v = t[key]
        if not isinstance(v, str):
            raise self.fail(where, f"{key} must be a string, got {_show(v)}")
        return v

    def number(self, t: Mapping[str, Any], key: str, where: str, *, default: Any = ...) -> Any:
        if key not in t:
            if default is ...:
                raise self.fail(where, f"is missing key {key}")
            return default
        v = t[key]
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise self.fail(where, f"{key} must be a number, got {_show(v)}")
        try:
            x = float(v)
        except OverflowError:
            raise self.fail(where, f"{key} is too large for a number, got {_show(v)}") from None
        if math.isnan(x) or (math.isinf(x) and key not in ("dof", "pooled_dof")):
            raise self.fail(where, f"{key} must be finite, got {_show(v)}")
        return x

    def numbers(self, t: Mapping[str, Any], key: str, where: str) -> list[float]:
        v = t[key]
        if not isinstance(v, list) or not v:
            raise self.fail(where, f"{key} must be a non-empty list of numbers, got {_show(v)}")
        out = []
        for i, item in enumerate(v):
            ok = isinstance(item, (int, float)) and not isinstance(item, bool)
            try:
                x = float(item) if ok else math.nan
            except OverflowError:
                x = math.inf
            if not math.isfinite(x):
                raise self.fail(where, f"{key}[{i}] must be a finite number, got {_show(item)}")
            out.append(x)
        return out

    def unit(self, t: Mapping[str, Any], where: str) -> str:
        if "unit" not in t:
            raise self.fail(
                where, 'is missing key unit (use unit = "1" for a dimensionless quantity)'
            )
        u = self.text(t, "unit", where)
        try:
            _units.parse_unit(u, f"{where} unit")
            _units.check_offset_unit(u, f"{where} unit")
        except ViscometryError as exc:
            raise BudgetFileError(f"{self.src}: {exc}", where=_where_of(where)) from None
        return u


def show_value(v: Any, limit: int = 60) -> str:
    """``repr`` of a value from a file for an error message, at most ``limit`` characters.

    Examples
    --------
    >>> show_value("k" * 900_000)[-8:], show_value(10**400)
    ('kkkkk...', 'an integer of about 401 digits')
    """
    if isinstance(v, int) and not isinstance(v, bool) and abs(v).bit_length() > 200:
        return f"an integer of about {int(abs(v).bit_length() * math.log10(2)) + 1} digits"
    if isinstance(v, str) and len(v) > limit:
        v = v[:limit]  # (repr of the cut text: a 900 000-character string is not copied twice)
    text = repr(v) if not isinstance(v, (list, dict)) else _brief(v, limit)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def show_names(names: Any, most: int = 8) -> str:
    """Names (keys, inputs) for a message: each shortened, at most ``most`` of them.

    Examples
    --------
    >>> show_names(["a", "b"]), show_names([f"x{i}" for i in range(20)], 3)
    ("'a', 'b'", "'x0', 'x1', 'x2' and 17 more")
    """
    names = list(names)
    text = ", ".join(show_value(n, 40) for n in names[:most])
    return text + (f" and {len(names) - most} more" if len(names) > most else "")


def _brief(v: list | dict, limit: int) -> str:
    """The start of the repr of a list or table, without writing out all of a big one."""
    items = list(v.items())[:8] if isinstance(v, dict) else v[:8]
    text = repr(dict(items) if isinstance(v, dict) else items)
    if len(v) > 8:
        text = text[:-1] + ", ...]" if isinstance(v, list) else text[:-1] + ", ...}"
    return text if len(text) <= limit else text[: limit - 3] + "..."


_show = show_value


# --------------------------------------------------------------------------- parts
def _constants(r: _Reader, doc: Mapping[str, Any]) -> tuple[Constant, ...]:
    out = []
    for name, spec in r.table(doc, "constants", "[constants]").items():
        where = f"[constants] {name}"
        if not isinstance(spec, dict):
            raise r.fail(
                where, f'must be a table such as {{ value = 1.0, unit = "m" }}, got {_show(spec)}'
            )
        r.keys(spec, CONSTANT_KEYS, where)
        value, unit = r.number(spec, "value", where), r.unit(spec, where)
        description = r.text(spec, "description", where, default="")
        source = r.text(spec, "source", where, default="")
        out.append(
            _wrap(
                r.src,
                lambda n=name, v=value, u=unit, d=description, s=source: Constant(n, v, u, d, s),
            )
        )
    return tuple(out)


def _form(r: _Reader, where: str, spec: Mapping[str, Any]) -> str:
    forms = [f for f, keys in FORMS.items() if any(k in spec for k in keys)]
    if len(forms) != 1:
        listing = (
            "standard_uncertainty | expanded_uncertainty | half_width or lower/upper | readings"
        )
        got = " and ".join(forms) if forms else "none"
        raise r.fail(where, f"must give exactly one uncertainty form ({listing}), got {got}")
    form = forms[0]
    allowed = FORM_KEYS[form] | {"value", "unit", "description", "source"}
    for key in spec:
        if key not in allowed:
            raise r.fail(where, f"key {_show(key)} cannot be used with {form}")
    if "dof" in spec and "relative_uncertainty_of_uncertainty" in spec:
        raise r.fail(where, "give dof or relative_uncertainty_of_uncertainty, not both")
    return form


def _input(r: _Reader, name: str, spec: Any) -> InputQuantity:
    return read_quantity(r, spec, f"[inputs.{name}]", name, where=f"inputs.{name}")


def read_quantity(
    r: _Reader,
    spec: Any,
    location: str,
    name: str,
    *,
    where: str | None = None,
    default_value: float | None = None,
) -> InputQuantity:
    """A quantity stated like an input of a budget file (value, unit, one uncertainty form),
    from the table ``spec`` at ``location`` (e.g. ``"[inputs.C]"``; ``where`` names the part
    for widgets). ``default_value`` stands in for a missing ``value``. Other plain-text formats
    of the package (step-up chain files) state their quantities the same way."""
    if not isinstance(spec, dict):
        raise r.fail(
            location,
            'must be a table such as { value = ..., unit = "...", standard_uncertainty = ... }, '
            f"got {_show(spec)}",
        )
    r.keys(spec, INPUT_KEYS, location)
    if default_value is not None and "value" not in spec and "readings" not in spec:
        spec = {"value": default_value, **spec}
    part = where or _where_of(location)
    form = _form(r, location, spec)
    unit = r.unit(spec, location)
    common = {
        "description": r.text(spec, "description", location, default=""),
        "source": r.text(spec, "source", location, default=""),
    }
    builders = {
        "readings": _readings_input, "expanded_uncertainty": _expanded_input,
        "half_width": _bounded_input, "standard_uncertainty": _standard_input,
    }  # fmt: skip
    try:
        return builders[form](r, location, name, spec, unit, common)
    except BudgetFileError:
        raise
    except ViscometryError as exc:
        raise BudgetFileError(f"{r.src}: {_cut(location)} {exc}", where=part) from exc


def _dof_keys(r: _Reader, where: str, spec: Mapping[str, Any]) -> dict[str, Any]:
    return {
        "dof": r.number(spec, "dof", where, default=None),
        "relative_uncertainty_of_uncertainty": r.number(
            spec, "relative_uncertainty_of_uncertainty", where, default=None
        ),
    }


def _readings_input(r, where, name, spec, unit, common) -> InputQuantity:  # type: ignore[no-untyped-def]
    readings = r.numbers(spec, "readings", where)
    if "value" in spec:
        raise r.fail(where, "value cannot be given with readings (it is their mean)")
    if ("pooled_standard_deviation" in spec) != ("pooled_dof" in spec):
        raise r.fail(where, "pooled_standard_deviation and pooled_dof go together")
    if "pooled_standard_deviation" in spec:
        s_p = r.number(spec, "pooled_standard_deviation", where)
        nu_p = r.number(spec, "pooled_dof", where)
        return InputQuantity.from_pooled(name, readings, s_p, nu_p, unit, **common)
    return InputQuantity.from_readings(name, readings, unit, **common)


def _expanded_input(r, where, name, spec, unit, common) -> InputQuantity:  # type: ignore[no-untyped-def]
    if ("coverage_factor" in spec) == ("coverage_probability" in spec):
        raise r.fail(
            where,
            "expanded_uncertainty needs exactly one of coverage_factor or coverage_probability",
        )
    return InputQuantity.from_expanded(
        name, r.number(spec, "value", where), r.number(spec, "expanded_uncertainty", where), unit,
        coverage_factor=r.number(spec, "coverage_factor", where, default=None),
        coverage_probability=r.number(spec, "coverage_probability", where, default=None),
        **_dof_keys(r, where, spec), **common,
    )  # fmt: skip


def _bounded_input(r, where, name, spec, unit, common) -> InputQuantity:  # type: ignore[no-untyped-def]
    dist = r.text(spec, "distribution", where, default=None)
    if dist not in BOUNDED:
        raise r.fail(
            where,
            f"distribution must be one of {', '.join(BOUNDED)} with half_width or lower/upper, "
            f"got {_show(dist)}",
        )
    if "beta" in spec and dist != "trapezoidal":
        raise r.fail(where, f"beta is only used with distribution = 'trapezoidal', not {dist!r}")
    kwargs: dict[str, Any] = {
        "lower": r.number(spec, "lower", where, default=None),
        "upper": r.number(spec, "upper", where, default=None),
        **_dof_keys(r, where, spec), **common,
    }  # fmt: skip
    if dist == "trapezoidal":
        if "beta" not in spec:
            raise r.fail(where, "a trapezoidal distribution needs beta (0 to 1)")
        kwargs["beta"] = r.number(spec, "beta", where)
    value = r.number(spec, "value", where, default=None)
    half_width = r.number(spec, "half_width", where, default=None)
    return InputQuantity.bounded(dist, name, value, half_width, unit, **kwargs)


def _standard_input(r, where, name, spec, unit, common) -> InputQuantity:  # type: ignore[no-untyped-def]
    dist = r.text(spec, "distribution", where, default="normal")
    if dist not in DISTRIBUTIONS:
        raise r.fail(
            where, f"distribution must be one of {', '.join(DISTRIBUTIONS)}, got {_show(dist)}"
        )
    beta = r.number(spec, "beta", where, default=None)
    if beta is not None and dist != "trapezoidal":
        raise r.fail(where, f"beta is only used with distribution = 'trapezoidal', not {dist!r}")
    evaluation = r.text(spec, "evaluation", where, default="B")
    if evaluation not in ("A", "B"):
        raise r.fail(where, f"evaluation must be 'A' or 'B', got {_show(evaluation)}")
    return InputQuantity.from_standard(
        name, r.number(spec, "value", where), r.number(spec, "standard_uncertainty", where), unit,
        distribution=dist, evaluation=evaluation, beta=beta, **_dof_keys(r, where, spec), **common,  # type: ignore[arg-type]
    )  # fmt: skip


def _correlations(r: _Reader, doc: Mapping[str, Any], names: set[str]) -> tuple[Correlation, ...]:
    if "correlations" not in doc:
        return ()
    items = doc["correlations"]
    if not isinstance(items, list):
        raise r.fail(
            "correlations", f"must be an array of tables [[correlations]], got {_show(items)}"
        )
    out = []
    for i, c in enumerate(items):
        where = f"correlations[{i}]"
        if not isinstance(c, dict):
            raise r.fail(where, f"must be a table, got {_show(c)}")
        r.keys(c, CORRELATION_KEYS, where)
        if "between" not in c:
            raise r.fail(where, "is missing key between")
        pair = c["between"]
        if not (
            isinstance(pair, list) and len(pair) == 2 and all(isinstance(n, str) for n in pair)
        ):
            raise r.fail(f"{where}.between", f"must be two input names, got {_show(pair)}")
        for n in pair:
            if n not in names:
                raise r.fail(
                    f"{where}.between",
                    f"names unknown input {_show(n)} (inputs: {show_names(sorted(names))})",
                )
        coefficient = r.number(c, "coefficient", where)
        try:
            out.append(Correlation(pair[0], pair[1], coefficient))
        except ViscometryError as exc:
            raise BudgetFileError(f"{r.src}: {where} {exc}", where="correlations") from exc
    return tuple(out)


def _checks(r: _Reader, doc: Mapping[str, Any], method: Any) -> tuple[Constant, ...]:
    """The ``[checks]`` table as Constants (the budget checks keys, units and values).

    Each entry is ``{ value = ..., unit = "..." }`` (optionally with ``source``) or, for a
    dimensionless key of the model, a bare number.
    """
    where = "[checks]"
    out = []
    for key, spec in r.table(doc, "checks", where).items():
        kwhere = f"[checks] {key}"
        known = method is not None and key in method.context_keys
        want = method.context_unit(key) if known else "1"
        if isinstance(spec, dict):
            r.keys(spec, CHECK_KEYS, kwhere)
            value, unit = r.number(spec, "value", kwhere), r.unit(spec, kwhere)
            source = r.text(spec, "source", kwhere, default="")
        elif isinstance(spec, (int, float)) and not isinstance(spec, bool):
            if known and not _units.same_dimension(want, "1"):
                raise r.fail(
                    kwhere,
                    f'needs a unit: write {key} = {{ value = ..., unit = "{want}" }}, got {_show(spec)}',
                )
            value, unit, source = r.number(doc["checks"], key, where), "1", ""
        else:
            raise r.fail(
                kwhere,
                f'must be a table such as {{ value = ..., unit = "{want}" }}, got {_show(spec)}',
            )
        out.append(
            _wrap(r.src, lambda k=key, v=value, u=unit, s=source: Constant(k, v, u, source=s))
        )
    return tuple(out)


def _recorded(r: _Reader, doc: Mapping[str, Any], unit: str) -> Recorded | None:
    if "recorded" not in doc:
        return None
    where = "[recorded]"
    t = r.table(doc, "recorded", where)
    if "method" in t:
        raise r.fail(
            where, "key 'method' is now called 'propagation' (first-order or higher-order)"
        )
    r.keys(t, RECORDED_KEYS, where)
    value = r.number(t, "value", where)
    big_u = r.number(t, "expanded_uncertainty", where)
    if big_u < 0:
        raise r.fail(where, f"expanded_uncertainty must not be negative, got {big_u!r}")
    k = r.number(t, "coverage_factor", where, default=None)
    if k is not None and not k > 0:
        raise r.fail(where, f"coverage_factor must be positive, got {k!r}")
    p = r.number(t, "coverage_probability", where, default=None)
    if p is not None and not 0.0 < p < 1.0:
        raise r.fail(where, f"coverage_probability must lie strictly between 0 and 1, got {p!r}")
    rec_unit = r.unit(t, where) if "unit" in t else None
    if rec_unit is not None and _units.parse_unit(rec_unit) != _units.parse_unit(unit):
        raise r.fail(
            where,
            f"unit {_show(rec_unit)} differs from the measurand unit {_show(unit)}; record the result in "
            "the measurand's unit",
        )
    propagation = r.text(t, "propagation", where, default=None)
    if propagation not in (None, "first-order", "higher-order"):
        raise r.fail(
            where, f"propagation must be 'first-order' or 'higher-order', got {_show(propagation)}"
        )
    date = t.get("date")
    if date is not None and not isinstance(date, (str, _dt.date, _dt.datetime)):
        raise r.fail(where, f"date must be a date or a string, got {_show(date)}")
    text = {
        key: r.text(t, key, where, default=None)
        for key in ("fingerprint", "version", "statement", "note")
    }
    return Recorded(
        value=value, expanded_uncertainty=big_u, coverage_factor=k, coverage_probability=p,
        unit=rec_unit, propagation=propagation,
        date=None if date is None else (date if isinstance(date, str) else date.isoformat()),
        **text,
    )  # fmt: skip


def _get_method(src: str, name: str) -> Any:
    from viscometry.methods import get_method

    try:
        return get_method(name)
    except ViscometryError as exc:
        raise BudgetFileError(f"{src}: [measurand] method: {exc}", where="measurand") from None
