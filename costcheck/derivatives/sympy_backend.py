"""The sympy backend: symbolic derivatives, shared subexpressions, one numpy function.

Symmetries are used so each distinct derivative is formed once
(``c_{ij,k} = c_{ji,k}``, ``c_{i,kl} = c_{i,lk}``, ``c_{ij,kl}`` in both pairs), and
all entries go through a single ``lambdify(..., cse=True)`` call so common
subexpressions are evaluated once per point.
"""

from __future__ import annotations

import itertools
from concurrent.futures import ThreadPoolExecutor
from functools import lru_cache
from typing import Sequence

import numpy as np
import sympy as sp

from .differentiate import diff  # noqa: F401 - re-exported: the differentiation every backend uses
from .fields import Derivatives, fields_up_to


def _delta(x, *_):
    # The derivative of sign(u) is a point mass at u = 0: zero elsewhere, undefined there.
    return np.where(np.asarray(x) == 0, np.nan, 0.0)


def _heaviside(x, *_):
    x = np.asarray(x, dtype=float)
    return np.where(x == 0, np.nan, (x > 0).astype(float))


LAMBDIFY_MODULES = [{"DiracDelta": _delta, "Heaviside": _heaviside, "sign": np.sign}, "numpy"]


def symbolic_derivatives(expr: sp.Expr, xs: Sequence[sp.Symbol], ys: Sequence[sp.Symbol], order: int,
                         generating: bool = False) -> dict:
    """Nested lists of sympy expressions, one entry per field of :class:`Derivatives`.

    ``generating``: ``expr`` is a generating function ``G(x, y, z)`` with ``z`` the last of ``ys``,
    and the fields are those of its effective cost (:mod:`costcheck.derivatives.generating`).

    Cached: the numeric, high-precision and closed-form steps all start from the same
    derivatives, and differentiating a chart of the sphere four times takes seconds.
    Callers must not modify the returned lists.
    """
    if generating:
        from .generating import effective_derivatives

        return effective_derivatives(expr, tuple(xs), tuple(ys), order)
    return _symbolic_derivatives(expr, tuple(xs), tuple(ys), order)


@lru_cache(maxsize=64)
def _symbolic_derivatives(expr, xs, ys, order) -> dict:
    # each order extends the cached one below it, so asking for order 2 and then 4
    # (twist, then MTW) differentiates every entry once
    n, m = len(xs), len(ys)
    if order == 0:
        return {"value": expr}
    out = dict(_symbolic_derivatives(expr, xs, ys, order - 1))
    if order == 1:
        out["dx"] = [diff(expr, xi) for xi in xs]
        out["dy"] = [diff(expr, yk) for yk in ys]
    elif order == 2:
        gx = out["dx"]
        out["dxy"] = [[diff(gx[i], ys[k]) for k in range(m)] for i in range(n)]
    elif order == 3:
        M = out["dxy"]
        dxxy = [[[None] * m for _ in range(n)] for _ in range(n)]
        for i, j in itertools.combinations_with_replacement(range(n), 2):
            for k in range(m):
                dxxy[i][j][k] = dxxy[j][i][k] = diff(M[i][k], xs[j])
        dxyy = [[[None] * m for _ in range(m)] for _ in range(n)]
        for i in range(n):
            for k, l in itertools.combinations_with_replacement(range(m), 2):
                dxyy[i][k][l] = dxyy[i][l][k] = diff(M[i][k], ys[l])
        out["dxxy"], out["dxyy"] = dxxy, dxyy
    else:
        dxxy = out["dxxy"]
        dxxyy = [[[[None] * m for _ in range(m)] for _ in range(n)] for _ in range(n)]
        for i, j in itertools.combinations_with_replacement(range(n), 2):
            for k, l in itertools.combinations_with_replacement(range(m), 2):
                d = diff(dxxy[i][j][k], ys[l])
                for a, b in ((i, j), (j, i)):
                    dxxyy[a][b][k][l] = dxxyy[a][b][l][k] = d
        out["dxxyy"] = dxxyy
    return out


def distinct_entries(sym: dict, names) -> tuple[list, dict]:
    """``(flat, layout)``: the distinct expressions of the fields ``names`` of ``sym`` (from
    :func:`symbolic_derivatives`), each once, and for each field an int array (in the field's
    own shape) of where its entries sit in ``flat``: symmetric entries are computed once."""
    flat: list[sp.Expr] = []
    position: dict[sp.Expr, int] = {}
    layout: dict[str, np.ndarray] = {}
    for name in names:
        entries = np.array(sym[name], dtype=object)
        idx = []
        for e in entries.reshape(-1):
            if e not in position:
                position[e] = len(flat)
                flat.append(e)
            idx.append(position[e])
        layout[name] = np.array(idx, dtype=int).reshape(entries.shape)
    return flat, layout


def shared_cse(exprs):
    """``sympy.cse`` for ``lambdify(..., cse=shared_cse)``, computed once per set of expressions.

    The float64 evaluator and the mpmath one (:mod:`costcheck.derivatives.mp_backend`) lambdify
    the same derivatives; on a chart of the sphere the elimination takes seconds, so both use
    this cached result (duplicates are removed first, and put back in the reduced list).
    """
    unique = tuple(dict.fromkeys(exprs))
    replacements, reduced = _cse_of(unique)
    where = dict(zip(unique, reduced))
    return list(replacements), [where[e] for e in exprs]


@lru_cache(maxsize=32)
def _cse_of(unique: tuple):
    return sp.cse(list(unique))


#: rows per call of the lambdified function, whose temporaries (an array per operation) then stay
#: in cache; chunks go to :data:`THREADS` threads (numpy releases the GIL in its loops).  Measured on
#: the 2-core machine, power-0.5-3d and sphere-dist-sq at 200,000 pairs: 0.43M and 0.14M pairs/s in
#: one call, 0.9–1.0M and 0.45M in chunks of 4096–8192 on one thread, 1.1–1.2M and 0.54–0.74M on two
CHUNK = 8192
THREADS = 2


def generating_derivatives(expr: sp.Expr, xs: Sequence[sp.Symbol], ys: Sequence[sp.Symbol], order: int) -> dict:
    """:func:`symbolic_derivatives` of a generating function's effective cost (a ``derive`` for :func:`build`)."""
    return symbolic_derivatives(expr, xs, ys, order, generating=True)


def build(expr: sp.Expr, xs: Sequence[sp.Symbol], ys: Sequence[sp.Symbol], order: int, family=None,
          derive=None):
    """A function ``(xs (N,n), ys (N,m)) -> Derivatives`` evaluating the symbolic derivatives.

    ``family = (template, ((symbol, value), ...))`` evaluates the template's derivatives with the
    symbols set to the values: one differentiation and one compilation for a whole sweep.
    ``derive(expr, xs, ys, order)`` forms the derivative expressions (default
    :func:`symbolic_derivatives`; any function returning the same fields with the same values).
    """
    derive = derive or symbolic_derivatives
    if family is None:
        return _build(expr, tuple(xs), tuple(ys), order, (), derive)
    template, values = family
    symbols = tuple(s for s, _ in values)
    numbers = tuple(float(v) for _, v in values)
    fn = _build(template, tuple(xs), tuple(ys), order, symbols, derive)
    return lambda x, y: fn(x, y, numbers)


@lru_cache(maxsize=64)
def _build(expr, xs, ys, order, extra=(), derive=symbolic_derivatives):
    names = fields_up_to(order)
    sym = derive(expr, xs, ys, order)
    shapes = {name: np.shape(np.array(sym[name], dtype=object)) for name in names}
    flat, layout = distinct_entries(sym, names)

    fn = sp.lambdify(list(xs) + list(ys) + list(extra), flat, modules=LAMBDIFY_MODULES, cse=shared_cse, dummify=True)

    # each field's entries in order, as positions in ``flat`` (symmetric entries repeat one)
    sources = {name: layout[name].reshape(-1) for name in names}

    def evaluate(x: np.ndarray, y: np.ndarray, values=()) -> Derivatives:
        count = x.shape[0]
        # every field as rows (its entries) of pairs, written chunk by chunk from the chunk's
        # columns while they are in cache: a gather of a whole table afterwards (one row per
        # distinct expression, 144 rows for n = 3 at order 4) took longer than the lambdified
        # code itself while other jobs held the cores (power-0.5-3d, 100,000 pairs: 0.14 s; 0.01 s idle)
        out = {name: np.empty((len(sources[name]), count)) for name in names}

        def rows(begin):
            end = min(begin + CHUNK, count)
            with np.errstate(all="ignore"):  # a worker thread does not inherit the caller's
                columns = [np.asarray(col, dtype=float) for col in fn(*x[begin:end].T, *y[begin:end].T, *values)]
                for name in names:
                    target = out[name]
                    for row, source in enumerate(sources[name]):
                        target[row, begin:end] = columns[source]

        starts = range(0, count, CHUNK)
        if len(starts) > 1:
            with ThreadPoolExecutor(max_workers=THREADS) as pool:
                list(pool.map(rows, starts))
        elif count:
            rows(0)
        result = {name: out[name].T.reshape((count,) + shapes[name]) for name in names}
        return Derivatives(**result)

    return evaluate
