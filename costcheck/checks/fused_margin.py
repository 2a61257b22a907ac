"""The n = 2 A3w margin as compiled kernels: derivatives and margin fused, for large budgets.

The sympy route evaluates the derivative fields with numpy and then the margin
(:mod:`costcheck.checks.plane_margin`), each step a pass over memory.  Here the same
mathematics is traced once into five XLA programs (``jax.jit``):

1. the cost's derivatives up to order 4, from the symbolic derivatives with shared
   subexpressions (:func:`costcheck.derivatives.jax_backend.sympy_columns_to_jax`), then
   ``M⁻¹`` and ``T`` (:func:`costcheck.checks.plane_margin.prepare`);
2. the quartic ``S(θ)`` and the grid stage of its certified minimum
   (:func:`costcheck.checks.quartic.bracket`);
3. the Newton polish of the (at most two) local minima (:func:`costcheck.checks.quartic.roots`);
4. the choice among them (:func:`costcheck.checks.quartic.choose`);
5. the normaliser and the scale-free margins (:func:`costcheck.checks.plane_margin.finish`).

Five programs, not one: XLA fuses elementwise producers into each consumer, so in one
program the grid stage and the Newton steps would be computed again for every output (its
CPU compiler drops optimisation barriers); a program's inputs are computed once.  Rows the quartic
certificate leaves open are redone on the host by the eigenvalue route, so every minimum is
exact, as on the sympy route.  Batches are padded to a fixed chunk, so one compilation serves
every batch size, and JAX's persistent compilation cache keeps it between runs.

Compilation takes seconds: worth it for large budgets, not for one small check
(:func:`worthwhile`).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from . import plane_margin, quartic

#: pairs per compiled call (padded); bounds the memory of one call to a few tens of MB
CHUNK = 1 << 16

#: from this many sampled pairs on, the MTW check uses the kernel.  The check's sample shares its
#: numpy derivatives with the other conditions, so the kernel replaces only the numpy margin
#: (about 0.37M pairs/s against the kernel's 1.0–1.2M with its own derivatives, measured by the
#: bench on this 2-core machine): it saves ~1.8 µs a pair and costs 3–4 s of compilation when
#: the persistent cache is cold, so it pays from a few million pairs
WORTHWHILE_PAIRS = 1 << 22

FIELDS = ("dxy", "dxxy", "dxyy", "dxxyy")


def applicable(cost) -> bool:
    """A symbolic cost with n = m = 2 (a Python-function cost has no symbolic derivatives)."""
    return cost.expr is not None and cost.n == 2 and cost.m == 2


def worthwhile(cost, pairs: int) -> bool:
    return applicable(cost) and pairs >= WORTHWHILE_PAIRS


@lru_cache(maxsize=16)
def _programs(expr, xs, ys):
    from ..derivatives.jax_backend import _jax, sympy_columns_to_jax
    from ..derivatives.sympy_backend import distinct_entries, symbolic_derivatives

    jax, jnp = _jax()
    flat, layout = distinct_entries(symbolic_derivatives(expr, xs, ys, 4), FIELDS)
    columns_of = sympy_columns_to_jax(flat, list(xs) + list(ys))

    def algebra(z):
        cols = columns_of([z[:, k] for k in range(z.shape[1])])
        return plane_margin.prepare(lambda name, *index: cols[layout[name][index]], jnp)

    def grid(prepared):
        return quartic.bracket(plane_margin.coefficients(prepared, jnp), jnp)

    def polish(prepared, packed):
        return quartic.roots(plane_margin.coefficients(prepared, jnp), packed, jnp)

    def choose(prepared, packed, found):
        return quartic.choose(plane_margin.coefficients(prepared, jnp), packed, found, jnp)

    def finish(prepared, minimum):  # every output is cheap to recompute from these inputs
        return plane_margin.finish(prepared, minimum, jnp)

    return tuple(jax.jit(f) for f in (algebra, grid, polish, choose, finish))


def a3w_margin(cost, xs: np.ndarray, ys: np.ndarray, *, chunk: int = CHUNK) -> plane_margin.PlaneMargins:
    """Exact n = 2 A3w margins at the pairs ``(xs, ys)``, computed by the compiled kernels
    (``chunk`` pairs per call; each new chunk size is a new compilation)."""
    algebra, grid, polish, choose, finish = _programs(cost.expr, tuple(cost.x_symbols), tuple(cost.y_symbols))
    z = np.concatenate([np.asarray(xs, float), np.asarray(ys, float)], axis=1)
    N = z.shape[0]
    parts = []
    for begin in range(0, N, chunk):
        block = z[begin:begin + chunk]
        count = block.shape[0]
        if count < chunk:  # pad with a copy of the first pair: one compiled shape for every call
            block = np.concatenate([block, np.repeat(block[:1], chunk - count, axis=0)])
        prepared = algebra(block)
        packed = grid(prepared)
        found = choose(prepared, packed, polish(prepared, packed))
        parts.append((prepared, found, finish(prepared, found), count))
    return _assemble(parts)


def _assemble(parts) -> plane_margin.PlaneMargins:
    """The chunks' margins as numpy, with the rows the certificate left open redone on the host
    by the eigenvalue route."""
    pieces = []
    for prepared, found, margins, count in parts:
        margins = plane_margin.PlaneMargins(*(_head(f, count) for f in margins))
        redo = np.flatnonzero(~margins.certified)
        if redo.size:
            with np.errstate(all="ignore"):
                sub = plane_margin.Prepared(*(_rows(_head(f, count), redo) for f in prepared))
                fixed = quartic.patch_uncertified(plane_margin.coefficients(sub),
                                                  quartic.QuarticMinimum(*(_rows(_head(f, count), redo) for f in found)))
                redone = plane_margin.finish(sub, fixed)
            margins = plane_margin.PlaneMargins(*(_replaced(a, b, redo) for a, b in zip(margins, redone)))
        pieces.append(margins)
    return plane_margin.PlaneMargins(*(np.concatenate([getattr(p, f) for p in pieces]) for f in plane_margin.PlaneMargins._fields))


def _head(field, count):
    """The first ``count`` rows, as numpy (a tuple of columns stays a tuple)."""
    if isinstance(field, tuple):
        return tuple(np.asarray(c)[:count] for c in field)
    return np.asarray(field)[:count]


def _rows(field, rows):
    return tuple(c[rows] for c in field) if isinstance(field, tuple) else field[rows]


def _replaced(whole, part, rows):
    whole = np.array(whole, copy=True)
    whole[rows] = part
    return whole
