"""A straight-line program from sympy trees, shared by the ball and the interval compilers.

The program is built from the sympy tree alone (node types we know, constants by index):
nothing is generated as source text and nothing from a cost file is executed.  Common
subexpressions are shared (``sympy.cse``).  A step is ``(operation name, argument slots,
literal arguments)``; slots count the inputs first, then one slot per step.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import sympy as sp


class Unsupported(ValueError):
    """The expression uses something we have no sound enclosure of."""


#: sympy function → operation name (one-argument functions; DiracDelta(u, k) is read as its argument)
SYMPY_UNARY = {
    sp.exp: "exp", sp.log: "log", sp.sin: "sin", sp.cos: "cos", sp.tan: "tan",
    sp.sinh: "sinh", sp.cosh: "cosh", sp.tanh: "tanh", sp.asin: "asin", sp.acos: "acos",
    sp.atan: "atan", sp.asinh: "asinh", sp.acosh: "acosh", sp.atanh: "atanh",
    sp.sec: "sec", sp.csc: "csc", sp.cot: "cot", sp.Abs: "abs", sp.sign: "sign",
    sp.DiracDelta: "delta", sp.Heaviside: "step",
}


class _Builder:
    def __init__(self, symbols):
        self.slots: dict = {s: i for i, s in enumerate(symbols)}
        self.constants: list = []
        self.steps: list = []
        self.width = len(symbols)

    def _new(self, op, args, extra=()) -> int:
        self.steps.append((op, tuple(args), tuple(extra)))
        return self.width + len(self.steps) - 1

    def slot(self, e: sp.Expr) -> int:
        if e not in self.slots:
            self.slots[e] = self._build(e)
        return self.slots[e]

    def _build(self, e: sp.Expr) -> int:
        if e.is_Integer or e.is_Rational or e.is_Float or e in (sp.pi, sp.E):
            self.constants.append(e)
            return self._new("constant", (), (len(self.constants) - 1,))
        if e.is_Add:
            return self._new("sum", [self.slot(a) for a in e.args])
        if e.is_Mul:
            return self._new("product", [self.slot(a) for a in e.args])
        if e.is_Pow:
            base, exponent = e.args
            if exponent.is_Integer:
                if exponent == -1:
                    return self._new("reciprocal", [self.slot(base)])
                return self._new("ipow", [self.slot(base)], (int(exponent),))
            if exponent.is_Rational:
                return self._new("rpow", [self.slot(base)], (int(exponent.p), int(exponent.q)))
            if base == sp.E:
                return self._new("exp", [self.slot(exponent)])
            return self._new("power", [self.slot(base), self.slot(exponent)])
        op = SYMPY_UNARY.get(e.func)
        if op is not None and (len(e.args) == 1 or op == "delta"):
            # DiracDelta(u, k), a derivative of the point mass, is zero away from u = 0 too
            return self._new(op, [self.slot(e.args[0])])
        raise Unsupported(f"no rigorous arithmetic for {type(e).__name__}")


@dataclass(frozen=True)
class Program:
    """``steps`` over ``width`` input slots; ``constants`` the sympy numbers steps name by index;
    ``outputs`` the slot of each expression."""

    width: int
    steps: tuple
    constants: tuple
    outputs: tuple


def build_program(exprs: Sequence[sp.Expr], symbols: Sequence[sp.Symbol]) -> Program:
    builder = _Builder(symbols)
    replacements, reduced = sp.cse(list(exprs), symbols=sp.numbered_symbols("_t"))
    for name, value in replacements:
        builder.slots[name] = builder.slot(value)
    outputs = tuple(builder.slot(e) for e in reduced)
    return Program(len(symbols), tuple(builder.steps), tuple(builder.constants), outputs)
