"""Constraint expressions: the allowed grammar and their exact derivatives.

A constraint ties one fit parameter to others, for example
``"0.32 * l1_area"`` (a fixed area ratio), ``"l1_position - 2.07"`` (an
isotopologue offset) or ``"shared_gamma"`` (a shared width). Expressions are
data, never code: before use every expression is parsed with :mod:`ast` and
checked against this grammar::

    expr   := number | name | expr op expr | "-" expr | "+" expr | "(" expr ")"
    op     := "+" | "-" | "*" | "/" | "**"

``name`` must be a parameter of the fit and ``number`` a finite int or float
literal. Anything else (calls, attributes, subscripts, comparisons, strings)
is refused with :class:`~widgetkit.errors.FitError` naming the parameter, the
offending piece and the fix.

An expression that fits the grammar but cannot be evaluated is refused too,
before any fit: its size is bounded (:data:`MAX_CHARS` characters,
:data:`MAX_NODES` terms), every part made of numbers only is evaluated once
and must give a finite real number (``9**9**9`` and ``1/0`` are refused), a
division by a constant zero and a power whose constant exponent exceeds
:data:`MAX_EXPONENT` in size are refused. Should the evaluation still fail
during a fit (a division by a difference of parameters that reaches zero),
it raises FitError naming the expression, never a built-in error.

lmfit evaluates the accepted expressions for its Parameters;
:func:`compile_expression` turns the same tree into a function giving the value
and its partial derivatives (forward-mode differentiation), which the fast
path needs for the chain rule of the Jacobian.
"""

from __future__ import annotations

import ast
import math
from collections.abc import Callable, Collection, Mapping

from ..errors import FitError

__all__ = ["check_expression", "check_grammar", "expression_names", "compile_expression",
           "MAX_CHARS", "MAX_NODES", "MAX_EXPONENT"]

#: longest expression accepted (characters)
MAX_CHARS = 2000
#: most operations, names and numbers in one expression
MAX_NODES = 400
#: largest magnitude of a constant exponent (x**64 already spans 10**±(64 log10 x))
MAX_EXPONENT = 64.0

_BINOPS = (ast.Add, ast.Sub, ast.Mult, ast.Div, ast.Pow)
_UNARY = (ast.USub, ast.UAdd)

Dual = tuple[float, dict[str, float]]


def _parse(expr: str, param: str) -> ast.expr:
    if not isinstance(expr, str) or not expr.strip():
        raise FitError(f"constraint for parameter {param!r} must be a non-empty expression "
                       f"string, got {_cut(expr)}")
    if len(expr) > MAX_CHARS:
        raise FitError(f"constraint for parameter {param!r} is {len(expr):,} characters long "
                       f"(at most {MAX_CHARS:,}); tie it to fewer parameters")
    try:
        return ast.parse(expr.strip(), mode="eval").body
    except (RecursionError, MemoryError):
        raise FitError(f"constraint for parameter {param!r} is nested too deeply to read: "
                       f"{_cut(expr)}") from None
    except SyntaxError as exc:
        raise FitError(f"constraint for parameter {param!r} is not a valid expression: "
                       f"{expr!r} ({exc.msg}); use parameter names, numbers and + - * / **"
                       ) from None


def _cut(text, limit: int = 80) -> str:
    r = repr(text)
    return r if len(r) <= limit else r[: limit - 1] + "…"


def _check(node: ast.AST, expr: str, param: str, known: Collection[str] | None,
           names: set[str]) -> float | None:
    """Check one node; returns its value when it holds numbers only (else None)."""
    if isinstance(node, ast.BinOp) and isinstance(node.op, _BINOPS):
        a = _check(node.left, expr, param, known, names)
        b = _check(node.right, expr, param, known, names)
        return _fold(node.op, a, b, expr, param)
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, _UNARY):
        v = _check(node.operand, expr, param, known, names)
        return None if v is None else (-v if isinstance(node.op, ast.USub) else v)
    if isinstance(node, ast.Constant):
        v = node.value
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not _finite(v):
            raise FitError(f"constraint for parameter {param!r} ({_cut(expr)}) contains "
                           f"{_cut(v, 40)}; only finite numbers are allowed")
        return float(v)
    if isinstance(node, ast.Name):
        if known is not None and node.id not in known:
            raise FitError(f"constraint for parameter {param!r} ({expr!r}) names unknown "
                           f"parameter {node.id!r}; known parameters: "
                           f"{', '.join(sorted(known))}")
        names.add(node.id)
        return None
    piece = ast.get_source_segment(expr.strip(), node) or type(node).__name__
    raise FitError(f"constraint for parameter {param!r} ({_cut(expr)}) uses {_cut(piece, 40)}, "
                   "which is not allowed; use only parameter names, numbers, + - * / ** and "
                   "parentheses")


def _finite(v) -> bool:
    try:
        return math.isfinite(float(v))
    except OverflowError:
        return False


def _fold(op: ast.operator, a: float | None, b: float | None, expr: str, param: str):
    """The value of ``a op b`` when both are numbers; refuse what cannot be evaluated."""
    where = f"constraint for parameter {param!r} ({_cut(expr)})"
    if b is not None and isinstance(op, ast.Div) and b == 0.0:
        raise FitError(f"{where} divides by zero")
    if b is not None and isinstance(op, ast.Pow) and abs(b) > MAX_EXPONENT:
        raise FitError(f"{where} raises to the power {b:g}; exponents are limited to "
                       f"±{MAX_EXPONENT:g}")
    if a is None or b is None:
        return None
    try:
        v = _BINARY[type(op)](a, b)
    except (OverflowError, ZeroDivisionError):
        v = math.inf
    if isinstance(v, complex) or not math.isfinite(v):
        raise FitError(f"{where} cannot be evaluated: a part made of numbers only does not give "
                       "a finite real number")
    return v


_BINARY = {ast.Add: lambda a, b: a + b, ast.Sub: lambda a, b: a - b,
           ast.Mult: lambda a, b: a * b, ast.Div: lambda a, b: a / b,
           ast.Pow: lambda a, b: a**b}


def _size(tree: ast.AST, expr: str, param: str) -> None:
    n = sum(1 for _ in ast.walk(tree))
    if n > MAX_NODES:
        raise FitError(f"constraint for parameter {param!r} has {n:,} terms and operations "
                       f"(at most {MAX_NODES}); tie it to fewer parameters")


def check_expression(expr: str, param: str, known: Collection[str]) -> frozenset[str]:
    """Check ``expr`` against the grammar; return the parameter names it uses.

    Raises
    ------
    FitError
        On a syntax error, a disallowed construct, or an unknown name; the
        message names ``param`` (the constrained parameter) and the fix.
    """
    names: set[str] = set()
    tree = _parse(expr, param)
    _size(tree, expr, param)
    _check(tree, expr, param, known, names)
    if param in names:
        raise FitError(f"constraint for parameter {param!r} ({expr!r}) refers to itself; "
                       "tie it to other parameters only")
    return frozenset(names)


def check_grammar(expr: str, param: str) -> frozenset[str]:
    """:func:`check_expression` without knowing the fit's parameters (any name is allowed):
    the grammar, the size and the parts made of numbers only. Used to check a saved
    session before anything is computed; returns the names used."""
    names: set[str] = set()
    tree = _parse(expr, param)
    _size(tree, expr, param)
    _check(tree, expr, param, None, names)
    return frozenset(names)


def expression_names(expr: str) -> frozenset[str]:
    """Names used in an already checked expression."""
    return frozenset(n.id for n in ast.walk(_parse(expr, "?")) if isinstance(n, ast.Name))


def _dual_binop(op: ast.operator, a: Dual, b: Dual) -> Dual:
    (x, dx), (y, dy) = a, b
    keys = dx.keys() | dy.keys()
    if isinstance(op, ast.Add):
        return x + y, {k: dx.get(k, 0.0) + dy.get(k, 0.0) for k in keys}
    if isinstance(op, ast.Sub):
        return x - y, {k: dx.get(k, 0.0) - dy.get(k, 0.0) for k in keys}
    if isinstance(op, ast.Mult):
        return x * y, {k: dx.get(k, 0.0) * y + x * dy.get(k, 0.0) for k in keys}
    if isinstance(op, ast.Div):
        return x / y, {k: (dx.get(k, 0.0) * y - x * dy.get(k, 0.0)) / (y * y) for k in keys}
    # power: d(x**y) = y x**(y-1) dx + x**y ln(x) dy
    v = x**y
    out = {}
    for k in keys:
        d = 0.0
        if dx.get(k, 0.0):
            d += y * x ** (y - 1.0) * dx[k]
        if dy.get(k, 0.0):
            d += v * math.log(x) * dy[k]
        out[k] = d
    return v, out


def compile_expression(expr: str) -> Callable[[Mapping[str, Dual]], Dual]:
    """Compile a checked expression into ``f(values) -> (value, partials)``.

    ``values`` maps each name to ``(value, {base_name: d value / d base})``;
    the result has the same form, so chained constraints compose exactly.
    """
    tree = _parse(expr, "?")

    def run(env: Mapping[str, Dual]) -> Dual:
        # a non-finite value goes back to the solver, which rejects that step; an
        # operation Python refuses (a float division by zero, a complex power) is ours
        try:
            value, partials = ev(tree, env)
        except (ZeroDivisionError, OverflowError, ValueError, TypeError):
            value = None
        if value is None or isinstance(value, complex):
            raise FitError(f"constraint {_cut(expr)} cannot be evaluated at the current values "
                           "of its parameters (a division by zero, an overflow or a negative "
                           "number to a fractional power); bound the parameters it uses")
        return value, partials

    def ev(node: ast.AST, env: Mapping[str, Dual]) -> Dual:
        if isinstance(node, ast.BinOp):
            return _dual_binop(node.op, ev(node.left, env), ev(node.right, env))
        if isinstance(node, ast.UnaryOp):
            v, d = ev(node.operand, env)
            if isinstance(node.op, ast.USub):
                return -v, {k: -g for k, g in d.items()}
            return v, d
        if isinstance(node, ast.Constant):
            return float(node.value), {}
        if isinstance(node, ast.Name):
            return env[node.id]
        raise FitError(f"expression {expr!r} was not checked before compiling")

    return run
