"""The search for two distinct points with the same image under a map at fixed other coordinates:
the twist-type conditions of a generating function (``g_twist``, ``g_dual_twist``).

Points are full coordinate vectors ``(x, y, z)``; ``free`` lists the coordinates the map's
argument runs over, the others are fixed (taken from the shared sample).  For each fixed part
a scrambled Sobol set of free parts inside the domain is mapped; nearest neighbours in the
image (coordinates scaled by their spread) that are far apart in the argument are candidates;
each is refined by SciPy's bounded least squares on ``F(w') = F(w)`` from the neighbour.  A
refined pair with image distance at rounding level and argument distance well above it is a
collision *in floating point*: this module does not prove that an exact collision exists.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import least_squares
from scipy.spatial import cKDTree
from scipy.stats import qmc

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
    cost = ctx.cost
    free = np.asarray(free)
    rng = ctx.rng(salt)
    base = gen.sample_points(ctx)
    fixed_rows = base[rng.choice(base.shape[0], size=min(FIXED, base.shape[0]), replace=False)]
    W, lower, upper = _free_points(ctx, cost, free, FREE, rng)
    width = np.where(upper > lower, upper - lower, 1.0)
    tried, closest, n = 0, np.inf, cost.n
    for row in fixed_rows:
        P = np.repeat(row[None], W.shape[0], axis=0)
        P[:, free] = W
        P = P[cost.domain.contains_pairs(P[:, :n], P[:, n:])]
        F = np.stack([gen.evaluate(cost, e, P) for e in exprs], axis=1) if P.shape[0] else np.empty((0, len(exprs)))
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
            found = _refine(cost, exprs, free, P[i], P[idx[i, 1]], lower, upper, spread, width)
            if found is not None:
                return Outcome(tried, len(fixed_rows), closest, found)
    return Outcome(tried, len(fixed_rows), closest, None)


def _refine(cost, exprs, free, w, start, lower, upper, spread, width) -> Collision | None:
    target = np.array([gen.evaluate(cost, e, w[None])[0] for e in exprs])

    def residual(v):
        p = w.copy()
        p[free] = v
        out = np.array([gen.evaluate(cost, e, p[None])[0] for e in exprs]) - target
        return np.where(np.isfinite(out), out, 1e6) / spread

    try:
        fit = least_squares(residual, np.clip(start[free], lower, upper), bounds=(lower, upper),
                            xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=200)
    except ValueError:
        return None
    w2 = w.copy()
    w2[free] = fit.x
    res = float(np.linalg.norm(fit.fun))
    sep = float(np.linalg.norm((fit.x - w[free]) / width))
    n = cost.n
    if res < 1e-10 and sep > 1e-4 and cost.domain.contains_pairs(w2[None, :n], w2[None, n:])[0]:
        return Collision(w, w2, res, sep)
    return None
