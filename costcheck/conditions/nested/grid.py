"""Weighted points on a regular grid: a discretised density, integrated as a midpoint rule.

A CSV side whose points are the nodes of a regular grid (each axis's values ``a_k + j h_k``)
and whose weights are the masses of the cells around them is not a random sample: its mass
balance has no sampling error, only the discretisation error of the midpoint rule, whose
tolerance is the mass of the cells a level curve can cross (:mod:`.levels`), as for a density
given by an expression.  Reading such a file as a sample would instead charge it the much wider
DKW band of ``N`` independent points.

Which files are grids: with ``layout: grid`` any set of distinct nodes of one regular lattice
(a grid masked by the domain, say); with ``layout: sample`` none; without ``layout``, a file
whose points are *every* node of a regular grid exactly once (at least two values per axis and
:data:`MIN_NODES` nodes), which a random sample practically never is.  Values written with
rounding are accepted up to :data:`TOLERANCE` of a spacing.
"""

from __future__ import annotations

import numpy as np

from ...errors import CostFileError

#: largest deviation of a value from its lattice node, in units of the spacing
TOLERANCE = 1e-3
#: nodes a file needs before it is read as a grid without saying so
MIN_NODES = 8


def lattice(coords: np.ndarray, full: bool) -> tuple[np.ndarray, np.ndarray] | None:
    """``(spacing per axis, integer node index per point)`` if the points are distinct nodes of a
    regular lattice (with ``full``: all of its nodes in their bounding box), else None."""
    n, dim = coords.shape
    spacing, index = np.empty(dim), np.empty((n, dim), dtype=np.int64)
    for k in range(dim):
        values = np.unique(coords[:, k])
        if values.size < 2:
            return None
        gaps = np.diff(values)
        steps = np.round(gaps / gaps.min())
        if np.any(np.abs(gaps / gaps.min() - steps) > TOLERANCE) or (full and np.any(steps != 1)):
            return None
        spacing[k] = (values[-1] - values[0]) / steps.sum()
        j = np.round((coords[:, k] - values[0]) / spacing[k])
        if np.any(np.abs(coords[:, k] - values[0] - j * spacing[k]) > TOLERANCE * spacing[k]):
            return None
        index[:, k] = j.astype(np.int64)
    if np.unique(index, axis=0).shape[0] != n:
        return None  # a node given twice is not a grid's cell
    if full and n != int(np.prod(index.max(axis=0) + 1)):
        return None
    return spacing, index


def grid_spacing(coords: np.ndarray, layout: str | None, label: str, field: str | None) -> np.ndarray | None:
    """The cell widths if the side is to be integrated as a grid, None for a sample.

    ``layout: grid`` on points that are not nodes of one regular lattice is a mistake in the
    file (exit 2, naming it)."""
    if layout == "sample":
        return None
    if layout == "grid":
        found = lattice(coords, full=False)
        if found is None:
            raise CostFileError("layout 'grid': the points are not distinct nodes of one regular grid (each axis's "
                                f"values a + j·h, up to {TOLERANCE:g} of a spacing); say 'layout: sample' or fix "
                                "the points", file=label, field=field)
        return found[0]
    if coords.shape[0] < MIN_NODES:
        return None
    found = lattice(coords, full=True)
    return None if found is None else found[0]


def cell_edges(y: np.ndarray, weights: np.ndarray, h: float, lo: float, hi: float):
    """A one-dimensional grid's cumulative distribution: ``(knots, cdf)``, each node's mass spread
    evenly over its cell ``[y - h/2, y + h/2]`` (clipped to ``[lo, hi]``), nothing between cells."""
    order = np.argsort(y)
    y, w = y[order], weights[order]
    lower, upper = np.clip(y - h / 2, lo, hi), np.clip(y + h / 2, lo, hi)
    # one knot where a cell ends and the next begins, though rounding may put the two edges apart
    tiny = 1e-9 * h
    edges = np.sort(np.concatenate([lower, upper]))
    knots = edges[np.concatenate([[True], np.diff(edges) > tiny])]
    ends = np.searchsorted(knots, upper - tiny)  # the knot at each cell's upper edge
    cdf = np.cumsum(np.bincount(ends, weights=w, minlength=knots.shape[0]))
    return knots, cdf / cdf[-1]
