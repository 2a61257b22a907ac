"""The operations of the interval evaluator, one interval array at a time (crival's ``ival``).

Every function returns an enclosure of the exact values over its argument intervals (IEEE 1788:
the tightest binary64 interval, CORE-MATH's correctly rounded functions), or the empty interval
``[nan, nan]`` where the function may be undefined on the interval (``sqrt`` or a fractional power
of a part below 0, ``log`` of a part ≤ 0, ``acos`` beyond ±1, a pole of ``1/x`` or ``tan``) —
IEEE 1788's set-based functions would otherwise return the image of the defined part only.
``UNARY`` pairs each one-argument operation with its derivative, for forward-mode
differentiation; :func:`step_value` runs one step of a straight-line program (:mod:`.program`).
Shared by :mod:`.interval_eval` (values, then gradients) and :mod:`.interval_rows` (both stacked
in one array).  Every function works elementwise on arrays of any shape.
"""

from __future__ import annotations

import operator

import ival
import numpy as np
from ival import Interval

from . import intervals as iv

__all__ = ["ONE", "UNARY", "ZERO", "chain", "ipow", "real_power", "rpow", "step_value"]

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


def chain(items, combine):
    total = items[0]
    for item in items[1:]:
        total = combine(total, item)
    return total


def step_value(op, args, extra, K):
    if op == "constant":
        return K[extra[0]]
    if op == "sum":
        return chain(args, operator.add)
    if op == "product":
        return chain(args, operator.mul)
    if op == "ipow":
        return ipow(args[0], extra[0])
    if op == "rpow":
        return rpow(args[0], *extra)
    if op == "power":
        return real_power(*args)
    return UNARY[op][0](args[0])
