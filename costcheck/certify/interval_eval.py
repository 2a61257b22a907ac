"""Rigorous evaluation of sympy expressions over many cells at once: our sympy → ``ival`` compiler.

The array counterpart of :mod:`.arb_eval`.  The same straight-line program (:mod:`.program`:
built from the sympy tree alone, common subexpressions shared, nothing generated as source
text, nothing from a cost file executed) runs once over arrays of intervals, one interval per
cell, with IEEE 1788 arithmetic (crival's ``ival``: every result the tightest binary64 interval
around the exact one, CORE-MATH's correctly rounded functions).  Numbers enter enclosed: an
integer or a rational as the two doubles around it, a binary float as its exact value, ``pi``
and ``E`` as their tightest intervals.

Every operation returns an enclosure of the exact values over its argument intervals, or the
empty interval ``[nan, nan]`` where the function may be undefined on the cell (``sqrt`` or a
fractional power of a part below 0, ``log`` of a part ≤ 0, ``acos`` beyond ±1, a pole of
``1/x`` or ``tan``) — IEEE 1788's set-based functions would otherwise return the image of the
defined part only.  Empty propagates through every later operation, so such a cell has no
enclosure and stays undecided.

Over a cell the natural enclosure grows with the expression's size; :meth:`IntervalFunction.duals_over_cells`
also runs the program in forward-mode differentiation (gradients as ``(d, N)`` interval
arrays) and applies the mean-value form ``f(B) ⊂ f(m) + ∇f(B)·(B − m)`` (Moore, Kearfott and
Cloud, *Introduction to Interval Analysis*, SIAM 2009, §6.4), intersected with the natural
enclosure — as :meth:`.arb_eval.BallFunction.over_box` does for one box.
"""

from __future__ import annotations

import operator
from fractions import Fraction
from functools import lru_cache
from typing import Sequence

import ival
import numpy as np
import sympy as sp
from ival import Interval

from . import intervals as iv
from .interval_dual import IntervalDual, repeat_rows, tighten
from .program import Unsupported, build_program

__all__ = ["IntervalFunction", "Unsupported", "cell_offsets", "compile_interval_exprs"]

ONE = Interval(1.0)
ZERO = Interval(0.0)


def _pole(f):
    return lambda x: iv.bounded_only(f(x))


def _outside(f, bad):
    """``f`` made empty where ``bad(x)``: the argument leaves the function's (real) domain."""
    return lambda x: iv.undefined_where(f(x), bad(x))


def _power_of_nonnegative(r: Interval, k: int) -> Interval:
    """``r**k`` for ``r ≥ 0`` and ``k ≥ 1`` by repeated squaring: on ``[0, ∞)`` the product of intervals is
    the product of their ends, rounded outward, so this stays tight (a few ulps); ival's pown, tight to
    one rounding, costs ten times more per cell."""
    result, square = None, r
    while k:
        if k & 1:
            result = square if result is None else result * square
        k >>= 1
        if k:
            square = ival.sqr(square)
    return result


def ipow(x: Interval, k: int) -> Interval:
    """``x**k`` for an integer ``k`` (even powers ≥ 0, odd powers monotone, tight); a pole where ``k < 0``
    and 0 ∈ x."""
    if k == 0:
        return ONE
    if k == 1:
        return x
    if k == 2:
        return ival.sqr(x)
    if k < 0:
        return iv.bounded_only(ival.recip(ipow(x, -k)))
    if np.all(x.lo >= 0):
        return _power_of_nonnegative(x, k)
    return ival.pown(x, k)


def _root(x: Interval, q: int) -> Interval:
    """The real ``q``-th root of ``x ≥ 0``: repeated square roots when ``q`` is a power of two (fast and
    tight), 1788.1's rootn otherwise."""
    if q & (q - 1) == 0:
        while q > 1:
            x, q = ival.sqrt(x), q // 2
        return x
    return ival.rootn(x, q)


def rpow(x: Interval, p: int, q: int) -> Interval:
    """``x**(p/q)`` for a non-integer rational exponent on the real branch ``x ≥ 0`` (``x > 0`` when
    ``p < 0``), as :func:`.balls.rpow`: the numeric backends give nan for a negative base."""
    bad = (x.lo <= 0) if p < 0 else (x.lo < 0)
    root = _root(x, q)
    value = _power_of_nonnegative(root, abs(p))
    if p < 0:
        value = iv.bounded_only(ival.recip(value))
    return iv.undefined_where(value, bad | np.isnan(x.lo))


def real_power(base: Interval, exponent: Interval) -> Interval:
    """``x**y = exp(y log x)`` for real ``y``, defined for ``x > 0`` (the real branch the backends take)."""
    return iv.undefined_where(iv.bounded_only(ival.pow(base, exponent)), ~(base.lo > 0))


def sign(x: Interval) -> Interval:
    """sign(x): ±1 where ``x`` excludes 0, no enclosure where it may vanish (as :func:`.balls.sign`)."""
    shape = np.shape(x.lo)
    lo = np.where(x.lo > 0, 1.0, np.where(x.hi < 0, -1.0, np.nan))
    return iv.make(lo, lo.copy()) if shape else Interval(float(lo))


def point_mass(x: Interval) -> Interval:
    """DiracDelta(x): 0 where ``x`` surely is non-zero, no enclosure where it may vanish."""
    lo = np.where(iv.excludes_zero(x), 0.0, np.nan)
    return iv.make(lo, lo.copy()) if np.shape(x.lo) else Interval(float(lo))


def step(x: Interval) -> Interval:
    """Heaviside(x), undefined at 0 (the kink semantics of the numeric backends)."""
    lo = np.where(x.lo > 0, 1.0, np.where(x.hi < 0, 0.0, np.nan))
    return iv.make(lo, lo.copy()) if np.shape(x.lo) else Interval(float(lo))


def _one_over_root(x):
    return rpow(x, -1, 2)


def _beyond_one(x):
    return (x.lo < -1) | (x.hi > 1) | np.isnan(x.lo)


def _cot(x):
    return iv.bounded_only(ival.cos(x) / ival.sin(x))


#: operation name → (value function, derivative function (x, value) for one-argument operations)
UNARY = {
    "exp": (ival.exp, lambda x, v: v),
    "log": (_outside(ival.log, lambda x: ~(x.lo > 0)), lambda x, v: ival.recip(x)),
    "sin": (ival.sin, lambda x, v: ival.cos(x)),
    "cos": (ival.cos, lambda x, v: -ival.sin(x)),
    "tan": (_pole(ival.tan), lambda x, v: 1 + ival.sqr(v)),
    "sinh": (ival.sinh, lambda x, v: ival.cosh(x)),
    "cosh": (ival.cosh, lambda x, v: ival.sinh(x)),
    "tanh": (ival.tanh, lambda x, v: 1 - ival.sqr(v)),
    "asin": (_outside(ival.asin, _beyond_one), lambda x, v: _one_over_root(1 - ival.sqr(x))),
    "acos": (_outside(ival.acos, _beyond_one), lambda x, v: -_one_over_root(1 - ival.sqr(x))),
    "atan": (ival.atan, lambda x, v: ival.recip(1 + ival.sqr(x))),
    "asinh": (ival.asinh, lambda x, v: _one_over_root(ival.sqr(x) + 1)),
    "acosh": (_outside(ival.acosh, lambda x: ~(x.lo >= 1)), lambda x, v: _one_over_root((x - 1) * (x + 1))),
    "atanh": (_outside(_pole(ival.atanh), lambda x: ~((x.lo > -1) & (x.hi < 1))),
              lambda x, v: iv.bounded_only(ival.recip(1 - ival.sqr(x)))),
    "sec": (_pole(lambda x: ival.recip(ival.cos(x))), lambda x, v: v * ival.tan(x)),
    "csc": (_pole(lambda x: ival.recip(ival.sin(x))), lambda x, v: -v * _cot(x)),
    "cot": (_cot, lambda x, v: -(1 + ival.sqr(v))),
    "abs": (abs, lambda x, v: sign(x)),
    "sign": (sign, lambda x, v: point_mass(x)),
    "delta": (point_mass, lambda x, v: point_mass(x)),
    "step": (step, lambda x, v: point_mass(x)),
    "reciprocal": (_pole(ival.recip), lambda x, v: -ival.sqr(v)),
}


def _chain(items, combine):
    total = items[0]
    for item in items[1:]:
        total = combine(total, item)
    return total


def _value(op, args, extra, K):
    if op == "constant":
        return K[extra[0]]
    if op == "sum":
        return _chain(args, operator.add)
    if op == "product":
        return _chain(args, operator.mul)
    if op == "ipow":
        return ipow(args[0], extra[0])
    if op == "rpow":
        return rpow(args[0], *extra)
    if op == "power":
        return real_power(*args)
    return UNARY[op][0](args[0])


def _scale(partial, grad):
    return None if grad is None else repeat_rows(partial, grad) * grad


def _add(a, b):
    if a is None:
        return b
    return a if b is None else a + b


def _product_gradient(args, grads):
    """``Σ_i (Π_{j≠i} a_j) ∇a_i`` over the factors with a gradient.  The partial products are formed on
    one interval per cell (prefix and suffix products) and only then spread over the gradient's rows,
    so a product of k factors costs k multiplications on the ``(d, N)`` arrays."""
    k = len(args)
    prefix = [None] * (k + 1)
    suffix = [None] * (k + 1)
    for i in range(k):
        prefix[i + 1] = args[i] if prefix[i] is None else prefix[i] * args[i]
    for i in range(k - 1, -1, -1):
        suffix[i] = args[i] if suffix[i + 1] is None else args[i] * suffix[i + 1]
    total = None
    for i, g in enumerate(grads):
        if g is None:
            continue
        before, after = prefix[i], suffix[i + 1]
        partial = ONE if before is None and after is None else (
            after if before is None else (before if after is None else before * after))
        total = _add(total, _scale(partial, g))
    return total


def _gradient(op, args, grads, extra, value):
    """The step's gradient (a ``(d, N)`` interval array, or None for zero) from its arguments'."""
    if op == "sum":
        return _chain(grads, _add)
    if op == "product":
        return _product_gradient(args, grads)
    if op == "ipow":
        k = extra[0]
        return _scale(k * ipow(args[0], k - 1), grads[0])
    if op == "rpow":
        p, q = extra
        return _scale(Interval(Fraction(p, q)) * rpow(args[0], p - q, q), grads[0])
    if op == "power":
        base, exponent = args
        d_base = _scale(iv.bounded_only(exponent * value / base), grads[0])
        d_exponent = _scale(iv.undefined_where(ival.log(base) * value, ~(base.lo > 0)), grads[1])
        return _add(d_base, d_exponent)
    return _scale(UNARY[op][1](args[0], value), grads[0])


class IntervalFunction:
    """Enclosures of several expressions at once over arrays of cells, sharing their subexpressions."""

    def __init__(self, exprs: Sequence[sp.Expr], symbols: Sequence[sp.Symbol]):
        program = build_program(exprs, symbols)
        self._program = program
        self._constants = [iv.constant(c) for c in program.constants]
        self.size = len(exprs)
        self.symbols = tuple(symbols)

    @property
    def operations(self) -> int:
        return len(self._program.steps)

    def _outputs(self, registers, shape):
        return [iv.broadcast(registers[i], shape) for i in self._program.outputs]

    def __call__(self, values: Sequence[Interval]) -> list[Interval]:
        """Natural enclosures of the expressions over the input intervals (one array per input)."""
        registers = list(values)
        with np.errstate(invalid="ignore"):
            for op, args, extra in self._program.steps:
                registers.append(_value(op, [registers[a] for a in args], extra, self._constants))
        return self._outputs(registers, np.shape(values[0].lo))

    def with_gradients(self, values: Sequence[Interval]) -> tuple[list[Interval], list[Interval]]:
        """Natural enclosures of the expressions and of their gradients (``(d, N)`` interval arrays)."""
        d = len(values)
        shape = np.shape(values[0].lo)
        registers = list(values)
        unit = np.broadcast_to(np.eye(d).reshape((d, d) + (1,) * len(shape)), (d, d) + shape)
        grads: list = [iv.make(unit[j].copy(), unit[j].copy()) for j in range(d)]
        with np.errstate(invalid="ignore"):
            for op, args, extra in self._program.steps:
                arg_values = [registers[a] for a in args]
                value = _value(op, arg_values, extra, self._constants)
                registers.append(value)
                if op == "constant":
                    grads.append(None)
                    continue
                grads.append(_gradient(op, arg_values, [grads[a] for a in args], extra, value))
        full = (d,) + shape
        gradients = [iv.broadcast(ZERO if grads[i] is None else grads[i], full) for i in self._program.outputs]
        return self._outputs(registers, shape), gradients

    def duals_over_cells(self, lo: np.ndarray, hi: np.ndarray):
        """``(duals, at_middle, offsets)`` over the cells ``[lo[k], hi[k]]`` (arrays of shape ``(N, d)``).

        ``duals[e]`` holds expression ``e``'s values enclosed by natural ∩ mean-value form and its
        natural gradient enclosures; ``at_middle`` the values at the cells' middle points and
        ``offsets`` the ``(d, N)`` intervals ``B − m``, for callers that apply the mean-value form
        again further on (the conditions' algebra on :class:`.interval_dual.IntervalDual`).
        """
        lo, hi = np.asarray(lo, dtype=np.float64), np.asarray(hi, dtype=np.float64)
        box = [iv.from_bounds(lo[:, j], hi[:, j]) for j in range(lo.shape[1])]
        natural, gradients = self.with_gradients(box)
        middle, offsets = cell_offsets(lo, hi)
        at_middle = self([iv.from_bounds(middle[:, j], middle[:, j]) for j in range(lo.shape[1])])
        # all expressions stacked into (E, N) and (E, d, N) arrays: a few calls instead of a dozen per expression
        values, grads, middles = _stack(natural), _stack(gradients), _stack(at_middle)
        tight = tighten(IntervalDual(values, grads), middles, offsets)
        duals = [IntervalDual(iv.make(tight.lo[e], tight.hi[e]), g) for e, g in enumerate(gradients)]
        return duals, at_middle, offsets

    def over_cells(self, lo: np.ndarray, hi: np.ndarray) -> list[Interval]:
        """Enclosures over the cells: natural ∩ mean-value form."""
        return [d.value for d in self.duals_over_cells(lo, hi)[0]]


def _stack(items: list) -> Interval:
    return iv.make(np.stack([x.lo for x in items]), np.stack([x.hi for x in items]))


def cell_offsets(lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, Interval]:
    """The cells' middle points (floats inside them, ``(N, d)``) and the ``(d, N)`` intervals ``B − m``
    (outward-rounded differences)."""
    middle = 0.5 * (lo + hi)
    middle = np.minimum(np.maximum(middle, lo), hi)  # inside the cell even where lo + hi overflowed
    offsets = iv.from_bounds(lo.T, hi.T) - iv.from_bounds(middle.T, middle.T)
    return middle, offsets


@lru_cache(maxsize=64)
def compile_interval_exprs(exprs: tuple, symbols: tuple) -> IntervalFunction:
    return IntervalFunction(exprs, symbols)
