"""Certified collisions of a map at fixed other coordinates: the refutation of a twist-type condition
of a generating function (``g_twist``: ``(y, z) ↦ (G_x, G)`` at fixed ``x``; ``g_dual_twist``:
``x ↦ G_y / G_z`` at fixed ``(y, z)``).

A floating-point search (:mod:`costcheck.conditions.engines.collision`) reports two points ``w₁ ≠ w₀``
of the free coordinates with ``F(w₁) ≈ F(w₀)``.  Here the claim is proved.  ``w₁`` and the fixed
part are taken as the exact binary rationals the report prints, and the target ``t = F(w₁)`` is
enclosed in ball arithmetic (arb, 128 bits).  The second point is polished by Newton steps in
balls' midpoints, then Krawczyk's test (R. Krawczyk, Computing 4, 1969; R. E. Moore, SIAM J.
Numer. Anal. 14, 1977 — both recalled from memory; Moore–Kearfott–Cloud, *Introduction to
Interval Analysis*, SIAM 2009, §8.2) runs on a small box ``B`` around it:

    K(B) = m − Y (F(m) − t) + (I − Y J(B)) (B − m),   Y ≈ J(m)⁻¹ (a float inverse),

with ``J(B)`` an enclosure of the Jacobian of ``F`` over ``B``.  If ``K(B) ⊂ int B``, then for every
``t`` in its ball (so for the exact ``F(w₁)``) ``F(w) = t`` has exactly one solution ``w*`` in ``B``.
If moreover ``w₁ ∉ B`` (certified by balls) and ``B`` and ``w₁`` lie certifiably inside the domain
(:class:`.region.Locator`, with the fixed part), then ``w* ≠ w₁`` are two points of the domain with
one image: the map is not one-to-one.  The test needs as many equations as free coordinates
(``n = m``); otherwise nothing is certified.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from flint import arb

from . import balls
from .arb_eval import compile_exprs
from .region import Locator

BITS = 128
#: half-widths of the box tried around the second point, relative to its distance from the first
RELATIVE_RADII = (1e-14, 1e-11, 1e-8, 1e-6)


@dataclass(frozen=True)
class CertifiedCollision:
    second: list[float]  # the box's centre (free coordinates), a float rounding of the exact midpoint
    radius: float  # a bound on the distance, in every coordinate, from ``second`` to the exact partner
    text: str  # what was certified, in words


def certify_collision(domain, n: int, exprs, variables, free, first, second):
    """``(CertifiedCollision, None)`` when a Krawczyk box around ``second`` proves a collision partner
    of ``first`` (full coordinate vectors; ``free`` the indices the map runs over), else
    ``(None, reason)``."""
    free = [int(i) for i in free]
    if len(exprs) != len(free):
        return None, (f"the existence test needs as many equations as unknowns ({len(exprs)} equations, "
                      f"{len(free)} free coordinates)")
    first, second = np.asarray(first, dtype=float), np.asarray(second, dtype=float)
    fn = compile_exprs(tuple(exprs), tuple(variables))
    locator = Locator(domain, n)
    with balls.precision(BITS):
        if locator.classify(first, first) != "inside":
            return None, "the first point is not certified inside the domain"
        target = fn([arb(float(v)) for v in first])
        if not all(t.is_finite() for t in target):
            return None, "the map has no enclosure at the first point"
        centre = _polish(fn, first, free, second, target)
        if centre is None:
            return None, "Newton's method from the second point failed (the map's Jacobian singular or undefined there)"
        distance = float(np.max(np.abs(second[free] - first[free])))
        for rel in RELATIVE_RADII:
            found = _krawczyk(fn, locator, first, free, centre, rel * distance, target)
            if found is not None:
                return found, None
    return None, "no box around the second point passed Krawczyk's test (the collision may be degenerate)"


def _inputs(first, free, moving) -> list:
    """Input balls: the fixed coordinates as the exact values of ``first``, the free ones ``moving``."""
    values = [arb(float(v)) for v in first]
    for i, b in zip(free, moving):
        values[i] = b
    return values


def _jacobian(fn, first, free, moving):
    values, gradients = fn.with_gradients(_inputs(first, free, moving))
    return values, [[row[j] for j in free] for row in gradients]


def _float_inverse(J) -> np.ndarray | None:
    mid = np.array([[float(v.mid()) for v in row] for row in J])
    if not np.all(np.isfinite(mid)):
        return None
    try:
        return np.linalg.inv(mid)
    except np.linalg.LinAlgError:
        return None


def _polish(fn, first, free, second, target, steps: int = 6):
    """Newton steps on ``F(w) = t`` from the second point in ball midpoints (exact binary centres)."""
    m = [arb(float(second[i])) for i in free]
    for _ in range(steps):
        values, J = _jacobian(fn, first, free, m)
        Y = _float_inverse(J)
        if Y is None or not all(v.is_finite() for v in values):
            return None
        residual = [v - t for v, t in zip(values, target)]
        m = [arb((m[k] - sum((arb(float(Y[k, i])) * residual[i] for i in range(len(m))), arb(0))).mid())
             for k in range(len(m))]
    return m


def _krawczyk(fn, locator, first, free, centre, radius, target):
    q = len(free)
    box = [arb(c.mid(), radius) for c in centre]
    if not any(balls.excludes_zero(arb(float(first[i])) - b) for i, b in zip(free, box)):
        return None  # the box may hold the first point itself
    lo, hi = first.copy(), first.copy()
    lo[free] = [balls.lower(b) for b in box]
    hi[free] = [balls.upper(b) for b in box]
    if locator.classify(lo, hi) != "inside":
        return None
    values, J_mid = _jacobian(fn, first, free, centre)
    _, J_box = _jacobian(fn, first, free, box)
    Y = _float_inverse(J_mid)
    if Y is None or not all(v.is_finite() for v in values) or not all(v.is_finite() for row in J_box for v in row):
        return None
    Yb = [[arb(float(v)) for v in row] for row in Y]
    residual = [v - t for v, t in zip(values, target)]
    offset = [b - c for b, c in zip(box, centre)]
    for k in range(q):
        value = centre[k] - sum((Yb[k][i] * residual[i] for i in range(q)), arb(0))
        for j in range(q):
            coefficient = (1 if k == j else 0) - sum((Yb[k][i] * J_box[i][j] for i in range(q)), arb(0))
            value = value + coefficient * offset[j]
        if not (value.is_finite() and value.lower() > box[k].lower() and value.upper() < box[k].upper()):
            return None
    second = [float(c.mid()) for c in centre]
    # how far the printed (float) centre is from any point of the box, outward rounded
    reach = max(balls.upper(balls.ball_abs(arb(s) - b)) for s, b in zip(second, box))
    text = (f"Krawczyk's test passed (arb, {BITS} bits) on the box of half-width {radius:.3g} around "
            f"{[round(v, 12) for v in second]}: it holds exactly one solution of F(w) = F(w₁), F the map at the "
            "first point's fixed coordinates and w₁ its exact binary value; the box excludes w₁ and, with w₁, lies "
            "inside the domain, so two distinct points have one image")
    return CertifiedCollision(second, reach, text)
