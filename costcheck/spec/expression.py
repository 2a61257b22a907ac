"""The safe expression language of cost files, turned into sympy expressions.

A cost file is data, never code.  Its expression strings are parsed with
Python's :mod:`ast` (parsing runs nothing), every node is checked against a
whitelist, and the sympy expression is built here node by node.  Nothing from
the file reaches ``eval``, ``exec``, ``sympify`` or ``parse_expr``.

The language: numbers, names, ``+ - * / **``, parentheses, unary minus and
plus, calls of the functions in :data:`FUNCTIONS` (one argument each), the
constants ``pi`` and ``E``; comparisons ``< <= > >=`` (chains allowed) only
where the caller asks for a constraint.
"""

from __future__ import annotations

import ast
from typing import Mapping

import sympy as sp

from ..errors import ExpressionError
from ..model.domain import Inequality

#: Functions a cost file may call, each with exactly one argument.
FUNCTIONS: dict[str, sp.Function] = {
    "sqrt": sp.sqrt,
    "exp": sp.exp,
    "log": sp.log,
    "sin": sp.sin,
    "cos": sp.cos,
    "tan": sp.tan,
    "sinh": sp.sinh,
    "cosh": sp.cosh,
    "tanh": sp.tanh,
    "asin": sp.asin,
    "acos": sp.acos,
    "atan": sp.atan,
    "asinh": sp.asinh,
    "acosh": sp.acosh,
    "atanh": sp.atanh,
    "abs": sp.Abs,
}

#: Named constants of the language.
CONSTANTS: dict[str, sp.Expr] = {"pi": sp.pi, "E": sp.E}

#: Names a cost file may not give to its own coordinates, parameters or helpers.
RESERVED_NAMES = frozenset(FUNCTIONS) | frozenset(CONSTANTS)

# Limits that keep a hostile or mistaken file from exhausting the machine.
MAX_LENGTH = 4000  # characters in one expression string
MAX_NODES = 2000  # syntax-tree nodes in one expression
MAX_DEPTH = 60  # nesting depth of the syntax tree
MAX_LITERAL = 10**12  # largest absolute value of a number literal
MAX_EXPONENT = 64  # largest absolute value of a numeric exponent
MAX_RESULT_DIGITS = 300  # largest power of ten a numeric power may reach

_BINARY = {ast.Add: "+", ast.Sub: "-", ast.Mult: "*", ast.Div: "/", ast.Pow: "**"}
_COMPARE = {ast.Lt: "<", ast.LtE: "<=", ast.Gt: ">", ast.GtE: ">="}


def _fail(message: str) -> None:
    raise ExpressionError(message)


def _depth(node: ast.AST) -> int:
    # Iterative, so a pathological tree cannot overflow Python's stack here.
    deepest, stack = 0, [(node, 1)]
    while stack:
        current, level = stack.pop()
        deepest = max(deepest, level)
        stack.extend((child, level + 1) for child in ast.iter_child_nodes(current))
    return deepest


def _parse_tree(text: object) -> ast.expr:
    if isinstance(text, bool) or not isinstance(text, (str, int, float)):
        _fail(f"expected an expression (a string or a number), got {type(text).__name__}")
    if isinstance(text, (int, float)):
        # Fix: bound the number before printing it.  repr() of a huge int raises ValueError
        # (Python's 4300-digit limit), inf/nan printed as names, and a float subclass
        # such as numpy.float64 prints as 'np.float64(0.5)', which is a call, not a literal.
        if not abs(text) <= MAX_LITERAL:
            _fail(f"the number is too large or not finite; numbers are limited to {MAX_LITERAL:.0e}")
        text = repr(float(text)) if isinstance(text, float) else repr(int(text))
    text = text.strip()
    if not text:
        _fail("the expression is empty")
    if len(text) > MAX_LENGTH:
        _fail(f"the expression is {len(text)} characters long; the limit is {MAX_LENGTH}")
    try:
        tree = ast.parse(text, mode="eval")
    except SyntaxError as exc:
        _fail(f"not a valid expression: {exc.msg} (column {exc.offset}) in {text!r}")
    except (RecursionError, MemoryError, ValueError):
        _fail("the expression is too deeply nested to parse")
    nodes = sum(1 for _ in ast.walk(tree))
    if nodes > MAX_NODES:
        _fail(f"the expression has {nodes} syntax nodes; the limit is {MAX_NODES}")
    if _depth(tree) > MAX_DEPTH:
        _fail(f"the expression is nested deeper than {MAX_DEPTH} levels")
    return tree.body


class _Builder:
    """Walks a checked syntax tree and builds the sympy expression."""

    def __init__(self, names: Mapping[str, sp.Expr], text: str):
        self.names = names
        self.text = text

    def build(self, node: ast.expr) -> sp.Expr:
        method = getattr(self, "_" + type(node).__name__, None)
        if method is None:
            _fail(f"{_describe(node)} is not allowed in an expression")
        return method(node)

    def _Constant(self, node: ast.Constant) -> sp.Expr:
        value = node.value
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            _fail(f"the literal {value!r} is not a real number")
        if not abs(value) <= MAX_LITERAL:  # also rejects nan and inf
            _fail(f"the number {value!r} is too large; literals are limited to {MAX_LITERAL:.0e}")
        if isinstance(value, int):
            return sp.Integer(value)
        # repr gives the shortest decimal that round-trips, so 0.1 becomes exactly 1/10.
        return sp.Rational(repr(value))

    def _Name(self, node: ast.Name) -> sp.Expr:
        if node.id in CONSTANTS:
            return CONSTANTS[node.id]
        if node.id in self.names:
            return self.names[node.id]
        if node.id in FUNCTIONS:
            _fail(f"'{node.id}' is a function; call it as {node.id}(...)")
        known = ", ".join(sorted(self.names)) or "none"
        _fail(f"unknown name '{node.id}' (known names here: {known}; constants: pi, E)")

    def _UnaryOp(self, node: ast.UnaryOp) -> sp.Expr:
        operand = self.build(node.operand)
        if isinstance(node.op, ast.USub):
            return -operand
        if isinstance(node.op, ast.UAdd):
            return operand
        _fail(f"the operator {_describe(node)} is not allowed")

    def _BinOp(self, node: ast.BinOp) -> sp.Expr:
        if type(node.op) not in _BINARY:
            _fail(f"the operator {_describe(node)} is not allowed; use + - * / **")
        left, right = self.build(node.left), self.build(node.right)
        if isinstance(node.op, ast.Add):
            return left + right
        if isinstance(node.op, ast.Sub):
            return left - right
        if isinstance(node.op, ast.Mult):
            return left * right
        if isinstance(node.op, ast.Div):
            if right.is_zero:
                _fail("division by zero")
            return left / right
        if right.is_number and abs(complex(sp.N(right))) > MAX_EXPONENT:
            _fail(f"the exponent {right} is too large; exponents are limited to {MAX_EXPONENT}")
        if left.is_number and right.is_number and not left.is_zero:
            # sympy evaluates numeric powers exactly: (10**64)**64 is a 4096-digit integer,
            # so bound the size of the result before asking for it
            # Fix: take log10|left| in sympy's arbitrary-range floats; going through a Python
            # complex first underflowed exp(-1000) to 0 and crashed with a TypeError on log(0).
            digits = abs(complex(sp.N(right))) * abs(complex(sp.N(sp.log(abs(sp.N(left)), 10))))
            if digits > MAX_RESULT_DIGITS:
                _fail("a power of numbers in the expression is too large")
        return sp.Pow(left, right)

    def _Call(self, node: ast.Call) -> sp.Expr:
        if not isinstance(node.func, ast.Name):
            _fail(f"only the functions {', '.join(FUNCTIONS)} can be called, not {_describe(node.func)}")
        name = node.func.id
        if name not in FUNCTIONS:
            _fail(f"'{name}' is not an allowed function; allowed: {', '.join(FUNCTIONS)}")
        if node.keywords or len(node.args) != 1 or isinstance(node.args[0], ast.Starred):
            _fail(f"{name}() takes exactly one argument")
        return FUNCTIONS[name](self.build(node.args[0]))

    def _Compare(self, node: ast.Compare) -> sp.Expr:
        _fail("a comparison is only allowed in 'where' and 'pairs' constraints")


def _describe(node: ast.AST) -> str:
    kinds = {
        ast.Attribute: "attribute access",
        ast.Subscript: "indexing",
        ast.Lambda: "a lambda",
        ast.BoolOp: "'and'/'or'",
        ast.IfExp: "a conditional expression",
        ast.List: "a list",
        ast.Tuple: "a tuple",
        ast.Dict: "a dict",
        ast.Set: "a set",
        ast.ListComp: "a comprehension",
        ast.GeneratorExp: "a generator",
        ast.JoinedStr: "an f-string",
        ast.NamedExpr: "an assignment",
        ast.Starred: "unpacking",
        ast.Mod: "'%'",
        ast.FloorDiv: "'//'",
        ast.MatMult: "'@'",
        ast.BitAnd: "'&'",
        ast.BitOr: "'|'",
        ast.BitXor: "'^' (write powers as **)",
        ast.LShift: "'<<'",
        ast.RShift: "'>>'",
        ast.Not: "'not'",
        ast.Invert: "'~'",
    }
    if isinstance(node, ast.BinOp):
        return kinds.get(type(node.op), type(node.op).__name__)
    if isinstance(node, ast.UnaryOp):
        return kinds.get(type(node.op), type(node.op).__name__)
    return kinds.get(type(node), type(node).__name__)


def parse_expression(text: object, names: Mapping[str, sp.Expr]) -> sp.Expr:
    """Parse ``text`` in the safe language; ``names`` maps each allowed name to its value."""
    tree = _parse_tree(text)
    return _Builder(names, str(text)).build(tree)


def parse_inequalities(text: object, names: Mapping[str, sp.Expr]) -> list[Inequality]:
    """Parse a constraint such as ``x1 + x2 <= 1`` or ``0 < r < 1`` into ``g >= 0`` forms."""
    tree = _parse_tree(text)
    if not isinstance(tree, ast.Compare):
        _fail(f"a constraint must be a comparison using < <= > >=, got {text!r}")
    builder = _Builder(names, str(text))
    sides = [builder.build(tree.left)] + [builder.build(c) for c in tree.comparators]
    result = []
    for op, lhs, rhs in zip(tree.ops, sides, sides[1:]):
        if type(op) not in _COMPARE:
            _fail(f"comparison '{type(op).__name__}' is not allowed; use < <= > >=")
        strict = isinstance(op, (ast.Lt, ast.Gt))
        g = (rhs - lhs) if isinstance(op, (ast.Lt, ast.LtE)) else (lhs - rhs)
        result.append(Inequality(g=g, strict=strict, text=str(text)))
    return result


def referenced_names(text: object) -> set[str]:
    """The plain names an expression mentions (for ordering helper definitions)."""
    tree = _parse_tree(text)
    return {n.id for n in ast.walk(tree) if isinstance(n, ast.Name)}
