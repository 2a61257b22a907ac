"""Rigorous evaluation of sympy expressions over boxes: our own sympy → ``arb`` compiler.

Every node of the whitelisted expression language (``costcheck.spec.expression``) and of its
derivatives maps to a ball operation that returns an enclosure of the exact value over the
input balls, or "no enclosure" (a non-finite ball) where the function may be undefined —
the box then stays undecided.  Numbers enter exactly: integers and rationals as exact
balls, ``pi`` and ``E`` as arb's enclosures, a binary float as its exact value.

The compiled form is a straight-line program of ball operations built from the sympy tree
alone (:mod:`.program`): nothing is generated as source text and nothing from a cost file
is executed.  Common subexpressions are shared (``sympy.cse``).

Over a box the plain ("natural") enclosure grows with the expression's size, because each
occurrence of a variable ranges independently.  :meth:`BallFunction.over_box` therefore also
runs the program in forward-mode differentiation over the box and uses the mean-value form
``f(B) ⊂ f(m) + ∇f(B)·(B − m)`` (Moore, Kearfott and Cloud, *Introduction to Interval
Analysis*, SIAM 2009, §6.4), intersected with the natural enclosure: both contain the range.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Sequence

import sympy as sp
from flint import arb

from . import balls
from .dual import Dual, tighten
from .program import Unsupported, build_program

__all__ = ["BallFunction", "Unsupported", "cell_middle", "compile_exprs"]


def _method(name):
    return lambda b: getattr(b, name)() if b.is_finite() else balls.NAN


def _sum(*terms):
    total = terms[0]
    for t in terms[1:]:
        total = total + t
    return total


def _product(*factors):
    total = factors[0]
    for f in factors[1:]:
        total = total * f
    return total


def _reciprocal(b):
    return 1 / b


def _real_power(base, exponent):
    # x**y = exp(y log x), defined for x > 0 (the real branch the numeric backends take)
    if not (base.is_finite() and exponent.is_finite()):
        return balls.NAN
    return (exponent * base.log()).exp()


def _one_over_root(b):
    return balls.rpow(b, -1, 2)


#: operation name → (value function, derivative function (x, value) for one-argument operations)
_UNARY = {
    "exp": (_method("exp"), lambda x, v: v),
    "log": (_method("log"), lambda x, v: 1 / x),
    "sin": (_method("sin"), lambda x, v: x.cos()),
    "cos": (_method("cos"), lambda x, v: -x.sin()),
    "tan": (_method("tan"), lambda x, v: 1 + v * v),
    "sinh": (_method("sinh"), lambda x, v: x.cosh()),
    "cosh": (_method("cosh"), lambda x, v: x.sinh()),
    "tanh": (_method("tanh"), lambda x, v: 1 - v * v),
    "asin": (_method("asin"), lambda x, v: _one_over_root(1 - balls.ipow(x, 2))),
    "acos": (_method("acos"), lambda x, v: -_one_over_root(1 - balls.ipow(x, 2))),
    "atan": (_method("atan"), lambda x, v: 1 / (1 + balls.ipow(x, 2))),
    "asinh": (_method("asinh"), lambda x, v: _one_over_root(balls.ipow(x, 2) + 1)),
    "acosh": (_method("acosh"), lambda x, v: _one_over_root((x - 1) * (x + 1))),
    "atanh": (_method("atanh"), lambda x, v: 1 / (1 - balls.ipow(x, 2))),
    "sec": (_method("sec"), lambda x, v: v * x.tan()),
    "csc": (_method("csc"), lambda x, v: -v * x.cot()),
    "cot": (_method("cot"), lambda x, v: -(1 + v * v)),
    "abs": (balls.ball_abs, lambda x, v: balls.sign(x)),
    "sign": (balls.sign, lambda x, v: balls.point_mass(x)),
    "delta": (balls.point_mass, lambda x, v: balls.point_mass(x)),
    "step": (balls.step, lambda x, v: balls.point_mass(x)),
    "reciprocal": (_reciprocal, lambda x, v: -(v * v)),
}

def _ball_constant(value: sp.Expr) -> arb:
    if value is sp.pi:
        return arb.pi()
    if value is sp.E:
        return arb(1).exp()
    if value.is_Integer:
        return arb(int(value))
    rational = sp.Rational(value)  # a Float's exact binary value; a Rational itself
    return arb(int(rational.p)) / int(rational.q)


def _value(op, args, extra, K):
    if op == "constant":
        return K[extra[0]]
    if op == "sum":
        return _sum(*args)
    if op == "product":
        return _product(*args)
    if op == "ipow":
        return balls.ipow(args[0], extra[0])
    if op == "rpow":
        return balls.rpow(args[0], *extra)
    if op == "power":
        return _real_power(*args)
    return _UNARY[op][0](args[0])


def _partials(op, args, extra, value) -> list:
    """∂(step)/∂(each argument), as balls, at the argument balls."""
    if op == "sum":
        return [arb(1)] * len(args)
    if op == "product":
        out = []
        for i in range(len(args)):
            out.append(_product(*(args[:i] + args[i + 1:])) if len(args) > 1 else arb(1))
        return out
    if op == "ipow":
        k = extra[0]
        return [k * balls.ipow(args[0], k - 1)]
    if op == "rpow":
        p, q = extra
        return [(arb(p) / q) * balls.rpow(args[0], p - q, q)]
    if op == "power":
        base, exponent = args
        return [exponent * value / base, base.log() * value if base.is_finite() else balls.NAN]
    return [_UNARY[op][1](args[0], value)]


class BallFunction:
    """Enclosures of several expressions at once, sharing their subexpressions."""

    def __init__(self, exprs: Sequence[sp.Expr], symbols: Sequence[sp.Symbol]):
        program = build_program(exprs, symbols)
        self._outputs = list(program.outputs)
        self._steps = program.steps
        self._constants = program.constants
        self.size = len(exprs)
        self.symbols = tuple(symbols)

    @property
    def operations(self) -> int:
        return len(self._steps)

    def _constants_now(self):
        # rebuilt per call so they follow the caller's working precision
        return [_ball_constant(c) for c in self._constants]

    def __call__(self, values: Sequence[arb]) -> list[arb]:
        """Natural enclosures of the expressions over the input balls."""
        K = self._constants_now()
        registers = list(values)
        try:
            for op, args, extra in self._steps:
                registers.append(_value(op, [registers[a] for a in args], extra, K))
        except (ZeroDivisionError, ValueError, OverflowError):
            return [balls.NAN] * self.size
        return [registers[i] for i in self._outputs]

    def with_gradients(self, values: Sequence[arb]) -> tuple[list[arb], list[list[arb]]]:
        """Natural enclosures of the expressions and of their gradients over the input balls."""
        K = self._constants_now()
        d = len(values)
        registers = list(values)
        grads = [[arb(1) if i == j else arb(0) for j in range(d)] for i in range(d)]
        try:
            for op, args, extra in self._steps:
                arg_values = [registers[a] for a in args]
                value = _value(op, arg_values, extra, K)
                registers.append(value)
                if op == "constant":
                    grads.append([arb(0)] * d)
                    continue
                partials = _partials(op, arg_values, extra, value)
                grads.append([_sum(*(p * grads[a][j] for p, a in zip(partials, args))) for j in range(d)])
        except (ZeroDivisionError, ValueError, OverflowError):
            nan = balls.NAN
            return [nan] * self.size, [[nan] * d for _ in range(self.size)]
        return [registers[i] for i in self._outputs], [grads[i] for i in self._outputs]

    def duals_over_box(self, lo: Sequence[float], hi: Sequence[float]):
        """``(duals, at_middle, offsets)`` over the box ``[lo, hi]``.

        ``duals[k]`` holds expression ``k``'s value enclosed by natural ∩ mean-value form and its
        natural gradient enclosure; ``at_middle`` the values at the box's middle point and
        ``offsets`` the balls ``B − m``, for callers that apply the mean-value form again further on.
        """
        box = [balls.from_bounds(a, b) for a, b in zip(lo, hi)]
        natural, gradients = self.with_gradients(box)
        middle, offsets = cell_middle(lo, hi)
        at_middle = self([arb(m) for m in middle])
        duals = [Dual(tighten(Dual(v, g), m, offsets), g) for v, g, m in zip(natural, gradients, at_middle)]
        return duals, at_middle, offsets

    def over_box(self, lo: Sequence[float], hi: Sequence[float]) -> list[arb]:
        """Enclosures over the box ``[lo, hi]``: natural ∩ mean-value form."""
        return [d.value for d in self.duals_over_box(lo, hi)[0]]


def cell_middle(lo: Sequence[float], hi: Sequence[float]) -> tuple[list[float], list[arb]]:
    """The box's middle point (floats inside it) and balls ``[-r, r] ⊇ B − m`` per coordinate."""
    middle = [0.5 * (a + b) for a, b in zip(lo, hi)]
    # (1 + 2**-50) covers the rounding of the float subtraction
    offsets = [arb(0, max(m - a, b - m) * (1 + 2 ** -50)) for a, b, m in zip(lo, hi, middle)]
    return middle, offsets


@lru_cache(maxsize=128)
def compile_exprs(exprs: tuple, symbols: tuple) -> BallFunction:
    return BallFunction(exprs, symbols)
