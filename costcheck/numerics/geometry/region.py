"""One side of a domain seen from a fixed point of the other side: membership, distance, boundary.

For c-convexity the relevant target set is ``Y_x = {y ∈ Y : (x, y) satisfies every pairs
constraint}`` (and ``X_y`` symmetrically): a ``pairs`` constraint such as ``|x - y|² >= 0.04``
cuts a hole into ``Y`` that moves with ``x``.  :class:`Section` answers, row by row for given
partner points, whether a point lies in that section and how far outside it is, and
produces boundary-focused samples of it (points on the faces and corners of a box, on the
sphere of a ball, and on the zero sets of ``where`` / ``pairs`` constraints, found by
bisection between inside and outside points; the inside end of each bracket is kept, so
every boundary sample lies in the set).

Distances outside are first-order estimates: exact for a box or a ball, ``-g / |∇g|`` for a
constraint ``g >= 0`` (gradient by central differences), the largest over all parts.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import product

import mpmath
import numpy as np
import sympy as sp

from ...model.domain import Box, Domain
from ...errors import UsageError


def _constraint_values(constraint, points: np.ndarray) -> np.ndarray:
    with np.errstate(all="ignore"):
        g = np.asarray(constraint._evaluate(*points.T), dtype=float)
    return np.broadcast_to(g, points.shape[:1]).astype(float)


@dataclass(frozen=True)
class Section:
    """Side ``side`` ("x" or "y") of ``domain``, cut by the pairs constraints at given partners."""

    domain: Domain
    side: str

    def __post_init__(self):
        if self.side not in ("x", "y"):
            raise UsageError(f"a domain side is 'x' or 'y', not {self.side!r}")

    @property
    def region(self):
        return self.domain.x if self.side == "x" else self.domain.y

    @property
    def constraints(self):
        return self.domain.where_x if self.side == "x" else self.domain.where_y

    @property
    def dim(self) -> int:
        return self.region.dim

    def diameter(self) -> float:
        lo, hi = self.region.bounds()
        return float(np.linalg.norm(hi - lo)) or 1.0

    def _joint(self, points, partners):
        return np.concatenate([partners, points], axis=1) if self.side == "y" else \
            np.concatenate([points, partners], axis=1)

    def contains(self, points: np.ndarray, partners: np.ndarray) -> np.ndarray:
        points, partners = np.atleast_2d(points), np.atleast_2d(partners)
        partners = np.broadcast_to(partners, (points.shape[0], partners.shape[1]))
        xs, ys = (partners, points) if self.side == "y" else (points, partners)
        return self.domain.contains_pairs(xs, ys)

    def parts(self):
        """``(label, kind, object)`` for the region and every constraint that cuts this side."""
        out = [("region", "region", self.region)]
        out += [(c.inequality.text, "where", c) for c in self.constraints]
        out += [(c.inequality.text, "pairs", c) for c in self.domain.pairs]
        return out

    def violations(self, points: np.ndarray, partners: np.ndarray) -> np.ndarray:
        """``(N, parts)``: estimated distance outside each part (``<= 0`` inside, NaN undefined → inf)."""
        points, partners = np.atleast_2d(points), np.atleast_2d(partners)
        partners = np.broadcast_to(partners, (points.shape[0], partners.shape[1]))
        cols = []
        for _, kind, obj in self.parts():
            if kind == "region":
                cols.append(_region_excess(obj, points))
                continue
            cols.append(self._constraint_excess(obj, kind, points, partners))
        out = np.stack(cols, axis=1)
        return np.where(np.isnan(out), np.inf, out)

    def _constraint_excess(self, constraint, kind, points, partners):
        def g_of(p):
            return _constraint_values(constraint, p if kind == "where" else self._joint(p, partners))

        g = g_of(points)
        h = 1e-6 * self.diameter()
        grad = np.zeros_like(points)
        for j in range(points.shape[1]):
            e = np.zeros(points.shape[1])
            e[j] = h
            grad[:, j] = (g_of(points + e) - g_of(points - e)) / (2 * h)
        size = np.linalg.norm(grad, axis=1)
        with np.errstate(all="ignore"):
            excess = np.where(size > 0, -g / size, np.where(g >= 0, -np.inf, np.inf))
        if constraint.inequality.strict:
            excess = np.where(g <= 0, np.maximum(excess, 0.0), excess)
        return excess

    def outside_distance(self, points: np.ndarray, partners: np.ndarray) -> np.ndarray:
        """Largest estimated distance outside any part (``<= 0`` means inside)."""
        return self.violations(points, partners).max(axis=1)

    # ------------------------------------------------------------------ sampling

    def boundary_samples(self, partners: np.ndarray, per_partner: int, rng: np.random.Generator,
                         bisections: int = 40) -> tuple[np.ndarray, np.ndarray]:
        """``(points, owner)``: up to ``per_partner`` boundary points of each partner's section.

        ``owner[k]`` is the index of the partner whose section point ``k`` belongs to.  Box
        corners inside the section come first, then bisected boundary points (pairs of a random
        inside and a random outside point of a slightly enlarged bounding box).
        """
        partners = np.atleast_2d(partners)
        P, d = partners.shape[0], self.dim
        lo, hi = self.region.bounds()
        pad = 0.05 * (hi - lo)
        draws = 4 * per_partner
        cand = rng.uniform(lo - pad, hi + pad, size=(P, draws, d))
        owner = np.repeat(np.arange(P), draws)
        flat = cand.reshape(-1, d)
        inside = self.contains(flat, partners[owner]).reshape(P, draws)
        points, owners = [], []
        corners = _corners(self.region)
        if corners is not None:
            ok = self.contains(np.tile(corners, (P, 1)), np.repeat(partners, len(corners), axis=0))
            co = np.repeat(np.arange(P), len(corners))
            points.append(np.tile(corners, (P, 1))[ok])
            owners.append(co[ok])
        a_rows, b_rows, own = [], [], []
        for k in range(P):
            ins, outs = np.flatnonzero(inside[k]), np.flatnonzero(~inside[k])
            if ins.size == 0 or outs.size == 0:
                continue
            ia = rng.choice(ins, per_partner)
            ib = rng.choice(outs, per_partner)
            a_rows.append(cand[k, ia])
            b_rows.append(cand[k, ib])
            own.append(np.full(per_partner, k))
        if a_rows:
            a, b, o = np.concatenate(a_rows), np.concatenate(b_rows), np.concatenate(own)
            for _ in range(bisections):
                mid = 0.5 * (a + b)
                ok = self.contains(mid, partners[o])
                a = np.where(ok[:, None], mid, a)
                b = np.where(ok[:, None], b, mid)
            points.append(a)
            owners.append(o)
        if not points:
            return np.empty((0, d)), np.empty(0, int)
        return np.concatenate(points), np.concatenate(owners)

    def interior_samples(self, partners: np.ndarray, per_partner: int, rng: np.random.Generator):
        """``(points, owner)``: up to ``per_partner`` uniform points of each partner's section."""
        partners = np.atleast_2d(partners)
        P, d = partners.shape[0], self.dim
        lo, hi = self.region.bounds()
        draws = 4 * per_partner
        cand = rng.uniform(lo, hi, size=(P * draws, d))
        owner = np.repeat(np.arange(P), draws)
        ok = self.contains(cand, partners[owner]).reshape(P, draws)
        keep = np.zeros((P, draws), bool)
        for k in range(P):
            keep[k, np.flatnonzero(ok[k])[:per_partner]] = True
        keep = keep.reshape(-1)
        return cand[keep], owner[keep]

    # ------------------------------------------------------------------ high precision

    def mp_violation(self, label: str, point, partner, dps: int) -> mpmath.mpf:
        """The violation of one part (by ``label`` from :meth:`parts`) in mpmath: > 0 means outside.

        For the region it is the signed excess over the box / ball; for a constraint ``g >= 0``
        it is ``-g`` itself (its sign is what matters; no gradient is involved).
        """
        with mpmath.workdps(dps):
            p = [mpmath.mpf(float(v)) if not isinstance(v, mpmath.mpf) else v for v in point]
            q = [mpmath.mpf(float(v)) for v in partner]
            for name, kind, obj in self.parts():
                if name != label:
                    continue
                if kind == "region":
                    return _mp_region_excess(obj, p)
                symbols = list(obj.symbols)
                args = p if kind == "where" else ((q + p) if self.side == "y" else (p + q))
                fn = sp.lambdify(symbols, obj.inequality.g, modules="mpmath", dummify=True)
                return -mpmath.mpf(fn(*args))
        raise UsageError(f"no domain part {label!r}")


def _region_excess(region, points: np.ndarray) -> np.ndarray:
    if isinstance(region, Box):
        lo, hi = region.bounds()
        return np.max(np.maximum(lo - points, points - hi), axis=1)
    c = np.asarray(region.center, float)
    return np.linalg.norm(points - c, axis=1) - region.radius


def _mp_region_excess(region, p) -> mpmath.mpf:
    if isinstance(region, Box):
        return max(max(mpmath.mpf(a) - v, v - mpmath.mpf(b)) for v, a, b in zip(p, region.lower, region.upper))
    c = [mpmath.mpf(v) for v in region.center]
    return mpmath.sqrt(sum((v - w) ** 2 for v, w in zip(p, c))) - mpmath.mpf(region.radius)


def _corners(region) -> np.ndarray | None:
    if not isinstance(region, Box):
        return None
    lo, hi = region.bounds()
    return np.array([[h if bit else l for bit, l, h in zip(bits, lo, hi)]
                     for bits in product((0, 1), repeat=len(lo))])
