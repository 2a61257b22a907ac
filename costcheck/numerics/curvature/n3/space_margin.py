"""The n = 3 A3w margin compiled per pair: derivative fields in, margins out.

The mathematics is that of :mod:`costcheck.numerics.curvature.margins` (Ma, Trudinger & Wang, Arch. Ration.
Mech. Anal. 177 (2005) 151–183), for ``n = m = 3``, in the order the numpy route takes it:

* ``M = D²_xy c`` counts as singular when ``σ_min / σ_max <= SINGULAR_RCOND``.  In three
  dimensions ``σ_min / σ_max = |det M| / (σ_max · ‖adj M‖₂)`` (the singular values of ``adj M``
  are the products of pairs of those of ``M``, the largest ``σ_max σ_mid``), and both norms are
  square roots of *largest* eigenvalues (of ``MᵀM`` and ``adj(M) adj(M)ᵀ``), which Smith's
  closed form gives to full relative accuracy; ``M`` is first divided by its largest entry,
  which changes no ratio and keeps the squares in range.  ``M⁻¹ = adj M / det M``;
* ``T_{ij,kl} = c_{ij,r} c^{r,s} c_{s,kl} − c_{ij,kl}`` for the six ``i <= j`` and six ``k <= l``,
  and ``scale = ‖c_{ij,r}c^{r,s}c_{s,kl}‖_F + ‖c_{ij,kl}‖_F`` over all 81 entries;
* ``G_{ij,ab} = Σ_kl T_{ij,kl} c^{k,a} c^{l,b}`` packed as :func:`biquadratic.pack` packs it, so
  that ``S(ξ, η) = G(ξ, ξ, η, η)``;
* its minimum over unit ``ξ ⊥ η`` (:mod:`costcheck.numerics.curvature.n3.biquadratic`), and the normaliser
  ``scale · |M⁻¹η|²`` at the minimiser (:func:`costcheck.numerics.curvature.margins._finish`).

The algebra and the minimum are compiled (numba) and release the GIL; blocks of
:data:`BLOCK` pairs run on :data:`THREADS` threads.  The numpy route (``tensor._prepare``, an
SVD per pair, batched products) gives the same validity and the same minimum to rounding (the
minimiser, and the normaliser taken there, to about √ε: the value is flat to second order around
it); the tests hold the two together.
"""

from __future__ import annotations

import math
import os
from concurrent.futures import ThreadPoolExecutor

import numpy as np
from threadpoolctl import threadpool_limits

from ..n2.plane_margin import SINGULAR_RCOND
from . import biquadratic
from .compiled import kernel
from .small3 import largest_eigenvalue

#: pairs per block (each block: the algebra, one scan product, the minimum; about 2.5 KB a pair)
BLOCK = 4096
#: blocks computed at the same time: one per core this process may run on (the kernels release
#: the GIL; on the 2-core machine two threads ran the margin 1.5–1.8× faster than one)
THREADS = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
#: smaller batches (the local searches' steps) stay on the calling thread: starting the workers
#: and limiting BLAS took 0.3 + 0.45 ms (measured), about 250 pairs' work on one core
SHARED_FROM = 1024

#: (i, j) of each packed index and the packed index of (k, l), as biquadratic packs G; and how
#: many entries of a symmetric pair of indices each stands for (for the Frobenius norms over all
#: 81 entries)
_ROW, _COL, _UNPACK = biquadratic.PACKED_ROW, biquadratic.PACKED_COL, biquadratic.UNPACK
_WEIGHT = np.array([1.0, 1.0, 1.0, 2.0, 2.0, 2.0])


@kernel
def prepare_rows(dxy, dxxy, dxyy, dxxyy, begin, g, g32, inv, scale, valid):
    """For the pairs ``n = begin, …, begin + len(g) − 1`` of the fields, stored pairs last
    (``dxy[i, k, n]`` and so on): ``valid[n]``, ``inv[n] = M⁻¹`` (the identity where not valid),
    ``scale[n]`` (NaN where not valid), and in row ``n − begin`` of the block's ``g`` the packed
    ``G (36,)`` (NaN where not valid) and of ``g32`` it scaled to ``max |G| = 1`` in float32 (zero
    where not valid)."""
    w = np.empty((6, 3))
    T = np.empty((6, 6))
    for r in range(g.shape[0]):
        n = begin + r
        big = 0.0
        finite = True
        for i in range(3):
            for k in range(3):
                finite = finite and math.isfinite(dxy[i, k, n])
                big = max(big, abs(dxy[i, k, n]))
        ok = finite and big > 0
        det = 0.0
        if ok:
            m00, m01, m02 = dxy[0, 0, n] / big, dxy[0, 1, n] / big, dxy[0, 2, n] / big
            m10, m11, m12 = dxy[1, 0, n] / big, dxy[1, 1, n] / big, dxy[1, 2, n] / big
            m20, m21, m22 = dxy[2, 0, n] / big, dxy[2, 1, n] / big, dxy[2, 2, n] / big
            # cofactors: adj M = Cᵀ
            c00, c01, c02 = m11 * m22 - m12 * m21, m12 * m20 - m10 * m22, m10 * m21 - m11 * m20
            c10, c11, c12 = m02 * m21 - m01 * m22, m00 * m22 - m02 * m20, m01 * m20 - m00 * m21
            c20, c21, c22 = m01 * m12 - m02 * m11, m02 * m10 - m00 * m12, m00 * m11 - m01 * m10
            det = m00 * c00 + m01 * c01 + m02 * c02
            gram = (m00 * m00 + m10 * m10 + m20 * m20, m01 * m01 + m11 * m11 + m21 * m21,
                    m02 * m02 + m12 * m12 + m22 * m22, m00 * m01 + m10 * m11 + m20 * m21,
                    m00 * m02 + m10 * m12 + m20 * m22, m01 * m02 + m11 * m12 + m21 * m22)  # MᵀM
            cogram = (c00 * c00 + c01 * c01 + c02 * c02, c10 * c10 + c11 * c11 + c12 * c12,
                      c20 * c20 + c21 * c21 + c22 * c22, c00 * c10 + c01 * c11 + c02 * c12,
                      c00 * c20 + c01 * c21 + c02 * c22, c10 * c20 + c11 * c21 + c12 * c22)  # C Cᵀ
            norms = math.sqrt(max(largest_eigenvalue(gram), 0.0) * max(largest_eigenvalue(cogram), 0.0))
            ok = abs(det) > SINGULAR_RCOND * norms
        if ok:
            d = det * big
            inv[n, 0, 0], inv[n, 0, 1], inv[n, 0, 2] = c00 / d, c10 / d, c20 / d
            inv[n, 1, 0], inv[n, 1, 1], inv[n, 1, 2] = c01 / d, c11 / d, c21 / d
            inv[n, 2, 0], inv[n, 2, 1], inv[n, 2, 2] = c02 / d, c12 / d, c22 / d
            first_sq = fourth_sq = 0.0
            for p in range(6):
                i, j = _ROW[p], _COL[p]
                for s in range(3):  # w_{ij,s} = c_{ij,r} c^{r,s}
                    w[p, s] = dxxy[i, j, 0, n] * inv[n, 0, s] + dxxy[i, j, 1, n] * inv[n, 1, s] + dxxy[i, j, 2, n] * inv[n, 2, s]
                for q in range(6):
                    k, l = _ROW[q], _COL[q]
                    first = w[p, 0] * dxyy[0, k, l, n] + w[p, 1] * dxyy[1, k, l, n] + w[p, 2] * dxyy[2, k, l, n]
                    fourth = dxxyy[i, j, k, l, n]
                    first_sq += _WEIGHT[p] * _WEIGHT[q] * first * first
                    fourth_sq += _WEIGHT[p] * _WEIGHT[q] * fourth * fourth
                    T[p, q] = first - fourth
            size = math.sqrt(first_sq) + math.sqrt(fourth_sq)
            ok = math.isfinite(size)
        valid[n] = ok
        if not ok:
            scale[n] = np.nan
            for a in range(3):
                for b in range(3):
                    inv[n, a, b] = 1.0 if a == b else 0.0
            for q in range(36):
                g[r, q] = np.nan
                g32[r, q] = 0.0
            continue
        scale[n] = size
        largest = 0.0
        for p in range(6):
            # G_{ij,ab} = (M⁻ᵀ T_{ij··} M⁻¹)_{ab}: U = T_{ij··} M⁻¹, then M⁻ᵀ U
            for q in range(6):
                a, b = _ROW[q], _COL[q]
                total = 0.0
                for k in range(3):
                    u = 0.0
                    for l in range(3):
                        u += T[p, _UNPACK[k, l]] * inv[n, l, b]
                    total += inv[n, k, a] * u
                g[r, 6 * p + q] = total
                largest = max(largest, abs(total))
        for q in range(36):
            g32[r, q] = g[r, q] / largest if largest > 0 else 0.0


def a3w_margin(derivs, *, directions: int = biquadratic.DEFAULT_DIRECTIONS, iterations: int | None = None):
    """:class:`costcheck.numerics.curvature.margins.Margins` of the A3w margin at every pair of ``derivs``
    (:class:`~costcheck.derivatives.Derivatives` with ``n = m = 3``, order 4).

    ``iterations``: Newton iterations of the minimum (``None``: its default).
    """
    from ..algebra import finish as _finish

    # pairs last: the sympy backend's fields are laid out so already (no copy), and the kernel
    # reads each entry's run of consecutive pairs
    fields = [np.ascontiguousarray(np.moveaxis(np.asarray(getattr(derivs, name), dtype=float), 0, -1))
              for name in ("dxy", "dxxy", "dxyy", "dxxyy")]
    N = fields[0].shape[-1]
    raw, xi, eta = np.empty(N), np.empty((N, 3)), np.empty((N, 3))
    inv, scale, valid = np.empty((N, 3, 3)), np.empty(N), np.empty(N, dtype=bool)
    options = {"directions": directions}
    if iterations is not None:
        options["iterations"] = iterations
        options["seed_iterations"] = min(biquadratic.DEFAULT_SEED_ITERATIONS, iterations)

    def block(span):
        begin, end = span
        g, g32 = np.empty((end - begin, 36)), np.empty((end - begin, 36), dtype=np.float32)
        prepare_rows(*fields, begin, g, g32, inv, scale, valid)
        raw[begin:end], xi[begin:end], eta[begin:end] = biquadratic.minimise_packed(g, g32, **options)

    spans = blocks(N)
    if len(spans) > 1:
        # one BLAS thread per worker: OpenBLAS's own threads spin between calls and took the
        # second core from the other worker (measured: 230k against 370k pairs/s for the margin)
        with threadpool_limits(limits=1, user_api="blas"), ThreadPoolExecutor(max_workers=THREADS) as pool:
            list(pool.map(block, spans))
    else:
        for span in spans:
            block(span)
    return _finish(raw, xi, eta, (scale, inv), valid)


def blocks(count: int, largest: int = BLOCK, threads: int = THREADS) -> list[tuple[int, int]]:
    """``(begin, end)`` of near-equal blocks of at most ``largest`` pairs, their number a multiple
    of ``threads`` (so that no worker is left with a short last block while the other waits);
    one block below :data:`SHARED_FROM` pairs."""
    if count < SHARED_FROM:
        return [(0, count)] if count else []
    number = -(-count // largest)
    number = min(count, -(-number // threads) * threads)
    edges = np.linspace(0, count, number + 1).round().astype(int)
    return [(int(a), int(b)) for a, b in zip(edges[:-1], edges[1:])]
