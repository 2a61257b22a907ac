"""Derivatives of a cost that depends on the variables through one inner expression, ``c = F(t)``.

Many costs are a function of one scalar built from both points: ``h(|x − y|²)``, a function of the
geodesic distance through ``t = p(x)·q(y)`` on the sphere, ``log(1 − x·y)``.  Differentiating the
whole expression four times multiplies out ``F``'s chain rule in every entry (the sphere chart's
25 derivative entries take 1,893 operations after common-subexpression elimination); written as
Faà di Bruno's formula for mixed partial derivatives,

    ∂_{a₁…a_k} F(t) = Σ_{π a partition of {a₁, …, a_k}} F^{(|π|)}(t) · Π_{B ∈ π} ∂_B t

(the sum over set partitions; M. Hardy, "Combinatorics of partial derivatives", Electron. J.
Combin. 13 (2006) #R1, cited from memory), only ``t``'s derivatives and ``F``'s univariate
ones are formed, and the same entries take 833 operations (the four mixed fields the fused
kernel forms, after cse).  The values are the same derivatives (to rounding); only the
arithmetic that computes them differs.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Sequence

import sympy as sp

from .sympy_backend import diff, symbolic_derivatives


def inner_expression(expr: sp.Expr, variables: Sequence[sp.Symbol]):
    """``(F, T, t)`` with ``expr = F(t)`` and ``F`` free of ``variables`` (``T`` the placeholder of
    ``t`` in ``F``), for the smallest such proper subexpression ``t``; ``None`` if there is none."""
    wanted = set(variables) & expr.free_symbols
    T = sp.Dummy("t")
    best = None
    for candidate in sp.preorder_traversal(expr):
        if candidate is expr or candidate.is_Atom or not wanted <= candidate.free_symbols:
            continue
        outer = expr.xreplace({candidate: T})
        if outer.free_symbols & wanted:
            continue
        if best is None or sp.count_ops(candidate) < sp.count_ops(best[2]):
            best = (outer, T, candidate)
    return best


#: functions whose derivatives are distributions or case rules: a cost with one in F is not composed
KINKS = (sp.Abs, sp.sign, sp.Heaviside, sp.DiracDelta, sp.Piecewise, sp.Max, sp.Min)


def _partitions(items: list):
    """Every set partition of ``items`` (lists of blocks)."""
    if not items:
        yield []
        return
    first, rest = items[0], items[1:]
    for partition in _partitions(rest):
        for i in range(len(partition)):
            yield partition[:i] + [[first] + partition[i]] + partition[i + 1:]
        yield [[first]] + partition


def composed_derivatives(expr: sp.Expr, xs: Sequence[sp.Symbol], ys: Sequence[sp.Symbol], order: int) -> dict:
    """The fields of :func:`~costcheck.derivatives.sympy_backend.symbolic_derivatives` (same
    nesting, same values), written by Faà di Bruno's formula where ``expr = F(t)``; otherwise those
    of ``symbolic_derivatives`` themselves."""
    return _composed(expr, tuple(xs), tuple(ys), order)


@lru_cache(maxsize=16)
def _composed(expr, xs, ys, order):
    found = inner_expression(expr, xs + ys)
    # a kink in F (|t|, sign, a step, a piecewise rule) is differentiated with the variables
    # themselves: the delta terms of its derivatives are written in them (see sympy_backend.diff)
    if found is None or found[0].has(*KINKS):
        return symbolic_derivatives(expr, xs, ys, order)
    outer, T, t = found
    F = [outer]
    for _ in range(order):
        F.append(diff(F[-1], T))
    F = [f.xreplace({T: t}) for f in F]
    inner: dict = {}

    def t_derivative(block):
        key = tuple(sorted(block, key=lambda s: s.name))
        if key not in inner:
            inner[key] = diff(t_derivative(key[:-1]), key[-1]) if key else t
        return inner[key]

    formed: dict = {}

    def derivative(*variables):  # one expression for every order of the same variables
        key = tuple(sorted(variables, key=lambda s: s.name))
        if key not in formed:
            formed[key] = sp.Add(*[F[len(p)] * sp.Mul(*[t_derivative(b) for b in p]) for p in _partitions(list(key))])
        return formed[key]

    n, m = len(xs), len(ys)
    out = {"value": expr}
    if order >= 1:
        out["dx"] = [derivative(x) for x in xs]
        out["dy"] = [derivative(y) for y in ys]
    if order >= 2:
        out["dxy"] = [[derivative(xs[i], ys[k]) for k in range(m)] for i in range(n)]
    if order >= 3:
        out["dxxy"] = [[[derivative(xs[i], xs[j], ys[k]) for k in range(m)] for j in range(n)] for i in range(n)]
        out["dxyy"] = [[[derivative(xs[i], ys[k], ys[l]) for l in range(m)] for k in range(m)] for i in range(n)]
    if order >= 4:
        out["dxxyy"] = [[[[derivative(xs[i], xs[j], ys[k], ys[l]) for l in range(m)] for k in range(m)]
                         for j in range(n)] for i in range(n)]
    if any(isinstance(e, sp.Basic) and e.has(sp.Derivative) for e in _flat(out)):
        return symbolic_derivatives(expr, xs, ys, order)  # something F's chain rule left unevaluated
    return out


def _flat(fields: dict):
    for value in fields.values():
        stack = [value]
        while stack:
            item = stack.pop()
            if isinstance(item, list):
                stack.extend(item)
            else:
                yield item
