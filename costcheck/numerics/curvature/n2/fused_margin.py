"""The n = 2 A3w margin as compiled kernels: derivatives and margin fused, for large budgets.

The sympy route evaluates the derivative fields with numpy and then the margin
(:mod:`costcheck.numerics.curvature.n2.plane_margin`), each step a pass over memory.  Here the same
mathematics is traced once into five XLA programs (``jax.jit``):

1. the cost's derivatives up to order 4, from the symbolic derivatives (by Faà di Bruno's
   formula where the cost is a function of one inner expression:
   :mod:`costcheck.derivatives.composition`) with shared subexpressions
   (:func:`costcheck.derivatives.jax_backend.sympy_columns_to_jax`), then
   ``M⁻¹`` and ``T`` (:func:`costcheck.numerics.curvature.n2.plane_margin.prepare`);
2. the quartic ``S(θ)`` and the grid stage of its certified minimum
   (:func:`costcheck.numerics.curvature.n2.quartic.bracket`);
3. the Newton polish of the (at most two) local minima (:func:`costcheck.numerics.curvature.n2.quartic.roots`);
4. the choice among them (:func:`costcheck.numerics.curvature.n2.quartic.choose`);
5. the normaliser and the scale-free margins (:func:`costcheck.numerics.curvature.n2.plane_margin.finish`).

Five programs, not one: XLA fuses elementwise producers into each consumer, so in one
program the grid stage and the Newton steps would be computed again for every output (its
CPU compiler drops optimisation barriers); a program's inputs are computed once.  Rows the quartic
certificate leaves open are redone on the host by the eigenvalue route, so every minimum is
exact, as on the sympy route.  Batches are cut into blocks of a few fixed sizes (:func:`blocks`),
so a handful of compilations serve every batch size, and JAX's persistent compilation cache
keeps them between runs; two blocks are computed at a time.

Compilation takes seconds: worth it for large budgets, not for one small check
(:func:`worthwhile`).
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from functools import lru_cache

import numpy as np

from . import plane_margin, quartic

#: pairs per compiled call; bounds the memory of one call to a few tens of MB.  Measured on
#: 200,000 pairs of power-0.5, two blocks in flight: 2^16 gave 3.2M pairs/s, 2^15 3.9M and
#: 2^14 2.6M: smaller blocks stay in cache and share out evenly between the
#: workers, while per-call overhead grows below it
CHUNK = 1 << 15

#: from this many sampled pairs on, the MTW check uses the kernel.  The check's sample shares its
#: numpy derivatives with the other conditions, so the kernel replaces only the numpy margin
#: (about 0.37M pairs/s against the kernel's 2–3.5M with its own derivatives, measured by the
#: bench on this 2-core machine): it saves ~2.3 µs a pair and costs 4–5 s of compilation per
#: block size when the persistent cache is cold, so it pays from a few million pairs
WORTHWHILE_PAIRS = 1 << 22

FIELDS = ("dxy", "dxxy", "dxyy", "dxxyy")


def applicable(cost) -> bool:
    """A symbolic cost with n = m = 2 (a Python-function cost has no symbolic derivatives)."""
    return cost.expr is not None and cost.n == 2 and cost.m == 2


def worthwhile(cost, pairs: int) -> bool:
    return applicable(cost) and pairs >= WORTHWHILE_PAIRS


@lru_cache(maxsize=16)
def compiled_programs(expr, xs, ys):
    from ....derivatives.composition import composed_derivatives
    from ....derivatives.jax_backend import jax_modules, sympy_columns_to_jax
    from ....derivatives.sympy_backend import distinct_entries

    jax, jnp = jax_modules()
    flat, layout = distinct_entries(composed_derivatives(expr, xs, ys, 4), FIELDS)
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
    (at most ``chunk`` pairs per call; each new block size is a new compilation, see :func:`blocks`)."""
    programs = compiled_programs(cost.expr, tuple(cost.x_symbols), tuple(cost.y_symbols))
    z = np.concatenate([np.asarray(xs, float), np.asarray(ys, float)], axis=1)
    spans = blocks(z.shape[0], chunk)
    # two blocks in flight: XLA keeps the cores busy only part of the time within one program
    # (the bench measured 1.3-1.5 cores busy with one block at a time, 1.7-1.8 with two, and
    # 1.15-1.3x the throughput); more workers than cores made it slower
    with ThreadPoolExecutor(max_workers=IN_FLIGHT) as pool:
        parts = list(pool.map(lambda span: _block(programs, z, *span), spans))
    return _assemble(parts)


#: blocks computed at the same time (measured on this 2-core machine: 4 was slower than 2)
IN_FLIGHT = 2

#: the smallest compiled block: a remainder is split into powers of two down to this size
SMALLEST_BLOCK = 1 << 12


def blocks(count: int, chunk: int = CHUNK) -> list[tuple[int, int, int]]:
    """``(begin, rows, size)`` of each call: whole chunks, then the remainder split into
    powers of two (largest first, at least :data:`SMALLEST_BLOCK`), the last one padded.

    Padding a remainder to a whole chunk wasted up to a chunk of work (31 % of 200,000 pairs);
    this wastes under :data:`SMALLEST_BLOCK` rows and compiles at most log2(chunk /
    SMALLEST_BLOCK) + 1 shapes, which JAX's persistent cache keeps between runs.
    """
    out, begin = [], 0
    while begin < count:
        left = count - begin
        size = chunk if left >= chunk else max(SMALLEST_BLOCK, 1 << (left.bit_length() - 1))
        size = min(size, chunk)
        out.append((begin, min(size, left), size))
        begin += size
    return out


def padded(block: np.ndarray, size: int) -> np.ndarray:
    """``block`` grown to ``size`` rows with copies of its first row (one compiled shape per size)."""
    if block.shape[0] >= size:
        return block
    return np.concatenate([block, np.repeat(block[:1], size - block.shape[0], axis=0)])


def _block(programs, z, begin, rows, size):
    from ....derivatives.jax_backend import jax_modules

    algebra, grid, polish, choose, finish = programs
    prepared = algebra(padded(z[begin:begin + rows], size))
    packed = grid(prepared)
    found = choose(prepared, packed, polish(prepared, packed))
    margins = finish(prepared, found)
    # wait here, in the worker: JAX dispatches asynchronously, and a worker that returned at
    # once would leave all the blocks queued one after another
    jax_modules()[0].block_until_ready(margins)
    return prepared, found, margins, rows


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
