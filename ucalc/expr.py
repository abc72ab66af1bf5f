"""The model expression language: parsed with a whitelist, differentiated exactly, compiled once.

Model lines are arithmetic on names: numbers, names (optionally dotted, ``cal.slope``), ``+ - * / **``,
parentheses and the functions in :data:`FUNCTIONS`. Text is parsed by Python's ``ast`` module (which executes
nothing) and only whitelisted node types are turned into ucalc's own small tree; nothing reaches ``eval``.
The tree is differentiated symbolically, which gives the exact sensitivity coefficients of JCGM 100 5.1.3, and
compiled into closures that evaluate on floats, on ``uncertainties`` numbers or on numpy arrays.
"""

from __future__ import annotations

import ast
import math
from collections.abc import Callable, Container, Mapping
from dataclasses import dataclass
from typing import Any

from .errors import ExpressionError

FUNCTIONS = ("sqrt", "exp", "log", "log10", "sin", "cos", "tan", "abs")
MAX_LENGTH = 4000
MAX_DEPTH = 120
MAX_MODEL_DEPTH = 1000  # nesting of the measurand once every model line is inlined
MAX_MODEL_LINES = 1000


class Node:
    """Base of the expression tree. Nodes are immutable and may be shared."""

    __slots__ = ()


@dataclass(frozen=True, eq=False, slots=True)
class Num(Node):
    value: float


@dataclass(frozen=True, eq=False, slots=True)
class Var(Node):
    name: str
    column: int = 0


@dataclass(frozen=True, eq=False, slots=True)
class Neg(Node):
    arg: Node


@dataclass(frozen=True, eq=False, slots=True)
class Bin(Node):
    op: str  # one of + - * / **
    left: Node
    right: Node
    column: int = 0


@dataclass(frozen=True, eq=False, slots=True)
class Call(Node):
    fn: str  # a name of FUNCTIONS, or the internal "sign"
    arg: Node
    column: int = 0


_BINOPS: dict[type, str] = {ast.Add: "+", ast.Sub: "-", ast.Mult: "*", ast.Div: "/", ast.Pow: "**"}
_HINTS: dict[type, str] = {
    ast.BitXor: "'^' is not a power operator; write '**'",
    ast.FloorDiv: "'//' is not allowed; write '/'",
    ast.Mod: "'%' is not allowed",
}


def _describe(node: ast.AST) -> str:
    kinds = {
        ast.Lambda: "lambda", ast.ListComp: "comprehension", ast.GeneratorExp: "comprehension",
        ast.SetComp: "comprehension", ast.DictComp: "comprehension", ast.Subscript: "indexing",
        ast.Compare: "comparison", ast.BoolOp: "boolean operator", ast.IfExp: "conditional",
        ast.Attribute: "attribute access", ast.Call: "call", ast.Starred: "starred expression",
        ast.NamedExpr: "assignment expression", ast.Await: "await", ast.JoinedStr: "string",
    }
    for kind, text in kinds.items():
        if isinstance(node, kind):
            return text
    return type(node).__name__.lower()


def parse(text: str) -> Node:
    """Parse one expression into a tree, refusing anything outside the whitelist.

    Raises :class:`ExpressionError` with a 1-based column within ``text``.
    """
    if len(text) > MAX_LENGTH:
        raise ExpressionError(f"expression is {len(text)} characters long; the limit is {MAX_LENGTH}")
    depth = 0
    for i, ch in enumerate(text):
        depth += ch == "("
        depth -= ch == ")"
        if depth > MAX_DEPTH:
            raise ExpressionError(f"parentheses nested deeper than {MAX_DEPTH}", i + 1)
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except SyntaxError as exc:
        raise ExpressionError(f"syntax error: {exc.msg}", exc.offset or 0) from None
    except (RecursionError, MemoryError, ValueError):
        raise ExpressionError("expression too deeply nested or malformed") from None
    offset = len(text) - len(text.lstrip())
    try:
        return _convert(tree.body, offset, 0)
    except RecursionError:
        raise ExpressionError(f"expression nested deeper than {MAX_DEPTH}") from None


def _convert(node: ast.AST, offset: int, depth: int) -> Node:
    col = getattr(node, "col_offset", -1) + 1 + offset
    if depth > MAX_DEPTH:
        raise ExpressionError(f"expression nested deeper than {MAX_DEPTH}", col)
    if isinstance(node, ast.Constant):
        if isinstance(node.value, bool) or not isinstance(node.value, int | float):
            raise ExpressionError(f"only numbers may appear as constants (got {node.value!r})", col)
        if isinstance(node.value, int) and abs(node.value) > 10**308:
            raise ExpressionError("number too large", col)
        return Num(float(node.value))
    if isinstance(node, ast.Name):
        _check_name(node.id, col)
        return Var(node.id, col)
    if isinstance(node, ast.Attribute):
        parts = [node.attr]
        inner: ast.AST = node.value
        while isinstance(inner, ast.Attribute):
            parts.append(inner.attr)
            inner = inner.value
        if not isinstance(inner, ast.Name) or len(parts) > 1:
            raise ExpressionError("only 'name.field' references are allowed", col)
        for part in (inner.id, node.attr):
            _check_name(part, col)
        return Var(f"{inner.id}.{node.attr}", col)
    if isinstance(node, ast.UnaryOp):
        if isinstance(node.op, ast.USub):
            return neg(_convert(node.operand, offset, depth + 1))
        if isinstance(node.op, ast.UAdd):
            return _convert(node.operand, offset, depth + 1)
        raise ExpressionError(f"operator {type(node.op).__name__} is not allowed", col)
    if isinstance(node, ast.BinOp):
        op = _BINOPS.get(type(node.op))
        if op is None:
            raise ExpressionError(_HINTS.get(type(node.op), "operator not allowed; use + - * / **"), col)
        left = _convert(node.left, offset, depth + 1)
        right = _convert(node.right, offset, depth + 1)
        return Bin(op, left, right, col)
    if isinstance(node, ast.Call):
        if not isinstance(node.func, ast.Name) or node.func.id not in FUNCTIONS:
            what = node.func.id if isinstance(node.func, ast.Name) else _describe(node.func)
            raise ExpressionError(
                f"call of '{what}' is not allowed; functions are {', '.join(FUNCTIONS)}", col
            )
        if node.keywords or len(node.args) != 1 or isinstance(node.args[0], ast.Starred):
            raise ExpressionError(f"'{node.func.id}' takes exactly one argument", col)
        return Call(node.func.id, _convert(node.args[0], offset, depth + 1), col)
    raise ExpressionError(f"{_describe(node)} is not allowed in a model expression", col)


def _check_name(name: str, col: int) -> None:
    if name.startswith("_") or "__" in name:
        raise ExpressionError(f"name '{name}' is not allowed: names may not start with '_' or hold '__'", col)
    if name in FUNCTIONS:
        raise ExpressionError(f"'{name}' is a function; call it as {name}(...)", col)


def constant(node: Node) -> float | None:
    """The value of a tree that references no name, or None (used for exponents of dimensioned bases)."""
    if names(node):
        return None
    try:
        value = compile_tree(node, FLOAT_BACKEND)({})
    except (ArithmeticError, ValueError):
        return None
    return float(value)


def _children(node: Node) -> tuple[Node, ...]:
    if isinstance(node, Bin):
        return (node.left, node.right)
    if isinstance(node, Neg | Call):
        return (node.arg,)
    return ()


def postorder(node: Node, done: Container[int] = ()) -> list[Node]:
    """Each distinct node of a tree once, children before their parents, leaving out the sub-trees whose root's
    ``id`` is in ``done`` (already handled by the caller's memo).

    Model lines are inlined by reference, so a chain ``a2 = a1*a1``, ``a3 = a2*a2``... is a graph whose paths
    double with each line; every walk of a tree goes through this list (no recursion, linear in the nodes).
    """
    order: list[Node] = []
    seen: set[int] = set()
    stack: list[tuple[Node, bool]] = [(node, False)]
    while stack:
        n, expanded = stack.pop()
        if expanded:
            order.append(n)
            continue
        if id(n) in seen or id(n) in done:
            continue
        seen.add(id(n))
        stack.append((n, True))
        stack.extend((c, False) for c in reversed(_children(n)) if id(c) not in seen)
    return order


def depth(node: Node, _memo: dict[int, int] | None = None) -> int:
    """Levels of nesting of a tree (1 for a number or a name)."""
    levels: dict[int, int] = {} if _memo is None else _memo
    for n in postorder(node, levels):
        levels[id(n)] = 1 + max((levels[id(c)] for c in _children(n)), default=0)
    return levels[id(node)]


def names(node: Node) -> list[tuple[str, int]]:
    """The names a tree references, with their columns, in order of first appearance."""
    seen: dict[str, int] = {}
    visited: set[int] = set()
    stack = [node]
    while stack:
        n = stack.pop()
        if id(n) in visited:
            continue
        visited.add(id(n))
        if isinstance(n, Var):
            seen.setdefault(n.name, n.column)
        else:
            stack.extend(reversed(_children(n)))
    return list(seen.items())


# ---- construction with light simplification (keeps derivative trees small) -------------------------------


def _is(node: Node, value: float) -> bool:
    return isinstance(node, Num) and node.value == value


def add(a: Node, b: Node) -> Node:
    if _is(a, 0.0):
        return b
    if _is(b, 0.0):
        return a
    if isinstance(a, Num) and isinstance(b, Num):
        return Num(a.value + b.value)
    return Bin("+", a, b)


def sub(a: Node, b: Node) -> Node:
    if _is(b, 0.0):
        return a
    if _is(a, 0.0):
        return neg(b)
    if isinstance(a, Num) and isinstance(b, Num):
        return Num(a.value - b.value)
    return Bin("-", a, b)


def neg(a: Node) -> Node:
    if isinstance(a, Num):
        return Num(-a.value)
    if isinstance(a, Neg):
        return a.arg
    return Neg(a)


def mul(a: Node, b: Node) -> Node:
    if _is(a, 0.0) or _is(b, 0.0):
        return Num(0.0)
    if _is(a, 1.0):
        return b
    if _is(b, 1.0):
        return a
    if isinstance(a, Num) and isinstance(b, Num):
        return Num(a.value * b.value)
    return Bin("*", a, b)


def div(a: Node, b: Node) -> Node:
    if _is(a, 0.0):
        return Num(0.0)
    if _is(b, 1.0):
        return a
    return Bin("/", a, b)


def power(a: Node, b: Node) -> Node:
    if _is(b, 1.0):
        return a
    if _is(b, 0.0):
        return Num(1.0)
    return Bin("**", a, b)


def call(fn: str, a: Node) -> Node:
    return Call(fn, a)


# ---- exact derivatives --------------------------------------------------------------------------------------


def diff(node: Node, name: str, _memo: dict[int, Node] | None = None) -> Node:
    """The exact partial derivative d(node)/d(name) as a new tree (shared subtrees are differentiated once)."""
    memo: dict[int, Node] = {} if _memo is None else _memo
    for n in postorder(node, memo):
        memo[id(n)] = _diff(n, name, memo)
    return memo[id(node)]


def _diff(node: Node, name: str, memo: dict[int, Node]) -> Node:
    if isinstance(node, Num):
        return Num(0.0)
    if isinstance(node, Var):
        return Num(1.0 if node.name == name else 0.0)
    if isinstance(node, Neg):
        return neg(memo[id(node.arg)])
    if isinstance(node, Bin):
        a, b = node.left, node.right
        da, db = memo[id(a)], memo[id(b)]  # children come first in postorder()
        if node.op == "+":
            return add(da, db)
        if node.op == "-":
            return sub(da, db)
        if node.op == "*":
            return add(mul(da, b), mul(a, db))
        if node.op == "/":
            return sub(div(da, b), div(mul(a, db), mul(b, b)))
        # power
        if _is(db, 0.0):
            return mul(mul(b, power(a, sub(b, Num(1.0)))), da)
        return mul(node, add(mul(db, call("log", a)), div(mul(b, da), a)))
    if isinstance(node, Call):
        u = node.arg
        du = memo[id(u)]
        if _is(du, 0.0):
            return Num(0.0)
        outer: Node
        if node.fn == "sqrt":
            outer = div(Num(0.5), node)
        elif node.fn == "exp":
            outer = node
        elif node.fn == "log":
            outer = div(Num(1.0), u)
        elif node.fn == "log10":
            outer = div(Num(1.0 / math.log(10.0)), u)
        elif node.fn == "sin":
            outer = call("cos", u)
        elif node.fn == "cos":
            outer = neg(call("sin", u))
        elif node.fn == "tan":
            outer = add(Num(1.0), mul(node, node))
        elif node.fn == "abs":
            outer = call("sign", u)
        elif node.fn == "sign":
            return Num(0.0)
        else:  # pragma: no cover - the parser admits no other function
            raise ExpressionError(f"no derivative for '{node.fn}'")
        return mul(outer, du)
    raise TypeError(node)  # pragma: no cover


def substitute(node: Node, definitions: Mapping[str, Node], _memo: dict[int, Node] | None = None) -> Node:
    """Replace names defined in ``definitions`` by their trees (used to inline intermediate model lines)."""
    memo: dict[int, Node] = {} if _memo is None else _memo
    for n in postorder(node, memo):
        out: Node
        if isinstance(n, Var):
            out = definitions.get(n.name, n)
        elif isinstance(n, Neg):
            out = Neg(memo[id(n.arg)])
        elif isinstance(n, Bin):
            out = Bin(n.op, memo[id(n.left)], memo[id(n.right)], n.column)
        elif isinstance(n, Call):
            out = Call(n.fn, memo[id(n.arg)], n.column)
        else:
            out = n
        memo[id(n)] = out
    return memo[id(node)]


# ---- evaluation backends ------------------------------------------------------------------------------------


def _float_pow(a: float, b: float) -> float:
    return math.pow(a, b)


def _float_sign(a: float) -> float:
    return math.copysign(1.0, a) if a != 0 else 0.0


FLOAT_BACKEND: dict[str, Callable[..., Any]] = {
    "sqrt": math.sqrt, "exp": math.exp, "log": math.log, "log10": math.log10, "sin": math.sin,
    "cos": math.cos, "tan": math.tan, "abs": abs, "sign": _float_sign, "**": _float_pow,
}


def numpy_backend() -> dict[str, Callable[..., Any]]:
    """Functions for numpy arrays (imported on first use)."""
    import numpy as np

    return {
        "sqrt": np.sqrt, "exp": np.exp, "log": np.log, "log10": np.log10, "sin": np.sin, "cos": np.cos,
        "tan": np.tan, "abs": np.abs, "sign": np.sign, "**": np.power,
    }


def uncertainties_backend() -> dict[str, Callable[..., Any]]:
    """Functions for ``uncertainties`` numbers (first-order propagation, used as an independent check)."""
    from uncertainties import umath

    return {
        "sqrt": umath.sqrt, "exp": umath.exp, "log": umath.log, "log10": umath.log10, "sin": umath.sin,
        "cos": umath.cos, "tan": umath.tan, "abs": abs, "sign": _float_sign, "**": lambda a, b: a**b,
    }


Evaluator = Callable[[Mapping[str, Any]], Any]


def compile_tree(node: Node, backend: Mapping[str, Callable[..., Any]]) -> Evaluator:
    """Compile a tree once into a function ``f(env) -> value`` for the given backend.

    The tree becomes a straight list of steps, one per distinct node, so a sub-tree shared by several parents is
    evaluated once; each intermediate value is dropped after its last use (arrays of Monte Carlo trials).
    """
    order = postorder(node)
    slot = {id(n): i for i, n in enumerate(order)}
    steps: list[Callable[[list[Any], Mapping[str, Any]], Any]] = []
    last_use: dict[int, int] = {}
    for k, n in enumerate(order):
        steps.append(_step(n, [slot[id(c)] for c in _children(n)], backend))
        for c in _children(n):
            last_use[slot[id(c)]] = k
    frees: list[tuple[int, ...]] = [() for _ in order]
    for s, k in last_use.items():
        frees[k] += (s,)
    program = list(zip(steps, frees, strict=True))
    size = len(order)

    def run(env: Mapping[str, Any]) -> Any:
        values: list[Any] = [None] * size
        for k, (step, free) in enumerate(program):
            values[k] = step(values, env)
            for s in free:
                values[s] = None
        return values[-1]

    return run


def _step(node: Node, args: list[int], fns: Mapping[str, Callable[..., Any]]
          ) -> Callable[[list[Any], Mapping[str, Any]], Any]:
    """One step of a compiled tree: its value from the values of its children (``args`` are their slots)."""
    if isinstance(node, Num):
        c = node.value
        return lambda v, env: c
    if isinstance(node, Var):
        n = node.name
        return lambda v, env: env[n]
    if isinstance(node, Neg):
        (i,) = args
        return lambda v, env: -v[i]
    if isinstance(node, Bin):
        i, j = args
        if node.op == "+":
            return lambda v, env: v[i] + v[j]
        if node.op == "-":
            return lambda v, env: v[i] - v[j]
        if node.op == "*":
            return lambda v, env: v[i] * v[j]
        if node.op == "/":
            return lambda v, env: v[i] / v[j]
        p = fns["**"]
        return lambda v, env: p(v[i], v[j])
    if isinstance(node, Call):
        (i,) = args
        fn = fns[node.fn]
        return lambda v, env: fn(v[i])
    raise TypeError(node)  # pragma: no cover
