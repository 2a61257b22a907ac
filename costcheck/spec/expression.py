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
import cmath
import math
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
MAX_RESULT_DIGITS = 300  # largest power of ten a numeric power (or any number) may reach
# Limits on the expression as it stands after helpers ('define') and parameters are substituted:
# 41 helpers, each using the one before twice, write out to 2**41 nodes although each string
# is short, and 60 helpers a_k = a_(k-1)*a_(k-1) fold into a power 2**60.
MAX_EXPANDED_NODES = 5000  # nodes of the expression written out as a tree
MAX_EXPANDED_DEPTH = 100  # nesting depth of that tree

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
    odd = next((k for k, c in enumerate(text) if not c.isascii()), None)
    if odd is not None:
        # Python folds identifiers to NFKC, so a full-width 'ｘ１' would silently read as x1
        _fail(f"the character {text[odd]!r} (U+{ord(text[odd]):04X}, column {odd + 1}) is not allowed; expressions are "
              f"written in ASCII (names, digits, + - * / ** and parentheses)")
    try:
        tree = ast.parse(text, mode="eval")
    except SyntaxError as exc:
        _fail(f"not a valid expression: {exc.msg} (column {exc.offset}) in {_excerpt(text, exc.offset)}")
    except (RecursionError, MemoryError, ValueError):
        _fail("the expression is too deeply nested to parse")
    nodes = sum(1 for _ in ast.walk(tree))
    if nodes > MAX_NODES:
        _fail(f"the expression has {nodes} syntax nodes; the limit is {MAX_NODES}")
    if _depth(tree) > MAX_DEPTH:
        _fail(f"the expression is nested deeper than {MAX_DEPTH} levels")
    return tree.body


def _excerpt(text: str, column: int | None, width: int = 60) -> str:
    """The expression quoted, or only the part around ``column`` when it is long."""
    if len(text) <= width:
        return repr(text)
    start = max(0, min((column or 1) - 1 - width // 2, len(text) - width))
    return ("…" if start else "") + repr(text[start:start + width]) + ("…" if start + width < len(text) else "")


def _digits(n: int) -> float:
    return abs(n).bit_length() * math.log10(2)


class ConstantOverflow(ValueError):
    """A constant that does not fit a float64 (or is not finite)."""


def _c(fn):
    def apply(*args):
        try:
            return complex(fn(*args))
        except (OverflowError, ZeroDivisionError, ValueError):
            raise ConstantOverflow from None
    return apply


_FLOAT_FUNCTIONS = {
    sp.exp: _c(cmath.exp), sp.log: _c(cmath.log), sp.sin: _c(cmath.sin), sp.cos: _c(cmath.cos),
    sp.tan: _c(cmath.tan), sp.sinh: _c(cmath.sinh), sp.cosh: _c(cmath.cosh), sp.tanh: _c(cmath.tanh),
    sp.asin: _c(cmath.asin), sp.acos: _c(cmath.acos), sp.atan: _c(cmath.atan), sp.asinh: _c(cmath.asinh),
    sp.acosh: _c(cmath.acosh), sp.atanh: _c(cmath.atanh), sp.Abs: _c(abs),
}


def _finite(value: complex) -> complex:
    if not (math.isfinite(value.real) and math.isfinite(value.imag)):
        raise ConstantOverflow
    return value


def _float_of(node: sp.Expr, memo: dict) -> complex:
    """A constant sympy expression in complex float64, bottom-up, never in arbitrary precision.

    sympy's own numeric evaluation of a tower such as exp(exp(exp(10))) needs ~10**4 digits
    and the next storey 10**9566; float64 overflows at once, which is the answer we need
    (the derivative evaluators run in float64 too).
    """
    if node in memo:
        return memo[node]
    if node.is_Rational:
        try:
            value = complex(node.p / node.q)
        except OverflowError:
            raise ConstantOverflow from None
    elif node is sp.pi:
        value = complex(math.pi)
    elif node is sp.E:
        value = complex(math.e)
    elif node is sp.I:
        value = 1j
    elif node.is_Float:
        value = complex(float(node))
    elif node.is_Add:
        value = sum((_float_of(a, memo) for a in node.args), 0j)
    elif node.is_Mul:
        value = 1 + 0j
        for a in node.args:
            value *= _float_of(a, memo)
            _finite(value)
    elif node.is_Pow:
        base, exponent = (_float_of(a, memo) for a in node.args)
        try:
            value = base ** exponent if base != 0 or exponent.real > 0 else complex("nan")
        except (OverflowError, ZeroDivisionError):
            raise ConstantOverflow from None
    elif node.func in _FLOAT_FUNCTIONS and len(node.args) == 1:
        value = _FLOAT_FUNCTIONS[node.func](_float_of(node.args[0], memo))
    else:  # zoo, nan, oo, or a form sympy chose that we do not know: no finite value we trust
        raise ConstantOverflow
    memo[node] = _finite(value)
    return memo[node]


def constant_value(expr: sp.Expr) -> complex:
    """The float64 value of a constant expression; :class:`ConstantOverflow` if it has none."""
    return _float_of(expr, {})


def _check_exponent(right: sp.Expr) -> None:
    try:
        size = abs(constant_value(right))
    except ConstantOverflow:
        _fail(f"the exponent {_brief(right)} is too large or not finite; exponents are limited to {MAX_EXPONENT}")
    if size > MAX_EXPONENT:
        _fail(f"the exponent {_brief(right)} is too large; exponents are limited to {MAX_EXPONENT}")


def _brief(expr: sp.Expr, limit: int = 40) -> str:
    text = str(expr)
    return text if len(text) <= limit else text[: limit - 1] + "…"


def check_expanded(expr: sp.Expr) -> None:
    """Refuse an expression that, written out, is too big, too deep or has a huge number in it.

    Walks the expression as sympy shares it (each distinct subexpression once), so a tree of
    2**41 nodes is measured in 41 steps.  Every constant part must have a finite value in
    float64; a non-real constant (sqrt(-1), log(-2)) is refused here too.
    """
    # per distinct node: (size written out, depth, whether it is a constant); computed here
    # rather than with sympy's free_symbols / is_number, which recurse without memory and so
    # take time proportional to the written-out size
    seen: dict = {}
    values: dict = {}
    limit = 10 ** MAX_RESULT_DIGITS
    stack = [(expr, False)]
    while stack:
        node, done = stack.pop()
        if node in seen:
            continue
        if not done:
            stack.append((node, True))
            stack.extend((a, False) for a in node.args if a not in seen)
            continue
        if node.is_Rational and (abs(node.p) > limit or node.q > limit):
            _fail(f"a number in the expression has more than {MAX_RESULT_DIGITS} digits")
        size, depth, constant = 1, 1, not node.is_Symbol
        for a in node.args:
            a_size, a_depth, a_constant = seen[a]
            size += a_size
            depth = max(depth, a_depth + 1)
            constant = constant and a_constant
        seen[node] = (size, depth, constant)
        if size > MAX_EXPANDED_NODES:
            _fail(f"written out (helpers and parameters substituted) the expression has more than "
                  f"{MAX_EXPANDED_NODES} nodes; simplify it or use fewer nested helpers")
        if depth > MAX_EXPANDED_DEPTH:
            _fail(f"written out (helpers and parameters substituted) the expression is nested deeper than "
                  f"{MAX_EXPANDED_DEPTH} levels")
        if node.is_Pow and seen[node.args[1]][2]:
            _check_exponent(node.args[1])
        if constant and not node.is_Rational:  # also the atoms I, zoo, nan, oo
            try:
                value = _float_of(node, values)
            except ConstantOverflow:
                if node in (sp.zoo, sp.nan, sp.oo, -sp.oo):
                    _fail("the expression is undefined (a division by zero, log(0) or similar between constants)")
                _fail(f"the constant {_brief(node)} is not finite in floating point (it overflows, or is "
                      f"undefined); numbers are limited to about 1e308")
            if value.imag != 0:
                if node is sp.I:
                    _fail("the expression is not a real number: it contains the imaginary unit (as from sqrt(-1))")
                _fail(f"the constant {_brief(node)} is not a real number (as sqrt(-1) or log(-2) are not)")


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
        if right.is_number:
            _check_exponent(right)
            if left.is_number and not left.is_zero:
                # sympy evaluates a power of a rational exactly: (10**12)**64 is a 768-digit
                # integer, so bound the size of the result (exactly, from the digits) first;
                # other numbers in float64, where exp(-1000) underflows: too small counts as too large
                if isinstance(left, sp.Rational):
                    base_digits = max(_digits(left.p), _digits(left.q))
                else:
                    try:
                        magnitude = abs(constant_value(left))
                    except ConstantOverflow:
                        magnitude = math.inf
                    base_digits = abs(math.log10(magnitude)) if 0 < magnitude < math.inf else math.inf
                digits = abs(constant_value(right)) * base_digits
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
    expr = _Builder(names, str(text)).build(tree)
    check_expanded(expr)
    return expr


def parse_inequalities(text: object, names: Mapping[str, sp.Expr]) -> list[Inequality]:
    """Parse a constraint such as ``x1 + x2 <= 1`` or ``0 < r < 1`` into ``g >= 0`` forms."""
    tree = _parse_tree(text)
    if not isinstance(tree, ast.Compare):
        _fail(f"a constraint must be a comparison using < <= > >=, got {_excerpt(str(text), 1)}")
    builder = _Builder(names, str(text))
    sides = [builder.build(tree.left)] + [builder.build(c) for c in tree.comparators]
    result = []
    for op, lhs, rhs in zip(tree.ops, sides, sides[1:]):
        if type(op) not in _COMPARE:
            written = {ast.Eq: "==", ast.NotEq: "!=", ast.Is: "is", ast.IsNot: "is not", ast.In: "in",
                       ast.NotIn: "not in"}.get(type(op), type(op).__name__)
            _fail(f"the comparison '{written}' is not allowed; use < <= > >=")
        strict = isinstance(op, (ast.Lt, ast.Gt))
        g = (rhs - lhs) if isinstance(op, (ast.Lt, ast.LtE)) else (lhs - rhs)
        check_expanded(g)
        result.append(Inequality(g=g, strict=strict, text=str(text)))
    return result


def referenced_names(text: object) -> set[str]:
    """The plain names an expression mentions (for ordering helper definitions)."""
    tree = _parse_tree(text)
    return {n.id for n in ast.walk(tree) if isinstance(n, ast.Name)}


def _why_undefined(node: sp.Expr, args: list[complex]) -> str:
    """Why ``node`` has no finite real value although its arguments do (words for a user)."""
    a = args[0].real if args else 0.0
    if node.is_Pow:
        base, exponent = args
        if base == 0 and exponent.real < 0:
            return "a division by zero"
        if base.real < 0:
            return f"a fractional power of the negative number {base.real:.6g}"
        return "too large for floating point"
    name = getattr(node.func, "__name__", str(node.func))
    if name == "log":
        return f"log of {'0' if a == 0 else f'the negative number {a:.6g}'}"
    if name in ("asin", "acos"):
        return f"{name} of {a:.6g}, outside [-1, 1]"
    if name == "acosh":
        return f"acosh of {a:.6g}, below 1"
    if name == "atanh":
        return f"atanh of {a:.6g}, outside (-1, 1)"
    return "not finite in floating point"


def locate_undefined(expr: sp.Expr, point: Mapping[sp.Symbol, float]) -> tuple[str, str] | None:
    """The innermost part of ``expr`` with no finite real value at ``point``, and why.

    ``(part as text, reason)``, or ``None`` when every part has a finite real value there
    (then only a derivative is undefined, e.g. at the kink of ``abs``).  Evaluated in
    float64, as the derivative evaluators are.
    """
    memo: dict = {sym: complex(float(v)) for sym, v in point.items()}
    stack = [(expr, False)]
    while stack:
        node, done = stack.pop()
        if node in memo:
            continue
        if not done:
            stack.append((node, True))
            stack.extend((a, False) for a in node.args if a not in memo)
            continue
        args = [memo[a] for a in node.args]
        if any(v is None for v in args):
            memo[node] = None
            continue
        try:
            value = _float_of(node, {**{a: v for a, v in zip(node.args, args)}})
        except ConstantOverflow:
            value = None
        if value is None or abs(value.imag) > 1e-12 * max(1.0, abs(value.real)):
            return _brief(node, 60), _why_undefined(node, args)
        memo[node] = complex(value.real)
    return None
