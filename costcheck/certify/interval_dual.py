"""Interval-valued dual numbers over arrays of cells: values and gradients, both enclosed.

The array counterpart of :mod:`.dual`: ``value`` is an :class:`ival.Interval` array with one
interval per cell (shape ``(N,)``), ``grad`` its gradient over the cell as a ``(d, N)`` interval
array (one row per coordinate).  Running the conditions' algebra (determinants, the MTW
tensor, its forms: only ``+ − × ÷``) on these encloses each final quantity's gradient over
every cell at once, for the mean-value form ``q(B) ⊂ q(m) + ∇q(B)·(B − m)`` at the level of the
quantity itself (Moore, Kearfott and Cloud, *Introduction to Interval Analysis*, SIAM 2009, §6.4).
"""

from __future__ import annotations

from fractions import Fraction

import ival
import numpy as np
from ival import Interval

from . import intervals as iv


def _interval(x) -> Interval:
    if isinstance(x, Interval):
        return x
    if isinstance(x, (int, float, Fraction)):
        return Interval(x)
    raise TypeError(f"no interval for {type(x).__name__}")


def repeat_rows(x: Interval, like: Interval) -> Interval:
    """``x`` (one interval per cell, or one for all) repeated along the gradient's rows."""
    shape = np.shape(like.lo)
    if np.shape(x.lo) == shape:
        return x
    return iv.make(np.ascontiguousarray(np.broadcast_to(x.lo, shape)), np.ascontiguousarray(np.broadcast_to(x.hi, shape)))


class IntervalDual:
    __slots__ = ("value", "grad")

    def __init__(self, value: Interval, grad: Interval | None):
        """``grad`` None means a zero gradient (a constant)."""
        self.value = value
        self.grad = grad

    @staticmethod
    def lift(other) -> "IntervalDual":
        return other if isinstance(other, IntervalDual) else IntervalDual(_interval(other), None)

    def __add__(self, other):
        o = self.lift(other)
        grad = o.grad if self.grad is None else (self.grad if o.grad is None else self.grad + o.grad)
        return IntervalDual(self.value + o.value, grad)

    __radd__ = __add__

    def __neg__(self):
        return IntervalDual(-self.value, None if self.grad is None else -self.grad)

    def __sub__(self, other):
        return self + (-self.lift(other))

    def __rsub__(self, other):
        return self.lift(other) - self

    def __mul__(self, other):
        o = self.lift(other)
        if o.grad is None:
            grad = None if self.grad is None else repeat_rows(o.value, self.grad) * self.grad
        elif self.grad is None:
            grad = repeat_rows(self.value, o.grad) * o.grad
        else:  # a·b' + b·a' (ival's fma is tighter by a rounding but measured slower than both operations)
            grad = repeat_rows(self.value, o.grad) * o.grad + repeat_rows(o.value, self.grad) * self.grad
        return IntervalDual(self.value * o.value, grad)

    __rmul__ = __mul__

    def __truediv__(self, other):
        o = self.lift(other)
        # a divisor that may vanish on a cell leaves that cell without an enclosure
        inv = iv.bounded_only(ival.recip(o.value))
        value = self.value * inv
        if o.grad is None:
            return IntervalDual(value, None if self.grad is None else repeat_rows(inv, self.grad) * self.grad)
        moved = repeat_rows(value, o.grad) * o.grad
        numerator = -moved if self.grad is None else self.grad - moved
        return IntervalDual(value, repeat_rows(inv, numerator) * numerator)

    def __rtruediv__(self, other):
        return self.lift(other) / self

    def finite(self) -> np.ndarray:
        """Where the value and every gradient component are enclosed."""
        ok = iv.finite(self.value)
        if self.grad is not None:
            ok = ok & np.all(iv.finite(self.grad), axis=0)
        return ok


def tighten(over_cells, at_middle: Interval, offsets: Interval) -> Interval:
    """``(q(m) + ∇q(B)·(B − m)) ∩ q(B)`` per cell: both contain the range of ``q`` over the cell.

    ``over_cells`` is a dual (value ``(..., N)``, gradient ``(..., d, N)``) or a plain interval (a constant).

    Where the natural value is empty (the expression may be undefined on the cell) the result
    stays empty; where the mean-value form has no enclosure, the natural one is kept.
    """
    d = IntervalDual.lift(over_cells)
    natural = d.value
    if d.grad is None:
        mean_value = at_middle
    else:
        # the gradient's rows are its second-to-last axis: (d, N) for one quantity, (E, d, N) for a stack
        terms = d.grad * offsets
        rows = terms.shape[-2]
        mean_value = at_middle
        for j in range(rows):
            mean_value = mean_value + iv.make(np.ascontiguousarray(terms.lo[..., j, :]),
                                              np.ascontiguousarray(terms.hi[..., j, :]))
    return intersect_forms(natural, mean_value)


def intersect_forms(natural: Interval, mean_value: Interval) -> Interval:
    """``natural ∩ mean_value`` where both are enclosures; the one that is where the other is not; empty
    wherever ``natural`` is (the expression may be undefined on the cell)."""
    mean_ok = iv.finite(mean_value)
    natural_ok = iv.finite(natural)
    both = natural & mean_value
    out = iv.where(natural_ok & mean_ok, both, iv.where(mean_ok, mean_value, natural))
    return iv.undefined_where(out, np.isnan(natural.lo))
