"""Which cells of a batch lie outside a cost's domain, rigorously and all at once (``ival`` arrays).

The batched counterpart of :class:`.region.Locator` for :func:`.batch_bound.batched_branch_and_bound`,
whose cells start inside :func:`.region.bounding_box` (so a side declared as a box never excludes
them): a cell is *outside* only when interval arithmetic shows that one part of the description —
a side declared as a ball, a ``where`` or a ``pairs`` constraint ``g ≥ 0`` (``> 0`` when strict) —
fails at every point of it.  A constraint with no enclosure on the cell never excludes it.
Declared numbers enter as the decimals the file wrote (the rational of their shortest repr),
enclosed by the two doubles around them.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
from ival import Interval

from ..model.domain import Ball, Domain
from . import intervals as iv
from .interval_eval import compile_interval_exprs


def _declared(value: float) -> Interval:
    return Interval(Fraction(repr(float(value))))


class CellLocator:
    def __init__(self, domain: Domain, n: int):
        self.balls = []
        for region, offset in ((domain.x, 0), (domain.y, n)):
            if isinstance(region, Ball):
                self.balls.append((offset, [_declared(c) for c in region.center], _declared(region.radius)))
        self.tests = []
        for constraints, offset in ((domain.where_x, 0), (domain.where_y, n), (domain.pairs, 0)):
            for c in constraints:
                fn = compile_interval_exprs((c.inequality.g,), tuple(c.symbols))
                self.tests.append((offset, len(c.symbols), fn, c.inequality.strict))

    def outside(self, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
        """``(K,)`` booleans: the cell ``[lo[k], hi[k]]`` surely holds no point of the domain."""
        lo, hi = np.asarray(lo, dtype=np.float64), np.asarray(hi, dtype=np.float64)
        columns = [iv.from_bounds(lo[:, j], hi[:, j]) for j in range(lo.shape[1])]
        out = np.zeros(lo.shape[0], dtype=bool)
        with np.errstate(invalid="ignore"):
            for offset, centre, radius in self.balls:
                total = None
                for j, c in enumerate(centre):
                    term = (columns[offset + j] - c) ** 2
                    total = term if total is None else total + term
                g = radius * radius - total  # r² − |p − centre|² ≥ 0 exactly inside the ball
                out |= iv.finite(g) & (g.hi < 0)
            for offset, width, fn, strict in self.tests:
                (g,) = fn(columns[offset:offset + width])
                fails = (g.hi <= 0) if strict else (g.hi < 0)
                out |= iv.finite(g) & fails
        return out
