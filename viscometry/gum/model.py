"""Measurement models: a sympy expression over named inputs, with cached derivatives.

A :class:`MeasurementModel` is the measurement function y = f(x₁, …, x_N) of
JCGM 100:2008, 4.1. Its symbolic first (and, on demand, second) partial derivatives are
derived once with sympy and lambdified to numpy once; both are cached per expression, so
re-evaluating a budget with new numbers never re-derives anything.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
import sympy as sp

from viscometry.errors import ModelError
from viscometry.gum.formula import parse_formula
from viscometry.gum.inputs import check_name

__all__ = ["MeasurementModel", "CompiledModel", "compile_model"]


def _formula_function_units() -> dict[str, tuple[str, str]]:
    """Argument and result units of the reference-data functions usable in formulas."""
    try:
        from viscometry.properties.formula_functions import FORMULA_FUNCTION_UNITS
    except ImportError:  # pragma: no cover
        return {}
    return dict(FORMULA_FUNCTION_UNITS)


def _formula_functions() -> dict[str, Callable[..., sp.Expr]]:
    """Reference-data functions usable inside formulas (water viscosity, density...)."""
    try:
        from viscometry.properties.formula_functions import FORMULA_FUNCTIONS
    except ImportError:  # pragma: no cover - the properties layer is optional at import time
        return {}
    return dict(FORMULA_FUNCTIONS)


@dataclass(frozen=True)
class MeasurementModel:
    """A measurement function y = f(inputs; constants), immutable.

    Parameters
    ----------
    expression : sympy.Expr
        The right-hand side; its free symbols must be among ``input_names`` and
        ``constant_names``.
    input_names : tuple of str
        Names of the input quantities, in a fixed order.
    constant_names : tuple of str
        Names of exactly known constants (no uncertainty) that the expression may use.
    output_name : str
        Symbol of the measurand.
    formula : str or None
        The text the expression was parsed from, kept for reports and fingerprints.
    """

    expression: sp.Expr
    input_names: tuple[str, ...]
    constant_names: tuple[str, ...] = ()
    output_name: str = "y"
    formula: str | None = None
    _symbols: dict[str, sp.Symbol] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        if not isinstance(self.expression, sp.Expr):
            raise ModelError(
                f"model expression must be a sympy expression, got {type(self.expression).__name__}"
            )
        names = tuple(self.input_names) + tuple(self.constant_names)
        object.__setattr__(self, "input_names", tuple(self.input_names))
        object.__setattr__(self, "constant_names", tuple(self.constant_names))
        for n in names:
            check_name(n, "quantity name")
        if len(set(names)) != len(names):
            dup = sorted({n for n in names if names.count(n) > 1})
            raise ModelError(f"names used twice among inputs and constants: {', '.join(dup)}")
        check_name(self.output_name, "measurand name")
        # Map names to the symbols actually in the expression (whatever their assumptions).
        symbols = {s.name: s for s in self.expression.free_symbols if isinstance(s, sp.Symbol)}
        unknown = sorted(set(symbols) - set(names))
        if unknown:
            raise ModelError(
                f"model refers to unknown name(s) {', '.join(repr(u) for u in unknown)}; "
                f"known: {', '.join(names) or 'none'}"
            )
        for n in names:
            symbols.setdefault(n, sp.Symbol(n, real=True))
        object.__setattr__(self, "_symbols", symbols)

    # ---------------------------------------------------------------- constructors
    @classmethod
    def from_formula(
        cls,
        formula: str,
        input_names: Sequence[str],
        constant_names: Sequence[str] = (),
        output_name: str = "y",
        *,
        field: str = "model",
    ) -> MeasurementModel:
        """Build a model from a formula string via the whitelist parser.

        Examples
        --------
        >>> m = MeasurementModel.from_formula("C*t - E/t**2", ["C", "t", "E"], output_name="nu")
        >>> m.expression
        C*t - E/t**2
        """
        names = list(input_names) + list(constant_names)
        expr = parse_formula(formula, names, functions=_formula_functions(), field=field)
        return cls(expr, tuple(input_names), tuple(constant_names), output_name, formula)

    def dimension_view(self) -> tuple[sp.Expr, dict[sp.Symbol, tuple[sp.Expr, str, str]]]:
        """The expression for a dimension check, with reference-data calls as placeholders.

        A call such as ``water_viscosity(T)`` expands into a closed form whose numeric
        coefficients carry hidden units; for checking dimensions it is replaced by a symbol
        standing for its result, together with (argument, argument unit, result unit).
        Models without such calls return their expression and no placeholders.
        """
        units = _formula_function_units()
        if self.formula is None or not any(f"{name}(" in self.formula for name in units):
            return self.expression, {}
        placeholders: dict[sp.Symbol, tuple[sp.Expr, str, str]] = {}

        def stand_in(name: str) -> Callable[[sp.Expr], sp.Expr]:
            def call(arg: sp.Expr) -> sp.Expr:
                symbol = sp.Dummy(name)
                placeholders[symbol] = (arg, *units[name])
                return symbol

            return call

        expr = parse_formula(
            self.formula,
            list(self.input_names) + list(self.constant_names),
            functions={name: stand_in(name) for name in units},
        )
        return expr, placeholders

    # ---------------------------------------------------------------- symbolic views
    def symbol(self, name: str) -> sp.Symbol:
        """The sympy symbol standing for ``name``."""
        try:
            return self._symbols[name]
        except KeyError:
            raise ModelError(f"no input or constant named {name!r} in this model") from None

    @property
    def used_inputs(self) -> tuple[str, ...]:
        """Inputs that actually appear in the expression (an unused input is suspicious)."""
        free = {s.name for s in self.expression.free_symbols}
        return tuple(n for n in self.input_names if n in free)

    def derivative(self, name: str) -> sp.Expr:
        """Simplified symbolic partial derivative ∂f/∂x for input ``name``."""
        return compile_model(self).simplified_derivative(self.input_names.index(name))

    def derivative_latex(self, name: str) -> str:
        """LaTeX of ∂f/∂x, e.g. for workbooks and reports."""
        return sp.latex(self.derivative(name))

    def relative_sensitivity_expression(self, name: str) -> sp.Expr:
        """Symbolic ∂ln|f|/∂ln|x| = (x/f)·∂f/∂x, simplified (exponent of a power law)."""
        x = self.symbol(name)
        return sp.simplify(self.derivative(name) * x / self.expression)


class CompiledModel:
    """Lambdified value, gradient and (lazily) Hessian of a model; cached per model.

    All callables take the input values followed by the constant values, as floats or
    broadcastable numpy arrays, in the model's order.
    """

    def __init__(self, model: MeasurementModel) -> None:
        self.model = model
        syms = [model.symbol(n) for n in model.input_names + model.constant_names]
        self._syms = syms
        expr = model.expression
        # Unsimplified derivatives are lambdified (with common-subexpression elimination):
        # simplify() is slow on large models and only matters for display.
        self.derivatives: tuple[sp.Expr, ...] = tuple(
            sp.diff(expr, model.symbol(n)) for n in model.input_names
        )
        self._simplified: dict[int, sp.Expr] = {}
        self._value = sp.lambdify(syms, expr, modules="numpy", cse=True)
        self._gradient = sp.lambdify(syms, list(self.derivatives), modules="numpy", cse=True)
        self._hessian: Callable[..., list] | None = None

    def simplified_derivative(self, index: int) -> sp.Expr:
        """∂f/∂xᵢ simplified for display (computed on first request, then cached)."""
        if index not in self._simplified:
            self._simplified[index] = _simplify(self.derivatives[index])
        return self._simplified[index]

    def value(self, *args: object) -> np.ndarray:
        """f(x; c)."""
        with np.errstate(all="ignore"):
            try:
                return np.asarray(self._value(*args), dtype=float)
            except (ArithmeticError, TypeError) as exc:  # scalar 0.0**-1, complex values
                raise _not_evaluable(self.model, exc) from None

    def gradient(self, *args: object) -> np.ndarray:
        """∂f/∂xᵢ stacked on the first axis (shape (N,) or (N, ...))."""
        with np.errstate(all="ignore"):
            try:
                out = self._gradient(*args)
            except (ArithmeticError, TypeError) as exc:
                raise _not_evaluable(self.model, exc, "its derivatives") from None
        if all(isinstance(a, (float, int, np.floating)) for a in args):
            return np.array(out, dtype=float)
        shape = np.broadcast_shapes(*(np.shape(a) for a in args)) if args else ()
        return np.stack([np.broadcast_to(np.asarray(g, dtype=float), shape) for g in out])

    def higher_order(self, *args: object) -> tuple[np.ndarray, np.ndarray]:
        """Second and mixed third derivatives for JCGM 100:2008 eq. (10), derived on first use.

        Returns
        -------
        hessian : (N, N) array
            ∂²f/∂xᵢ∂xⱼ.
        third : (N, N) array
            ``third[i, j]`` = ∂³f/∂xᵢ∂xⱼ².
        """
        if self._hessian is None:
            names = self.model.input_names
            sym = [self.model.symbol(n) for n in names]
            n = len(names)
            second = [[sp.diff(self.derivatives[i], sym[j]) for j in range(n)] for i in range(n)]
            third = [[sp.diff(second[j][j], sym[i]) for j in range(n)] for i in range(n)]
            self._hessian = sp.lambdify(self._syms, [second, third], modules="numpy", cse=True)
        with np.errstate(all="ignore"):
            try:
                h, t = self._hessian(*args)
            except (ArithmeticError, TypeError) as exc:
                raise _not_evaluable(self.model, exc, "its second derivatives") from None
        return np.asarray(h, dtype=float), np.asarray(t, dtype=float)


def _not_evaluable(model: MeasurementModel, exc: BaseException, what: str = "it") -> ModelError:
    return ModelError(
        f"the model {model.output_name} = {(model.formula or 'f(...)')[:80]} cannot be evaluated: "
        f"{what} raised {type(exc).__name__} ({exc}) at the given values; a division by zero "
        f"or a power of zero at the estimates?"
    )


def _simplify(expr: sp.Expr) -> sp.Expr:
    # Full simplify can be slow on big expressions; bound its cost.
    if sp.count_ops(expr) > 120:
        return sp.factor_terms(expr)
    return sp.simplify(expr)


@functools.lru_cache(maxsize=256)
def _compile_cached(
    expr: sp.Expr, inputs: tuple[str, ...], consts: tuple[str, ...], out: str
) -> CompiledModel:
    return CompiledModel(MeasurementModel(expr, inputs, consts, out))


def compile_model(model: MeasurementModel) -> CompiledModel:
    """The cached :class:`CompiledModel` of ``model`` (derived and lambdified once)."""
    return _compile_cached(
        model.expression, model.input_names, model.constant_names, model.output_name
    )


def evaluate_checked(
    compiled: CompiledModel, values: Sequence[float], field: str = "model"
) -> float:
    """Evaluate a model at scalar values and insist on a finite real result."""
    y = compiled.value(*values)
    if y.ndim != 0 or not math.isfinite(float(y)):
        raise ModelError(f"{field} evaluates to {y!r} at the estimates; check the inputs")
    return float(y)


__all__ += ["evaluate_checked"]
