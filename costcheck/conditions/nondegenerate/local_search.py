"""The local search for a rank-deficient ``M``: minimise ``|A v| / S`` over ``(x, y, v)``.

:func:`search_from_worst` picks the starts (the well-separated samples with the smallest
``μ``, each with its null vector) and :func:`local_searches` refines every start at once by a
batched Levenberg–Marquardt iteration (:func:`search.batched_least_squares`: one derivative
evaluation per step for all starts), with ``|v| = 1`` and the domain's balls as penalty rows
and its boxes as bounds; a zero of the residual is a point where ``M`` (``Mᵀ`` when
``n < m``) has the null vector ``v``.
"""

from __future__ import annotations

import numpy as np

from ...numerics import search
from .setup import Setup


def local_searches(st: Setup, Z0: np.ndarray, V0: np.ndarray) -> np.ndarray:
    """Minimise ``|A(z) v| / S`` with ``|v| = 1`` from every row of ``Z0`` at once (batched LM)."""
    n, d, k = st.n, st.d, st.k
    rows = max(st.n, st.m)
    lo_x, hi_x = search.box_bounds(st.domain.x)
    lo_y, hi_y = search.box_bounds(st.domain.y)
    lower = np.concatenate([lo_x, lo_y, np.full(k, -2.0)])
    upper = np.concatenate([hi_x, hi_y, np.full(k, 2.0)])
    h = 1e-7 * np.where(st.width > 0, st.width, 1.0)
    E = np.diag(h)

    def model(U):
        count = U.shape[0]
        Z, V = U[:, :d], U[:, d:]
        pts = np.concatenate([Z[:, None, :], Z[:, None, :] + E, Z[:, None, :] - E], axis=1)  # (S, 2d+1, d)
        A, okp = st.matrices(pts.reshape(-1, d))
        A = A.reshape(count, 2 * d + 1, rows, k)
        okp = okp.reshape(count, 2 * d + 1)
        Av = np.einsum("sjrk,sk->sjr", A, V) / st.S  # (S, 2d+1, rows)
        bx, gx = search.ball_penalty(st.domain.x, Z[:, :n])
        by, gy = search.ball_penalty(st.domain.y, Z[:, n:])
        r = np.concatenate([Av[:, 0], (np.sum(V * V, axis=1) - 1.0)[:, None], bx[:, None], by[:, None]], axis=1)
        J = np.zeros((count, rows + 3, d + k))
        plus, minus, base = Av[:, 1: d + 1], Av[:, d + 1:], Av[:, :1]
        okplus, okminus = okp[:, 1: d + 1], okp[:, d + 1:]
        central = (plus - minus) / (2 * h[None, :, None])
        forward = (plus - base) / h[None, :, None]
        backward = (base - minus) / h[None, :, None]
        both = (okplus & okminus)[:, :, None]
        deriv = np.where(both, central, np.where(okplus[:, :, None], forward,
                                                 np.where(okminus[:, :, None], backward, 0.0)))
        J[:, :rows, :d] = np.transpose(deriv, (0, 2, 1))
        J[:, :rows, d:] = A[:, 0] / st.S
        J[:, rows, d:] = 2 * V
        J[:, rows + 1, :n] = gx
        J[:, rows + 2, n:d] = gy
        ok = okp[:, 0] & np.all(np.isfinite(r), axis=1) & np.all(np.isfinite(J), axis=(1, 2))
        return np.where(np.isfinite(r), r, 0.0), np.where(np.isfinite(J), J, 0.0), ok

    U, _ = search.batched_least_squares(model, np.concatenate([Z0, V0], axis=1), lower, upper, iterations=80)
    Z = U[:, :d].copy()
    for i in range(Z.shape[0]):
        Z[i, :n] = search.clip_into(st.domain.x, Z[i, :n])
        Z[i, n:] = search.clip_into(st.domain.y, Z[i, n:])
    return Z


def search_from_worst(st: Setup, Z, A, mu, rng, *, limit: int):
    """Refine up to ``limit`` well-separated samples with the smallest ``μ`` at once.

    ``A`` and ``mu`` are the samples' matrices and measure; the null vector of each start is
    perturbed with ``rng``.  Returns the samples' ``μ`` order and the usable refined points as
    ``(μ, z, sample index, signed scale-free det)``, smallest ``μ`` first.
    """
    order = np.argsort(mu, kind="stable")
    starts = []
    for i in order:
        if len(starts) >= limit:
            break
        if all(np.linalg.norm((Z[i] - Z[j]) / np.where(st.width > 0, st.width, 1.0)) > 0.05 for j in starts):
            starts.append(i)
    refined = []
    if starts:
        V0 = []
        for i in starts:
            _, _, Vt = np.linalg.svd(A[i])
            v0 = Vt[-1] + 1e-3 * rng.standard_normal(st.k)
            V0.append(v0 / np.linalg.norm(v0))
        Zr = local_searches(st, Z[starts], np.array(V0))
        Az, ok = st.matrices(Zr)
        muz, sdetz, _ = st.measure(np.where(np.isfinite(Az), Az, 0.0))
        for j, i in enumerate(starts):
            if ok[j]:
                refined.append((float(muz[j]), Zr[j], i, float(sdetz[j])))
    refined.sort(key=lambda r: r[0])
    return order, refined
