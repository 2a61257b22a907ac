"""Batched local search in a cost's domain: which points are usable, box and ball constraints, and a
batched Levenberg–Marquardt least-squares solver that never leaves the domain.

Arrays in, arrays out: nothing here reads a check's context or builds a verdict."""

from __future__ import annotations

from typing import Callable

import numpy as np

from ..derivatives import Derivatives
from ..model.domain import Ball, Box


def usable(domain, derivs: Derivatives, xs, ys) -> np.ndarray:
    """Pairs inside the domain where every evaluated derivative is finite."""
    return domain.contains_pairs(np.atleast_2d(xs), np.atleast_2d(ys)) & derivs.defined


def region_diameter(region) -> float:
    lo, hi = region.bounds()
    return float(np.linalg.norm(hi - lo))


def region_is_convex(domain, side: str) -> bool:
    """A box or a ball with no ``where`` constraint on that side and no ``pairs`` constraint."""
    region = domain.x if side == "x" else domain.y
    extra = domain.where_x if side == "x" else domain.where_y
    return isinstance(region, (Box, Ball)) and not extra and not domain.pairs


def box_bounds(region) -> tuple[np.ndarray, np.ndarray]:
    """Bounds for a box; infinite bounds for a ball (kept inside by a penalty instead)."""
    lo, hi = region.bounds()
    if isinstance(region, Box):
        return lo, hi
    return np.full_like(lo, -np.inf), np.full_like(hi, np.inf)


def ball_penalty(region, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``max(|p - c| - R, 0) / R`` per row and its gradient, for a ball (zeros for a box).

    Local searches keep a ball's points inside with this penalty (a box is kept by bounds).
    """
    points = np.atleast_2d(points)
    if not isinstance(region, Ball):
        return np.zeros(points.shape[0]), np.zeros_like(points)
    c = np.asarray(region.center, float)
    diff = points - c
    dist = np.linalg.norm(diff, axis=1)
    out = np.maximum(dist - region.radius, 0.0) / region.radius
    with np.errstate(all="ignore"):
        grad = np.where((out > 0)[:, None], diff / (dist[:, None] * region.radius), 0.0)
    return out, grad


def clip_into(region, point: np.ndarray) -> np.ndarray:
    """The nearest point of the region's box or ball (no ``where`` constraints)."""
    p = np.asarray(point, float).copy()
    if isinstance(region, Box):
        lo, hi = region.bounds()
        return np.clip(p, lo, hi)
    c = np.asarray(region.center, float)
    d = np.linalg.norm(p - c)
    return c + (p - c) * (region.radius / d) if d > region.radius else p


def batched_least_squares(
    model: Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray]],
    U0: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    *,
    iterations: int = 60,
    tol: float = 1e-30,
):
    """Levenberg–Marquardt on many starts at once, kept inside bounds by projection.

    ``model(U)`` takes ``(S, q)`` parameter rows and returns residuals ``(S, p)``,
    Jacobians ``(S, p, q)`` and a mask of rows where both are finite.  Every iteration
    makes one ``model`` call for all starts (one batched derivative evaluation), which
    is what keeps a few dozen local searches within a fraction of a second; the damping
    follows Marquardt (SIAM J. Appl. Math. 11, 1963) with the diagonal scaling of
    Moré ("The Levenberg–Marquardt algorithm: implementation and theory", 1978).
    Returns the final parameters ``(S, q)`` and their squared residual norms ``(S,)``.
    """
    U = np.clip(np.array(U0, dtype=float), lower, upper)
    r, J, ok = model(U)
    cost = np.where(ok, np.sum(r * r, axis=1), np.inf)
    lam = np.full(U.shape[0], 1e-3)
    q = U.shape[1]
    eye = np.eye(q)
    for _ in range(iterations):
        active = ok & (cost > tol) & (lam < 1e12)
        if not active.any():
            break
        JT = np.transpose(J, (0, 2, 1))
        JTJ = JT @ J
        g = np.einsum("spq,sp->sq", J, r)
        diag = np.einsum("sqq->sq", JTJ)
        D = np.maximum(diag, 1e-12 * np.maximum(diag.max(axis=1, keepdims=True), 1e-300))
        A = JTJ + lam[:, None, None] * (D[:, :, None] * eye)
        A = np.where(np.isfinite(A), A, 0.0) + 1e-300 * eye
        try:
            step = -np.linalg.solve(A, g[:, :, None])[:, :, 0]
        except np.linalg.LinAlgError:
            step = -np.stack([np.linalg.lstsq(a, b, rcond=None)[0] for a, b in zip(A, g)])
        step = np.where(active[:, None] & np.isfinite(step), step, 0.0)
        trial = np.clip(U + step, lower, upper)
        r2, J2, ok2 = model(trial)
        cost2 = np.where(ok2, np.sum(r2 * r2, axis=1), np.inf)
        better = active & ok2 & (cost2 < cost)
        U[better], r[better], J[better], cost[better] = trial[better], r2[better], J2[better], cost2[better]
        lam = np.where(better, np.maximum(lam / 3.0, 1e-12), np.where(active, lam * 4.0, lam))
        stalled = active & ~better & (np.max(np.abs(step), axis=1) <= 1e-15 * (1 + np.max(np.abs(U), axis=1)))
        lam = np.where(stalled, 1e13, lam)
    return U, cost


def strict_constraints(domain):
    """``(constraint, side)`` for every strict inequality ``g > 0`` of the domain."""
    out = [(c, "x") for c in domain.where_x if c.inequality.strict]
    out += [(c, "y") for c in domain.where_y if c.inequality.strict]
    out += [(c, "pairs") for c in domain.pairs if c.inequality.strict]
    return out


def constraint_values(constraint, side, xs, ys) -> np.ndarray:
    pts = xs if side == "x" else ys if side == "y" else np.concatenate([xs, ys], axis=1)
    with np.errstate(all="ignore"):
        g = np.asarray(constraint._evaluate(*pts.T), dtype=float)
    return np.broadcast_to(g, pts.shape[:1])


def batched_descent(f, z0: np.ndarray, lower: np.ndarray, upper: np.ndarray, *, step: float = 0.05,
                    iterations: int = 30, min_step: float = 1e-7):
    """Minimise ``f`` from ``K`` starts at once inside the box ``[lower, upper]``.

    ``f`` maps points ``(P, D)`` to values ``(P,)`` and returns ``+inf`` where a point is not
    admissible (outside the domain, undefined), so such steps are rejected.  Each iteration
    costs two batched calls of ``f``: a finite-difference gradient (central where both sides
    are admissible, one-sided otherwise), then four step lengths along the scaled steepest-descent
    direction; the best improving one is taken and the step adapts (it shrinks eightfold when
    none improves).  Coordinates are scaled by the box widths.  Returns ``(z, f(z), evaluations)``.
    """
    z = np.array(z0, dtype=float)
    K, D = z.shape
    width = np.where(upper > lower, upper - lower, 1.0)
    fz = np.asarray(f(z), dtype=float)
    evaluations = K
    h = np.full(K, float(step))
    factors = np.array([2.0, 1.0, 0.5, 0.125])
    eye = np.eye(D)
    for _ in range(iterations):
        act = np.flatnonzero((h > min_step) & np.isfinite(fz))
        if act.size == 0:
            break
        za, ha = z[act], h[act]
        delta = (0.1 * ha)[:, None] * width[None, :]  # (A, D)
        plus = np.clip(za[:, None, :] + delta[:, None, :] * eye, lower, upper)
        minus = np.clip(za[:, None, :] - delta[:, None, :] * eye, lower, upper)
        vals = np.asarray(f(np.concatenate([plus, minus], axis=1).reshape(-1, D)), dtype=float)
        evaluations += vals.size
        vals = vals.reshape(act.size, 2, D)
        fp, fm = vals[:, 0], vals[:, 1]
        dp = np.einsum("adk,dk->ad", plus - za[:, None, :], eye) / width  # scaled actual steps (clipping)
        dm = np.einsum("adk,dk->ad", za[:, None, :] - minus, eye) / width
        f0 = fz[act][:, None]
        okp, okm = np.isfinite(fp) & (dp > 0), np.isfinite(fm) & (dm > 0)
        with np.errstate(all="ignore"):
            central = (fp - fm) / (dp + dm)
            fwd = (fp - f0) / dp
            bwd = (f0 - fm) / dm
        g = np.where(okp & okm, central, np.where(okp, fwd, np.where(okm, bwd, 0.0)))
        g = np.where(np.isfinite(g), g, 0.0)
        gn = np.linalg.norm(g, axis=1)
        direction = -g / np.where(gn > 0, gn, 1.0)[:, None]
        lengths = ha[:, None] * factors[None, :]  # (A, 4)
        trial = np.clip(za[:, None, :] + lengths[..., None] * direction[:, None, :] * width, lower, upper)
        tv = np.asarray(f(trial.reshape(-1, D)), dtype=float).reshape(act.size, factors.size)
        evaluations += tv.size
        tv = np.where(np.isfinite(tv), tv, np.inf)
        k = np.argmin(tv, axis=1)
        rows = np.arange(act.size)
        better = (tv[rows, k] < fz[act]) & (gn > 0)
        z[act] = np.where(better[:, None], trial[rows, k], za)
        fz[act] = np.where(better, tv[rows, k], fz[act])
        h[act] = np.where(better, np.minimum(lengths[rows, k] * 1.5, 0.25), ha / 8)
    return z, fz, evaluations
