"""The search for two distinct points with the same image under a map at fixed other coordinates:
the twist-type conditions of a generating function (``g_twist``, ``g_dual_twist``).

Points are full coordinate vectors ``(x, y, z)``; ``free`` lists the coordinates the map's
argument runs over, the others are fixed (taken from the shared sample).  For each fixed part
a scrambled Sobol set of free parts inside the domain is mapped; nearest neighbours in the
image (coordinates scaled by their spread) that are far apart in the argument are candidates;
all are refined together by a batched, bounded Levenberg–Marquardt iteration on
``F(w') = F(w)`` from the neighbour (:func:`costcheck.numerics.search.batched_least_squares`).  A
refined pair with image distance at rounding level and argument distance well above it is a
collision *in floating point*: this module does not prove that an exact collision exists
(:mod:`costcheck.certify.collisions` does, or leaves the verdict undecided).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree
from scipy.stats import qmc

from ...derivatives.differentiate import diff
from ...numerics.search import batched_least_squares
from . import generating as gen

#: fixed parts tried, free points per fixed part, candidates refined per fixed part
FIXED, FREE, CANDIDATES = 16, 512, 2


@dataclass(frozen=True)
class Collision:
    w: np.ndarray  # the first point (full coordinates)
    w2: np.ndarray  # the second point: same fixed part, same image to the residual
    residual: float  # scale-free image distance after refinement
    separation: float  # scale-free argument distance


@dataclass(frozen=True)
class Outcome:
    tried: int  # points mapped
    fixed: int  # fixed parts used
    closest: float  # smallest scale-free image-to-argument distance ratio seen among samples
    collision: Collision | None


def _free_points(ctx, cost, free, count, rng):
    lx, ux = cost.domain.x.bounds()
    ly, uy = cost.domain.y.bounds()
    lower, upper = np.concatenate([lx, ly])[free], np.concatenate([ux, uy])[free]
    unit = qmc.Sobol(d=len(free), scramble=True, seed=rng).random_base2(int(np.log2(count)))
    return qmc.scale(unit, lower, upper), lower, upper


def search(ctx, exprs, free, salt: int) -> Outcome:
    """Look for ``F(w) = F(w')``, ``w ≠ w'``, with ``F = exprs`` over the ``free`` coordinates."""
    cost, exprs = ctx.cost, tuple(exprs)
    free = np.asarray(free)
    rng = ctx.rng(salt)
    base = gen.sample_points(ctx)
    fixed_rows = base[rng.choice(base.shape[0], size=min(FIXED, base.shape[0]), replace=False)]
    W, lower, upper = _free_points(ctx, cost, free, FREE, rng)
    width = np.where(upper > lower, upper - lower, 1.0)
    tried, closest, n = 0, np.inf, cost.n
    firsts, starts, spreads = [], [], []
    for row in fixed_rows:
        P = np.repeat(row[None], W.shape[0], axis=0)
        P[:, free] = W
        P = P[cost.domain.contains_pairs(P[:, :n], P[:, n:])]
        F = gen.evaluate_many(cost, exprs, P) if P.shape[0] else np.empty((0, len(exprs)))
        ok = np.all(np.isfinite(F), axis=1)
        P, F = P[ok], F[ok]
        if P.shape[0] < 3:
            continue
        tried += P.shape[0]
        spread = np.where(np.ptp(F, axis=0) > 0, np.ptp(F, axis=0), 1.0)
        dist, idx = cKDTree(F / spread).query(F / spread, k=2)
        apart = np.linalg.norm((P[idx[:, 1]][:, free] - P[:, free]) / width, axis=1)
        ratio = dist[:, 1] / np.maximum(apart, 1e-300)
        closest = min(closest, float(np.min(ratio)))
        for i in np.argsort(ratio)[:CANDIDATES]:
            firsts.append(P[i]), starts.append(P[idx[i, 1]]), spreads.append(spread)
    found = _refine(cost, exprs, free, firsts, starts, spreads, lower, upper, width) if firsts else None
    return Outcome(tried, len(fixed_rows), closest, found)


def _refine(cost, exprs, free, firsts, starts, spreads, lower, upper, width) -> Collision | None:
    """Solve ``F(w') = F(w)`` from each neighbour ``start`` at once (a batched Levenberg–Marquardt
    with the exact Jacobian of ``F`` in the free coordinates); the first pair, in the order of
    the candidates, that meets at rounding level while far apart is the collision."""
    W, S, spread = np.array(firsts), np.array(starts), np.array(spreads)
    targets = gen.evaluate_many(cost, exprs, W)
    variables = gen.symbols(cost)
    jacobian = tuple(diff(e, variables[j]) for e in exprs for j in free)
    k, q = len(exprs), len(free)

    def model(V):
        P = W.copy()
        P[:, free] = V
        r = (gen.evaluate_many(cost, exprs, P) - targets) / spread
        J = gen.evaluate_many(cost, jacobian, P).reshape(-1, k, q) / spread[:, :, None]
        ok = np.all(np.isfinite(r), axis=1) & np.all(np.isfinite(J), axis=(1, 2))
        return np.where(np.isfinite(r), r, 0.0), np.where(np.isfinite(J), J, 0.0), ok

    V, squares = batched_least_squares(model, np.clip(S[:, free], lower, upper), lower, upper, iterations=60)
    n = cost.n
    for i in range(W.shape[0]):
        w2 = W[i].copy()
        w2[free] = V[i]
        res = float(np.sqrt(squares[i]))
        sep = float(np.linalg.norm((V[i] - W[i, free]) / width))
        if res < 1e-10 and sep > 1e-4 and cost.domain.contains_pairs(w2[None, :n], w2[None, n:])[0]:
            return Collision(W[i], w2, res, sep)
    return None
