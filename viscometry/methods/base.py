"""The :class:`Method` record: a built-in viscometer measurement model with its metadata.

A method is a sympy expression over real symbols named like the model's inputs, plus the SI
unit and a description of each input, the references and the validity of the equation, and a
``check`` that turns the input estimates (SI floats) into validity warnings. ``budget`` makes
a :class:`viscometry.gum.Budget` of it; the budget runs the checks whenever it is evaluated,
on every path.
"""

from __future__ import annotations

import functools
import math
import re
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import sympy as sp

from viscometry.errors import InputError, ModelError
from viscometry.gum import Budget, InputQuantity, MeasurementModel

__all__ = ["Method", "Checker", "symbols"]

#: Signature of a method's validity check: (method, SI values) → warning texts.
Checker = Callable[["Method", Mapping[str, float]], list[str]]


def symbols(names: str) -> tuple[sp.Symbol, ...]:
    """Real sympy symbols for a space-separated list of names (the engine's convention).

    Examples
    --------
    >>> r, t = symbols("r t")
    >>> r.is_real
    True
    """
    return tuple(sp.Symbol(n, real=True) for n in names.split())


def _no_check(method: Method, values: Mapping[str, float]) -> list[str]:
    return []


#: The SI unit of a check-context key is written in square brackets in its description.
_BRACKETED_UNIT = re.compile(r"\[([^\[\]]+)\]")


@dataclass(frozen=True)
class Method:
    """A built-in measurement model (immutable).

    Parameters
    ----------
    name : str
        Registry name, snake_case (e.g. ``"glass_capillary_kinetic"``).
    title : str
        One-line human title.
    expression : sympy.Expr
        Right-hand side over ``sympy.Symbol(name, real=True)`` for every input and constant.
    input_names : tuple of str
        Input quantities, in display order.
    input_units : dict
        Name → SI unit string (pint syntax), e.g. ``"m"``, ``"Pa"``, ``"m^2/s"``, ``"1"``.
    input_descriptions : dict
        Name → description (glossary name first).
    output_name : str
        Symbol of the measurand.
    output_unit : str
        SI unit of the measurand.
    references : tuple of str
        Published sources of the equation and its corrections.
    validity : str
        Where the equation holds, in words.
    constant_names : tuple of str
        Exactly known constants the expression uses (usually none).
    context_keys : dict
        Optional extra keys (not inputs) that ``check`` uses if present: name → description
        with the SI unit in square brackets, e.g. ``"capillary radius r [m], ..."`` (see
        :meth:`context_unit`; budget files give them in a ``[checks]`` table).
    checker : callable
        ``checker(method, values_si) -> list[str]``; use :meth:`check`.
    positive_inputs : tuple of str
        Inputs whose estimate must be positive for the equation to make sense (radius, flow
        time, volume, length, density...). :meth:`budget`, :meth:`check` and budget files
        refuse a zero, negative or non-finite estimate of these with an error naming the
        input and the value.
    flow_time_inputs : tuple of str
        Inputs that are flow times of a gravity-driven glass viscometer: when such an input
        is stated as readings, the budget checks that they agree (the ``flow_time_range``
        limit of :mod:`viscometry.evidence.acceptance`) and warns with what to do.
    """

    name: str
    title: str
    expression: sp.Expr
    input_names: tuple[str, ...]
    input_units: Mapping[str, str]
    input_descriptions: Mapping[str, str]
    output_name: str
    output_unit: str
    references: tuple[str, ...]
    validity: str
    constant_names: tuple[str, ...] = ()
    context_keys: Mapping[str, str] = field(default_factory=dict)
    checker: Checker = field(default=_no_check, repr=False, compare=False)
    positive_inputs: tuple[str, ...] = ()
    flow_time_inputs: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "input_names", tuple(self.input_names))
        object.__setattr__(self, "constant_names", tuple(self.constant_names))
        object.__setattr__(self, "references", tuple(self.references))
        object.__setattr__(self, "flow_time_inputs", tuple(self.flow_time_inputs))
        object.__setattr__(self, "positive_inputs", tuple(self.positive_inputs))
        stray = [n for n in self.positive_inputs if n not in self.input_names]
        if stray:
            raise ModelError(f"method {self.name}: positive_inputs names non-inputs {stray}")
        names = set(self.input_names) | set(self.constant_names)
        free = {s.name for s in self.expression.free_symbols}
        if free - names:
            raise ModelError(
                f"method {self.name}: expression uses undeclared {sorted(free - names)}"
            )
        if names - free:
            raise ModelError(f"method {self.name}: declared but unused {sorted(names - free)}")
        for n in self.input_names:
            if n not in self.input_units or n not in self.input_descriptions:
                raise ModelError(f"method {self.name}: input {n!r} lacks a unit or a description")

    # ------------------------------------------------------------------ views
    @property
    def model(self) -> MeasurementModel:
        """The :class:`~viscometry.gum.MeasurementModel` of this method."""
        return MeasurementModel(
            self.expression, self.input_names, self.constant_names, self.output_name
        )

    @property
    def equation(self) -> str:
        """Plain-text equation, e.g. ``'nu = C*t - E/t**2'``."""
        return f"{self.output_name} = {sp.sstr(self.expression)}"

    @property
    def latex(self) -> str:
        """LaTeX of the equation."""
        return f"{sp.latex(sp.Symbol(self.output_name))} = {sp.latex(self.expression)}"

    @functools.cached_property
    def _value_function(self) -> Callable[..., Any]:
        syms = [sp.Symbol(n, real=True) for n in self.input_names + self.constant_names]
        return sp.lambdify(syms, self.expression, modules="numpy")

    def _args(self, values_si: Mapping[str, float]) -> list[float]:
        names = self.input_names + self.constant_names
        missing = [n for n in names if n not in values_si]
        if missing:
            raise InputError(f"method {self.name}: no value for {', '.join(missing)}")
        return [float(values_si[n]) for n in names]

    def value(self, values_si: Mapping[str, float]) -> float:
        """The measurand [``output_unit``] at SI input values (and SI constants).

        Cheap: lambdifies the expression only (no derivatives), once per method.

        Raises
        ------
        InputError
            If an input or constant is missing.
        """
        args = self._args(values_si)
        with np.errstate(all="ignore"):
            return float(self._value_function(*args))

    def relative_sensitivity(self, name: str, values_si: Mapping[str, float]) -> float:
        """(x/y)·∂y/∂x at SI values for input ``name`` (unsimplified symbolic derivative).

        Raises
        ------
        InputError
            If ``name`` is not an input or a value is missing.
        """
        if name not in self.input_names:
            raise InputError(f"method {self.name} has no input {name!r}")
        args = self._args(values_si)
        syms = [sp.Symbol(n, real=True) for n in self.input_names + self.constant_names]
        x = sp.Symbol(name, real=True)
        fn = sp.lambdify(syms, sp.diff(self.expression, x) * x / self.expression, modules="numpy")
        with np.errstate(all="ignore"):
            return float(fn(*args))

    # ------------------------------------------------------------------ checks
    def context_unit(self, key: str) -> str:
        """SI unit of an optional check-context key (see :attr:`context_keys`).

        The unit is the text in the first square brackets of the key's description
        (``"capillary radius r [m], enables ..."`` gives ``"m"``); a description without
        brackets marks a dimensionless key (``"1"``).

        Parameters
        ----------
        key : str
            One of :attr:`context_keys`.

        Returns
        -------
        str
            Pint unit text, e.g. ``"m"``, ``"m^3"``, ``"m/s^2"``, ``"K"``, ``"1"``.

        Raises
        ------
        InputError
            If ``key`` is not a context key of this method (the message lists those it has).

        Examples
        --------
        >>> from viscometry.methods import get_method
        >>> get_method("glass_capillary_kinetic").context_unit("flow_volume")
        'm^3'
        """
        if key not in self.context_keys:
            accepted = ", ".join(self.context_keys) or "none"
            raise InputError(
                f"method {self.name} has no check context key {key!r} (it accepts: {accepted})"
            )
        found = _BRACKETED_UNIT.search(self.context_keys[key])
        return found.group(1).strip() if found else "1"

    def estimate_problem(self, name: str, value_si: float, unit_given: str = "") -> str | None:
        """Why an input's estimate cannot be used by this method, or None.

        Parameters
        ----------
        name : str
            Input name.
        value_si : float
            Its estimate in the SI unit of ``input_units`` (an offset unit already converted).
        unit_given : str
            The unit the estimate was given in, if any: an offset temperature unit (degC, degF)
            is refused for a temperature input of the method, which is always a difference
            here (an offset would add 273.15 K to it).

        Returns
        -------
        str or None
            A message without the input's name and value, e.g. ``"must be positive for
            method 'pressure_capillary' (capillary_radius)"``.
        """
        from viscometry import units as _units

        want = self.input_units.get(name, "")
        if unit_given and _units.si_conversion(unit_given)[1] != 0.0:
            if _units.si_conversion(want)[1] == 0.0:
                return (
                    f"unit {unit_given!r} is a temperature scale with an offset, but method "
                    f"{self.name!r} takes {name} as a temperature difference (units like "
                    f'{want!r}); write unit = "K" or "delta_degC"'
                )
        if name in self.positive_inputs and not (math.isfinite(value_si) and value_si > 0):
            label = self.input_descriptions.get(name, "").split(":")[0]
            return f"must be positive for method {self.name!r}" + (f" ({label})" if label else "")
        return None

    def check(self, values_si: Mapping[str, float]) -> list[str]:
        """Validity warnings (texts with the numbers) at SI input estimates.

        Parameters
        ----------
        values_si : mapping
            Every input's estimate in its SI unit (``input_units``), plus any of the optional
            ``context_keys``.

        Returns
        -------
        list of str
            Empty when every check passes.

        Raises
        ------
        InputError
            If an input's value is missing or not finite.
        """
        missing = [n for n in self.input_names if n not in values_si]
        if missing:
            raise InputError(f"method {self.name}: check needs values of {', '.join(missing)}")
        for n in self.input_names:
            if not math.isfinite(float(values_si[n])):
                raise InputError(f"{n} must be finite, got {values_si[n]!r}")
            problem = self.estimate_problem(n, float(values_si[n]))
            if problem:
                unit = self.input_units.get(n, "")
                raise InputError(f"{n} {problem}, got {values_si[n]!r} {unit}".rstrip())
        return list(self.checker(self, values_si))

    # ------------------------------------------------------------------ budgets
    def budget(
        self,
        inputs: Iterable[InputQuantity] | Mapping[str, InputQuantity],
        unit: str | None = None,
        **kw: Any,
    ) -> Budget:
        """A :class:`~viscometry.gum.Budget` of this model (:meth:`Budget.from_method`).

        Parameters
        ----------
        inputs : iterable or mapping of InputQuantity
            One per input name (any units of the right dimension).
        unit : str, optional
            Unit of the measurand; default ``output_unit``.
        **kw
            Passed to :meth:`~viscometry.gum.Budget.from_method` (``checks``, ``constants``,
            ``correlations``, ``coverage_probability``, ``coverage_factor``, ``title``,
            ``rounding``, ``description``).

        Raises
        ------
        ModelError
            If inputs are missing or extra (message names them).
        InputError
            If an estimate in :attr:`positive_inputs` is not positive, a temperature
            difference is given in an offset unit (degC), or a check-context value does not
            fit (the error's ``where`` names the input or key).
        """
        return Budget.from_method(self, inputs, unit, **kw)

    # ------------------------------------------------------------------ listing
    def describe(self) -> dict[str, Any]:
        """Plain-dict description (for ``viscometry methods --json`` and docs)."""
        return {
            "name": self.name,
            "title": self.title,
            "equation": self.equation,
            "latex": self.latex,
            "output": {"name": self.output_name, "unit": self.output_unit},
            "inputs": [
                {
                    "name": n,
                    "unit": self.input_units[n],
                    "description": self.input_descriptions[n],
                }
                for n in self.input_names
            ],
            "constants": list(self.constant_names),
            "check_context": dict(self.context_keys),
            "validity": self.validity,
            "references": list(self.references),
        }
