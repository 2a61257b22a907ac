"""Twist for general ``n, m``: near-collisions by a k-d tree, local searches, confirmation.

Steps, each a function: sample ``D_x c`` on an ``x × y`` grid of samples; pick starts (the
nearest neighbours in ``D_x c`` space among each ``x``'s ``y`` samples, scored by closeness in
``D_x c`` over distance in ``y``, plus random far-apart pairs so a curve-like image, ``m < n``,
is searched too); run the batched local searches; confirm the best results; and, without a
collision, say which sufficient condition the samples support.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ...model.verdict import Evidence, Verdict, undecided
from ...numerics import search
from ...numerics.sampling import sample_side
from .confirm import confirm_collision, failed
from .local_search import local_searches
from .setup import (CANDIDATE_RESIDUAL, CONDITION, CONFIRM_TRIES, LOCAL_STARTS, MIN_SEPARATION, SALT,
                    UNRESOLVED, VALUE_MEANING_HOLD, Setup)
from .sufficient import sufficient_b


@dataclass
class _Grid:
    """``D_x c`` and ``D²_xy c`` on every (sampled x, sampled y) pair."""
    xs: np.ndarray      # (nx, n)
    ypool: np.ndarray   # (K, m)
    P: np.ndarray       # (nx, K, n)
    M: np.ndarray       # (nx, K, n, m)
    ok: np.ndarray      # (nx, K)
    count: int
    spread: float       # s_p: RMS spread of D_x c over the y samples

    @property
    def nx(self) -> int:
        return self.xs.shape[0]

    @property
    def K(self) -> int:
        return self.ypool.shape[0]


def _sample_grid(st: Setup) -> _Grid:
    ctx, n, m = st.ctx, st.n, st.m
    nx = int(np.clip(ctx.budget // 16, 32, 256))
    K = int(np.clip(ctx.budget // 16, 64, 256))
    xs = sample_side(st.domain, "x", n, nx, ctx.seed + 1)
    ypool = sample_side(st.domain, "y", m, K, ctx.seed + 2)
    nx, K = xs.shape[0], ypool.shape[0]
    X = np.repeat(xs, K, axis=0)
    Y = np.tile(ypool, (nx, 1))
    d, ok = st.derivs(X, Y)
    P = d.dx.reshape(nx, K, n)
    ok = ok.reshape(nx, K)
    count = int(ok.sum())
    spread = 1.0
    if count:
        Pz = np.where(ok[..., None], P, 0.0)
        means = Pz.sum(axis=1) / np.maximum(ok.sum(axis=1), 1)[:, None]
        dev = np.where(ok[..., None], P - means[:, None], 0.0)
        spread = float(np.sqrt(np.sum(dev**2) / count))
        size = float(np.sqrt(np.mean(np.sum(P[ok] ** 2, axis=1))))
        if spread <= 1e-14 * max(size, 1e-300):
            spread = max(size, 1.0)  # D_x c does not depend on y at all: any two y collide
    return _Grid(xs, ypool, P, d.dxy.reshape(nx, K, n, m), ok, count, spread)


def _near_collisions(st: Setup, g: _Grid, min_sep: float) -> list[tuple]:
    """``(score, i, j, j2)``: for each sample, its best neighbour in ``D_x c`` space at the same x.

    One k-d tree serves every x: each x's points are shifted along an extra axis far beyond
    the spread, so neighbours never cross from one x to another.
    """
    rows_i, rows_j = np.nonzero(g.ok)
    Pn = g.P[rows_i, rows_j] / g.spread
    if Pn.shape[0] < 2:
        return []
    extent = float(np.max(np.abs(Pn)))
    points = np.concatenate([Pn, (rows_i * (4 * extent + 10.0))[:, None]], axis=1)
    from scipy.spatial import cKDTree  # loaded when the search runs, not when the module is imported

    dist, nb = cKDTree(points).query(points, k=min(min(8, g.K), Pn.shape[0]))
    nb = np.minimum(nb, Pn.shape[0] - 1)
    same = rows_i[nb] == rows_i[:, None]
    dy = np.linalg.norm(g.ypool[rows_j][:, None, :] - g.ypool[rows_j[nb]], axis=-1)
    with np.errstate(all="ignore"):
        score = np.where(same & (dy >= min_sep), dist / (dy / st.diam_y), np.inf)
    best = np.argmin(score, axis=1)
    sbest = score[np.arange(score.shape[0]), best]
    return [(float(sbest[t]), int(rows_i[t]), int(rows_j[t]), int(rows_j[nb[t, best[t]]]))
            for t in np.argsort(sbest, kind="stable")[: 4 * LOCAL_STARTS] if np.isfinite(sbest[t])]


def _far_pairs(st: Setup, g: _Grid, min_sep: float) -> list[tuple]:
    """Four random far-apart ``y`` pairs per ``x``, scored like the near-collisions."""
    rng = st.ctx.rng(SALT)
    ja, jb = rng.integers(0, g.K, size=(2, g.nx, 4))
    ii = np.repeat(np.arange(g.nx), 4)
    ja, jb = ja.ravel(), jb.ravel()
    dyab = np.linalg.norm(g.ypool[ja] - g.ypool[jb], axis=1)
    keep = g.ok[ii, ja] & g.ok[ii, jb] & (dyab >= min_sep)
    with np.errstate(all="ignore"):
        rscore = np.linalg.norm(g.P[ii, ja] - g.P[ii, jb], axis=1) / g.spread / (dyab / st.diam_y)
    return [(float(rscore[t]), int(ii[t]), int(ja[t]), int(jb[t])) for t in np.flatnonzero(keep & np.isfinite(rscore))]


def _choose_starts(candidates: list[tuple]) -> list[tuple]:
    """The best-scored candidates, at most two per ``x`` so the searches are spread out."""
    chosen, per_x = [], {}
    for c in sorted(candidates, key=lambda c: c[0]):
        if len(chosen) >= LOCAL_STARTS:
            break
        if per_x.get(c[1], 0) < 2:
            per_x[c[1]] = per_x.get(c[1], 0) + 1
            chosen.append(c)
    return chosen


def _search_and_confirm(st: Setup, g: _Grid, chosen: list[tuple]) -> tuple[Verdict | None, float]:
    """Local searches from the starts, then confirmation of the best; ``(verdict or None, best residual)``."""
    n, m = st.n, st.m
    starts = np.array([np.concatenate([g.xs[i], g.ypool[j], g.ypool[j2]]) for _, i, j, j2 in chosen])
    U, _ = local_searches(st, starts, g.spread)
    Xr, Y1, Y2 = U[:, :n], U[:, n: n + m], U[:, n + m:]
    dd, okd = st.derivs(np.concatenate([Xr, Xr]), np.concatenate([Y1, Y2]))
    S = U.shape[0]
    res = np.linalg.norm(dd.dx[:S] - dd.dx[S:], axis=1) / g.spread
    sep = np.linalg.norm(Y1 - Y2, axis=1)
    valid = okd[:S] & okd[S:]
    res = np.where(valid, res, np.inf)
    apart = sep >= MIN_SEPARATION * st.diam_y
    finite = res[apart & valid]
    best_res = float(np.min(finite)) if finite.size else float("nan")
    details = {"x_samples": g.nx, "y_samples": g.K, "local_searches": len(chosen)}
    unresolved = None
    tries = 0
    for s in np.argsort(np.where(apart, res, np.inf), kind="stable"):
        if tries >= CONFIRM_TRIES or not (apart[s] and res[s] < CANDIDATE_RESIDUAL):
            break
        tries += 1
        w, status = confirm_collision(st, Xr[s], Y1[s], Y2[s], g.spread)
        if w is not None:
            return failed(st, w, "y ↦ D_x c(x, y) is not injective: two distinct y with the same D_x c, "
                                 "found by a local search", g.count, details), best_res
        if status == "unresolved" and res[s] < UNRESOLVED:
            unresolved = (float(res[s]), Xr[s], Y1[s], Y2[s])
    if unresolved is None:
        return None, best_res
    r0, xu, yu, ypu = unresolved
    where = {"x": xu.tolist(), "y": yu.tolist(), "y_prime": ypu.tolist()}
    return Verdict(CONDITION, "undecided",
                   Evidence("undecided", f"a collision to float precision (residual {r0:.3g} relative to the "
                            f"spread of D_x c) at {where} could be neither confirmed in high precision nor "
                            "shown to be a non-zero minimum", samples=g.count, details={**details, "where": where}),
                   value=r0, value_meaning=VALUE_MEANING_HOLD), best_res


def _holds(st: Setup, g: _Grid, searches: int, best_res: float) -> Verdict:
    """No collision: which sufficient condition the samples support, as sampled evidence."""
    name, margin = sufficient_b(st, g.xs, g.ypool, g.M, g.ok)
    if name is not None:
        suff = (f"sufficient condition (b) holds on the samples: Y convex and the symmetric part of Q·D²_xy c(x, ·) "
                f"positive definite with {name} (smallest λ_min(sym QM)/|QM|_F {margin:.3g})")
    else:
        suff = "no sufficient condition applies" if not search.region_is_convex(st.domain, "y") else \
            "sufficient condition (b) was tried (Q = ±I, Q = M(x, y_c)⁺) and is not met on the samples"
    summary = (f"no collision found in {g.nx} x-samples × {g.K} y-samples and {searches} local searches; {suff}: "
               "evidence, not proof")
    lo_y, hi_y = st.domain.y.bounds()
    resolution = float((np.prod(hi_y - lo_y) / max(g.K, 1)) ** (1.0 / st.m))
    return Verdict(CONDITION, "holds",
                   Evidence("sampled", summary, samples=g.count, resolution=resolution, details={
                       "x_samples": g.nx, "y_samples": g.K, "local_searches": searches, "sufficient_condition": suff,
                       "min_collision_residual": best_res}),
                   value=best_res if np.isfinite(best_res) else None, value_meaning=VALUE_MEANING_HOLD)


def check_general(st: Setup) -> Verdict:
    g = _sample_grid(st)
    if g.count == 0:
        return undecided(CONDITION, "D_x c is undefined on every sampled pair")
    min_sep = 0.05 * st.diam_y
    chosen = _choose_starts(_near_collisions(st, g, min_sep) + _far_pairs(st, g, min_sep))
    best_res = float("nan")
    if chosen:
        verdict, best_res = _search_and_confirm(st, g, chosen)
        if verdict is not None:
            return verdict
    return _holds(st, g, len(chosen), best_res)
