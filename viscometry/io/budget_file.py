"""Plain-text budget files (TOML, format ``viscometry-budget/1``): load, validate, save.

A budget file describes one measurand: its model (a formula over named inputs and
constants, or a built-in viscometer method), the input quantities with their uncertainty
evaluations, constants, correlations, coverage settings, optionally the context of a built-in
method's validity checks (``[checks]``, outside the fingerprint: it changes no number) and the
result that was reported (``[recorded]``) so that an audit can recompute it. See
``docs/budget-files.md`` for the format with examples.

Reading uses :mod:`tomllib`; every table and key is checked, and a problem raises
:class:`~viscometry.errors.BudgetFileError` naming the file, the table, the key and the
value. Writing goes through the package's atomic writer and a small TOML writer for this
known structure; loading what was written gives identical results.
"""

from __future__ import annotations

import datetime as _dt
import importlib
import math
import os
import re
import tomllib
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from types import MappingProxyType
from typing import Any

import sympy as sp

from viscometry import units as _units
from viscometry.errors import (
    BudgetFileError,
    ValidityWarning,
    ViscometryError,
    ViscometryWarning,
)
from viscometry.gum.budget import (
    DEFAULT_COVERAGE_PROBABILITY,
    Budget,
    BudgetResult,
    Constant,
    Correlation,
)
from viscometry.gum.inputs import DISTRIBUTIONS, InputQuantity, dof_from_relative_uncertainty
from viscometry.gum.model import MeasurementModel
from viscometry.io.atomic import atomic_write_text
from viscometry.io.fingerprint import fingerprint as _fingerprint
from viscometry.units import check_offset_unit

__all__ = [
    "FORMAT",
    "MAX_FILE_BYTES",
    "is_budget_file",
    "BudgetFile",
    "Recorded",
    "budget_to_document",
    "dumps_budget",
    "load_budget",
    "loads_budget",
    "save_budget",
]

#: The format tag every budget file starts with.
FORMAT = "viscometry-budget/1"
#: Largest budget file accepted, in bytes (a budget is a page of text, not a data set).
MAX_FILE_BYTES = 1_000_000

_TOP_KEYS = (
    "format", "title", "measurand", "constants", "inputs", "correlations", "checks", "recorded",
)  # fmt: skip
_MEASURAND_KEYS = (
    "name", "unit", "model", "method", "coverage_probability", "coverage_factor", "rounding",
    "description",
)  # fmt: skip
_INPUT_KEYS = (
    "value", "unit", "standard_uncertainty", "distribution", "evaluation",
    "expanded_uncertainty", "coverage_factor", "coverage_probability",
    "half_width", "lower", "upper", "beta",
    "readings", "pooled_standard_deviation", "pooled_dof",
    "dof", "relative_uncertainty_of_uncertainty", "description", "source",
)  # fmt: skip
_CONSTANT_KEYS = ("value", "unit", "description", "source")
_CORRELATION_KEYS = ("between", "coefficient")
#: Keys of one entry of the ``[checks]`` table (the check context of a built-in method).
_CHECK_KEYS = ("value", "unit", "source")
_RECORDED_KEYS = (
    "value", "expanded_uncertainty", "coverage_factor", "coverage_probability", "unit",
    "method", "fingerprint", "version", "statement", "date", "note",
)  # fmt: skip
_ROUNDINGS = ("nearest", "up", "ea-4/02")
_BOUNDED = ("rectangular", "triangular", "arcsine", "trapezoidal")
_FORMS = {
    "standard_uncertainty": ("standard_uncertainty",),
    "expanded_uncertainty": ("expanded_uncertainty",),
    "half_width": ("half_width", "lower", "upper"),
    "readings": ("readings",),
}
#: Keys allowed with each uncertainty form, besides value, unit, description and source.
_FORM_KEYS = {
    "standard_uncertainty": {
        "standard_uncertainty", "distribution", "evaluation", "beta", "dof",
        "relative_uncertainty_of_uncertainty",
    },
    "expanded_uncertainty": {
        "expanded_uncertainty", "coverage_factor", "coverage_probability", "dof",
        "relative_uncertainty_of_uncertainty",
    },
    "half_width": {
        "half_width", "lower", "upper", "distribution", "beta", "dof",
        "relative_uncertainty_of_uncertainty",
    },
    "readings": {"readings", "pooled_standard_deviation", "pooled_dof"},
}  # fmt: skip


# --------------------------------------------------------------------------- data classes
@dataclass(frozen=True, slots=True)
class Recorded:
    """The result a budget file says was reported (its ``[recorded]`` table).

    All numbers are in the measurand's unit. ``fingerprint`` is the fingerprint of the
    inputs the record was computed from, if it was stored.
    """

    value: float
    expanded_uncertainty: float
    coverage_factor: float | None = None
    coverage_probability: float | None = None
    unit: str | None = None
    method: str | None = None
    fingerprint: str | None = None
    version: str | None = None
    statement: str | None = None
    date: str | None = None
    note: str | None = None


@dataclass(frozen=True)
class BudgetFile:
    """A budget read from (or ready to be written to) a budget file, immutable.

    Attributes
    ----------
    budget : Budget
        The uncertainty budget the file describes.
    title : str
        The file's title.
    recorded : Recorded or None
        The reported result kept for audits.
    source : str
        Path (or name) the budget was read from.
    fingerprint : str
        ``"sha256:..."`` over the canonical form of model, constants, inputs and settings.
    rounding : {"nearest", "up", "ea-4/02"}
        Rounding of the result statement.
    method : str or None
        Name of the built-in method, when the model is one.
    warnings : tuple of str
        Warnings found while loading (unused input, validity of a method...), also added to
        every result of :meth:`evaluate`.
    checks : mapping
        The ``[checks]`` table converted to SI (key → float in the unit of
        :meth:`viscometry.methods.Method.context_unit`), read-only; the context the method's
        validity checks ran with. Empty without a ``[checks]`` table.
    document : mapping
        The validated content of the file (read-only), which :func:`save_budget` writes back.
    """

    budget: Budget
    title: str
    recorded: Recorded | None
    source: str
    fingerprint: str
    rounding: str = "nearest"
    method: str | None = None
    warnings: tuple[str, ...] = ()
    document: Mapping[str, Any] = field(default_factory=lambda: MappingProxyType({}), repr=False)
    checks: Mapping[str, float] = field(default_factory=lambda: MappingProxyType({}))

    def evaluate(self, *, higher_order: bool = False) -> BudgetResult:
        """Evaluate the budget with the file's rounding; load warnings join the result's.

        Parameters
        ----------
        higher_order : bool
            Include the second-order terms of JCGM 100:2008 eq. (10).
        """
        result = self.budget.evaluate(higher_order=higher_order, rounding=self.rounding)  # type: ignore[arg-type]
        if self.warnings:
            result = replace(result, warnings=tuple(self.warnings) + tuple(result.warnings))
        return result


# --------------------------------------------------------------------------- loading
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

    Warns
    -----
    ViscometryWarning
        For an input the model does not use; ValidityWarning for a method's validity check.
    """
    p = Path(path)
    try:
        size = p.stat().st_size
        if size > MAX_FILE_BYTES:
            raise BudgetFileError(
                f"{p}: file is {size} bytes; a budget file may be at most {MAX_FILE_BYTES} bytes"
            )
        raw = p.read_bytes()
    except BudgetFileError:
        raise
    except IsADirectoryError:
        raise BudgetFileError(f"{p}: is a directory, not a budget file") from None
    except OSError as exc:
        raise BudgetFileError(f"{p}: cannot read the file: {exc.strerror or exc}") from None
    if len(raw) > MAX_FILE_BYTES:
        raise BudgetFileError(
            f"{p}: file is {len(raw)} bytes; a budget file may be at most {MAX_FILE_BYTES} bytes"
        )
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise BudgetFileError(
            f"{p}: not UTF-8 text (byte {raw[exc.start]:#04x} at offset {exc.start}); "
            f"save the file as UTF-8"
        ) from None
    return loads_budget(text, str(p))


def is_budget_file(path: str | os.PathLike[str]) -> bool:
    """True unless ``path`` is clearly some other TOML file (used when scanning folders).

    A file counts as a budget file when its ``format`` key starts with
    ``"viscometry-budget"``, and also when it cannot be read or parsed (so that a broken
    budget file is reported, not skipped). A readable TOML file without such a ``format``
    key (say, a list of upgrade candidates) is not a budget file.
    """
    p = Path(path)
    try:
        if p.stat().st_size > MAX_FILE_BYTES:
            return True
        doc = tomllib.loads(p.read_bytes().decode("utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return True
    fmt = doc.get("format")
    return isinstance(fmt, str) and fmt.startswith("viscometry-budget")


def loads_budget(text: str, source_name: str = "<string>") -> BudgetFile:
    """Validate a budget given as TOML text; see :func:`load_budget`.

    Parameters
    ----------
    text : str
        The file's content.
    source_name : str
        Name used in messages and kept as :attr:`BudgetFile.source`.

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
    >>> bf.evaluate().statement()
    'y = (3.0 ± 1.0) mm, k = 2.00, p ≈ 95.45 % (relative U = 33 %)'
    """
    src = source_name
    if not isinstance(text, str):
        raise BudgetFileError(f"{src}: budget text must be a str, got {type(text).__name__}")
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise BudgetFileError(
            f"{src}: more than {MAX_FILE_BYTES} bytes; too large for a budget file"
        )
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise BudgetFileError(f"{src}: not valid TOML: {exc}") from None
    return _from_document(doc, src)


def _from_document(doc: Mapping[str, Any], src: str) -> BudgetFile:
    r = _Reader(src)
    r.keys(doc, _TOP_KEYS, "top level")
    fmt = doc.get("format")
    if fmt is None:
        raise BudgetFileError(f'{src}: missing key format (write format = "{FORMAT}" first)')
    if fmt != FORMAT:
        raise BudgetFileError(f"{src}: format = {fmt!r} is not supported; expected {FORMAT!r}")
    title = r.text(doc, "title", "top level", default="")

    m = r.table(doc, "measurand", "[measurand]", required=True)
    r.keys(m, _MEASURAND_KEYS, "[measurand]")
    measurand = r.text(m, "name", "[measurand]", required=True)
    unit = r.unit(m, "[measurand]")
    has_model, has_method = "model" in m, "method" in m
    if has_model == has_method:
        raise BudgetFileError(
            f"{src}: [measurand] needs exactly one of model or method, got "
            + ("both" if has_model else "neither")
        )
    if "coverage_probability" in m and "coverage_factor" in m:
        raise BudgetFileError(
            f"{src}: [measurand] give coverage_probability or coverage_factor, not both"
        )
    p = r.number(m, "coverage_probability", "[measurand]", default=DEFAULT_COVERAGE_PROBABILITY)
    if not 0.0 < p < 1.0:
        raise BudgetFileError(
            f"{src}: [measurand] coverage_probability must lie strictly between 0 and 1, got {p!r}"
        )
    k = r.number(m, "coverage_factor", "[measurand]", default=None)
    if k is not None and not k > 0:
        raise BudgetFileError(f"{src}: [measurand] coverage_factor must be positive, got {k!r}")
    rounding = r.text(m, "rounding", "[measurand]", default="nearest")
    if rounding not in _ROUNDINGS:
        raise BudgetFileError(
            f"{src}: [measurand] rounding must be one of {', '.join(_ROUNDINGS)}, got {rounding!r}"
        )
    r.text(m, "description", "[measurand]", default="")

    constants = _constants(r, doc)
    inputs_table = r.table(doc, "inputs", "[inputs]", required=True)
    if not inputs_table:
        raise BudgetFileError(f"{src}: [inputs] is empty; a budget needs at least one input")
    inputs = tuple(_input(r, name, spec) for name, spec in inputs_table.items())
    input_names = [q.name for q in inputs]
    const_names = [c.name for c in constants]
    clash = sorted(set(input_names) & set(const_names))
    if clash:
        raise BudgetFileError(
            f"{src}: {', '.join(clash)} named both in [inputs] and in [constants]"
        )

    method_obj = None
    method_name = None
    check_context: dict[str, float] = {}
    if has_model:
        if "checks" in doc:
            raise r.fail(
                "[checks]",
                "is only used with a built-in method ([measurand] method = ...): a formula "
                "model has no validity checks to run; remove the [checks] table",
            )
        formula = r.text(m, "model", "[measurand]", required=True)
        model = _wrap(
            src,
            lambda: MeasurementModel.from_formula(
                formula, input_names, const_names, measurand, field="[measurand] model"
            ),
        )
    else:
        method_name = r.text(m, "method", "[measurand]", required=True)
        method_obj = _get_method(src, method_name)
        model = _method_model(r, method_obj, method_name, measurand, inputs, constants)
        check_context = _check_context(r, doc, method_obj, method_name)

    correlations = _correlations(r, doc, set(input_names))
    budget = _wrap(
        src,
        lambda: Budget(
            model,
            inputs,
            unit,
            constants,
            correlations,
            coverage_probability=p,
            coverage_factor=k,
            title=title,
        ),  # fmt: skip
    )
    load_warnings: list[str] = []
    used = set(model.used_inputs)
    for name in input_names:
        if name not in used:
            load_warnings.append(
                f"[inputs.{name}] is not used by the model; its sensitivity coefficient is zero"
            )
    free = {s.name for s in model.expression.free_symbols}
    for name in const_names:
        if name not in free:
            load_warnings.append(f"[constants] {name} is not used by the model")
    for w in load_warnings:
        warnings.warn(f"{src}: {w}", ViscometryWarning, stacklevel=3)
    if method_obj is not None:
        x, _u, _nu, c = budget.si_arrays()
        values = dict(zip(input_names, map(float, x), strict=True))
        values.update(zip(const_names, map(float, c), strict=True))
        values.update(check_context)
        try:
            checks = list(method_obj.check(values))
        except ViscometryError as exc:
            raise BudgetFileError(f"{src}: [measurand] method {method_name!r}: {exc}") from exc
        except (ArithmeticError, ValueError, TypeError) as exc:  # a check that cannot cope
            raise BudgetFileError(
                f"{src}: [measurand] method {method_name!r}: the validity checks failed at the "
                f"estimates ({type(exc).__name__}: {exc})"
            ) from exc
        for w in checks:
            warnings.warn(f"{src}: {w}", ValidityWarning, stacklevel=3)
            load_warnings.append(str(w))

    recorded = _recorded(r, doc, unit)
    frozen = _freeze(doc)
    return BudgetFile(
        budget=budget,
        title=title,
        recorded=recorded,
        source=src,
        fingerprint=_fingerprint(doc),
        rounding=rounding,
        method=method_name,
        warnings=tuple(load_warnings),
        document=frozen,
        checks=MappingProxyType(dict(check_context)),
    )


def _wrap(src: str, build: Any) -> Any:
    try:
        return build()
    except BudgetFileError:
        raise
    except ViscometryError as exc:
        raise BudgetFileError(f"{src}: {exc}") from exc


class _Reader:
    """Typed access to the parsed TOML with messages naming file, table, key and value."""

    def __init__(self, src: str) -> None:
        self.src = src

    def fail(self, where: str, message: str) -> BudgetFileError:
        return BudgetFileError(f"{self.src}: {where} {message}")

    def keys(self, table: Mapping[str, Any], allowed: Sequence[str], where: str) -> None:
        for key in table:
            if key not in allowed:
                raise self.fail(where, f"has unknown key {key!r} (allowed: {', '.join(allowed)})")

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
        x = float(v)
        if math.isnan(x) or (math.isinf(x) and key not in ("dof", "pooled_dof")):
            raise self.fail(where, f"{key} must be finite, got {_show(v)}")
        return x

    def numbers(self, t: Mapping[str, Any], key: str, where: str) -> list[float]:
        v = t[key]
        if not isinstance(v, list) or not v:
            raise self.fail(where, f"{key} must be a non-empty list of numbers, got {_show(v)}")
        out = []
        for i, item in enumerate(v):
            if (
                isinstance(item, bool)
                or not isinstance(item, (int, float))
                or not math.isfinite(item)
            ):
                raise self.fail(where, f"{key}[{i}] must be a finite number, got {_show(item)}")
            out.append(float(item))
        return out

    def unit(self, t: Mapping[str, Any], where: str) -> str:
        if "unit" not in t:
            raise self.fail(
                where, 'is missing key unit (use unit = "1" for a dimensionless quantity)'
            )
        u = self.text(t, "unit", where)
        try:
            _units.parse_unit(u, f"{where} unit")
            check_offset_unit(u, f"{where} unit")
        except ViscometryError as exc:
            raise BudgetFileError(f"{self.src}: {exc}") from None
        return u


def _show(v: Any) -> str:
    text = repr(v)
    return text if len(text) <= 60 else text[:57] + "..."


def _constants(r: _Reader, doc: Mapping[str, Any]) -> tuple[Constant, ...]:
    out = []
    for name, spec in r.table(doc, "constants", "[constants]").items():
        where = f"[constants] {name}"
        if not isinstance(spec, dict):
            raise r.fail(
                where, f'must be a table such as {{ value = 1.0, unit = "m" }}, got {_show(spec)}'
            )
        r.keys(spec, _CONSTANT_KEYS, where)
        value = r.number(spec, "value", where)
        unit = r.unit(spec, where)
        out.append(
            _wrap(
                r.src,
                lambda name=name, value=value, unit=unit, spec=spec, where=where: Constant(
                    name,
                    value,
                    unit,
                    r.text(spec, "description", where, default=""),
                    r.text(spec, "source", where, default=""),
                ),  # fmt: skip
            )
        )
    return tuple(out)


def _input(r: _Reader, name: str, spec: Any) -> InputQuantity:
    where = f"[inputs.{name}]"
    if not isinstance(spec, dict):
        raise r.fail(where, f"must be a table, got {_show(spec)}")
    r.keys(spec, _INPUT_KEYS, where)
    forms = [f for f, keys in _FORMS.items() if any(k in spec for k in keys)]
    if len(forms) != 1:
        listing = (
            "standard_uncertainty | expanded_uncertainty | half_width or lower/upper | readings"
        )
        got = " and ".join(forms) if forms else "none"
        raise r.fail(where, f"must give exactly one uncertainty form ({listing}), got {got}")
    form = forms[0]
    allowed = _FORM_KEYS[form] | {"value", "unit", "description", "source"}
    for key in spec:
        if key not in allowed:
            raise r.fail(where, f"key {key!r} cannot be used with {form}")
    unit = r.unit(spec, where)
    desc = r.text(spec, "description", where, default="")
    source = r.text(spec, "source", where, default="")
    num = lambda key, default=...: r.number(spec, key, where, default=default)  # noqa: E731
    if "dof" in spec and "relative_uncertainty_of_uncertainty" in spec:
        raise r.fail(where, "give dof or relative_uncertainty_of_uncertainty, not both")
    dof = num("dof", None)
    rel = num("relative_uncertainty_of_uncertainty", None)
    common = {"description": desc, "source": source}

    def build() -> InputQuantity:
        if form == "readings":
            readings = r.numbers(spec, "readings", where)
            if "value" in spec:
                raise r.fail(where, "value cannot be given with readings (it is their mean)")
            if ("pooled_standard_deviation" in spec) != ("pooled_dof" in spec):
                raise r.fail(where, "pooled_standard_deviation and pooled_dof go together")
            if "pooled_standard_deviation" in spec:
                return InputQuantity.from_pooled(
                    name, readings, num("pooled_standard_deviation"), num("pooled_dof"), unit,
                    **common,
                )  # fmt: skip
            return InputQuantity.from_readings(name, readings, unit, **common)
        b_dof = dof_from_relative_uncertainty(rel) if rel is not None else dof
        if form == "expanded_uncertainty":
            has_k, has_p = "coverage_factor" in spec, "coverage_probability" in spec
            if has_k == has_p:
                raise r.fail(
                    where,
                    "expanded_uncertainty needs exactly one of coverage_factor or "
                    "coverage_probability",
                )
            return InputQuantity.from_expanded(
                name, num("value"), num("expanded_uncertainty"), unit,
                coverage_factor=num("coverage_factor", None),
                coverage_probability=num("coverage_probability", None),
                dof=b_dof, **common,
            )  # fmt: skip
        if form == "half_width":
            dist = r.text(spec, "distribution", where, default=None)
            if dist not in _BOUNDED:
                raise r.fail(
                    where,
                    f"distribution must be one of {', '.join(_BOUNDED)} with half_width or "
                    f"lower/upper, got {dist!r}",
                )
            if "beta" in spec and dist != "trapezoidal":
                raise r.fail(
                    where, f"beta is only used with distribution = 'trapezoidal', not {dist!r}"
                )
            kwargs: dict[str, Any] = {
                "lower": num("lower", None), "upper": num("upper", None), "dof": b_dof, **common,
            }  # fmt: skip
            if dist == "trapezoidal":
                if "beta" not in spec:
                    raise r.fail(where, "a trapezoidal distribution needs beta (0 to 1)")
                kwargs["beta"] = num("beta")
            factory = getattr(InputQuantity, dist)
            return factory(name, num("value", None), num("half_width", None), unit, **kwargs)
        # standard_uncertainty
        dist = r.text(spec, "distribution", where, default="normal")
        if dist not in DISTRIBUTIONS:
            raise r.fail(
                where, f"distribution must be one of {', '.join(DISTRIBUTIONS)}, got {dist!r}"
            )
        beta = num("beta", None)
        if beta is not None and dist != "trapezoidal":
            raise r.fail(
                where, f"beta is only used with distribution = 'trapezoidal', not {dist!r}"
            )
        evaluation = r.text(spec, "evaluation", where, default="B")
        if evaluation not in ("A", "B"):
            raise r.fail(where, f"evaluation must be 'A' or 'B', got {evaluation!r}")
        return InputQuantity(
            name=name, value=num("value"), standard_uncertainty=num("standard_uncertainty"),
            unit=unit, distribution=dist, dof=math.inf if b_dof is None else b_dof,  # type: ignore[arg-type]
            evaluation=evaluation, beta=beta, **common,  # type: ignore[arg-type]
        )  # fmt: skip

    try:
        return build()
    except BudgetFileError:
        raise
    except ViscometryError as exc:
        raise BudgetFileError(f"{r.src}: {where} {exc}") from exc


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
        r.keys(c, _CORRELATION_KEYS, where)
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
                    f"names unknown input {n!r} (inputs: {', '.join(sorted(names))})",
                )
        coefficient = r.number(c, "coefficient", where)
        try:
            out.append(Correlation(pair[0], pair[1], coefficient))
        except ViscometryError as exc:
            raise BudgetFileError(f"{r.src}: {where} {exc}") from exc
    return tuple(out)


def _recorded(r: _Reader, doc: Mapping[str, Any], unit: str) -> Recorded | None:
    if "recorded" not in doc:
        return None
    where = "[recorded]"
    t = r.table(doc, "recorded", where)
    r.keys(t, _RECORDED_KEYS, where)
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
    rec_unit = None
    if "unit" in t:
        rec_unit = r.unit(t, where)
        if _units.parse_unit(rec_unit) != _units.parse_unit(unit):
            raise r.fail(
                where,
                f"unit {rec_unit!r} differs from the measurand unit {unit!r}; "
                "record the result in the measurand's unit",
            )
    method = r.text(t, "method", where, default=None)
    if method not in (None, "first-order", "higher-order"):
        raise r.fail(where, f"method must be 'first-order' or 'higher-order', got {method!r}")
    date = t.get("date")
    if date is not None and not isinstance(date, (str, _dt.date, _dt.datetime)):
        raise r.fail(where, f"date must be a date or a string, got {_show(date)}")
    return Recorded(
        value=value,
        expanded_uncertainty=big_u,
        coverage_factor=k,
        coverage_probability=p,
        unit=rec_unit,
        method=method,
        fingerprint=r.text(t, "fingerprint", where, default=None),
        version=r.text(t, "version", where, default=None),
        statement=r.text(t, "statement", where, default=None),
        date=None if date is None else (date if isinstance(date, str) else date.isoformat()),
        note=r.text(t, "note", where, default=None),
    )


# --------------------------------------------------------------------------- methods
def _get_method(src: str, name: str) -> Any:
    try:
        methods = importlib.import_module("viscometry.methods")
        get_method = methods.get_method
    except (ImportError, AttributeError):
        raise BudgetFileError(
            f"{src}: [measurand] method: unknown method {name!r} "
            f"(the built-in methods are not available in this installation)"
        ) from None
    try:
        return get_method(name)
    except (KeyError, LookupError, ValueError) as exc:
        detail = str(exc).strip("'\"")
        if "unknown method" in detail:
            raise BudgetFileError(f"{src}: [measurand] method: {detail}") from None
        raise BudgetFileError(
            f"{src}: [measurand] method: unknown method {name!r} ({detail})"
        ) from None


def _method_model(
    r: _Reader,
    method: Any,
    name: str,
    measurand: str,
    inputs: tuple[InputQuantity, ...],
    constants: tuple[Constant, ...],
) -> MeasurementModel:
    given = {q.name: q for q in inputs}
    missing = [n for n in method.input_names if n not in given]
    if missing:
        raise r.fail(
            "[inputs]",
            f"method {name!r} needs input(s) {', '.join(missing)} "
            f"(it uses: {', '.join(method.input_names)})",
        )
    cnames = {c.name for c in constants}
    missing_c = [n for n in getattr(method, "constant_names", ()) if n not in cnames]
    if missing_c:
        raise r.fail("[constants]", f"method {name!r} needs constant(s) {', '.join(missing_c)}")
    units = dict(getattr(method, "input_units", {}) or {})
    for n in method.input_names:
        want = units.get(n)
        if want is not None and not _units.same_dimension(given[n].unit, want):
            raise r.fail(
                f"[inputs.{n}]",
                f"unit {given[n].unit!r} does not fit method {name!r}, which expects a "
                f"quantity measured in units like {want!r}",
            )
    estimate_problem = getattr(method, "estimate_problem", None)
    if estimate_problem is not None:
        for n in method.input_names:
            q = given[n]
            scale, offset = _units.si_conversion(q.unit)
            problem = estimate_problem(n, q.value * scale + offset, q.unit)
            if problem:
                what = "value (the mean of the readings)" if q.readings else "value"
                raise r.fail(f"[inputs.{n}]", f"{what} {problem}, got {q.value!r} {q.unit}")
    return _wrap(
        r.src,
        lambda: MeasurementModel(
            method.expression,
            tuple(q.name for q in inputs),
            tuple(c.name for c in constants),
            measurand,
            None,
        ),
    )


def _check_context(r: _Reader, doc: Mapping[str, Any], method: Any, name: str) -> dict[str, float]:
    """The ``[checks]`` table in SI: the optional context of the method's validity checks.

    Each key is one of the method's ``context_keys``, given as ``{ value = ..., unit = "..." }``
    (optionally with ``source``) or, for a dimensionless key, as a bare number. The values
    are converted with :func:`viscometry.units.si_conversion` and must be positive (every
    context key is a size, a time, an acceleration, an absolute temperature or a molar mass).
    """
    where = "[checks]"
    table = r.table(doc, "checks", where)
    accepted = tuple(getattr(method, "context_keys", None) or ())
    out: dict[str, float] = {}
    for key, spec in table.items():
        if key not in accepted:
            allowed = ", ".join(accepted) if accepted else "none (it has no optional checks)"
            raise r.fail(where, f"has unknown key {key!r}; method {name!r} accepts: {allowed}")
        kwhere = f"[checks] {key}"
        want = method.context_unit(key)
        dimensionless = _units.same_dimension(want, "1")
        if isinstance(spec, dict):
            r.keys(spec, _CHECK_KEYS, kwhere)
            value = r.number(spec, "value", kwhere)
            unit = r.unit(spec, kwhere)
            r.text(spec, "source", kwhere, default="")
        elif isinstance(spec, (int, float)) and not isinstance(spec, bool) and dimensionless:
            value = r.number(table, key, where)
            unit = "1"
        else:
            example = f'{{ value = ..., unit = "{want}" }}'
            if not dimensionless and isinstance(spec, (int, float)) and not isinstance(spec, bool):
                raise r.fail(kwhere, f"needs a unit: write {key} = {example}, got {_show(spec)}")
            raise r.fail(kwhere, f"must be a table such as {example}, got {_show(spec)}")
        if not _units.same_dimension(unit, want):
            raise r.fail(
                kwhere,
                f"unit {unit!r} does not fit method {name!r}: {key} is measured in units "
                f"like {want!r}",
            )
        if "delta_" in unit and _units.same_dimension(want, "K"):
            raise r.fail(
                kwhere,
                f"unit {unit!r} is a temperature difference, but {key} is an absolute "
                f'temperature; write unit = "K" or "degC"',
            )
        scale, offset = _units.si_conversion(unit, f"{kwhere} unit")
        value_si = value * scale + offset
        if not (math.isfinite(value_si) and value_si > 0):
            raise r.fail(kwhere, f"value must be positive and finite, got {value!r} {unit}")
        out[key] = value_si
    return out


# --------------------------------------------------------------------------- documents
def _freeze(v: Any) -> Any:
    if isinstance(v, Mapping):
        return MappingProxyType({k: _freeze(w) for k, w in v.items()})
    if isinstance(v, list | tuple):
        return tuple(_freeze(w) for w in v)
    return v


def budget_to_document(
    budget: Budget,
    *,
    rounding: str = "nearest",
    recorded: Mapping[str, Any] | None = None,
) -> dict[str, Any]:
    """The budget-file document (nested dicts) that describes ``budget``.

    Each input is written in the form that reproduces it exactly: its readings for a Type A
    evaluation from readings (or with a pooled standard deviation), half-width and
    distribution for a bounded one, else its standard uncertainty with distribution,
    degrees of freedom and evaluation type.

    Raises
    ------
    BudgetFileError
        When the model has no formula text and cannot be printed as one.
    """
    m: dict[str, Any] = {"name": budget.measurand, "unit": budget.unit or "1"}
    m["model"] = _model_text(budget.model)
    if budget.coverage_factor is not None:
        m["coverage_factor"] = float(budget.coverage_factor)
    else:
        m["coverage_probability"] = float(budget.coverage_probability)
    if rounding != "nearest":
        m["rounding"] = rounding
    doc: dict[str, Any] = {"format": FORMAT}
    if budget.title:
        doc["title"] = budget.title
    doc["measurand"] = m
    if budget.constants:
        doc["constants"] = {
            c.name: _strip_empty(
                {
                    "value": c.value,
                    "unit": c.unit or "1",
                    "description": c.description,
                    "source": c.source,
                }
            )
            for c in budget.constants
        }
    doc["inputs"] = {q.name: _input_spec(q) for q in budget.inputs}
    if budget.correlations:
        doc["correlations"] = [
            {"between": [c.first, c.second], "coefficient": c.coefficient}
            for c in budget.correlations
        ]
    if recorded:
        doc["recorded"] = dict(recorded)
    return doc


def _strip_empty(d: dict[str, Any]) -> dict[str, Any]:
    return {k: v for k, v in d.items() if v not in ("", None)}


def _same(a: InputQuantity, b: InputQuantity) -> bool:
    return (
        a.value == b.value
        and a.standard_uncertainty == b.standard_uncertainty
        and a.distribution == b.distribution
        and a.dof == b.dof
        and a.evaluation == b.evaluation
    )


def _input_spec(q: InputQuantity) -> dict[str, Any]:
    unit = q.unit or "1"
    text = {"description": q.description, "source": q.source}
    if q.readings is not None and q.evaluation == "A":
        n = len(q.readings)
        if n >= 2:
            try:
                plain = InputQuantity.from_readings(q.name, q.readings, q.unit)
            except ViscometryError:
                plain = None
            if plain is not None and _same(plain, q):
                return _strip_empty({"unit": unit, "readings": list(q.readings), **text})
        sp_guess = q.standard_uncertainty * math.sqrt(n)
        candidate = sp_guess
        for _ in range(8):  # nudge by ulps until s_p/√n gives u back exactly
            try:
                pooled = InputQuantity.from_pooled(q.name, q.readings, candidate, q.dof, q.unit)
            except ViscometryError:
                break
            if _same(pooled, q):
                return _strip_empty(
                    {"unit": unit, "readings": list(q.readings),
                     "pooled_standard_deviation": candidate, "pooled_dof": q.dof, **text}
                )  # fmt: skip
            direction = (
                math.inf if pooled.standard_uncertainty < q.standard_uncertainty else -math.inf
            )
            candidate = math.nextafter(candidate, direction)
    if q.half_width is not None and q.distribution in _BOUNDED:
        kwargs: dict[str, Any] = {"dof": q.dof}
        if q.distribution == "trapezoidal":
            kwargs["beta"] = q.beta
        try:
            again = getattr(InputQuantity, q.distribution)(
                q.name, q.value, q.half_width, q.unit, **kwargs
            )
        except ViscometryError:
            again = None
        if again is not None and _same(again, q):
            spec: dict[str, Any] = {
                "value": q.value, "unit": unit, "distribution": q.distribution,
                "half_width": q.half_width,
            }  # fmt: skip
            if q.distribution == "trapezoidal":
                spec["beta"] = q.beta
            if math.isfinite(q.dof):
                spec["dof"] = q.dof
            return _strip_empty({**spec, **text})
    spec = {"value": q.value, "unit": unit, "standard_uncertainty": q.standard_uncertainty}
    if q.distribution != "normal":
        spec["distribution"] = q.distribution
    if q.beta is not None:
        spec["beta"] = q.beta
    if math.isfinite(q.dof):
        spec["dof"] = q.dof
    if q.evaluation != "B":
        spec["evaluation"] = q.evaluation
    return _strip_empty({**spec, **text})


class _FormulaPrinter(sp.printing.str.StrPrinter):
    """Prints a sympy expression in the syntax of the whitelist parser."""

    def _print_Exp1(self, expr: Any) -> str:  # noqa: N802 - sympy's naming
        return "e"

    def _print_Abs(self, expr: Any) -> str:  # noqa: N802
        return f"abs({self._print(expr.args[0])})"

    def _print_Float(self, expr: Any) -> str:  # noqa: N802
        return repr(float(expr))


def _model_text(model: MeasurementModel) -> str:
    if model.formula:
        return model.formula
    text = _FormulaPrinter().doprint(model.expression)
    names = list(model.input_names) + list(model.constant_names)
    try:
        again = MeasurementModel.from_formula(
            text, model.input_names, model.constant_names
        ).expression
    except ViscometryError:
        again = None
    if again is None or sp.simplify(again - model.expression) != 0:
        raise BudgetFileError(
            f"the model {model.expression} cannot be written as a formula over "
            f"{', '.join(names)}; give the budget a formula text"
        )
    return text


# --------------------------------------------------------------------------- TOML writer
_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")
_ESCAPES = {
    "\b": "\\b",
    "\t": "\\t",
    "\n": "\\n",
    "\f": "\\f",
    "\r": "\\r",
    '"': '\\"',
    "\\": "\\\\",
}


def _key(k: str) -> str:
    return k if _BARE_KEY.match(k) else _string(k)


def _string(s: str) -> str:
    out = []
    for ch in s:
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def _scalar(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return _string(v)
    if isinstance(v, _dt.datetime | _dt.date):
        return v.isoformat()
    if isinstance(v, Mapping):
        return "{ " + ", ".join(f"{_key(k)} = {_scalar(w)}" for k, w in v.items()) + " }"
    if isinstance(v, list | tuple):
        return "[" + ", ".join(_scalar(w) for w in v) + "]"
    raise BudgetFileError(
        f"cannot write a value of type {type(v).__name__} to a budget file: {v!r}"
    )


def _table_lines(header: str, table: Mapping[str, Any]) -> list[str]:
    lines = [header]
    lines += [f"{_key(k)} = {_scalar(v)}" for k, v in table.items()]
    return lines


def dumps_budget(document: Mapping[str, Any], *, header: str | None = None) -> str:
    """TOML text of a budget document (the structure :func:`loads_budget` reads).

    Parameters
    ----------
    document : mapping
        ``format``, ``title``, and the tables ``measurand``, ``constants`` (written as
        inline tables), ``inputs`` (one ``[inputs.NAME]`` table each), ``correlations``
        (``[[correlations]]``), ``checks`` (entries as inline tables) and ``recorded``.
    header : str, optional
        A comment placed on the first lines (``#`` is added).
    """
    unknown = [k for k in document if k not in _TOP_KEYS]
    if unknown:
        raise BudgetFileError(f"cannot write unknown top-level key(s) {', '.join(unknown)}")
    lines: list[str] = []
    if header:
        lines += [f"# {line}".rstrip() for line in header.splitlines()]
    lines.append(f"format = {_scalar(document.get('format', FORMAT))}")
    if document.get("title"):
        lines.append(f"title = {_scalar(document['title'])}")
    lines.append("")
    lines += _table_lines("[measurand]", document["measurand"])
    if document.get("constants"):
        lines.append("")
        lines += _table_lines("[constants]", document["constants"])
    for name, spec in document["inputs"].items():
        lines.append("")
        lines += _table_lines(f"[inputs.{_key(name)}]", spec)
    for c in document.get("correlations", ()):
        lines.append("")
        lines += _table_lines("[[correlations]]", c)
    if document.get("checks"):
        lines.append("")
        lines += _table_lines("[checks]", document["checks"])
    if document.get("recorded"):
        lines.append("")
        lines += _table_lines("[recorded]", document["recorded"])
    return "\n".join(lines) + "\n"


def save_budget(
    budget_file_or_budget: BudgetFile | Budget,
    path: str | os.PathLike[str],
    *,
    rounding: str | None = None,
) -> Path:
    """Write a budget file atomically (temporary file in the same folder, then rename).

    Parameters
    ----------
    budget_file_or_budget : BudgetFile or Budget
        A :class:`BudgetFile` is written from its document (keeping the uncertainty forms,
        descriptions, ``[checks]`` and ``[recorded]`` tables as read); a :class:`Budget` is described by
        :func:`budget_to_document`.
    path : path-like
        Target file; an existing file is replaced only when the new one is complete.
    rounding : {"nearest", "up", "ea-4/02"}, optional
        Rounding rule to store with a bare :class:`Budget` (default ``"nearest"``).

    Returns
    -------
    pathlib.Path

    Raises
    ------
    BudgetFileError
        When the target cannot be written (the message names it and the reason).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "2*x", [InputQuantity.normal("x", 1.5, 0.1, "m")], "m")
    >>> with tempfile.TemporaryDirectory() as d:
    ...     p = save_budget(b, pathlib.Path(d) / "y.toml")
    ...     load_budget(p).evaluate().value == b.evaluate().value
    True
    """
    obj = budget_file_or_budget
    if isinstance(obj, BudgetFile):
        document: Mapping[str, Any] = obj.document
        if not document:
            document = budget_to_document(obj.budget, rounding=rounding or obj.rounding)
    elif isinstance(obj, Budget):
        document = budget_to_document(obj, rounding=rounding or "nearest")
    else:
        raise BudgetFileError(
            f"save_budget needs a BudgetFile or a Budget, got {type(obj).__name__}"
        )
    from viscometry import __version__

    text = dumps_budget(document, header=f"Uncertainty budget written by viscometry {__version__}")
    target = Path(path)
    try:
        return atomic_write_text(target, text)
    except OSError as exc:
        raise BudgetFileError(f"{target}: cannot write the file: {exc.strerror or exc}") from exc
