"""Measurement models: a sympy expression over named inputs, compiled once.

A :class:`MeasurementModel` is the measurement function y = f(x₁, …, x_N) of
JCGM 100:2008, 4.1. :func:`compile_model` compiles it once per process (and per installed
store, :mod:`viscometry.gum.store`) into a :class:`CompiledModel`: a value program and a
value-and-gradient program (:mod:`viscometry.gum.program`), the gradient by reverse-mode
differentiation, so its cost is a small multiple of the value's whatever the number of
inputs; re-evaluating a budget with new numbers never compiles anything again. The exact
symbolic partial derivatives, shown in reports and used by the exact checks of
:mod:`~viscometry.gum.validity`, are derived on request (:meth:`CompiledModel.derivative`),
by sympy's own rules (:func:`symbolic_derivative`, the same expressions as
:func:`sympy.diff`, without its cubic cost on long sums and products).

Symbolic work is bounded, so that a short formula cannot keep a command busy for minutes:

* one symbolic first derivative, and all of them together (:attr:`CompiledModel.derivatives`),
  may have at most :data:`MAX_DERIVATIVE_NODES` tree nodes, else
  :class:`~viscometry.errors.ModelError` names their size and the limit (the compiled
  gradient needs no symbolic derivative, so evaluating such a model still works);
* the second and third derivatives of the higher-order terms are derived symbolically only
  while they stay within :data:`SYMBOLIC_HIGHER_ORDER_NODES` nodes; beyond that they are
  computed by finite differences of the exact first derivatives (the gradient program)
  (:meth:`CompiledModel.higher_order`);
* simplification for display is tried only on small expressions without nested
  functions (:data:`SIMPLIFY_NODES`), where sympy's ``simplify`` is quick; larger ones
  are shown as derived, with common factors pulled out.
"""

from __future__ import annotations

import functools
import hashlib
import json
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import sympy as sp

from viscometry.errors import ModelError
from viscometry.gum.formula import expression_size, parse_formula
from viscometry.gum.inputs import check_name
from viscometry.gum.program import (
    COMPILER_VERSION,
    PROGRAM_VERSION,
    Program,
    ProgramError,
    UnsupportedExpression,
    compile_expression,
)
from viscometry.gum.store import CompiledStore, compiled_store, set_compiled_store

__all__ = [
    "MeasurementModel",
    "CompiledModel",
    "compile_model",
    "CompiledStore",
    "set_compiled_store",
    "compiled_key",
    "compiled_entry",
    "programs_from_entry",
    "symbolic_derivative",
    "MAX_DERIVATIVE_NODES",
    "SYMBOLIC_HIGHER_ORDER_NODES",
    "SIMPLIFY_NODES",
]

#: Largest size of a model's symbolic first partial derivatives, one or all together, in
#: sympy tree nodes (see :func:`~viscometry.gum.formula.expression_size`). Deriving that
#: many takes a few seconds; more are refused with a :class:`ModelError`, also in a few
#: seconds. The built-in methods' derivatives have under 1000 nodes, one
#: ``water_viscosity(T)`` about 17 000, a product of six such calls about 270 000, all
#: those of a product of 1000 inputs about a million (each about 1000: shown one by one).
MAX_DERIVATIVE_NODES = 300_000
#: Largest total size of the symbolic second and third derivatives of the higher-order terms
#: (JCGM 100:2008, eq. 10), in tree nodes; the built-in methods need under 20 000. A model
#: whose first derivatives exceed a tenth of it, or whose higher derivatives grow past it,
#: gets its higher-order terms by finite differences instead (:meth:`CompiledModel.higher_order`).
SYMBOLIC_HIGHER_ORDER_NODES = 25_000
#: Largest expression, in tree nodes, that sympy's ``simplify`` is tried on for display; it
#: must also be a rational function of low degree without functions (``simplify`` of nested
#: ``sin``/``exp`` or of ``(a + b + c)**12`` can take minutes even for a short expression).
SIMPLIFY_NODES = 150
#: Largest expression, in tree nodes, whose common factors are pulled out for display.
_FACTOR_NODES = 1_000
#: Finite-difference step of the numerical higher-order terms, relative to min(u(xᵢ), |xᵢ|)
#: (see :meth:`CompiledModel.higher_order`).
_STEP = 2.0**-8


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
        """Symbolic ∂ln|f|/∂ln|x| = (x/f)·∂f/∂x, simplified when small (exponent of a power
        law)."""
        x = self.symbol(name)
        return _simplify(self.derivative(name) * x / self.expression)


class CompiledModel:
    """Value, gradient and (lazily) Hessian of a model as compiled programs; cached per model.

    All callables take the input values followed by the constant values, as floats or
    broadcastable numpy arrays, in the model's order. The value and the gradient are
    straight-line programs (:mod:`viscometry.gum.program`): the gradient by reverse-mode
    differentiation of the value's program, whose cost grows with the size of the
    expression, not with the number of inputs times that size. The exact symbolic
    derivatives, for display and for the exact checks of :mod:`~viscometry.gum.validity`,
    are derived only when asked for (:meth:`derivative`, :attr:`derivatives`).

    Parameters
    ----------
    model : MeasurementModel
    programs : tuple of two Program, optional
        The value and gradient programs, e.g. from the compiled-model store; compiled from
        the expression when not given.
    """

    def __init__(
        self, model: MeasurementModel, programs: tuple[Program, Program] | None = None
    ) -> None:
        self.model = model
        syms = [model.symbol(n) for n in model.input_names + model.constant_names]
        self._syms = syms
        self._derivatives: dict[int, sp.Expr] = {}
        self._all_derivatives: tuple[sp.Expr, ...] | None = None
        self._simplified: dict[int, sp.Expr] = {}
        self._hessian: Callable[..., list] | None = None
        self._symbolic_higher_order: bool | None = None
        self.programs: tuple[Program, Program] | None = programs
        if programs is None:
            try:
                self.programs = compile_expression(model.expression, syms, len(model.input_names))
            except UnsupportedExpression:  # a sympy function outside the program's whitelist
                self._lambdified(model)
                return
        value, gradient = self.programs
        self._value = lambda *args: value.run(*args)[0]
        self._gradient = lambda *args: gradient.run(*args)[1:]

    def _lambdified(self, model: MeasurementModel) -> None:
        """Value and gradient lambdified from the symbolic derivatives (expressions the
        program compiler does not know; never the case for a parsed formula)."""
        self._all_derivatives = _first_derivatives(model)
        self._value = sp.lambdify(self._syms, model.expression, modules="numpy", cse=True)
        self._gradient = sp.lambdify(
            self._syms, list(self._all_derivatives), modules="numpy", cse=True
        )

    @property
    def derivatives(self) -> tuple[sp.Expr, ...]:
        """The exact symbolic ∂f/∂xᵢ of every input (derived on first request, then kept).

        Raises
        ------
        ModelError
            Together they have more than :data:`MAX_DERIVATIVE_NODES` tree nodes.
        """
        if self._all_derivatives is None:
            self._all_derivatives = _first_derivatives(self.model, self._derivatives)
        return self._all_derivatives

    def derivative(self, index: int) -> sp.Expr:
        """The exact symbolic ∂f/∂xᵢ of input ``index`` (derived on first request).

        Raises
        ------
        ModelError
            It has more than :data:`MAX_DERIVATIVE_NODES` tree nodes.
        """
        if self._all_derivatives is not None:
            return self._all_derivatives[index]
        if index not in self._derivatives:
            name = self.model.input_names[index]
            d = symbolic_derivative(self.model.expression, self.model.symbol(name))
            if expression_size(d, MAX_DERIVATIVE_NODES) > MAX_DERIVATIVE_NODES:
                raise _too_large(self.model, name, "derivative by " + name + " has")
            self._derivatives[index] = d
        return self._derivatives[index]

    def simplified_derivative(self, index: int) -> sp.Expr:
        """∂f/∂xᵢ simplified for display (computed on first request, then cached)."""
        if index not in self._simplified:
            self._simplified[index] = _simplify(self.derivative(index))
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
            try:
                return np.array(out, dtype=float)
            except TypeError as exc:  # a complex value (a fractional power of a negative)
                raise _not_evaluable(self.model, exc, "its derivatives") from None
        shape = np.broadcast_shapes(*(np.shape(a) for a in args)) if args else ()
        return np.stack([np.broadcast_to(np.asarray(g, dtype=float), shape) for g in out])

    @property
    def higher_order_method(self) -> str:
        """``"symbolic"`` or ``"finite differences"``: how :meth:`higher_order` gets the
        second and third derivatives of this model (decided on first use, then cached)."""
        if self._symbolic_higher_order is None:
            self._derive_higher_order()
        return "symbolic" if self._symbolic_higher_order else "finite differences"

    def higher_order(
        self, *args: object, uncertainties: Sequence[float] | None = None
    ) -> tuple[np.ndarray, np.ndarray]:
        """Second and mixed third derivatives for JCGM 100:2008 eq. (10), at scalar values.

        Parameters
        ----------
        *args : float
            The input values followed by the constant values, in SI units.
        uncertainties : sequence of float, optional
            u(xᵢ) of the inputs [unit of each input]; sets the step of the finite
            differences (below). Without it the step is relative to |xᵢ| alone.

        Returns
        -------
        hessian : (N, N) array
            ∂²f/∂xᵢ∂xⱼ.
        third : (N, N) array
            ``third[i, j]`` = ∂³f/∂xᵢ∂xⱼ².

        Raises
        ------
        ModelError
            The derivatives cannot be evaluated at the given values.

        Notes
        -----
        Small models (see :data:`SYMBOLIC_HIGHER_ORDER_NODES`) get exact symbolic
        derivatives, derived on first use. Larger ones get them from central differences of
        the exact first derivatives g = ∇f with a step hⱼ = 2⁻⁸·min(u(xⱼ), |xⱼ|) (u(xⱼ) when
        xⱼ = 0; at least 2⁻²⁶|xⱼ|): ∂²f/∂xᵢ∂xⱼ ≈ (gᵢ(x + hⱼeⱼ) − gᵢ(x − hⱼeⱼ))/(2hⱼ) and
        ∂³f/∂xᵢ∂xⱼ² ≈ (gᵢ(x + hⱼeⱼ) − 2gᵢ(x) + gᵢ(x − hⱼeⱼ))/hⱼ². Their truncation error
        is of order hⱼ² times the next derivative, so in eq. (10) it is at most about
        2⁻¹⁶ ≈ 1.5·10⁻⁵ times the fourth-order terms that eq. (10) already leaves out;
        rounding adds about 4ε·2¹⁶ ≈ 6·10⁻¹¹ of (∂f/∂xᵢ u(xᵢ))² per input j. On the
        example budgets the higher-order variance agrees with the symbolic one to within
        3·10⁻¹⁰ of the first-order variance (regression check in the tests). Columns of
        inputs with u(xⱼ) = 0 are 0 (they do not enter eq. 10).
        """
        if self._symbolic_higher_order is None:
            self._derive_higher_order()
        if not self._symbolic_higher_order:
            return self._higher_order_numeric(args, uncertainties)
        with np.errstate(all="ignore"):
            try:
                h, t = self._hessian(*args)  # type: ignore[misc]
            except (ArithmeticError, TypeError) as exc:
                raise _not_evaluable(self.model, exc, "its second derivatives") from None
        return np.asarray(h, dtype=float), np.asarray(t, dtype=float)

    def _derive_higher_order(self) -> None:
        """Derive and lambdify the symbolic second and third derivatives, unless they grow
        past :data:`SYMBOLIC_HIGHER_ORDER_NODES` (then finite differences are used)."""
        sym = [self.model.symbol(n) for n in self.model.input_names]
        n = len(sym)
        budget = [SYMBOLIC_HIGHER_ORDER_NODES]

        def within(expr: sp.Expr) -> bool:
            budget[0] -= expression_size(expr, max(budget[0], 0))
            return budget[0] >= 0

        first = 0  # size of the first derivatives, derived only while they stay small
        for i in range(n):
            try:
                first += expression_size(self.derivative(i), SYMBOLIC_HIGHER_ORDER_NODES)
            except ModelError:  # one alone is past MAX_DERIVATIVE_NODES
                first = SYMBOLIC_HIGHER_ORDER_NODES
            if 10 * first > SYMBOLIC_HIGHER_ORDER_NODES:
                break
        second: list[list[sp.Expr]] = [[] for _ in range(n)]
        third: list[list[sp.Expr]] = [[] for _ in range(n)]
        ok = 10 * first <= SYMBOLIC_HIGHER_ORDER_NODES
        for i in range(n * n if ok else 0):
            second[i // n].append(sp.diff(self.derivative(i // n), sym[i % n]))
            if not within(second[i // n][-1]):
                ok = False
                break
        for i in range(n * n if ok else 0):
            third[i // n].append(sp.diff(second[i % n][i % n], sym[i // n]))
            if not within(third[i // n][-1]):
                ok = False
                break
        if ok:
            self._hessian = sp.lambdify(self._syms, [second, third], modules="numpy", cse=True)
        self._symbolic_higher_order = ok

    def _higher_order_numeric(
        self, args: Sequence[object], uncertainties: Sequence[float] | None
    ) -> tuple[np.ndarray, np.ndarray]:
        """Hessian and third derivatives by finite differences of the exact gradient."""
        n = len(self.model.input_names)
        x = np.array([float(a) for a in args[:n]], dtype=float)
        u = np.abs(x) if uncertainties is None else np.abs(np.asarray(uncertainties, float))
        scale = np.where(x == 0, u, np.minimum(u, np.abs(x)))
        if uncertainties is None:
            scale = np.where(scale == 0, 1.0, scale)
        h = np.maximum(_STEP * scale, 2.0**-26 * np.abs(x))
        cols = np.flatnonzero((h > 0) & (u > 0) if uncertainties is not None else h > 0)
        points = np.repeat(x[:, None], 1 + 2 * cols.size, axis=1)
        for k, j in enumerate(cols):
            points[j, 1 + 2 * k] += h[j]
            points[j, 2 + 2 * k] -= h[j]
        g = self.gradient(*points, *(float(a) for a in args[n:]))
        hessian = np.zeros((n, n))
        third = np.zeros((n, n))
        for k, j in enumerate(cols):
            up, down = g[:, 1 + 2 * k], g[:, 2 + 2 * k]
            # the steps as the floats actually took them (exact differences)
            hu, hd = points[j, 1 + 2 * k] - x[j], x[j] - points[j, 2 + 2 * k]
            hessian[:, j] = (up - down) / (hu + hd)
            third[:, j] = 2.0 * ((up - g[:, 0]) / hu - (g[:, 0] - down) / hd) / (hu + hd)
        if not (np.all(np.isfinite(hessian)) and np.all(np.isfinite(third))):
            raise ModelError(
                f"the second derivatives of the model of {self.model.output_name} are not "
                "finite near the input estimates (a singularity within 0.4 % of an estimate or "
                "of its uncertainty?); leave out the higher-order terms"
            )
        return hessian, third


def _not_evaluable(model: MeasurementModel, exc: BaseException, what: str = "it") -> ModelError:
    return ModelError(
        f"the model {model.output_name} = {(model.formula or 'f(...)')[:80]} cannot be evaluated: "
        f"{what} raised {type(exc).__name__} ({exc}) at the given values; a division by zero "
        f"or a power of zero at the estimates?"
    )


def _too_large(model: MeasurementModel, name: str, what: str) -> ModelError:
    return ModelError(
        f"the {what} more than {MAX_DERIVATIVE_NODES} terms (the limit; reached at the "
        f"derivative by {name}) in the model of {model.output_name}; write the model with "
        "fewer nested or repeated functions",
        where="measurand",
    )


def _first_derivatives(
    model: MeasurementModel, known: Mapping[int, sp.Expr] | None = None
) -> tuple[sp.Expr, ...]:
    """∂f/∂xᵢ for every input, refused once together they pass :data:`MAX_DERIVATIVE_NODES`
    (``known``: derivatives already derived, by input index)."""
    out: list[sp.Expr] = []
    left = MAX_DERIVATIVE_NODES
    for i, name in enumerate(model.input_names):
        d = (known or {}).get(i)
        out.append(symbolic_derivative(model.expression, model.symbol(name)) if d is None else d)
        left -= expression_size(out[-1], max(left, 0))
        if left < 0:
            raise ModelError(
                f"the derivatives of the model of {model.output_name} have more than "
                f"{MAX_DERIVATIVE_NODES} terms (the limit; reached at the derivative by "
                f"{name}); write the model with fewer nested or repeated functions",
                where="measurand",
            )
    return tuple(out)


def symbolic_derivative(expr: sp.Expr, x: sp.Symbol) -> sp.Expr:
    """The exact derivative ∂expr/∂x, as :func:`sympy.diff` gives it, in less time.

    sympy asks every factor of a product and every term of a sum for its derivative, each
    through a new ``Derivative`` object: for a product or sum of n inputs, all n derivatives
    take time of order n³. Here only the factors and terms that contain ``x`` are
    differentiated, and a part that occurs several times is differentiated once. Sums,
    products, powers and the functions of :data:`~viscometry.gum.formula.BASE_FUNCTIONS`
    follow sympy's own rules, so the result is the same expression; anything else is left
    to :func:`sympy.diff`.

    Parameters
    ----------
    expr : sympy.Expr
    x : sympy.Symbol

    Returns
    -------
    sympy.Expr

    Examples
    --------
    >>> a, b, c = sp.symbols("a b c", real=True)
    >>> symbolic_derivative(a * b**2 / c + sp.exp(a * c), a)
    b**2/c + c*exp(a*c)
    """
    memo: dict[sp.Basic, sp.Expr] = {}

    def d(e: sp.Expr) -> sp.Expr:
        if e == x:
            return sp.S.One
        if not e.has_free(x):
            return sp.S.Zero
        if e not in memo:
            memo[e] = rule(e)
        return memo[e]

    def rule(e: sp.Expr) -> sp.Expr:
        if e.is_Add:
            return sp.Add(*[d(a) for a in e.args])
        if e.is_Mul:
            args, terms = list(e.args), []
            for i, a in enumerate(args):
                da = d(a)
                if da:  # the general Leibniz rule, as sympy applies it
                    terms.append(sp.Mul(*args[:i], da, *args[i + 1 :]))
            return sp.Add(*terms)
        if e.is_Pow:
            base, exp = e.args
            return e * (d(exp) * sp.log(base) + d(base) * exp / base)
        if isinstance(e, sp.Function) and type(e)._eval_derivative is sp.Function._eval_derivative:
            parts = []
            for i, a in enumerate(e.args, start=1):
                da = d(a)
                if not da.is_zero:
                    parts.append(e.fdiff(i) * da)
            return sp.Add(*parts)
        return sp.diff(e, x)

    return d(expr)


def _quick_to_simplify(expr: sp.Basic, cap: int = 60, degree: int = 12) -> bool:
    """Whether sympy's ``simplify`` is known to be quick on ``expr``: a rational function of
    the symbols (roots of single symbols allowed, no other function) whose expansion has at
    most ``cap`` terms of degree at most ``degree``. ``simplify`` expands, factors and tries
    trigonometric and radical rewritings; on nested functions, roots of sums or
    ``(a + b + c)**12`` that takes minutes even for a short expression."""

    def size(e: sp.Basic) -> tuple[int, int]:  # (terms, degree) of the expansion, capped
        if e.is_Symbol or e.is_Number or e is sp.pi or e is sp.E:
            return 1, int(e.is_Symbol)
        if isinstance(e, sp.Pow) and e.exp.is_Integer:
            n = min(abs(int(e.exp)), degree + 1)
            terms, deg = size(e.base)
            return min(terms**n, cap + 1), deg * n
        if isinstance(e, sp.Pow) and e.base.is_Symbol and e.exp.is_Rational:
            return 1, 1
        if isinstance(e, (sp.Add, sp.Mul)):
            parts = [size(a) for a in e.args]
            if isinstance(e, sp.Add):
                return min(sum(t for t, _ in parts), cap + 1), max(d for _, d in parts)
            terms = 1
            for t, _ in parts:
                terms = min(terms * t, cap + 1)
            return terms, sum(d for _, d in parts)
        raise OverflowError  # a function, a root of a sum, anything else

    try:
        terms, deg = size(expr)
    except OverflowError:
        return False
    return terms <= cap and deg <= degree


def _simplify(expr: sp.Expr) -> sp.Expr:
    """Simplified for display, at bounded cost (see :data:`SIMPLIFY_NODES`)."""
    size = expression_size(expr, _FACTOR_NODES)
    if size <= SIMPLIFY_NODES and sp.count_ops(expr) <= 120 and _quick_to_simplify(expr):
        return sp.simplify(expr)
    if size <= _FACTOR_NODES:
        return sp.factor_terms(expr)
    return expr


#: Name and version of a compiled-model entry (part of its key).
COMPILED_SCHEME = f"viscometry-compiled/{PROGRAM_VERSION}.{COMPILER_VERSION}"


def compiled_key(model: MeasurementModel) -> str:
    """The key of a model's compiled form: SHA-256 over the canonical expression
    (:func:`~viscometry.gum.canonical.canonical_expression`), the input and constant names
    in order, and :data:`COMPILED_SCHEME`; ``"sha256:<64 hex digits>"``."""
    from viscometry.gum.canonical import canonical_expression

    text = json.dumps(
        [COMPILED_SCHEME, canonical_expression(model.expression), model.input_names,
         model.constant_names], separators=(",", ":"), ensure_ascii=True,
    )  # fmt: skip
    return "sha256:" + hashlib.sha256(text.encode("ascii")).hexdigest()


def compiled_entry(key: str, compiled: CompiledModel) -> dict[str, Any]:
    """The plain-data entry that stores ``compiled`` under ``key``."""
    assert compiled.programs is not None
    value, gradient = compiled.programs
    return {
        "scheme": COMPILED_SCHEME,
        "key": key,
        "inputs": list(compiled.model.input_names),
        "constants": list(compiled.model.constant_names),
        "value": value.to_data(),
        "gradient": gradient.to_data(),
    }


def programs_from_entry(
    entry: Any, key: str, model: MeasurementModel
) -> tuple[Program, Program] | None:
    """The value and gradient programs of a stored entry, or None when the entry is not a
    well-formed entry for exactly this model (it is then ignored and compiled anew)."""
    try:
        if not isinstance(entry, Mapping) or entry.get("scheme") != COMPILED_SCHEME:
            return None
        if entry.get("key") != key or entry.get("inputs") != list(model.input_names):
            return None
        if entry.get("constants") != list(model.constant_names):
            return None
        value = Program.from_data(entry.get("value"))
        gradient = Program.from_data(entry.get("gradient"))
    except ProgramError:
        return None
    n = len(model.input_names) + len(model.constant_names)
    if value.arguments != n or gradient.arguments != n or len(value.outputs) != 1:
        return None
    if len(gradient.outputs) != len(model.input_names) + 1:
        return None
    return value, gradient


@functools.lru_cache(maxsize=256)
def _compile_cached(
    expr: sp.Expr, inputs: tuple[str, ...], consts: tuple[str, ...], out: str
) -> CompiledModel:
    model = MeasurementModel(expr, inputs, consts, out)
    store = compiled_store()
    if store is None:
        return CompiledModel(model)
    key = compiled_key(model)
    try:
        found = store.get(key)
    except Exception:  # noqa: BLE001 - a store must not stop a computation
        found = None
    programs = programs_from_entry(found, key, model)
    if programs is not None:
        return CompiledModel(model, programs)
    compiled = CompiledModel(model)
    if compiled.programs is not None:
        try:
            store.put(key, compiled_entry(key, compiled))
        except Exception:  # noqa: BLE001
            pass
    return compiled


def compile_model(model: MeasurementModel) -> CompiledModel:
    """The cached :class:`CompiledModel` of ``model`` (compiled once per process, and kept
    in the installed store of compiled models, if any: :func:`set_compiled_store`)."""
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
