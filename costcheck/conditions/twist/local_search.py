"""The local collision search of the general twist check: batched least squares over ``(x, y, y')``.

The residual is ``(D_x c(x, y) - D_x c(x, y')) / s_p`` with a penalty keeping ``|y - y'|``
at least half its starting value, plus the ball penalties of the domain; all starts share
one derivative evaluation per step (:func:`search.batched_least_squares`).
"""

from __future__ import annotations

import numpy as np

from ...numerics import search
from .setup import MIN_SEPARATION, Setup


def local_searches(st: Setup, starts: np.ndarray, spread: float) -> tuple[np.ndarray, np.ndarray]:
    """Batched least squares over (x, y, y') from each start row; returns the results and residuals."""
    n, m = st.n, st.m
    q = n + 2 * m
    lo_x, hi_x = search.box_bounds(st.domain.x)
    lo_y, hi_y = search.box_bounds(st.domain.y)
    lower = np.concatenate([lo_x, lo_y, lo_y])
    upper = np.concatenate([hi_x, hi_y, hi_y])
    h = 1e-7 * st.width_x
    E = np.diag(h)
    sep0 = np.linalg.norm(starts[:, n: n + m] - starts[:, n + m:], axis=1)
    delta = np.maximum(0.5 * sep0, 2 * MIN_SEPARATION * st.diam_y)

    def model(U):
        S = U.shape[0]
        X, Y1, Y2 = U[:, :n], U[:, n: n + m], U[:, n + m:]
        Xs = np.concatenate([X[:, None], X[:, None] + E, X[:, None] - E], axis=1)  # (S, 2n+1, n)
        xs = np.concatenate([Xs, Xs], axis=1).reshape(-1, n)
        ys = np.concatenate([np.repeat(Y1[:, None], 2 * n + 1, axis=1),
                             np.repeat(Y2[:, None], 2 * n + 1, axis=1)], axis=1).reshape(-1, m)
        d, ok = st.derivs(xs, ys)
        k = 2 * n + 1
        DX = d.dx.reshape(S, 2, k, n)
        MX = d.dxy.reshape(S, 2, k, n, m)
        okr = ok.reshape(S, 2, k)
        diff = (DX[:, 0] - DX[:, 1]) / spread  # (S, k, n)
        sep = np.linalg.norm(Y1 - Y2, axis=1)
        pen = np.maximum(delta - sep, 0.0) / delta
        bx, gx = search.ball_penalty(st.domain.x, X)
        b1, g1 = search.ball_penalty(st.domain.y, Y1)
        b2, g2 = search.ball_penalty(st.domain.y, Y2)
        r = np.concatenate([diff[:, 0], pen[:, None], bx[:, None], b1[:, None], b2[:, None]], axis=1)
        J = np.zeros((S, n + 4, q))
        both = okr[:, :, 1: n + 1] & okr[:, :, n + 1:]
        jx = (diff[:, 1: n + 1] - diff[:, n + 1:]) / (2 * h[None, :, None])  # (S, i, n)
        J[:, :n, :n] = np.transpose(np.where(np.all(both, axis=1)[:, :, None], jx, 0.0), (0, 2, 1))
        J[:, :n, n: n + m] = MX[:, 0, 0] / spread
        J[:, :n, n + m:] = -MX[:, 1, 0] / spread
        with np.errstate(all="ignore"):
            u = np.where(sep[:, None] > 0, (Y1 - Y2) / sep[:, None], 0.0)
        active = (pen > 0)[:, None]
        J[:, n, n: n + m] = np.where(active, -u / delta[:, None], 0.0)
        J[:, n, n + m:] = np.where(active, u / delta[:, None], 0.0)
        J[:, n + 1, :n] = gx
        J[:, n + 2, n: n + m] = g1
        J[:, n + 3, n + m:] = g2
        okk = okr[:, 0, 0] & okr[:, 1, 0] & np.all(np.isfinite(r), axis=1) & np.all(np.isfinite(J), axis=(1, 2))
        return np.where(np.isfinite(r), r, 0.0), np.where(np.isfinite(J), J, 0.0), okk

    U, cost = search.batched_least_squares(model, starts, lower, upper, iterations=60)
    for i in range(U.shape[0]):
        U[i, :n] = search.clip_into(st.domain.x, U[i, :n])
        U[i, n: n + m] = search.clip_into(st.domain.y, U[i, n: n + m])
        U[i, n + m:] = search.clip_into(st.domain.y, U[i, n + m:])
    return U, cost
