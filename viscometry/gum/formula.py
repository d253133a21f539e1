"""A whitelist parser that turns a formula typed by a user into a sympy expression.

The text is parsed by Python's :mod:`ast` (which only *parses*, it never runs anything) and
the tree is walked node by node. Only these nodes are accepted:

* numbers (int and float literals, no complex, no strings, no booleans),
* names from the allowed set (inputs and constants of the budget) and ``pi``, ``e``,
* the binary operators ``+ - * / **``, unary ``+`` and ``-``, parentheses,
* calls of a fixed set of functions by plain name with positional arguments: ``sqrt exp log
  log10 sin cos tan asin acos atan abs`` and the registered reference-data functions.

Everything else (attribute access, subscripts, other calls, keywords, lambdas,
comprehensions, comparisons, strings, dunder names, unknown names) raises
:class:`~viscometry.errors.FormulaError` naming the offending piece. Length, nesting depth,
node count, the size of literal exponents and the size of the expression that the
reference-data functions expand into are bounded, so a hostile formula cannot exhaust
memory or time either. Nothing here calls ``eval``, ``exec``, ``sympify`` or
``parse_expr``.
"""

from __future__ import annotations

import ast
import io
import math
import tokenize
from collections.abc import Callable, Iterable, Mapping

import sympy as sp

from viscometry.errors import FormulaError

__all__ = [
    "parse_formula",
    "BASE_FUNCTIONS",
    "MAX_FORMULA_LENGTH",
    "MAX_DEPTH",
    "MAX_NODES",
    "MAX_OPEN_OPERATORS",
    "MAX_EXPONENT",
    "MAX_NUMBER_BITS",
    "MAX_EXPRESSION_NODES",
    "expression_size",
]

#: Longest formula accepted, in characters (a sum or product of 1000 inputs with names of
#: up to about 90 characters fits).
MAX_FORMULA_LENGTH = 100_000
#: Deepest real nesting accepted: parentheses, function calls, powers and unary signs inside
#: one another. A chain of one operator family (``a + b - c + …`` or ``a * b / c * …``) is
#: one level however long it is.
MAX_DEPTH = 40
#: Largest number of syntax-tree nodes accepted (a sum of 1000 inputs has about 4000).
MAX_NODES = 20_000
#: Largest number of operators, signs and keywords that are open at one place of a
#: formula, counted before Python's parser sees it (its syntax tree is as deep as that: the
#: parser nests a chain ``a + b + c`` to the left). A sum of 1000 products has about 2000.
MAX_OPEN_OPERATORS = 5000
#: Largest absolute value of a numeric exponent (``x**1000`` is refused).
MAX_EXPONENT = 64
#: Largest size, in bits, of an exact integer or rational built from literals (about 10**300;
#: beyond the range of a float anyway). Bounds the time and memory a formula such as
#: ``((10**30)**8)**8`` could take.
MAX_NUMBER_BITS = 1000
#: Largest expression a formula may expand into, in sympy tree nodes (each operation, function,
#: symbol and number is one node; a shared part counts as often as it appears). A call of a
#: reference-data function such as ``water_viscosity(T)`` expands into about 1900 nodes and
#: repeats its argument 174 times, so a model may call such functions about ten times, but
#: not inside one another in ways that multiply the size (``water_viscosity(
#: water_viscosity(T) * 3e5)`` has over 300 000 nodes, whose derivatives alone take minutes).
MAX_EXPRESSION_NODES = 20_000

BASE_FUNCTIONS: dict[str, Callable[..., sp.Expr]] = {
    "sqrt": sp.sqrt,
    "exp": sp.exp,
    "log": sp.log,
    "log10": lambda x: sp.log(x, 10),
    "sin": sp.sin,
    "cos": sp.cos,
    "tan": sp.tan,
    "asin": sp.asin,
    "acos": sp.acos,
    "atan": sp.atan,
    "abs": sp.Abs,
}

_BUILTIN_CONSTANTS: dict[str, sp.Expr] = {"pi": sp.pi, "e": sp.E}

_BINOPS: dict[type, Callable[[sp.Expr, sp.Expr], sp.Expr]] = {
    ast.Add: lambda a, b: a + b,
    ast.Sub: lambda a, b: a - b,
    ast.Mult: lambda a, b: a * b,
    ast.Div: lambda a, b: a / b,
    ast.Pow: lambda a, b: a**b,
}


#: Operator families whose chains count as one level of nesting.
_FAMILY: dict[type, str] = {ast.Add: "add", ast.Sub: "add", ast.Mult: "mul", ast.Div: "mul"}
#: Chains of at most this many operators are built operator by operator, exactly as before
#: chains counted as nesting (so their expressions and fingerprints are unchanged); longer
#: ones as one sum or product (the same value, built in linear time).
_PAIRWISE_LINKS = 40


def _describe(node: ast.AST) -> str:
    try:
        return repr(ast.unparse(node)[:60])
    except Exception:  # pragma: no cover - unparse of a parsed tree does not fail in practice
        return type(node).__name__


def expression_size(expr: sp.Basic, limit: int) -> int:
    """Number of nodes of a sympy expression tree, counted up to ``limit + 1`` at most.

    The count stops as soon as it passes ``limit``, so the cost is bounded by the limit and
    not by the (possibly huge) size of the expression.

    Parameters
    ----------
    expr : sympy.Basic
        The expression; a subexpression shared by several parents counts once per parent.
    limit : int
        Stop counting after ``limit + 1`` nodes [1].

    Returns
    -------
    int
        The number of nodes, or ``limit + 1`` when there are more than ``limit``.

    Examples
    --------
    >>> x = sp.Symbol("x")
    >>> expression_size(2 * x + sp.sin(x), 100), expression_size(2 * x + sp.sin(x), 3)
    (6, 4)
    """
    count = 0
    for _node in sp.preorder_traversal(expr):
        count += 1
        if count > limit:
            break
    return count


_KEYWORD_OPERATORS = frozenset({"if", "else", "and", "or", "not", "lambda", "for", "in", "is"})


def _open_operators(text: str) -> int:
    """The most operators, signs and operator keywords open at one place: those of every
    bracket level still open there, plus one per open bracket. Python's parser builds a
    syntax tree about that deep (a chain nests to the left), so a formula is refused on it
    before parsing; counted with the tokenizer, iteratively, for any length of text. Text
    the tokenizer refuses counts 0 (the parser then reports the syntax error)."""
    counts = [0]
    most = 0
    try:
        for tok in tokenize.generate_tokens(io.StringIO(text).readline):
            if tok.type == tokenize.OP and tok.string in "([{":
                counts.append(0)
            elif tok.type == tokenize.OP and tok.string in ")]}" and len(counts) > 1:
                counts.pop()
            elif (tok.type == tokenize.OP and tok.string not in ",:;") or (
                tok.type == tokenize.NAME and tok.string in _KEYWORD_OPERATORS
            ):
                counts[-1] += 1
                most = max(most, sum(counts) + len(counts))
    except (tokenize.TokenError, SyntaxError, ValueError):  # IndentationError too
        return most
    return most


def _function_registry(extra: Mapping[str, Callable[..., sp.Expr]] | None) -> dict:
    functions = dict(BASE_FUNCTIONS)
    if extra:
        functions.update(extra)
    return functions


def parse_formula(
    text: str,
    names: Iterable[str],
    *,
    functions: Mapping[str, Callable[..., sp.Expr]] | None = None,
    field: str = "model",
) -> sp.Expr:
    """Parse a formula over known names into a sympy expression, by whitelist.

    Parameters
    ----------
    text : str
        The formula, in Python syntax, e.g. ``"pi * r**4 * dp * t / (8 * V * L)"``.
    names : iterable of str
        Names of the inputs and constants the formula may use; each becomes a real
        sympy symbol.
    functions : mapping, optional
        Extra one-argument functions (name → callable building a sympy expression), e.g. the
        reference-data functions ``water_viscosity``. They extend :data:`BASE_FUNCTIONS`.
    field : str
        What to call the formula in error messages (e.g. ``"[measurand] model"``).

    Returns
    -------
    sympy.Expr
        The expression, with symbols created as ``sympy.Symbol(name, real=True)``.

    Raises
    ------
    FormulaError
        For anything outside the whitelist, with the offending fragment in the message.

    Examples
    --------
    >>> parse_formula("C * t - E / t**2", ["C", "t", "E"])
    C*t - E/t**2
    >>> parse_formula("__import__('os')", ["x"])
    Traceback (most recent call last):
    ...
    viscometry.errors.FormulaError: model: name '__import__' is not allowed (dunder names are refused)
    """
    if not isinstance(text, str):
        raise FormulaError(f"{field} must be a string, got {type(text).__name__}")
    if len(text) > MAX_FORMULA_LENGTH:
        raise FormulaError(
            f"{field} is {len(text)} characters long; the limit is {MAX_FORMULA_LENGTH}"
        )
    if not text.strip():
        raise FormulaError(f"{field} is empty")
    if "\x00" in text:
        raise FormulaError(f"{field} contains a NUL character")
    depth = deepest = 0
    for ch in text:
        if ch == "(":
            depth += 1
            deepest = max(deepest, depth)
        elif ch == ")":
            depth -= 1
    if deepest > MAX_DEPTH:
        raise FormulaError(f"{field}: parentheses nested {deepest} deep; the limit is {MAX_DEPTH}")
    chained = _open_operators(text.strip())
    if chained > MAX_OPEN_OPERATORS:
        raise FormulaError(
            f"{field} has {chained} operators in a row; the limit is {MAX_OPEN_OPERATORS}"
        )
    allowed = {}
    for n in names:
        if n in _BUILTIN_CONSTANTS:
            raise FormulaError(f"{field}: the name {n!r} is reserved for a mathematical constant")
        allowed[n] = sp.Symbol(n, real=True)
    funcs = _function_registry(functions)
    for n in allowed:
        if n in funcs:
            raise FormulaError(f"{field}: the name {n!r} is reserved for a function")
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except SyntaxError as exc:
        where = f"column {exc.offset}"
        if any(c in text.strip() for c in "\r\n"):  # one expression; breaks only inside ( )
            where = f"line {exc.lineno}, {where} (a line break ends the formula unless it is "
            where += "inside parentheses)"
        raise FormulaError(f"{field}: syntax error at {where}: {text.strip()[:80]!r}") from None
    except (ValueError, RecursionError, MemoryError):
        raise FormulaError(
            f"{field}: the formula could not be parsed (too deep or invalid)"
        ) from None
    count = sum(1 for _ in ast.walk(tree))
    if count > MAX_NODES:
        raise FormulaError(f"{field} has {count} syntax nodes; the limit is {MAX_NODES}")
    builder = _Builder(allowed, funcs, field)
    expr = builder.build(tree.body, 0)
    if expression_size(expr, MAX_EXPRESSION_NODES) > MAX_EXPRESSION_NODES:
        raise FormulaError(
            f"{field} expands into more than {MAX_EXPRESSION_NODES} terms (the limit); it calls "
            f"reference-data functions too often"
        )
    if not isinstance(expr, sp.Expr):  # pragma: no cover - defensive
        raise FormulaError(f"{field} does not describe a numeric expression")
    return expr


class _Builder:
    def __init__(self, allowed: dict[str, sp.Symbol], funcs: dict, field: str) -> None:
        self.allowed = allowed
        self.funcs = funcs
        self.field = field

    def fail(self, message: str) -> FormulaError:
        return FormulaError(f"{self.field}: {message}")

    def build(self, node: ast.AST, depth: int) -> sp.Expr:
        if depth > MAX_DEPTH:
            raise self.fail(f"nesting deeper than {MAX_DEPTH} levels")
        d = depth + 1
        if isinstance(node, ast.Constant):
            return self.constant(node)
        if isinstance(node, ast.Name):
            return self.name(node.id)
        if isinstance(node, ast.BinOp) and type(node.op) in _FAMILY:
            return self.chain(node, d)
        if isinstance(node, ast.BinOp):
            op = _BINOPS.get(type(node.op))
            if op is None:
                raise self.fail(
                    f"operator {type(node.op).__name__} in {_describe(node)} is not allowed; "
                    f"use + - * / **"
                )
            left = self.build(node.left, d)
            right = self.build(node.right, d)
            if isinstance(node.op, ast.Pow):
                self.check_power(left, right, node)
            return self.check_number(op(left, right), node)
        if isinstance(node, ast.UnaryOp):
            if isinstance(node.op, ast.USub):
                return -self.build(node.operand, d)
            if isinstance(node.op, ast.UAdd):
                return self.build(node.operand, d)
            raise self.fail(
                f"operator {type(node.op).__name__} in {_describe(node)} is not allowed"
            )
        if isinstance(node, ast.Call):
            return self.call(node, d)
        if isinstance(node, ast.Attribute):
            raise self.fail(f"attribute access {_describe(node)} is not allowed")
        if isinstance(node, ast.Subscript):
            raise self.fail(f"subscript {_describe(node)} is not allowed")
        if isinstance(node, ast.Lambda):
            raise self.fail("lambda expressions are not allowed")
        if isinstance(node, (ast.ListComp, ast.SetComp, ast.DictComp, ast.GeneratorExp)):
            raise self.fail("comprehensions are not allowed")
        raise self.fail(f"{type(node).__name__} {_describe(node)} is not allowed")

    def chain(self, node: ast.BinOp, depth: int) -> sp.Expr:
        """A chain of one operator family, ``a + b - c …`` or ``a * b / c …``: one level of
        nesting, built without recursion along the chain (Python nests it to the left)."""
        family = _FAMILY[type(node.op)]
        links: list[ast.BinOp] = []
        first: ast.expr = node
        while isinstance(first, ast.BinOp) and _FAMILY.get(type(first.op)) == family:
            links.append(first)
            first = first.left
        links.reverse()
        acc = self.build(first, depth)
        if len(links) <= _PAIRWISE_LINKS:  # term by term, as Python's operators would
            for link in links:
                right = self.build(link.right, depth)
                acc = self.check_number(_BINOPS[type(link.op)](acc, right), link)
            return acc
        parts = [acc]
        for link in links:  # a long chain: one sum or product of all its terms
            right = self.build(link.right, depth)
            if isinstance(link.op, ast.Sub):
                right = -right
            elif isinstance(link.op, ast.Div):
                right = self.check_number(sp.Pow(right, -1), link.right)
            parts.append(right)
        return self.check_number((sp.Add if family == "add" else sp.Mul)(*parts), node)

    def constant(self, node: ast.Constant) -> sp.Expr:
        v = node.value
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise self.fail(f"literal {v!r:.40} is not allowed; only real numbers are")
        if isinstance(v, int):
            if abs(v) > 10**30:
                raise self.fail(f"integer literal with {len(str(abs(v)))} digits is too large")
            return sp.Integer(v)
        if not math.isfinite(v):
            raise self.fail(f"literal {v!r} is not finite")
        return sp.Float(v, 17)

    def name(self, ident: str) -> sp.Expr:
        if ident.startswith("__") or ident.endswith("__"):
            raise self.fail(f"name {ident!r} is not allowed (dunder names are refused)")
        if ident in self.allowed:
            return self.allowed[ident]
        if ident in _BUILTIN_CONSTANTS:
            return _BUILTIN_CONSTANTS[ident]
        if ident in self.funcs:
            raise self.fail(f"function {ident!r} must be called with an argument")
        known = ", ".join(sorted(self.allowed)) or "none"
        raise self.fail(f"unknown name {ident!r} (known inputs and constants: {known})")

    def call(self, node: ast.Call, depth: int) -> sp.Expr:
        if not isinstance(node.func, ast.Name):
            raise self.fail(f"call {_describe(node)} is not allowed; only plain function names")
        fname = node.func.id
        if fname.startswith("__"):
            raise self.fail(f"name {fname!r} is not allowed (dunder names are refused)")
        if fname not in self.funcs:
            allowed = ", ".join(sorted(self.funcs))
            raise self.fail(f"function {fname!r} is not allowed (allowed: {allowed})")
        if node.keywords:
            raise self.fail(f"keyword arguments in {_describe(node)} are not allowed")
        if len(node.args) != 1:
            raise self.fail(f"function {fname!r} takes exactly one argument, got {len(node.args)}")
        if isinstance(node.args[0], ast.Starred):
            raise self.fail(f"starred arguments in {_describe(node)} are not allowed")
        arg = self.build(node.args[0], depth)
        value = self.funcs[fname](arg)
        if fname not in BASE_FUNCTIONS:  # a closed form that repeats its argument
            size = expression_size(value, MAX_EXPRESSION_NODES)
            if size > MAX_EXPRESSION_NODES:
                raise self.fail(
                    f"{_describe(node)} expands into more than {MAX_EXPRESSION_NODES} terms "
                    f"(the limit); call reference-data functions side by side, not inside one "
                    f"another"
                )
        return self.check_number(value, node)

    def check_number(self, value: sp.Expr, node: ast.AST) -> sp.Expr:
        """Refuse parts that are undefined, infinite, imaginary or absurdly large numbers."""
        if value.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
            raise self.fail(
                f"{_describe(node)} is undefined or infinite (a division by zero or the "
                f"logarithm of zero?)"
            )
        if value.has(sp.I) or (value.is_number and value.is_extended_real is False):
            raise self.fail(f"{_describe(node)} is not a real number")
        if isinstance(value, sp.Rational) and _bits(value) > MAX_NUMBER_BITS:
            raise self.fail(
                f"the number {_describe(node)} is too large (about 10**{_decades(value)})"
            )
        return value

    def check_power(self, base: sp.Expr, exponent: sp.Expr, node: ast.AST) -> None:
        if isinstance(base, sp.Rational) and isinstance(exponent, sp.Rational):
            # Size of the exact result, estimated before computing it.
            if _bits(base) * abs(float(exponent)) > MAX_NUMBER_BITS:
                raise self.fail(
                    f"power {_describe(node)} is too large (more than {MAX_NUMBER_BITS} bits)"
                )
        if exponent.is_number:
            try:
                mag = abs(float(exponent))
            except (TypeError, ValueError, OverflowError):
                raise self.fail(f"exponent in {_describe(node)} is not a real number") from None
            if mag > MAX_EXPONENT:
                raise self.fail(
                    f"exponent {float(exponent):g} in {_describe(node)} exceeds the limit "
                    f"of {MAX_EXPONENT}"
                )
        if base.is_number and exponent.is_number:
            try:
                mag = abs(float(base))
            except (TypeError, ValueError, OverflowError):
                raise self.fail(f"power {_describe(node)} is too large") from None
            if mag > 1e6 and abs(float(exponent)) > 8:
                raise self.fail(f"power {_describe(node)} is too large")


def _bits(value: sp.Rational) -> int:
    return max(abs(int(value.p)).bit_length(), abs(int(value.q)).bit_length())


def _decades(value: sp.Rational) -> int:
    return int(_bits(value) * math.log10(2))
