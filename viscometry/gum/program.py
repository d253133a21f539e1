"""Straight-line programs: a model's value and gradient as a short list of numpy steps.

A measurement model y = f(x₁, …, x_N; c₁, …, c_K) is compiled once into a *program*: a
list of steps, each applying one whitelisted operation (``+ − × ÷``, a power, ``exp``,
``log``, ``sqrt``, the trigonometric functions and their inverses, ``abs``, ``sign``) to
earlier results or putting a number in a new register. Registers ``0 … N+K−1`` hold the
arguments; step k writes register ``N+K+k``. A common subexpression is computed once
(each distinct step is emitted once).

The gradient program is the value program followed by its *reverse-mode derivative*
(the adjoint method: Griewank & Walther, *Evaluating Derivatives*, 2nd ed., SIAM 2008,
ch. 3): every step's adjoint is propagated back to its operands, so all N partial
derivatives cost a small multiple of the value itself, however many inputs there are. A
product of m factors gets the product of the other m − 1 factors for each of them without
any division (so a factor equal to zero is no problem). The derivatives are exact in the
same sense as a lambdified symbolic derivative: the same functions, evaluated in floating
point, in another order (results agree to rounding).

A program is *data only*: it can be written to JSON (:meth:`Program.to_data`) and read back
(:meth:`Program.from_data`), which checks every part (known operations, registers defined
before use, finite numbers, bounded size) and raises :class:`ProgramError` on anything
else. It is run by the small interpreter :meth:`Program.run`, which calls only the numpy
functions and arithmetic operators of :data:`UNARY` and :data:`BINARY`; nothing is ever
compiled or evaluated as Python code. This module does not import sympy at import time
(:func:`compile_expression` does, when it is called).
"""

from __future__ import annotations

import math
import operator
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

__all__ = [
    "Program",
    "ProgramError",
    "UnsupportedExpression",
    "compile_expression",
    "PROGRAM_VERSION",
    "COMPILER_VERSION",
    "MAX_PROGRAM_STEPS",
    "UNARY",
    "BINARY",
]

#: Version of the program format (part of every cached entry; a change invalidates them).
PROGRAM_VERSION = 1
#: Version of the compiler: raise it whenever :func:`compile_expression` emits other steps
#: for the same expression (even steps that differ in rounding only), so that a cached
#: program always has the bits a fresh compilation would have.
COMPILER_VERSION = 1
#: Largest number of steps a program read from data may have (a formula's expression has at
#: most 20 000 nodes; its gradient program about four steps per node).
MAX_PROGRAM_STEPS = 400_000
#: Largest number of arguments a program read from data may have.
MAX_PROGRAM_ARGUMENTS = 100_000

#: One-argument operations: name -> numpy function.
UNARY: dict[str, Callable[[Any], Any]] = {
    "neg": operator.neg,
    "exp": np.exp,
    "log": np.log,
    "sqrt": np.sqrt,
    "sin": np.sin,
    "cos": np.cos,
    "tan": np.tan,
    "asin": np.arcsin,
    "acos": np.arccos,
    "atan": np.arctan,
    "abs": np.abs,
    "sign": np.sign,
}
#: Two-argument operations: name -> operator (Python's, as in lambdified code).
BINARY: dict[str, Callable[[Any, Any], Any]] = {
    "add": operator.add,
    "sub": operator.sub,
    "mul": operator.mul,
    "div": operator.truediv,
    "pow": operator.pow,
}
_CONSTANTS = ("int", "float")


class ProgramError(ValueError):
    """A program read from data is not a valid program (the data is refused, never run)."""


class UnsupportedExpression(Exception):
    """The expression uses something the program compiler does not know (the caller falls
    back to sympy's own lambdify)."""


Step = tuple[Any, ...]


@dataclass(frozen=True)
class Program:
    """A straight-line program over numpy values (see the module docstring).

    Parameters
    ----------
    arguments : int
        Number of argument registers.
    steps : tuple of tuple
        ``("int", i)``, ``("float", hex)`` (``float.hex`` of a finite float), ``(op, a)`` with
        ``op`` in :data:`UNARY`, or ``(op, a, b)`` with ``op`` in :data:`BINARY`; ``a`` and
        ``b`` are registers written before the step.
    outputs : tuple of int
        Registers returned by :meth:`run`, in order.
    """

    arguments: int
    steps: tuple[Step, ...]
    outputs: tuple[int, ...]
    _plan: tuple[tuple[Any, ...], ...] = field(init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "_plan", _plan(self.arguments, self.steps, self.outputs))

    def run(self, *args: Any) -> list[Any]:
        """Run the program on the arguments (floats or broadcastable numpy arrays).

        Registers are dropped after their last use, so a program on large arrays holds only
        the arrays still needed, and an intermediate float array is overwritten by the step
        that uses it last where the result has its shape (as numpy does for temporaries in
        ``a * b * c``). The arguments are never written to.
        """
        if len(args) != self.arguments:
            raise TypeError(f"the program takes {self.arguments} arguments, got {len(args)}")
        regs: list[Any] = list(args)
        append = regs.append
        for kind, f, a, b, free, ufunc, reuse in self._plan:
            if kind == 0:
                append(f)
                continue
            out = regs[reuse] if reuse >= 0 else None
            if type(out) is not np.ndarray or out.dtype != np.float64:
                out = None
            if kind == 1:
                append(f(regs[a]) if out is None else ufunc(out, out=out))
            else:
                x, y = regs[a], regs[b]
                other = y if out is x else x
                if out is None or (type(other) is np.ndarray and other.shape != out.shape):
                    append(f(x, y))
                else:
                    append(ufunc(x, y, out=out))
            for r in free:
                regs[r] = None
        return [regs[r] for r in self.outputs]

    def to_data(self) -> dict[str, Any]:
        """The program as plain JSON-ready data (lists, strings, integers)."""
        return {
            "version": PROGRAM_VERSION,
            "arguments": self.arguments,
            "steps": [list(s) for s in self.steps],
            "outputs": list(self.outputs),
        }

    @classmethod
    def from_data(cls, data: Any) -> Program:
        """A program from :meth:`to_data` output, checked part by part.

        Raises
        ------
        ProgramError
            Anything but a well-formed program of the current :data:`PROGRAM_VERSION`.
        """
        if not isinstance(data, Mapping) or data.get("version") != PROGRAM_VERSION:
            raise ProgramError("not a program of this version")
        arguments, steps, outputs = (data.get(k) for k in ("arguments", "steps", "outputs"))
        if not _is_int(arguments) or not 0 <= arguments <= MAX_PROGRAM_ARGUMENTS:
            raise ProgramError("bad number of arguments")
        if not isinstance(steps, list) or len(steps) > MAX_PROGRAM_STEPS:
            raise ProgramError("steps missing or too many")
        checked = tuple(_checked_step(s, arguments + k) for k, s in enumerate(steps))
        total = arguments + len(checked)
        if not isinstance(outputs, list) or not all(_is_int(r) and 0 <= r < total for r in outputs):
            raise ProgramError("bad outputs")
        return cls(arguments, checked, tuple(outputs))


def _is_int(value: Any) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _checked_step(step: Any, defined: int) -> Step:
    """One step of data, checked; ``defined`` registers exist before it."""
    if not isinstance(step, list) or not step or not isinstance(step[0], str):
        raise ProgramError("a step is not a list starting with an operation name")
    op, rest = step[0], step[1:]
    if op == "int" and len(rest) == 1 and _is_int(rest[0]) and abs(rest[0]) < 2**1024:
        return ("int", rest[0])
    if op == "float" and len(rest) == 1 and isinstance(rest[0], str) and len(rest[0]) < 40:
        try:
            value = float.fromhex(rest[0])
        except (ValueError, OverflowError):
            raise ProgramError("a number is not a hexadecimal float") from None
        if not math.isfinite(value):
            raise ProgramError("a number is not finite")
        return ("float", value.hex())
    arity = 1 if op in UNARY else 2 if op in BINARY else 0
    if not arity or len(rest) != arity:
        raise ProgramError("unknown operation or wrong number of operands")
    if not all(_is_int(r) and 0 <= r < defined for r in rest):
        raise ProgramError("an operand is not an earlier register")
    return (op, *rest)


def _plan(arguments: int, steps: Sequence[Step], outputs: Sequence[int]) -> tuple:
    """Steps resolved to (kind, function or value, a, b, registers to drop after it)."""
    last: dict[int, int] = {}
    for k, step in enumerate(steps):
        if step[0] not in _CONSTANTS:
            for r in step[1:]:
                last[r] = k
    kept = set(outputs)
    drops: list[list[int]] = [[] for _ in steps]
    for r, k in last.items():
        if r not in kept:
            drops[k].append(r)
    plan = []
    for step, drop in zip(steps, drops, strict=True):
        op = step[0]
        if op == "int":
            plan.append((0, step[1], 0, 0, tuple(drop), None, -1))
        elif op == "float":
            plan.append((0, float.fromhex(step[1]), 0, 0, tuple(drop), None, -1))
        else:
            ufunc = _IN_PLACE.get(op)
            # an operand computed by a step (never an argument) and not needed afterwards
            spare = [r for r in step[1:] if r in drop and r >= arguments] if ufunc else []
            f = UNARY[op] if op in UNARY else BINARY[op]
            kind = 1 if op in UNARY else 2
            a, b = step[1], step[2] if kind == 2 else 0
            plan.append((kind, f, a, b, tuple(drop), ufunc, spare[0] if spare else -1))
    return tuple(plan)


#: The numpy functions that write a result into a spare operand (``out=``); they compute
#: exactly what :data:`UNARY` and :data:`BINARY` compute. (Powers are left out: ``x**2``
#: takes numpy's squaring path, ``numpy.power`` the general one.)
_IN_PLACE: dict[str, Any] = {
    "neg": np.negative, "exp": np.exp, "log": np.log, "sqrt": np.sqrt, "sin": np.sin,
    "cos": np.cos, "tan": np.tan, "asin": np.arcsin, "acos": np.arccos, "atan": np.arctan,
    "abs": np.absolute, "sign": np.sign, "add": np.add, "sub": np.subtract,
    "mul": np.multiply, "div": np.true_divide,
}  # fmt: skip


# ----------------------------------------------------------------------------- compiler
_ONE = -1  # marker: an adjoint known to be exactly 1


class _Emitter:
    """Builds the steps, emitting each distinct step once."""

    def __init__(self, arguments: int) -> None:
        self.arguments = arguments
        self.steps: list[Step] = []
        self.index: dict[Step, int] = {}

    def emit(self, *step: Any) -> int:
        reg = self.index.get(step)
        if reg is None:
            reg = self.arguments + len(self.steps)
            self.steps.append(step)
            self.index[step] = reg
        return reg

    def number(self, value: int | float) -> int:
        if isinstance(value, int):
            return self.emit("int", value)
        if not math.isfinite(value):
            raise UnsupportedExpression(f"the number {value!r} is not finite")
        return self.emit("float", float(value).hex())

    def one(self, reg: int) -> int:
        return self.number(1.0) if reg == _ONE else reg

    def mul(self, a: int, b: int) -> int:
        if a == _ONE:
            return b
        if b == _ONE:
            return a
        return self.emit("mul", a, b)

    def div(self, a: int, b: int) -> int:
        return self.emit("div", self.one(a), b)

    def neg(self, a: int) -> int:
        return self.number(-1.0) if a == _ONE else self.emit("neg", a)


def compile_expression(expr: Any, symbols: Sequence[Any], inputs: int) -> tuple[Program, Program]:
    """The value program and the value-and-gradient program of a sympy expression.

    Parameters
    ----------
    expr : sympy.Expr
        The model's expression.
    symbols : sequence of sympy.Symbol
        The arguments in order: the inputs, then the constants.
    inputs : int
        How many of the first ``symbols`` are inputs (differentiated by).

    Returns
    -------
    value : Program
        Outputs ``[y]``.
    gradient : Program
        Outputs ``[y, ∂y/∂x₁, …, ∂y/∂x_N]``.

    Raises
    ------
    UnsupportedExpression
        The expression holds a function or number the compiler does not know.
    """
    emitter = _Emitter(len(symbols))
    forward = _Forward(emitter, symbols)
    try:
        y = forward.build(expr)
    except RecursionError:  # pragma: no cover - expressions are far shallower
        raise UnsupportedExpression("the expression is nested too deeply") from None
    n_forward = len(emitter.steps)
    adjoints = _reverse(emitter, n_forward, y, inputs)
    grads = [emitter.one(adjoints[i]) if i in adjoints else emitter.number(0.0)
             for i in range(inputs)]  # fmt: skip
    value = _pruned(emitter.arguments, emitter.steps, [y])
    gradient = _pruned(emitter.arguments, emitter.steps, [y, *grads])
    return value, gradient


def _pruned(arguments: int, steps: Sequence[Step], outputs: Sequence[int]) -> Program:
    """The steps needed for ``outputs`` only, renumbered."""
    needed = set(outputs)
    for k in range(len(steps) - 1, -1, -1):
        step = steps[k]
        if arguments + k in needed and step[0] not in _CONSTANTS:
            needed.update(step[1:])
    new = {r: r for r in range(arguments)}
    kept: list[Step] = []
    for k, step in enumerate(steps):
        if arguments + k not in needed:
            continue
        new[arguments + k] = arguments + len(kept)
        kept.append(step if step[0] in _CONSTANTS else (step[0], *(new[r] for r in step[1:])))
    return Program(arguments, tuple(kept), tuple(new[r] for r in outputs))


class _Forward:
    """sympy expression -> steps, in the arithmetic that lambdified code uses (a quotient is
    a division, a square root ``sqrt``, a negative term a subtraction)."""

    def __init__(self, emitter: _Emitter, symbols: Sequence[Any]) -> None:
        import sympy as sp

        self.sp = sp
        self.e = emitter
        self.memo: dict[Any, int] = {s: i for i, s in enumerate(symbols)}
        self.functions = {
            sp.exp: "exp", sp.log: "log", sp.sin: "sin", sp.cos: "cos", sp.tan: "tan",
            sp.asin: "asin", sp.acos: "acos", sp.atan: "atan", sp.Abs: "abs", sp.sign: "sign",
        }  # fmt: skip

    def build(self, expr: Any) -> int:
        reg = self.memo.get(expr)
        if reg is None:
            reg = self._node(expr)
            self.memo[expr] = reg
        return reg

    def _node(self, expr: Any) -> int:
        e = self.e
        if expr.is_Symbol:
            raise UnsupportedExpression(f"unknown symbol {expr}")
        if expr.is_Number or expr.is_NumberSymbol:
            return self._number(expr)
        if expr.is_Add:
            return self._add(expr.args)
        if expr.is_Mul:
            coeff, factors = expr.as_coeff_mul()
            if coeff.is_negative:
                return e.neg(self._product(-coeff, factors))
            return self._product(coeff, factors)
        if expr.is_Pow:
            return self._power(expr.base, expr.exp)
        name = self.functions.get(type(expr))
        if name is not None and len(expr.args) == 1:
            return e.emit(name, self.build(expr.args[0]))
        raise UnsupportedExpression(f"{type(expr).__name__} is not compiled")

    def _number(self, expr: Any) -> int:
        sp = self.sp
        if expr.is_Integer:
            return self.e.number(int(expr))
        if expr.is_Rational:
            return self.e.number(int(expr.p) / int(expr.q))
        if expr is sp.pi:
            return self.e.number(math.pi)
        if expr is sp.E:
            return self.e.number(math.e)
        try:
            return self.e.number(float(expr))
        except (TypeError, ValueError, OverflowError):
            raise UnsupportedExpression(f"the number {expr} is not compiled") from None

    def _add(self, terms: Sequence[Any]) -> int:
        """A sum; negative terms are subtracted, and the sum starts from its first positive
        term (a negation would cost one more pass over an array)."""
        signed = [self._signed(term) for term in terms]
        first = next((k for k, (negative, _) in enumerate(signed) if not negative), 0)
        negative, acc = signed[first]
        if negative:
            acc = self.e.neg(acc)
        for k, (negative, reg) in enumerate(signed):
            if k != first:
                acc = self.e.emit("sub" if negative else "add", acc, reg)
        return acc

    def _signed(self, term: Any) -> tuple[bool, int]:
        """(whether the term is negative, the register of its magnitude)."""
        if term.is_Mul:
            coeff, factors = term.as_coeff_mul()
            if coeff.is_negative:
                return True, self._product(-coeff, factors)
            return False, self._product(coeff, factors)
        if term.is_Number and term.is_negative:
            return True, self.build(-term)
        return False, self.build(term)

    def _product(self, coeff: Any, factors: Sequence[Any]) -> int:
        """coeff · Π factors, with factors of negative power as one denominator."""
        e = self.e
        top: list[int] = [] if coeff == 1 else [self.build(coeff)]
        bottom: list[int] = []
        for f in factors:
            if f.is_Pow and f.exp.is_Number and f.exp.is_negative:
                bottom.append(self._power(f.base, -f.exp))
            else:
                top.append(self.build(f))
        num = _chain(e, top)
        if not bottom:
            return num if num is not None else e.number(1)
        den = _chain(e, bottom)
        assert den is not None
        return e.emit("div", num if num is not None else e.number(1), den)

    def _power(self, base: Any, exponent: Any) -> int:
        sp, e = self.sp, self.e
        if exponent == 1:
            return self.build(base)
        if exponent == sp.S.Half:
            return e.emit("sqrt", self.build(base))
        if exponent.is_Number and exponent.is_negative:
            return e.emit("div", e.number(1), self._power(base, -exponent))
        return e.emit("pow", self.build(base), self.build(exponent))


def _chain(e: _Emitter, regs: Sequence[int]) -> int | None:
    acc: int | None = None
    for r in regs:
        acc = r if acc is None else e.emit("mul", acc, r)
    return acc


def _reverse(e: _Emitter, n_forward: int, y: int, inputs: int) -> dict[int, int]:
    """Propagate adjoints from ``y`` back through the first ``n_forward`` steps; returns the
    adjoint register of each input argument that ``y`` depends on."""
    n = e.arguments
    active = [i < inputs for i in range(n)]
    for step in e.steps[:n_forward]:
        active.append(step[0] not in _CONSTANTS and any(active[r] for r in step[1:]))
    adj: dict[int, int] = {y: _ONE} if active[y] else {}

    def add(reg: int, contribution: int) -> None:
        if active[reg]:
            old = adj.get(reg)
            adj[reg] = (
                contribution if old is None else e.emit("add", e.one(old), e.one(contribution))
            )

    for k in range(n_forward - 1, -1, -1):
        reg = n + k
        g = adj.pop(reg, None)
        if g is None:
            continue
        _adjoint_rule(e, e.steps[k], reg, g, active, add)
    return adj


def _adjoint_rule(
    e: _Emitter, step: Step, y: int, g: int, active: list[bool], add: Callable[[int, int], None]
) -> None:
    """Contributions of one step's adjoint ``g`` to its operands (y = the step's result)."""
    op, a = step[0], step[1]
    b = step[2] if len(step) > 2 else -2
    if op == "add":
        add(a, g)
        add(b, g)
    elif op == "sub":
        add(a, g)
        add(b, e.neg(g))
    elif op == "mul":
        add(a, e.mul(g, b))
        add(b, e.mul(g, a))
    elif op == "div":
        t = e.div(g, b)
        add(a, t)
        if active[b]:
            add(b, e.neg(e.mul(t, y)))
    elif op == "neg":
        add(a, e.neg(g))
    elif op == "pow":
        _power_rule(e, step, y, g, active, add)
    elif op == "sqrt":
        add(a, e.div(g, e.emit("mul", e.number(2), y)))
    elif op == "exp":
        add(a, e.mul(g, y))
    elif op == "log":
        add(a, e.div(g, a))
    elif op == "sin":
        add(a, e.mul(g, e.emit("cos", a)))
    elif op == "cos":
        add(a, e.neg(e.mul(g, e.emit("sin", a))))
    elif op == "tan":
        add(a, e.mul(g, e.emit("add", e.number(1), e.emit("mul", y, y))))
    elif op in ("asin", "acos", "atan"):
        square = e.emit("mul", a, a)
        if op == "atan":
            add(a, e.div(g, e.emit("add", e.number(1), square)))
        else:
            t = e.div(g, e.emit("sqrt", e.emit("sub", e.number(1), square)))
            add(a, t if op == "asin" else e.neg(t))
    elif op == "abs":
        add(a, e.mul(g, e.emit("sign", a)))
    # "sign" is piecewise constant: no contribution


def _power_rule(
    e: _Emitter, step: Step, y: int, g: int, active: list[bool], add: Callable[[int, int], None]
) -> None:
    """d(a**b) = b·a**(b−1)·da + a**b·log(a)·db."""
    _, a, b = step
    if active[a]:
        exponent = e.steps[b - e.arguments] if b >= e.arguments else None
        if exponent is not None and exponent[0] == "int":
            k = exponent[1]
            power = a if k == 2 else e.emit("pow", a, e.number(k - 1))
            add(a, e.mul(g, e.emit("mul", e.number(k), power)))
        else:
            power = e.emit("pow", a, e.emit("sub", b, e.number(1)))
            add(a, e.mul(g, e.emit("mul", b, power)))
    if active[b]:
        add(b, e.mul(g, e.emit("mul", y, e.emit("log", a))))
