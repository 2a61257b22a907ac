"""Exact rewrites of an expression in one variable ``s`` that hold on a range ``[lo, hi]`` of it.

At a chart's normal forms (:mod:`.charts`) the derivative fields of a cost of the distance are
functions of ``s`` alone, but written through the chart: the sphere's ``d = acos(σ)`` becomes
``acos((1 − s²)/(1 + s²))`` and its derivatives carry ``√(1 − σ²)``, a root of a rational
function.  Interval evaluation of that form loses much (``σ`` and ``1 − σ²`` each range
independently), so before any enclosure two identities replace such nodes, each only where it is
*proved* to hold on the whole range:

- **half-angle**: ``acos((1 − s²)/(1 + s²)) = 2·atan(s)`` for ``s ≥ 0``.  With ``θ = 2·atan(s)``,
  ``cos θ = (1 − tan²(θ/2))/(1 + tan²(θ/2)) = (1 − s²)/(1 + s²)`` for every real ``s`` (the
  double-angle formula), and ``θ ∈ [0, π)`` when ``s ≥ 0``, where ``acos`` inverts ``cos``.  Taken
  when ``lo ≥ 0`` and the argument is a rational function of ``s`` equal to ``(1 − s²)/(1 + s²)``
  (its difference cancels to 0 exactly) whose denominator is enclosed away from 0 on the range.
- **root of a square**: ``b^(p/2) = q^p`` (odd ``p``) when ``b`` is a rational function of ``s``
  whose denominator is enclosed away from 0 on the range, ``b = q²`` exactly (``q`` read off the
  factorisation of ``b``: every irreducible factor to an even power and a positive constant), and
  the sign of ``q`` on the range known (each factor of ``q`` to an odd power: a linear one by its
  exact values at the two ends, any other by a ball enclosure over ``[lo, hi]`` away from 0; if
  ``q ≤ 0`` there, ``−q`` is taken).  Then ``√b = |q| = q``; e.g. ``√(s⁴ + 2s² + 1) = s² + 1`` and
  ``√(1 − ((1 − s²)/(1 + s²))²) = 2s/(1 + s²)`` for ``s ≥ 0``.

Neither rewrite changes where the expression is defined on the range: the arguments are defined on
all of it (their denominators do not vanish), ``acos`` and ``atan`` are then both defined, and
``b^(p/2)`` and ``q^p`` fail together exactly where ``q = 0`` and ``p < 0``.  So the rewritten
expression equals the original at every point of ``[lo, hi]`` and is undefined at the same points;
a finite enclosure of the rewritten form still shows the original defined.
"""

from __future__ import annotations

import sympy as sp

from . import balls
from .arb_eval import compile_exprs


class RangeRewriter:
    """``rewrite(expr)``: ``expr`` with the identities above applied wherever they are proved on ``[lo, hi]``."""

    def __init__(self, s: sp.Symbol, lo: float, hi: float):
        self.s, self.lo, self.hi = s, float(lo), float(hi)
        self.ball = balls.from_bounds(float(lo), float(hi))
        self._memo: dict = {}
        #: how many nodes each identity replaced (for tests and the report of what was done)
        self.applied = {"half-angle": 0, "root of a square": 0}

    def __call__(self, expr: sp.Expr) -> sp.Expr:
        return self._walk(expr)

    def _walk(self, e):
        if e in self._memo:
            return self._memo[e]
        out = e
        if e.args and e.free_symbols:
            rebuilt = e.func(*[self._walk(a) for a in e.args])
            out = self._node(rebuilt)
        self._memo[e] = out
        return out

    def _node(self, e):
        if isinstance(e, sp.acos) and self.lo >= 0 and self._is_half_angle(e.args[0]):
            self.applied["half-angle"] += 1
            return 2 * sp.atan(self.s)
        if isinstance(e, sp.Pow) and e.exp.is_Rational and e.exp.q == 2:
            root = self._square_root(e.base)
            if root is not None:
                self.applied["root of a square"] += 1
                return root ** e.exp.p
        return e

    def _enclose(self, expr: sp.Expr):
        return compile_exprs((expr,), (self.s,))([self.ball])[0]

    def _rational_defined(self, expr: sp.Expr) -> bool:
        """``expr`` is a rational function of ``s`` whose denominator (all terms over one) is not 0 on the range."""
        if not expr.free_symbols <= {self.s} or not expr.is_rational_function(self.s):
            return False
        _, denominator = sp.fraction(sp.together(expr))
        return balls.excludes_zero(self._enclose(denominator))

    def _is_half_angle(self, argument: sp.Expr) -> bool:
        s = self.s
        return (self._rational_defined(argument)
                and sp.cancel(argument - (1 - s**2) / (1 + s**2)) == 0)

    def _square_root(self, base: sp.Expr):
        """``q`` with ``q ≥ 0`` on the range and ``base = q²`` exactly, or None."""
        if not base.free_symbols or not self._rational_defined(base):
            return None
        numerator, denominator = sp.fraction(sp.cancel(sp.together(base)))
        halves = []
        constant = sp.Integer(1)
        for polynomial, side in ((numerator, 1), (denominator, -1)):
            c, factors = sp.factor_list(polynomial, self.s)
            constant *= c if side == 1 else 1 / c
            for f, multiplicity in factors:
                if multiplicity % 2:
                    return None
                halves.append(f ** (side * (multiplicity // 2)))
        if not (constant.is_Rational and constant > 0):
            return None
        q = sp.sqrt(constant) * sp.Mul(*halves)
        if sp.cancel(q**2 - base) != 0:
            return None  # a safeguard: the factorisation is exact, so this does not happen
        sign = 1
        for f in halves:
            if f.is_Pow and f.exp % 2 == 0:
                continue  # an even power of a factor is ≥ 0
            factor_sign = self._sign(f.base if f.is_Pow else f)
            if factor_sign is None:
                return None
            sign *= factor_sign
        return q if sign > 0 else -q

    def _sign(self, polynomial: sp.Expr) -> int | None:
        """+1 (≥ 0 on the range), −1 (≤ 0) or None: a linear factor by its exact values at the ends (the
        float ends are binary rationals), any other by a ball enclosure away from 0."""
        if sp.degree(polynomial, self.s) == 1:
            ends = [polynomial.subs(self.s, sp.Rational(v)) for v in (self.lo, self.hi)]
            if all(v >= 0 for v in ends):
                return 1
            return -1 if all(v <= 0 for v in ends) else None
        enclosure = self._enclose(polynomial)
        if balls.positive(enclosure):
            return 1
        return -1 if balls.negative(enclosure) else None
