"""Boxes of ``(x, y)`` space and where they lie relative to a cost's domain, rigorously.

A proof covers the domain with boxes (cells).  A cell is *outside* only when ball
arithmetic shows that no point of it satisfies the domain's description (box or ball on each
side, ``where`` and ``pairs`` constraints); otherwise it must be proved, and proving the
condition on the whole cell proves it on the part inside.  The declared bounds were read
into binary floats; where that rounded a decimal (``0.1``), the starting box is widened by one
unit in the last place so it contains the domain as written.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from ..model.domain import Ball, Box, Domain
from . import balls
from .arb_eval import compile_exprs


def _outward(value: float, direction: float) -> float:
    # a float that is not exactly the decimal it prints as was rounded from that decimal
    exact = Fraction(repr(value)) == Fraction(value)
    return value if exact else math.nextafter(value, direction)


def bounding_box(domain: Domain) -> tuple[np.ndarray, np.ndarray]:
    """A float box containing the whole declared domain (x coordinates, then y)."""
    lows, highs = [], []
    for region in (domain.x, domain.y):
        if isinstance(region, Box):
            lows += [_outward(v, -math.inf) for v in region.lower]
            highs += [_outward(v, math.inf) for v in region.upper]
        else:
            r = _outward(region.radius, math.inf)
            lows += [math.nextafter(_outward(c, -math.inf) - r, -math.inf) for c in region.center]
            highs += [math.nextafter(_outward(c, math.inf) + r, math.inf) for c in region.center]
    return np.array(lows), np.array(highs)


@dataclass(frozen=True)
class _Test:
    """One rigorous membership test: a ball value that must be ≥ 0 (> 0 when strict)."""

    columns: tuple[int, ...]
    function: object
    strict: bool


def _declared(value: float):
    """A ball holding the number the file declared: the float itself, or, where the float rounded a
    decimal, the float ± one ulp (so both "inside" and "outside" claims hold for the declared value)."""
    return balls.arb(value) if _outward(value, math.inf) == value else balls.arb(value, math.ulp(value))


def judge(margins) -> str:
    """``outside``, ``inside`` or ``boundary`` from the balls ``g`` of tests ``g ≥ 0`` (``> 0`` if strict).

    ``margins`` yields ``(g, strict)``; outside as soon as one test surely fails, inside only
    if every test surely holds; a ball with no enclosure leaves the cell on the boundary.
    """
    status = "inside"
    for g, strict in margins:
        if not g.is_finite():
            status = "boundary"
            continue
        if g.upper() < 0 or (strict and g.upper() <= 0):
            return "outside"
        if not (g.lower() > 0 or (not strict and g.lower() >= 0)):
            status = "boundary"
    return status


class Locator:
    """Classifies cells as ``outside``, ``inside`` or ``boundary`` of the domain.

    Every part of the description is a test ``g ≥ 0``: each side's box bounds or ball, then the
    ``where`` and ``pairs`` constraints.  (Branch-and-bound cells start inside the bounding box, but
    witnesses and segments are arbitrary points, so the bounds are tested too.)
    """

    def __init__(self, domain: Domain, n: int):
        self.tests: list[_Test] = []
        for region, offset in ((domain.x, 0), (domain.y, n)):
            if isinstance(region, Ball):
                self.tests.append(_Test(tuple(range(offset, offset + region.dim)), ("ball", region), False))
            else:
                for i, (low, high) in enumerate(zip(region.lower, region.upper)):
                    self.tests.append(_Test((offset + i,), ("above", low), False))
                    self.tests.append(_Test((offset + i,), ("below", high), False))
        groups = ((domain.where_x, 0), (domain.where_y, n), (domain.pairs, None))
        for constraints, offset in groups:
            for c in constraints:
                cols = (tuple(range(len(c.symbols))) if offset is None
                        else tuple(range(offset, offset + len(c.symbols))))
                fn = compile_exprs((c.inequality.g,), tuple(c.symbols))
                self.tests.append(_Test(cols, fn, c.inequality.strict))

    @staticmethod
    def _ball_margin(region: Ball, cell) -> object:
        # r² − |p − centre|², which is ≥ 0 exactly inside the ball
        total = balls.arb(0)
        for c, b in zip(region.center, cell):
            total = total + balls.ipow(b - _declared(c), 2)
        r = _declared(region.radius)
        return r * r - total

    def _margin(self, test: _Test, values):
        if not isinstance(test.function, tuple):
            return test.function(values)[0]
        kind, what = test.function
        if kind == "ball":
            return self._ball_margin(what, values)
        if kind == "above":
            return values[0] - _declared(what)
        return _declared(what) - values[0]

    def classify(self, lo: np.ndarray, hi: np.ndarray) -> str:
        cell = [balls.from_bounds(a, b) for a, b in zip(lo, hi)]
        return judge((self._margin(t, [cell[i] for i in t.columns]), t.strict) for t in self.tests)
