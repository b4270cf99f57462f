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
offending piece and the fix. lmfit evaluates the accepted expressions for its
Parameters; :func:`compile_expression` turns the same tree into a function
giving the value and its partial derivatives (forward-mode differentiation),
which the fast path needs for the chain rule of the Jacobian.
"""

from __future__ import annotations

import ast
import math
from collections.abc import Callable, Collection, Mapping

from ..errors import FitError

__all__ = ["check_expression", "expression_names", "compile_expression"]

_BINOPS = (ast.Add, ast.Sub, ast.Mult, ast.Div, ast.Pow)
_UNARY = (ast.USub, ast.UAdd)

Dual = tuple[float, dict[str, float]]


def _parse(expr: str, param: str) -> ast.expr:
    if not isinstance(expr, str) or not expr.strip():
        raise FitError(f"constraint for parameter {param!r} must be a non-empty expression "
                       f"string, got {expr!r}")
    try:
        return ast.parse(expr.strip(), mode="eval").body
    except SyntaxError as exc:
        raise FitError(f"constraint for parameter {param!r} is not a valid expression: "
                       f"{expr!r} ({exc.msg}); use parameter names, numbers and + - * / **"
                       ) from None


def _check(node: ast.AST, expr: str, param: str, known: Collection[str], names: set[str]):
    if isinstance(node, ast.BinOp) and isinstance(node.op, _BINOPS):
        _check(node.left, expr, param, known, names)
        _check(node.right, expr, param, known, names)
    elif isinstance(node, ast.UnaryOp) and isinstance(node.op, _UNARY):
        _check(node.operand, expr, param, known, names)
    elif isinstance(node, ast.Constant):
        v = node.value
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise FitError(f"constraint for parameter {param!r} ({expr!r}) contains {v!r}; "
                           "only finite numbers are allowed")
    elif isinstance(node, ast.Name):
        if node.id not in known:
            raise FitError(f"constraint for parameter {param!r} ({expr!r}) names unknown "
                           f"parameter {node.id!r}; known parameters: "
                           f"{', '.join(sorted(known))}")
        names.add(node.id)
    else:
        piece = ast.get_source_segment(expr.strip(), node) or type(node).__name__
        raise FitError(f"constraint for parameter {param!r} ({expr!r}) uses {piece!r}, which "
                       "is not allowed; use only parameter names, numbers, + - * / ** and "
                       "parentheses")


def check_expression(expr: str, param: str, known: Collection[str]) -> frozenset[str]:
    """Check ``expr`` against the grammar; return the parameter names it uses.

    Raises
    ------
    FitError
        On a syntax error, a disallowed construct, or an unknown name; the
        message names ``param`` (the constrained parameter) and the fix.
    """
    names: set[str] = set()
    _check(_parse(expr, param), expr, param, known, names)
    if param in names:
        raise FitError(f"constraint for parameter {param!r} ({expr!r}) refers to itself; "
                       "tie it to other parameters only")
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

    return lambda env: ev(tree, env)
