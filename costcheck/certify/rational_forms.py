"""Exact cancellation of expressions that are rational in a variable and a few transcendental atoms.

At a chart's normal forms, once :mod:`.range_identities` has done its work, the sphere's squared
distance gives derivative fields that are rational functions of ``s`` and ``a = atan(s)``.  Treating
``a`` as a second indeterminate, each field (and each coefficient of the MTW quartic built from the
fields) is an element of the field of fractions ``Q(s, a)``; reducing it to ``N/D`` with
``gcd(N, D) = 1`` is exact polynomial arithmetic over the rationals (sympy's sparse polynomial rings),
and does in about a second what ``sympy.simplify`` and ``sympy.cancel`` (which first search the
expression tree for common terms) take minutes to do.

An identity in ``Q(s, a)`` holds for every real ``s`` where both sides are defined, whatever value the
atom takes there, so the reduced form equals the original wherever the original is defined; it can be
defined at more points (a common factor cancelled).  Callers keep a check that the original is defined
where they use the reduced form (:mod:`.chart_mtw`).
"""

from __future__ import annotations

import sympy as sp


class NotRational(Exception):
    """The expression is not a rational function of the chosen indeterminates."""


def _atoms(expr: sp.Expr) -> list:
    """The transcendental atoms of ``expr``: applied functions, and powers with a non-integer exponent."""
    found = expr.atoms(sp.Function) | {p for p in expr.atoms(sp.Pow) if not p.exp.is_Integer}
    return sorted(found, key=sp.default_sort_key)


class RationalForms:
    """``reduce(expr)``: ``expr`` as ``N/D`` in lowest terms over ``Q(variable, atoms)``, or None when it is not
    rational in them.  ``atoms`` are fixed at construction from a sample of expressions."""

    def __init__(self, variable: sp.Symbol, expressions):
        atoms = set()
        for e in expressions:
            atoms |= set(_atoms(e))
        #: every atom must be a function of the variable alone, so it is one value at each point
        self.atoms = [a for a in sorted(atoms, key=sp.default_sort_key) if a.free_symbols <= {variable}]
        self.variable = variable
        self._stand_ins = [sp.Dummy(f"a{i}") for i in range(len(self.atoms))]
        self._ring, *gens = sp.ring([variable, *self._stand_ins], sp.QQ)
        self._gens = dict(zip([variable, *self._stand_ins], gens))
        self._to_stand_in = dict(zip(self.atoms, self._stand_ins))
        self._back = dict(zip(self._stand_ins, self.atoms))
        self._memo: dict = {}

    def reduce(self, expr: sp.Expr, factor: bool = False) -> sp.Expr | None:
        """The reduced form (factored if asked), or None when ``expr`` is not rational in the indeterminates."""
        try:
            numerator, denominator = self._fraction(expr.xreplace(self._to_stand_in))
        except (NotRational, ZeroDivisionError):
            return None
        out = numerator.as_expr() / denominator.as_expr()
        if factor:
            out = sp.factor(out)
        return out.xreplace(self._back)

    def _fraction(self, e):
        if e in self._memo:
            return self._memo[e]
        ring = self._ring
        if e in self._gens:
            out = (self._gens[e], ring.one)
        elif e.is_Rational:
            out = (ring(e), ring.one)
        elif e.is_Add or e.is_Mul:
            parts = [self._fraction(a) for a in e.args]
            n, d = parts[0]
            for n2, d2 in parts[1:]:
                n, d = (n * d2 + n2 * d, d * d2) if e.is_Add else (n * n2, d * d2)
                n, d = n.cancel(d)
            out = (n, d)
        elif e.is_Pow and e.exp.is_Integer:
            n, d = self._fraction(e.base)
            k = int(e.exp)
            if k < 0 and n == 0:
                raise ZeroDivisionError("a power of zero with a negative exponent")
            out = (n**k, d**k) if k >= 0 else (d**-k, n**-k)
        else:
            raise NotRational(str(e.func))
        self._memo[e] = out
        return out
