"""Sufficient condition (b) for twist on the samples.

With ``Y`` convex, ``(y - y')ᵀ Q (D_x c(x, y) - D_x c(x, y')) = ∫₀¹ (y - y')ᵀ Q M(x, y_t)(y - y') dt``
along the segment ``y_t`` from ``y'`` to ``y`` (the fundamental theorem of calculus), so a
``Q`` per ``x`` making the symmetric part of ``Q M(x, ·)`` definite rules collisions out.
Tried: ``Q = ±I`` (``n = m``) and ``Q = M(x, y_c)⁺`` with ``y_c`` the centre of ``Y``.
"""

from __future__ import annotations

import numpy as np

from ...model.domain import Ball
from ...numerics import search
from .setup import Setup


def sufficient_b(st: Setup, xs, Ys, M, ok) -> tuple[str | None, float]:
    """Sufficient condition (b) on the samples; returns (description or None, best scale-free margin)."""
    if not search.region_is_convex(st.domain, "y"):
        return None, float("nan")
    n, m = st.n, st.m
    nx = xs.shape[0]
    yc = np.asarray(st.domain.y.center if isinstance(st.domain.y, Ball)
                    else 0.5 * (np.asarray(st.domain.y.lower) + np.asarray(st.domain.y.upper)), float)
    dc, okc = st.derivs(xs, np.repeat(yc[None], nx, axis=0))
    Qs = {}
    if n == m:
        Qs["Q = I"] = np.broadcast_to(np.eye(n), (nx, n, n))
        Qs["Q = -I"] = np.broadcast_to(-np.eye(n), (nx, n, n))
    if okc.all():
        with np.errstate(all="ignore"):
            try:
                Qs["Q = M(x, y_c)⁺ (y_c the centre of Y, one Q per x)"] = np.linalg.pinv(dc.dxy)
            except np.linalg.LinAlgError:
                pass
    best_name, best_margin = None, -np.inf
    for name, Q in Qs.items():
        QM = np.einsum("xmn,xknl->xkml", Q, M)  # (nx, K, m, m)
        sym = 0.5 * (QM + np.swapaxes(QM, -1, -2))
        valid = ok & np.all(np.isfinite(sym), axis=(-1, -2))
        if not valid.any():
            continue
        lam = np.linalg.eigvalsh(np.where(valid[..., None, None], sym, 0.0))
        norm = np.sqrt(np.sum(np.where(valid[..., None, None], QM, 0.0) ** 2, axis=(-2, -1)))
        with np.errstate(all="ignore"):
            margin = np.where(valid & (norm > 0), lam[..., 0] / norm, np.inf)
        value = float(np.min(margin))
        if value > best_margin:
            best_name, best_margin = name, value
    if best_name is not None and best_margin > 0:
        return best_name, best_margin
    return None, best_margin
