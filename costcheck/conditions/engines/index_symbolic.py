"""Symbolic search for an index ``I(x)`` of a cost in index form (run under a time limit).

If ``c(x, y) = b(I(x), y) + f(x)`` then ``D_y c(x, y) = D_y b(I(x), y)`` depends on ``x``
only through ``I(x)``: for a fixed ``y0``, ``I0(x) = D_y c(x, y0)`` is itself an index
whenever ``D_y b(·, y0)`` is injective (Chiappori–McCann–Pass, CPAM 70, 2017, §3; Pass,
Math. Res. Lett. 2012).  A candidate is accepted only through an exact identity: every
column of ``D²_xy c(x, y)`` lies in the span of the columns of ``D I0(x)`` — for all
``(x, y)`` as symbols — i.e. every ``(m+1) × (m+1)`` minor of ``[D I0 | D²_xy c(·, y)_k]``
simplifies to zero.  Then ``ker D²_xy c(x, y)ᵀ ⊇ (range D I0(x))^⊥`` for every ``y``, with
equality wherever ``rank D²_xy c = m``.

For ``m = 1`` the direction field ``c_{x_i y} / c_{x_p y}`` (``p`` the first component that
is not identically zero) is also reported when it is free of ``y``; for ``n = 2`` it is also
integrated: ``∇I ∥ (1, r)`` is the linear first-order equation ``r I_{x1} − I_{x2} = 0``
(after ordering the pivot first), whose general solution ``F(ξ(x))`` (sympy's ``pdsolve``,
method of characteristics) gives the candidate ``ξ``.  Every candidate, however found, must
pass the same exact identity.
"""

from __future__ import annotations

import itertools
import random
from typing import Sequence

import sympy as sp

from ...numerics.exact import exact_expression


def _is_zero(expr: sp.Expr, symbols: Sequence[sp.Symbol]) -> bool:
    """Exactly zero as an expression (sound: a numeric screen may only say 'no')."""
    if expr == 0:
        return True
    rng = random.Random(7)
    for _ in range(3):
        point = {s: sp.Rational(rng.randint(1, 97), rng.randint(98, 197)) for s in symbols}
        try:
            value = complex(sp.N(expr.xreplace(point), 30))
        except (TypeError, ValueError, ZeroDivisionError):
            continue
        if value == value and abs(value) > 1e-20:
            return False
    for simplifier in (lambda e: sp.cancel(sp.together(e)), sp.simplify):
        if simplifier(expr) == 0:
            return True
    return False


def _normalised(expr: sp.Expr, xs) -> sp.Expr:
    """Drop an additive constant and a numeric factor: any function of an index is an index."""
    _, dependent = expr.as_independent(*xs, as_Add=True)
    dependent = sp.factor_terms(dependent)
    coeff, rest = dependent.as_coeff_Mul()
    return rest if coeff.is_Number and coeff != 0 else dependent


def _spans(J: sp.Matrix, M: sp.Matrix, symbols) -> bool:
    n, m = J.shape
    for k in range(M.cols):
        A = J.row_join(M[:, k])
        for rows in itertools.combinations(range(n), m + 1):
            if not _is_zero(A.extract(list(rows), list(range(m + 1))).det(method="berkowitz"), symbols):
                return False
    return True


def find_index(expr: sp.Expr, xs: Sequence[sp.Symbol], ys: Sequence[sp.Symbol], y0s: Sequence[Sequence]) -> dict:
    """``{"index": [str] | None, "y0": [...], "direction_field": [str] | None, "decimals": bool}``."""
    expr, decimals = exact_expression(expr)
    n, m = len(xs), len(ys)
    symbols = list(xs) + list(ys)
    cy = [sp.diff(expr, y) for y in ys]
    M = sp.Matrix(n, m, lambda i, k: sp.diff(cy[k], xs[i]))
    out = {"index": None, "y0": None, "direction_field": None, "decimals": decimals}
    if m == 1:
        pivot = next((i for i in range(n) if not _is_zero(M[i, 0], symbols)), None)
        if pivot is not None:
            ratios = [sp.cancel(sp.together(M[i, 0] / M[pivot, 0])) for i in range(n)]
            if all(not (r.free_symbols & set(ys)) for r in ratios):
                out["direction_field"] = [str(r) for r in ratios]
    found = []
    for candidate in _integrated_direction_field(M, xs, ys, symbols):
        J = sp.Matrix(n, 1, lambda i, k: sp.diff(candidate, xs[i]))
        if _spans(J, M, symbols):
            found.append((sp.count_ops(candidate), [candidate], None))
    # the characteristic is the plain index when it verifies; frozen derivatives are then not needed
    for y0 in ([] if found else y0s):
        sub = dict(zip(ys, y0))
        try:
            index = [_normalised(c.xreplace(sub), xs) for c in cy]
        except (TypeError, ValueError, ZeroDivisionError):
            continue
        if any(e.has(sp.nan, sp.zoo, sp.oo, -sp.oo) for e in index):
            continue
        J = sp.Matrix(n, m, lambda i, k: sp.diff(index[k], xs[i]))
        if any(all(_is_zero(J[i, k], symbols) for i in range(n)) for k in range(m)):
            continue
        if _spans(J, M, symbols):
            found.append((sum(sp.count_ops(e) for e in index), index, y0))
    if found:
        found.sort(key=lambda f: f[0])
        _, index, y0 = found[0]
        out["index"] = [str(e) for e in index]
        out["y0"] = None if y0 is None else [str(v) for v in y0]
        out["method"] = ("direction field integrated by the method of characteristics (sympy pdsolve)" if y0 is None
                         else f"D_y c(x, y0) at y0 = ({', '.join(map(str, y0))})")
    return out


def _integrated_direction_field(M: sp.Matrix, xs, ys, symbols) -> list[sp.Expr]:
    """For n = 2, m = 1: the characteristic ξ of ``∇I ∥ M(x, ·)`` when the direction is free of y."""
    if M.shape != (2, 1):
        return []
    a, b = xs
    if _is_zero(M[0, 0], symbols):
        return [b] if not _is_zero(M[1, 0], symbols) else []  # ∇I ∥ (0, 1): I = the second coordinate
    r = sp.cancel(sp.together(M[1, 0] / M[0, 0]))  # ∇I ∥ (1, r): I_b = r I_a
    if r.free_symbols & set(ys):
        return []
    f = sp.Function("f")
    try:
        solution = sp.pdsolve(sp.Eq(r * f(a, b).diff(a) - f(a, b).diff(b), 0), f(a, b))
    except (NotImplementedError, ValueError, TypeError):
        return []
    rhs = solution.rhs
    if isinstance(rhs, sp.core.function.AppliedUndef) and len(rhs.args) == 1:
        return [_normalised(rhs.args[0], xs)]
    return []
