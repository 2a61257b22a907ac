"""Branch and bound over boxes: split until every cell is proved, outside, or too small.

``decide(lo, hi)`` returns a float lower bound of the certified quantity on the cell (the
cell is *proved*), or None (not decided at this size).  Cells are taken largest first, so
the proved share of the volume grows steadily and a budget that runs out leaves the largest
unexplored cells; each undecided cell is bisected across its relatively widest side.  A
cell narrower than ``min_width`` (relative to the starting box) in every direction that is
still undecided is kept as a *stuck* cell: the proof cannot finish, and the report shows
where.  Coverage is the proved volume over the volume of cells not shown to be outside.
"""

from __future__ import annotations

import heapq
import itertools
import time
from dataclasses import dataclass, field
from typing import Callable

import numpy as np


@dataclass
class Budget:
    seconds: float = 20.0
    cells: int = 20000
    min_width: float = 1e-4


@dataclass
class Outcome:
    proved: bool
    coverage: float
    cells: int
    proved_cells: int
    outside_cells: int
    seconds: float
    #: the smallest certified lower bound over proved cells (None if none)
    bound: float | None
    stuck: list = field(default_factory=list)
    exhausted: str = ""
    #: what the cells cover and their coordinates' names (set by the caller)
    space: str = ""
    names: list = field(default_factory=list)
    #: what a proved cell shows, when it is not the condition's usual certificate (set by the caller)
    what: str = ""

    def to_json(self, names=None) -> dict:
        names = self.names or names
        def box(lo, hi):
            return {name: [float(a), float(b)] for name, a, b in zip(names, lo, hi)}
        return {"proved": self.proved, "coverage": self.coverage, "cells": self.cells,
                "proved_cells": self.proved_cells, "outside_cells": self.outside_cells,
                "seconds": round(self.seconds, 3), "lower_bound": self.bound,
                "undecided_cells": [box(lo, hi) for lo, hi in self.stuck[:5]],
                "undecided_cell_count": len(self.stuck), "stopped_by": self.exhausted or None,
                "space": self.space or None}


def branch_and_bound(lo: np.ndarray, hi: np.ndarray, classify: Callable[[np.ndarray, np.ndarray], str],
                     decide: Callable[[np.ndarray, np.ndarray], float | None], budget: Budget) -> Outcome:
    started = time.perf_counter()
    width0 = np.where(hi > lo, hi - lo, 1.0)
    counter = itertools.count()
    queue = [(-1.0, next(counter), lo, hi)]
    proved_volume = outside_volume = 0.0
    cells = proved_cells = outside_cells = 0
    bound = None
    stuck: list = []
    exhausted = ""
    while queue:
        if cells >= budget.cells:
            exhausted = f"cell budget ({budget.cells})"
            break
        if time.perf_counter() - started > budget.seconds:
            exhausted = f"time budget ({budget.seconds:g} s)"
            break
        _, _, a, b = heapq.heappop(queue)
        cells += 1
        volume = float(np.prod((b - a) / width0))
        where = classify(a, b)
        if where == "outside":
            outside_volume += volume
            outside_cells += 1
            continue
        value = decide(a, b)
        if value is not None:
            proved_volume += volume
            proved_cells += 1
            bound = value if bound is None else min(bound, value)
            continue
        halves = bisect_widest(a, b, width0, budget.min_width)
        if halves is None:
            stuck.append((a, b))
            continue
        for pa, pb in halves:
            heapq.heappush(queue, (-volume / 2, next(counter), pa, pb))
    return finished(queue, stuck, exhausted, proved_volume, outside_volume, cells, proved_cells, outside_cells,
                    started, bound)


def connected(cells: list) -> bool:
    """The one-dimensional cells ``(lo, hi)`` (from bisection, so they share exact ends) make one interval."""
    cells = sorted(cells)
    return all(a == b_prev for (_, b_prev), (a, _) in zip(cells, cells[1:]))


def bisect_widest(a: np.ndarray, b: np.ndarray, width0: np.ndarray, min_width: float):
    """The two halves of ``[a, b]`` across its relatively widest side, or None when even that side
    is below ``min_width`` of the starting box (the cell is *stuck*)."""
    relative = (b - a) / width0
    axis = int(np.argmax(relative))
    if relative[axis] < min_width:
        return None
    middle = 0.5 * (a[axis] + b[axis])
    left_hi, right_lo = b.copy(), a.copy()
    left_hi[axis] = right_lo[axis] = middle
    return (a, left_hi), (right_lo, b)


def finished(queue, stuck, exhausted, proved_volume, outside_volume, cells, proved_cells, outside_cells,
             started, bound) -> Outcome:
    """The :class:`Outcome` of a search: proved only when nothing is left, stuck or cut short."""
    relevant = 1.0 - outside_volume
    coverage = proved_volume / relevant if relevant > 0 else 1.0
    proved = not queue and not stuck and proved_cells > 0 and not exhausted
    return Outcome(proved, coverage, cells, proved_cells, outside_cells, time.perf_counter() - started,
                   bound, stuck, exhausted)
