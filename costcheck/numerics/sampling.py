"""Seeded quasi-random sampling of points and pairs in a cost's declared domain.

Scrambled Sobol points (SciPy's ``qmc.Sobol``) fill the bounding box of each
region evenly; points outside the region or its constraints are dropped and
more are drawn until the requested count is met or the domain is evidently
tiny (then the shortfall is reported, not hidden).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..model.domain import Domain
from . import sobol_points

_MAX_ROUNDS = 8


@dataclass(frozen=True)
class PairSample:
    xs: np.ndarray
    ys: np.ndarray
    #: fraction of bounding-box draws that landed in the domain (a volume estimate)
    acceptance: float
    #: typical spacing of the samples in the joint box, (volume / N) ** (1/d)
    resolution: float
    #: how many points of the bounding boxes were drawn to find them
    drawn: int = 0

    @property
    def count(self) -> int:
        return self.xs.shape[0]


def _draw(dim: int, count: int, seed: np.random.Generator | int, lower, upper) -> np.ndarray:
    # SciPy's Sobol points; its qmc module imports all of scipy.stats (about a second), so a draw
    # already made is read back from the point store (.sobol_points) and nothing of SciPy is loaded
    # Sobol balance properties need a power of two
    exponent = max(1, int(np.ceil(np.log2(max(count, 2)))))
    unit = sobol_points.unit_points(dim, exponent, seed)[:count]
    return sobol_points.scaled(unit, lower, upper) if dim else unit


def sample_pairs(domain: Domain, n: int, m: int, count: int, seed: int) -> PairSample:
    """``count`` pairs ``(x, y)`` in the domain, deterministic for a given ``seed``."""
    rng = np.random.default_rng(seed)
    lx, ux = domain.x.bounds()
    ly, uy = domain.y.bounds()
    lower, upper = np.concatenate([lx, ly]), np.concatenate([ux, uy])
    kept, drawn, accepted = [], 0, 0
    want = count
    for _ in range(_MAX_ROUNDS):
        batch = _draw(n + m, max(want, 64), rng, lower, upper)
        ok = domain.contains_pairs(batch[:, :n], batch[:, n:])
        drawn += batch.shape[0]
        accepted += int(ok.sum())
        kept.append(batch[ok])
        have = sum(k.shape[0] for k in kept)
        if have >= count:
            break
        rate = max(accepted / drawn, 1e-3)
        want = int(min((count - have) / rate * 1.2 + 64, 64 * count))
    points = np.concatenate(kept)[:count]
    acceptance = accepted / drawn if drawn else 0.0
    volume = float(np.prod(upper - lower)) * acceptance
    d = n + m
    resolution = (volume / max(points.shape[0], 1)) ** (1.0 / d) if volume > 0 else float("nan")
    return PairSample(points[:, :n], points[:, n:], acceptance, resolution, drawn)


def sample_side(domain: Domain, side: str, dim: int, count: int, seed: int) -> np.ndarray:
    """``count`` points of one side's region (``side`` is ``"x"`` or ``"y"``)."""
    rng = np.random.default_rng(seed)
    region = domain.x if side == "x" else domain.y
    contains = domain.contains_x if side == "x" else domain.contains_y
    lower, upper = region.bounds()
    kept, have = [], 0
    want = count
    for _ in range(_MAX_ROUNDS):
        batch = _draw(dim, max(want, 64), rng, lower, upper)
        inside = batch[contains(batch)]
        kept.append(inside)
        have += inside.shape[0]
        if have >= count:
            break
        want = min(4 * want, 64 * count)
    return np.concatenate(kept)[:count]
