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
enclosure — as :meth:`.arb_eval.BallFunction.over_box` does for one box.  It does so in one
pass (:mod:`.interval_rows`: value over the cell, value at the middle and gradient of each step
together), with the same interval operations as the three passes apart (:meth:`IntervalFunction.with_gradients`,
:meth:`IntervalFunction.__call__` at the middles, :func:`.interval_dual.tighten`) in about half the calls.
The operations themselves are in :mod:`.interval_ops`.
"""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache
from typing import Sequence

import ival
import numpy as np
import sympy as sp
from ival import Interval

from . import intervals as iv
from .interval_dual import IntervalDual, intersect_forms, repeat_rows
from .interval_ops import ONE, UNARY, ZERO, chain, ipow, rpow, step_value
from .interval_rows import last_uses, mean_value_form, output_parts, stacked_registers
from .program import Unsupported, build_program

__all__ = ["IntervalFunction", "Unsupported", "cell_offsets", "compile_interval_exprs"]


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
        return chain(grads, _add)
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
        self._last_uses = last_uses(program)
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
                registers.append(step_value(op, [registers[a] for a in args], extra, self._constants))
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
                value = step_value(op, arg_values, extra, self._constants)
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
        middle, offsets = cell_offsets(lo, hi)
        # one pass: every register holds its value over the cell, at the middle and its gradient (d + 2 rows)
        registers = stacked_registers(self._program, self._constants, lo, hi, middle, self._last_uses)
        n, d = lo.shape
        values, middles, gradients, by_row = output_parts(registers, self._program.outputs, n, d)
        del registers
        tight = intersect_forms(values, mean_value_form(middles, by_row, offsets))
        duals = [IntervalDual(iv.make(tight.lo[e], tight.hi[e]), g) for e, g in enumerate(gradients)]
        at_middle = [iv.make(middles.lo[e], middles.hi[e]) for e in range(self.size)]
        return duals, at_middle, offsets

    def over_cells(self, lo: np.ndarray, hi: np.ndarray) -> list[Interval]:
        """Enclosures over the cells: natural ∩ mean-value form."""
        return [d.value for d in self.duals_over_cells(lo, hi)[0]]


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
