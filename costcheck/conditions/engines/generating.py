"""Steps the conditions of a generating function ``G(x, y, z)`` share.

The target side of a generating cost is ``(y, z)`` (:mod:`costcheck.spec.generating`); ``x`` is
``ctx.cost.n`` long.  Here: the guard that a cost *is* a generating function, the float, mpmath
and ball evaluators of one scalar quantity built from ``G`` (a sympy tree we built, lambdified with
``dummify``; nothing from the file is executed), and the sampled search for its largest value.
"""

from __future__ import annotations

from functools import lru_cache

import mpmath
import numpy as np
import sympy as sp
from flint import arb

from ...certify import balls
from ...certify.arb_eval import compile_exprs
from ...derivatives.sympy_backend import LAMBDIFY_MODULES
from ...model.verdict import not_applicable
from ...numerics.search import batched_descent


def not_generating(ctx, condition: str):
    """A not-applicable verdict for an ordinary cost, or None for a generating function."""
    if ctx.cost.generating is None:
        return not_applicable(condition, "this condition is stated for a generating function G(x, y, z) "
                                         "(a file with 'generating:'), not for a cost c(x, y)")
    return None


def symbols(cost) -> tuple:
    return tuple(cost.x_symbols) + tuple(cost.y_symbols)


@lru_cache(maxsize=32)
def _float_fn(expr, variables):
    # the backend's modules: a kink (abs) differentiated gives sign and DiracDelta, which plain numpy lacks
    return sp.lambdify(list(variables), expr, modules=LAMBDIFY_MODULES, dummify=True, cse=True)


@lru_cache(maxsize=32)
def _mp_fn(expr, variables):
    return sp.lambdify(list(variables), expr, modules="mpmath", dummify=True)


def evaluate(cost, expr: sp.Expr, points: np.ndarray) -> np.ndarray:
    """``expr`` at each row ``(x, y, z)`` of ``points``; NaN where undefined or not real."""
    fn = _float_fn(expr, symbols(cost))
    with np.errstate(all="ignore"):
        out = np.asarray(fn(*points.T), dtype=complex) * np.ones(points.shape[0])
    return np.where(np.abs(out.imag) == 0, out.real, np.nan)


def evaluate_many(cost, exprs: tuple, points: np.ndarray) -> np.ndarray:
    """Each of ``exprs`` at each row of ``points``, shape ``(rows, len(exprs))``: one compiled call,
    so a search that evaluates a map point by point pays the call overhead once, not per component."""
    fn = _float_fn(sp.Tuple(*exprs), symbols(cost))
    with np.errstate(all="ignore"):
        out = np.stack([np.asarray(v, dtype=complex) * np.ones(points.shape[0]) for v in fn(*points.T)], axis=1)
    return np.where(np.abs(out.imag) == 0, out.real, np.nan)


def high_precision(cost, expr: sp.Expr, point, dps: int = 50):
    """``expr`` at the exact binary value of ``point`` with ``dps`` digits (mpmath)."""
    with mpmath.workdps(dps):
        return _mp_fn(expr, symbols(cost))(*[mpmath.mpf(float(v)) for v in point])


def enclose(cost, expr: sp.Expr, point):
    """A ball (arb) enclosing ``expr`` at the exact binary value of ``point``, or None."""
    value = compile_exprs((expr,), symbols(cost))([arb(float(v)) for v in point])[0]
    return value if value.is_finite() else None


def sample_points(ctx) -> np.ndarray:
    return np.concatenate([ctx.sample.xs, ctx.sample.ys], axis=1)


def largest(ctx, cost, expr: sp.Expr, *, starts: int = 8, iterations: int = 30):
    """``(point, value, sampled_max, count)``: the largest ``expr`` over the sample, then improved by a
    batched local ascent from the ``starts`` largest samples inside the domain."""
    points = sample_points(ctx)
    values = evaluate(cost, expr, points)
    finite = np.isfinite(values)
    if not finite.any():
        return None, float("nan"), float("nan"), 0
    domain, n = cost.domain, cost.n
    lx, ux = domain.x.bounds()
    ly, uy = domain.y.bounds()
    lower, upper = np.concatenate([lx, ly]), np.concatenate([ux, uy])

    def negated(Z):
        out = np.full(Z.shape[0], np.inf)
        inside = domain.contains_pairs(Z[:, :n], Z[:, n:])
        if inside.any():
            v = evaluate(cost, expr, Z[inside])
            out[inside] = np.where(np.isfinite(v), -v, np.inf)
        return out

    order = np.argsort(np.where(finite, -values, np.inf))[:starts]
    z, fz, _ = batched_descent(negated, points[order], lower, upper, iterations=iterations)
    k = int(np.argmin(fz))
    i = int(order[0])
    if np.isfinite(fz[k]) and -fz[k] > values[i]:
        return z[k], float(-fz[k]), float(values[i]), int(finite.sum())
    return points[i], float(values[i]), float(values[i]), int(finite.sum())


def ball_text(value) -> str:
    return balls.text(value)


def ball_positive(value) -> bool:
    return balls.positive(value)
