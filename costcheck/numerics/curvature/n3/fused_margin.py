"""The n = 3 A3w margin as compiled kernels: derivatives, tensor and minimum fused, for large budgets.

The per-pair route (:mod:`costcheck.numerics.curvature.n3.space_margin`) takes the derivative
fields from the sympy backend and runs the algebra and the minimum per pair in numba.  Here the
same mathematics is traced once into four XLA programs (``jax.jit``), as for ``n = 2``
(:mod:`costcheck.numerics.curvature.n2.fused_margin`):

1. the cost's derivatives up to order 4 (by Faà di Bruno's formula where the cost is a function
   of one inner expression: :mod:`costcheck.derivatives.composition`), then ``M⁻¹``, ``T`` and the
   packed ``G`` on columns (:func:`costcheck.numerics.curvature.n3.space_columns.prepare`);
2. the scan of :data:`DIRECTIONS` directions and the two seeds
   (:func:`costcheck.numerics.curvature.n3.orthogonal_search.seeds`);
3. :data:`SEED_ITERATIONS` Newton iterations on SO(3) from each seed, and the better of the two;
4. :data:`ITERATIONS` − :data:`SEED_ITERATIONS` more from it, and the convergence test.

**Tolerance.**  A row's minimum is accepted from the kernel only where its last Newton model
says it is a local minimum to rounding: Hessian positive semi-definite to ``1e-13 · max|G|`` and
predicted decrease at most ``1e-16 · max|G|`` (:mod:`orthogonal_search`).  Rows that are not
converged are redone on the host by the per-pair route
(:func:`costcheck.numerics.curvature.n3.biquadratic.minimise_packed`), so every value is at a
local minimum to rounding, found from seeds of the same 96-direction scan; the tests hold the
two routes together on random pairs.

**Status (measured by the bench, issue 23).**  The kernel gives the per-pair route's minima, but
ran at 0.6× its speed on power-0.5-3d (81k against 129k pairs/s, 50,000 pairs, interleaved runs)
and 0.2× on sq-euclid-3d (106k against 498k: the per-pair route skips the Newton loop where
``G = 0``): the derivative-and-tensor program is fast, the scan and Newton programs are not (XLA's CPU compiler splits
an iteration into many loops over memory; ``DEVELOPERS.md`` has the figures).  So the checks do
not use it; ``python -m costcheck.bench`` measures it beside the per-pair route
(``margin.<cost>.n3_fused``).  Compilation takes about a minute on a cold cache.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from functools import lru_cache

import numpy as np

from ..n2.fused_margin import IN_FLIGHT, blocks, padded
from . import biquadratic, orthogonal_search, space_columns

#: pairs per compiled call (a few tens of MB of columns per call)
CHUNK = 1 << 14
#: scan directions (those of the per-pair route)
DIRECTIONS = biquadratic.DEFAULT_DIRECTIONS
#: Newton iterations from each of the two seeds, and in all from the better one
SEED_ITERATIONS = 2
ITERATIONS = 5
FIELDS = ("dxy", "dxxy", "dxyy", "dxxyy")


def applicable(cost) -> bool:
    """A symbolic cost with n = m = 3 (a Python-function cost has no symbolic derivatives)."""
    return cost.expr is not None and cost.n == 3 and cost.m == 3


@lru_cache(maxsize=16)
def compiled_programs(expr, xs, ys, seed_iterations: int = SEED_ITERATIONS, iterations: int = ITERATIONS):
    from ....derivatives.composition import composed_derivatives
    from ....derivatives.jax_backend import jax_modules, sympy_columns_to_jax
    from ....derivatives.sympy_backend import distinct_entries

    jax, jnp = jax_modules()
    flat, layout = distinct_entries(composed_derivatives(expr, xs, ys, 4), FIELDS)
    columns_of = sympy_columns_to_jax(flat, list(xs) + list(ys))

    def algebra(z):
        cols = columns_of([z[:, k] for k in range(z.shape[1])])
        return space_columns.prepare(lambda name, *index: cols[layout[name][index]], jnp)

    def scan(g):
        return orthogonal_search.seeds(g, jnp, DIRECTIONS)

    def newton(g, state, count, one):
        size = orthogonal_search.largest_entry(g, jnp) / one
        hold = _holder(one)
        return jax.lax.fori_loop(0, count, lambda _, s: orthogonal_search.newton_step(g, size, s, jnp, hold), state)

    def start(g, index):
        xi = orthogonal_search.direction(index, DIRECTIONS, jnp)
        eta = orthogonal_search.exact_eta(g, xi, jnp)
        zero = jnp.zeros_like(g[0])
        return xi, eta, orthogonal_search.value(g, xi, eta), zero, zero > 0

    def race(g, packed, one):  # both seeds, the better one kept
        first, second = orthogonal_search.split(packed, DIRECTIONS, jnp)
        a = newton(g, start(g, first), seed_iterations, one)
        b = newton(g, start(g, second), seed_iterations, one)
        better = b[2] < a[2]
        return jax.tree_util.tree_map(lambda u, v: jnp.where(better, v, u), a, b)

    def refine(g, state, one):
        xi, eta, f, damp, done = newton(g, state, iterations - seed_iterations, one)
        size = orthogonal_search.largest_entry(g, jnp) / one
        # one more model: a row that moved in the last iteration is tested at its final point
        final = orthogonal_search.newton_step(g, size, (xi, eta, f, damp, done), jnp, _holder(one))
        return xi, eta, f, final[4]

    return tuple(jax.jit(f) for f in (algebra, scan, race, refine))


def _holder(one):
    """``v ↦ v / one`` with ``one`` a traced 1: XLA computes a division once and does not copy it
    into each of its consumers (:func:`orthogonal_search.newton_step`)."""
    return lambda v: v / one


def a3w_margin(cost, xs: np.ndarray, ys: np.ndarray, *, chunk: int = CHUNK):
    """:class:`costcheck.numerics.curvature.algebra.Margins` of the A3w margin at the pairs
    ``(xs, ys)`` of a symbolic ``n = m = 3`` cost, computed by the compiled kernels (at most
    ``chunk`` pairs per call), rows left unconverged redone by the per-pair route."""
    programs = compiled_programs(cost.expr, tuple(cost.x_symbols), tuple(cost.y_symbols))
    z = np.concatenate([np.asarray(xs, float), np.asarray(ys, float)], axis=1)
    spans = blocks(z.shape[0], chunk)
    with ThreadPoolExecutor(max_workers=IN_FLIGHT) as pool:
        parts = list(pool.map(lambda span: _block(programs, z, *span), spans))
    return _assemble(parts)


def _block(programs, z, begin, rows, size):
    from ....derivatives.jax_backend import jax_modules

    algebra, scan, race, refine = programs
    prepared = algebra(padded(z[begin:begin + rows], size))
    one = np.float64(1.0)
    found = refine(prepared.g, race(prepared.g, scan(prepared.g), one), one)
    # wait in the worker: JAX dispatches asynchronously (see the n = 2 kernel)
    jax_modules()[0].block_until_ready(found)
    return prepared, found, rows


def _assemble(parts):
    from ..algebra import finish

    raw, xi, eta, inv, scale, valid = [], [], [], [], [], []
    for prepared, (x, e, f, done), count in parts:
        g = np.stack([np.asarray(c)[:count] for c in prepared.g], axis=1)
        f, x, e = np.array(f[:count]), _matrix(x, count), _matrix(e, count)
        redo = np.flatnonzero(~np.asarray(done)[:count])
        if redo.size:  # not converged in the kernel: the per-pair route, from its own scan
            f[redo], x[redo], e[redo] = biquadratic.minimise_packed(g[redo])
        raw.append(f)
        xi.append(x)
        eta.append(e)
        inv.append(_matrix(prepared.inv, count).reshape(count, 3, 3))
        scale.append(np.asarray(prepared.scale)[:count])
        valid.append(np.asarray(prepared.valid)[:count])
    valid = np.concatenate(valid)
    return finish(np.concatenate(raw), np.concatenate(xi), np.concatenate(eta),
                  (np.concatenate(scale), np.concatenate(inv)), valid)


def _matrix(columns, count):
    return np.stack([np.asarray(c)[:count] for c in columns], axis=1)


def unconverged_fraction(cost, xs, ys) -> float:
    """The share of pairs the kernel leaves to the per-pair route (the bench reports it)."""
    programs = compiled_programs(cost.expr, tuple(cost.x_symbols), tuple(cost.y_symbols))
    z = np.concatenate([np.asarray(xs, float), np.asarray(ys, float)], axis=1)
    left = 0
    for begin, rows, size in blocks(z.shape[0], CHUNK):
        left += int(np.sum(~np.asarray(_block(programs, z, begin, rows, size)[1][3])[:rows]))
    return left / max(z.shape[0], 1)
