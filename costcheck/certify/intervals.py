"""Interval helpers over ``ival`` arrays (IEEE Std 1788.1-2017 intervals on NumPy, crival).

An :class:`ival.Interval` holds two float64 arrays ``lo``, ``hi``; every operation returns the
tightest binary64 interval around the exact result (CORE-MATH's correctly rounded
functions), and the empty interval is ``[nan, nan]``.  This is the array counterpart of
:mod:`.balls`, with the same convention: an interval that is empty or unbounded means "no
enclosure here" — the expression may be undefined somewhere on the cell — and the cell must
stay undecided.

IEEE 1788's functions are *set-based*: ``sqrt([-1, 4])`` is ``[0, 2]``, the image of the part
of the interval inside the function's domain.  A cell on which the cost's expression is
undefined somewhere must not be proved, so the evaluator marks such results empty
(:func:`undefined_where`) instead of keeping the image of the defined part.
"""

from __future__ import annotations

from fractions import Fraction

import ival
import numpy as np
import sympy as sp
from ival import Interval

#: the tightest binary64 enclosures of π and e (acos(−1) and exp(1), correctly rounded both ways)
PI = ival.acos(Interval(-1.0))
E = ival.exp(Interval(1.0))


def make(lo, hi) -> Interval:
    """An interval from ends already known to be valid (lo ≤ hi, or both nan)."""
    out = Interval.__new__(Interval)
    out.lo, out.hi = lo, hi
    return out


def from_bounds(lo, hi) -> Interval:
    """The intervals ``[lo, hi]`` for float arrays (exact ends)."""
    return make(np.array(lo, dtype=np.float64), np.array(hi, dtype=np.float64))


def constant(value: sp.Expr) -> Interval:
    """An enclosure of a sympy number: a rational becomes the two doubles around it, never a rounded float."""
    if value is sp.pi:
        return PI
    if value is sp.E:
        return E
    if value.is_Integer:
        return Interval(int(value))
    rational = sp.Rational(value)  # a Float's exact binary value; a Rational itself
    return Interval(Fraction(int(rational.p), int(rational.q)))


def finite(x: Interval) -> np.ndarray:
    """Where ``x`` is a bounded, non-empty interval (an enclosure)."""
    return np.isfinite(x.lo) & np.isfinite(x.hi)


def positive(x: Interval) -> np.ndarray:
    """Where every point of ``x`` is > 0 (False where empty)."""
    return np.asarray(x.lo > 0)


def negative(x: Interval) -> np.ndarray:
    return np.asarray(x.hi < 0)


def excludes_zero(x: Interval) -> np.ndarray:
    return positive(x) | negative(x)


def undefined_where(x: Interval, bad) -> Interval:
    """``x`` with the intervals where ``bad`` holds made empty."""
    bad = np.asarray(bad)
    if not bad.any():
        return x
    lo, hi = np.broadcast_arrays(x.lo, x.hi, bad)[:2]
    return make(np.where(bad, np.nan, lo), np.where(bad, np.nan, hi))


def bounded_only(x: Interval) -> Interval:
    """``x`` made empty where it is unbounded: after a pole (``1/x`` over a cell holding 0), the
    set-based result ``[1, ∞]`` would hide that the expression is undefined at a point of the cell."""
    return undefined_where(x, ~finite(x))


def where(mask, a: Interval, b: Interval) -> Interval:
    """``a`` where ``mask`` holds, else ``b`` (elementwise)."""
    return make(np.where(mask, a.lo, b.lo), np.where(mask, a.hi, b.hi))


def lower(x: Interval) -> np.ndarray:
    """Floats ≤ every point of ``x`` (−inf where there is no enclosure)."""
    return np.where(finite(x), x.lo, -np.inf)


def upper(x: Interval) -> np.ndarray:
    """Floats ≥ every point of ``x`` (+inf where there is no enclosure)."""
    return np.where(finite(x), x.hi, np.inf)


def broadcast(x: Interval, shape) -> Interval:
    """``x`` as an array of the given shape (constants are scalars until a caller needs arrays)."""
    lo, hi = np.broadcast_to(x.lo, shape), np.broadcast_to(x.hi, shape)
    return make(np.ascontiguousarray(lo), np.ascontiguousarray(hi))
