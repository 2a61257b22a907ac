"""Crossings within the tolerance: a finer quadrature actually taken near the level curves involved.

A source point can cross the *central* level curves ``{∂s/∂y(·, y) = k(y)}`` of two levels
``y < y'`` while staying inside the tolerance of :mod:`.levels` (the mass band ``ε`` the
quadrature leaves in ``k±``): then the coarse rule can neither confirm nor exclude a crossing,
and nothing may be said about what a finer rule would show until one has been computed.

For a density source, each level that such a candidate uses is recomputed with the cells the
level curve can cross (``|∂s/∂y − k| ≤ |∇_x ∂s/∂y| × half the cell diagonal``, the rule of
:mod:`.levels`) split into ``r × r`` sub-cells for ``r`` in :data:`FACTORS` (each cell keeps its
mass; only where the mass sits inside it is resolved), which shrinks the band roughly ``r``-fold.
A candidate ``(x, y, y')`` is then

- **confirmed** when ``∂s/∂y(x, y) ≤ k_lo(y)`` and ``∂s/∂y(x, y') ≥ k_hi(y')`` at the refined
  levels (beyond the refined tolerance): the level curves cross at a point of positive density;
- **cleared** when it is not a crossing of the refined central levels;
- **pending** otherwise — after the finest factor, the verdict is *undecided* and says so.

Weighted points are a fixed sample (or a fixed grid, :mod:`.grid`): no finer sample can be taken, so
candidates stay pending.
(Chiappori–McCann–Pass, Comm. Pure Appl. Math. 70, 2017, for the nestedness conditions.)
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .levels import quantile_interval, sorted_masses, surplus_y

#: sub-cells per axis of the refined cells, tried in turn
FACTORS = (4, 16)
#: levels recomputed at most (the candidates with the largest margins first)
MAX_LEVELS = 16


@dataclass(frozen=True)
class Candidate:
    point: int  # index of the source point
    a: int  # level index of y (inside there)
    b: int  # level index of y' > y (outside there)
    margin: float  # coarse margin against the central levels, in units of the spread


@dataclass(frozen=True)
class Refined:
    """One level recomputed: ``k`` (central), ``k_lo``, ``k_hi``, the band and the sub-nodes used."""

    k: float
    k_lo: float
    k_hi: float
    band: float
    sub_nodes: int


@dataclass
class Outcome:
    candidates: int  # raw crossing points
    tested: list = field(default_factory=list)  # Candidates re-tested
    untested: int = 0
    factor: int | None = None  # finest factor used
    refined: dict = field(default_factory=dict)  # level index -> Refined (at the last factor)
    confirmed: list = field(default_factory=list)
    cleared: list = field(default_factory=list)
    pending: list = field(default_factory=list)
    reason: str = ""  # why nothing could be refined

    @property
    def sub_nodes(self) -> int:
        return int(sum(r.sub_nodes for r in self.refined.values()))

    @property
    def max_band(self) -> float:
        return float(max((r.band for r in self.refined.values()), default=float("nan")))


def raw_candidates(levels) -> list[Candidate]:
    """Every source point that crosses the central levels, with its deepest later level, largest margin first."""
    phi, k, spread = levels.phi, levels.k, levels.spread
    K = phi.shape[0]
    with np.errstate(invalid="ignore"):
        raw_in = phi <= k[:, None]
        raw_out = phi > k[:, None]
    first = np.where(raw_in.any(axis=0), np.argmax(raw_in, axis=0), K)
    later = np.arange(K)[:, None] > first[None, :]
    excess = np.where(raw_out & later, (phi - k[:, None]) / spread[:, None], -np.inf)
    crossing = np.isfinite(excess.max(axis=0, initial=-np.inf))
    out = []
    for i in np.flatnonzero(crossing):
        a, b = int(first[i]), int(np.argmax(excess[:, i]))
        depth = (k[a] - phi[a, i]) / spread[a]
        out.append(Candidate(int(i), a, b, float(min(depth, excess[b, i]))))
    return sorted(out, key=lambda c: -c.margin)


def _refine_level(evaluator, domain, source, y: float, G: float, r: int) -> Refined:
    phi, grad, _ = surplus_y(evaluator, domain, source.points, np.array([y]), want_grad=True)
    phi, grad = phi[0], grad[0]
    half = 0.5 * float(np.linalg.norm(source.cell))
    w = source.weights
    values, cum = sorted_masses(phi[None], w)
    k_minus, k_plus = quantile_interval(values, cum, np.array([G]))
    k_old = float(0.5 * (k_minus[0] + k_plus[0]) if np.isfinite(k_plus[0]) else k_minus[0])
    with np.errstate(invalid="ignore"):
        near = np.abs(phi - k_old) <= grad * half
    idx = np.flatnonzero(near)
    P, W, _ = source.subdivide(idx, r)
    phi_s, grad_s, _ = surplus_y(evaluator, domain, P, np.array([y]), want_grad=True)
    keep = ~near
    all_phi = np.concatenate([phi[keep], phi_s[0]])
    all_w = np.concatenate([w[keep], W])
    values, cum = sorted_masses(all_phi[None], all_w)
    k_minus, k_plus = quantile_interval(values, cum, np.array([G]))
    k_new = float(0.5 * (k_minus[0] + k_plus[0]) if np.isfinite(k_plus[0]) else k_minus[0])
    with np.errstate(invalid="ignore"):
        near_sub = np.abs(phi_s[0] - k_new) <= grad_s[0] * half / r
        near_coarse = np.abs(phi[keep] - k_new) <= grad[keep] * half  # not refined, yet near the new level
    band = float(np.sum(W[near_sub]) + np.sum(w[keep][near_coarse]) + 1e-9)
    k_lo = float(quantile_interval(values, cum, np.array([G - band]))[0][0])
    k_hi = float(quantile_interval(values, cum, np.array([G + band]))[1][0])
    return Refined(k_new, k_lo, k_hi, band, int(P.shape[0]))


def settle(evaluator, domain, levels, source) -> Outcome:
    """Re-test the crossings that lie within the tolerance on finer quadratures near the level curves."""
    candidates = raw_candidates(levels)
    outcome = Outcome(len(candidates))
    if not candidates:
        return outcome
    if source.subdivide is None:
        outcome.pending = candidates
        outcome.reason = ("the source is a fixed grid of weighted points, so no finer grid can be taken and the "
                          "band of the cells the level curves cross cannot be narrowed" if source.kind == "quadrature"
                          else "the source is a fixed set of weighted points, so no finer sample can be taken and "
                          "the sampling band cannot be narrowed")
        return outcome
    chosen, used = [], set()
    for c in candidates:
        need = used | {c.a, c.b}
        if len(need) > MAX_LEVELS:
            continue
        chosen.append(c)
        used = need
    outcome.tested, outcome.untested = chosen, len(candidates) - len(chosen)
    pending = chosen
    for r in FACTORS:
        refined = {j: _refine_level(evaluator, domain, source, float(levels.ys[j]), float(levels.G[j]), r)
                   for j in sorted({c.a for c in pending} | {c.b for c in pending})}
        outcome.factor, outcome.refined = r, {**outcome.refined, **refined}
        still = []
        for c in pending:
            pa, pb = levels.phi[c.a, c.point], levels.phi[c.b, c.point]
            ra, rb = refined[c.a], refined[c.b]
            if pa <= ra.k_lo and pb >= rb.k_hi:
                outcome.confirmed.append(c)
            elif pa > ra.k or pb <= rb.k:
                outcome.cleared.append(c)
            else:
                still.append(c)
        pending = still
        if outcome.confirmed or not pending:
            break
    outcome.pending = pending
    return outcome
