"""Ball arithmetic helpers over python-flint's ``arb`` (Johansson, IEEE Trans. Comput. 66, 2017).

An ``arb`` is a midpoint–radius ball that is guaranteed to contain the exact real number it
stands for; every operation returns a ball containing every exact result.  This module adds
the few operations whose built-in versions are sound but needlessly wide or undefined where
we need them (``|x|`` and integer powers of balls that straddle 0), converts between balls
and float intervals, and scopes the working precision.

Convention: a ball that is not finite (``nan`` or infinite radius) means "no enclosure here"
— the expression may be undefined on the box (``sqrt`` of a negative part, ``log`` of a ball
containing 0, ``acos`` beyond ±1).  Callers must then call the box undecided, never guess.
"""

from __future__ import annotations

import contextlib
import math

import flint
from flint import arb

NAN = arb.nan()


@contextlib.contextmanager
def precision(bits: int):
    """Work at ``bits`` bits of precision inside the block (flint's precision is process-wide)."""
    saved = flint.ctx.prec
    flint.ctx.prec = bits
    try:
        yield
    finally:
        flint.ctx.prec = saved


def finite(b: arb) -> bool:
    return b.is_finite()


def from_bounds(lo: float, hi: float) -> arb:
    """The smallest-ish ball containing the float interval ``[lo, hi]`` (exact endpoints)."""
    if lo == hi:
        return arb(lo)
    return arb(lo).union(arb(hi))


def lower(b: arb) -> float:
    """A float ≤ every point of ``b`` (−inf when ``b`` has no enclosure)."""
    if not b.is_finite():
        return -math.inf
    return math.nextafter(float(b.lower()), -math.inf)


def upper(b: arb) -> float:
    """A float ≥ every point of ``b`` (+inf when ``b`` has no enclosure)."""
    if not b.is_finite():
        return math.inf
    return math.nextafter(float(b.upper()), math.inf)


def positive(b: arb) -> bool:
    """Every point of ``b`` is > 0 (False when unknown)."""
    return b.is_finite() and b.lower() > 0


def negative(b: arb) -> bool:
    return b.is_finite() and b.upper() < 0


def excludes_zero(b: arb) -> bool:
    return positive(b) or negative(b)


def ball_abs(b: arb) -> arb:
    """``|b|`` as a ball inside ``[0, ∞)`` (arb's own keeps the midpoint–radius shape)."""
    if not b.is_finite():
        return NAN
    if b.lower() >= 0:
        return b
    if b.upper() <= 0:
        return -b
    return arb(0).union(b.abs_upper())


def ipow(b: arb, k: int) -> arb:
    """``b**k`` for an integer ``k``: even powers are ≥ 0, odd powers are monotone."""
    if k == 0:
        return arb(1)
    if k < 0:
        return 1 / ipow(b, -k)
    if not b.is_finite():
        return NAN
    base = ball_abs(b) if k % 2 == 0 else b
    # x -> x**k is monotone on the base: the endpoints' powers bound it
    lo, hi = base.lower(), base.upper()
    return _power_of_point(lo, k).union(_power_of_point(hi, k))


def _power_of_point(p: arb, k: int) -> arb:
    result, square = arb(1), p
    while k:
        if k & 1:
            result = result * square
        square = square * square
        k >>= 1
    return result


def rpow(b: arb, p: int, q: int) -> arb:
    """``b**(p/q)`` for a non-integer rational exponent: defined for ``b ≥ 0`` only (real branch)."""
    if not b.is_finite() or b.lower() < 0:
        return NAN
    exponent = arb(p) / q
    lo, hi = b.lower(), b.upper()
    if p < 0 and lo <= 0:
        return NAN
    at_lo = arb(0) if lo == 0 else (exponent * lo.log()).exp()
    at_hi = arb(0) if hi == 0 else (exponent * hi.log()).exp()
    return at_lo.union(at_hi)


def sign(b: arb) -> arb:
    if positive(b):
        return arb(1)
    if negative(b):
        return arb(-1)
    return NAN


def point_mass(b: arb) -> arb:
    """DiracDelta(b): 0 where ``b`` is surely non-zero, no enclosure where it may vanish."""
    return arb(0) if excludes_zero(b) else NAN


def step(b: arb) -> arb:
    """Heaviside(b), undefined at 0 (the kink semantics of the numeric backends)."""
    if positive(b):
        return arb(1)
    if negative(b):
        return arb(0)
    return NAN


def text(b: arb, digits: int = 17) -> str:
    """``[lo, hi]`` with outward-rounded float endpoints, for reports."""
    if not b.is_finite():
        return "no enclosure"
    return f"[{lower(b):.{digits}g}, {upper(b):.{digits}g}]"
