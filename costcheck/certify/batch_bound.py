"""Branch and bound over boxes, a batch of cells at a time: one vectorised evaluation decides them all.

The batched counterpart of :func:`.branch_bound.branch_and_bound`, with the same budget, the same
outcome and the same rules: cells are taken largest first (here the ``batch`` largest at once),
a cell is *outside* only when ``outside(lo, hi)`` (``K`` booleans, e.g.
:meth:`.cell_region.CellLocator.outside`) shows it (cells outside are dropped, their volume
leaves the denominator), *proved* when ``decide_cells`` returns a finite certified lower bound
for it, and otherwise bisected across its relatively widest side; a cell narrower than
``min_width`` (relative to the starting box) that is still undecided is kept as *stuck*.

``decide_cells(lo, hi)`` takes the ``(K, d)`` ends of a batch and returns ``K`` floats: a
certified lower bound of the quantity on each cell, or nan where the cell is not decided.
A per-cell classifier (``Locator.classify``) fits through :func:`per_cell`.
"""

from __future__ import annotations

import heapq
import itertools
import time
from typing import Callable

import numpy as np

from .branch_bound import Budget, Outcome, bisect_widest, finished


def per_cell(classify: Callable[[np.ndarray, np.ndarray], str]) -> Callable[[np.ndarray, np.ndarray], np.ndarray]:
    """``outside(lo, hi)`` for a batch from a classifier of one cell (``"outside"`` / anything else)."""
    return lambda lo, hi: np.array([classify(a, b) == "outside" for a, b in zip(lo, hi)], dtype=bool)


def batched_branch_and_bound(lo: np.ndarray, hi: np.ndarray, outside: Callable[[np.ndarray, np.ndarray], np.ndarray],
                             decide_cells: Callable[[np.ndarray, np.ndarray], np.ndarray], budget: Budget,
                             batch: int = 1024) -> Outcome:
    started = time.perf_counter()
    lo, hi = np.asarray(lo, dtype=np.float64), np.asarray(hi, dtype=np.float64)
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
        take = min(batch, len(queue), budget.cells - cells)
        popped = [heapq.heappop(queue) for _ in range(take)]
        cells += take
        A = np.array([a for _, _, a, _ in popped])
        B = np.array([b for _, _, _, b in popped])
        volumes = np.prod((B - A) / width0, axis=1)
        away = np.asarray(outside(A, B), dtype=bool)
        outside_volume += float(volumes[away].sum())
        outside_cells += int(away.sum())
        kept = [(a, b, float(v)) for a, b, v, gone in zip(A, B, volumes, away) if not gone]
        if not kept:
            continue
        A, B = A[~away], B[~away]
        with np.errstate(invalid="ignore"):
            values = np.asarray(decide_cells(A, B), dtype=np.float64)
        for (a, b, volume), value in zip(kept, values):
            if np.isfinite(value):
                proved_volume += volume
                proved_cells += 1
                bound = float(value) if bound is None else min(bound, float(value))
                continue
            halves = bisect_widest(a, b, width0, budget.min_width)
            if halves is None:
                stuck.append((a, b))
                continue
            for pa, pb in halves:
                heapq.heappush(queue, (-volume / 2, next(counter), pa, pb))
    return finished(queue, stuck, exhausted, proved_volume, outside_volume, cells, proved_cells, outside_cells,
                    started, bound)
