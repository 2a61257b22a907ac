"""The two distributions of a matching model: what a cost file's ``data:`` key (or the command line) gives.

A side is either a **density** — an expression in that side's coordinate names, parsed only
through :mod:`costcheck.spec.expression` and integrated by a midpoint rule on the side's declared
domain — or **weighted points**, a CSV file whose header names the side's coordinates plus an
optional ``weight`` column (path relative to the cost file).  Both become a :class:`Measure`:
points with normalised weights, plus what is needed to say how accurate sums over it are
(the effective sample size for points, the cell size for quadrature nodes).

Nothing in a data file is executed: CSV cells are read with :mod:`csv` and converted with
``float`` one by one, and every bad cell is reported with the file, row and column.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
import sympy as sp

from ...defaults import MAX_DENSITY_NODES
from ...errors import CostFileError
from ...spec.data import SideSpec, read_points
from .grid import cell_edges, grid_spacing

#: quadrature nodes for a source density (split evenly over the axes)
QUADRATURE_NODES = 40_000
#: nodes of the cumulative integral of a one-dimensional target density
TARGET_NODES = 4097
#: a one-dimensional source needs no more than this (the midpoint rule's error is one cell's mass)
MAX_NODES_PER_AXIS = 4096


@dataclass(frozen=True)
class Measure:
    """A finite measure as weighted points: ``points`` (N, d), ``weights`` (N,) summing to 1."""

    points: np.ndarray
    weights: np.ndarray
    kind: str  # "points" or "quadrature"
    description: str
    #: quadrature: the cell widths per axis; points: None
    cell: np.ndarray | None = None
    #: quadrature: ``subdivide(indices, r) -> (points, weights, owner)``, the nodes of an r-per-axis
    #: midpoint rule inside the cells of the given nodes (see :func:`density_measure`); points: None
    subdivide: object = field(default=None, compare=False, repr=False)

    @property
    def count(self) -> int:
        return int(self.points.shape[0])

    @property
    def effective_size(self) -> float:
        """Kish's effective sample size ``(Σw)² / Σw²`` (N for equal weights)."""
        return float(1.0 / np.sum(self.weights**2))


# --------------------------------------------------------------------------- reading the spec


# --------------------------------------------------------------------------- measures

def points_measure(side: SideSpec, names: Sequence[str], contains, file: str | None = None) -> Measure:
    """Weighted points, normalised; a regular grid of them (:mod:`.grid`) as the nodes of a midpoint rule."""
    coords, weights, line = read_points(side.path, names)
    inside = contains(coords)
    if not inside.all():
        r = int(np.flatnonzero(~inside)[0])
        raise CostFileError(f"row {line[r]}: the point ({', '.join(f'{n}={v:g}' for n, v in zip(names, coords[r]))}) "
                            f"lies outside the {side.role}'s domain declared in the cost file; widen the domain or "
                            "drop the row", file=str(side.path))
    layout_field = side.origin.rsplit(".", 1)[0] + ".layout" if side.origin.startswith("data.") else None
    spacing = grid_spacing(coords, side.layout, file or str(side.path), layout_field)
    if spacing is not None:
        return Measure(coords, weights / weights.sum(), "quadrature",
                       f"{coords.shape[0]} weighted points from {side.path} on a regular grid (spacing "
                       f"{', '.join(f'{h:.4g}' for h in spacing)}), each weight its cell's mass: a midpoint rule",
                       cell=spacing)
    return Measure(coords, weights / weights.sum(), "points",
                   f"{coords.shape[0]} weighted points from {side.path}")


def _density_values(side: SideSpec, symbols: Sequence[sp.Symbol], nodes: np.ndarray, file: str | None) -> np.ndarray:
    # lambdify on a tree we built ourselves, with dummified names (see DEVELOPERS.md)
    fn = sp.lambdify(list(symbols), side.density, modules="numpy", dummify=True)
    with np.errstate(all="ignore"):
        values = np.broadcast_to(np.asarray(fn(*nodes.T), dtype=float), nodes.shape[:1]).copy()
    bad = ~np.isfinite(values) | (values < 0)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        at = ", ".join(f"{s}={v:.6g}" for s, v in zip(symbols, nodes[i]))
        what = "not a finite number" if not np.isfinite(values[i]) else f"negative ({values[i]:.3g})"
        raise CostFileError(f"the {side.role} density is {what} at ({at}) in the {side.role}'s domain; a density "
                            "must be finite and ≥ 0 there", file=file, field=side.origin or None)
    return values


def density_measure(side: SideSpec, symbols: Sequence[sp.Symbol], region, contains, file: str | None,
                    nodes_total: int = QUADRATURE_NODES, per_axis: int | None = None) -> Measure:
    """Midpoint-rule nodes on the region's bounding box, weighted by the density, masked by the domain.

    ``per_axis`` cells per axis (``--grid``), or by default about ``nodes_total`` nodes split evenly
    over the axes; a grid of more than :data:`~costcheck.defaults.MAX_DENSITY_NODES` is refused
    before it is built."""
    lo, hi = region.bounds()
    dim = lo.shape[0]
    if per_axis is None:
        per_axis = int(np.clip(round(nodes_total ** (1.0 / dim)), 8, MAX_NODES_PER_AXIS))
    elif per_axis**dim > MAX_DENSITY_NODES:
        raise CostFileError(f"--grid {per_axis} gives {per_axis}^{dim} = {per_axis**dim:,} quadrature nodes for the "
                            f"{side.role} density, at most {MAX_DENSITY_NODES:,} (memory); lower --grid",
                            file=file, field=side.origin or None)
    cell = (hi - lo) / per_axis
    axes = [lo[k] + (np.arange(per_axis) + 0.5) * cell[k] for k in range(dim)]
    nodes = np.stack([g.ravel() for g in np.meshgrid(*axes, indexing="ij")], axis=1)
    nodes = nodes[contains(nodes)]
    if nodes.shape[0] == 0:
        raise CostFileError(f"no quadrature node lies in the {side.role}'s domain", file=file,
                            field=side.origin or None)
    values = _density_values(side, symbols, nodes, file)
    mass = values * float(np.prod(cell))
    keep = mass > 0
    if not keep.any():
        raise CostFileError(f"the {side.role} density integrates to zero on its domain", file=file,
                            field=side.origin or None)
    nodes, mass = nodes[keep], mass[keep]
    weights = mass / mass.sum()

    def subdivide(indices: np.ndarray, r: int):
        """Nodes of an ``r``-per-axis midpoint rule in the cells of ``nodes[indices]``, with the density's
        weights rescaled so that each cell keeps its mass (only where the mass sits inside a cell changes)."""
        offsets = (np.arange(r) + 0.5) / r - 0.5
        grid = np.stack([g.ravel() for g in np.meshgrid(*([offsets] * dim), indexing="ij")], axis=1) * cell
        pts = (nodes[indices][:, None, :] + grid[None, :, :]).reshape(-1, dim)
        owner = np.repeat(np.asarray(indices), grid.shape[0])
        inside = contains(pts)
        values = np.zeros(pts.shape[0])
        if inside.any():
            values[inside] = _density_values(side, symbols, pts[inside], file)
        per_cell = values.reshape(-1, grid.shape[0])
        totals = per_cell.sum(axis=1, keepdims=True)
        # a cell whose sub-nodes all carry no density keeps its mass at its midpoint's sub-node(s), evenly
        even = np.full_like(per_cell, 1.0 / grid.shape[0])
        share = np.where(totals > 0, per_cell / np.where(totals > 0, totals, 1.0), even)
        w = (share * weights[indices][:, None]).reshape(-1)
        return pts, w, owner

    return Measure(nodes, weights, "quadrature",
                   f"density {side.written} by a {per_axis}^{dim}-node midpoint rule ({nodes.shape[0]} nodes with "
                   "positive mass)", cell=cell, subdivide=subdivide)


@dataclass(frozen=True)
class Distribution1D:
    """A one-dimensional target: its CDF ``G`` and quantile function on the target interval."""

    lower: float
    upper: float
    #: support points (sorted) and the CDF just after each; for a density, a fine grid
    knots: np.ndarray
    cdf: np.ndarray
    kind: str  # "points" or "density"
    description: str
    size: int  # points, or grid nodes for a density

    def G(self, y: np.ndarray) -> np.ndarray:
        """``ν((-∞, y])``."""
        y = np.asarray(y, float)
        if self.kind == "points":
            idx = np.searchsorted(self.knots, y, side="right")
            return np.where(idx > 0, self.cdf[np.maximum(idx - 1, 0)], 0.0)
        return np.interp(y, self.knots, self.cdf, left=0.0, right=1.0)

    def quantile(self, t: np.ndarray) -> np.ndarray:
        """The smallest ``y`` with ``G(y) ≥ t``."""
        t = np.asarray(t, float)
        idx = np.clip(np.searchsorted(self.cdf, t - 1e-12, side="left"), 0, self.knots.shape[0] - 1)
        if self.kind == "points":
            return self.knots[idx]
        # linear between knots of the cumulative integral
        j = np.maximum(idx, 1)
        c0, c1 = self.cdf[j - 1], self.cdf[j]
        with np.errstate(all="ignore"):
            frac = np.where(c1 > c0, (t - c0) / (c1 - c0), 1.0)
        return np.where(idx == 0, self.knots[0], self.knots[j - 1] + np.clip(frac, 0, 1) * (self.knots[j] - self.knots[j - 1]))

    @property
    def support(self) -> tuple[float, float]:
        positive = np.flatnonzero(np.diff(np.concatenate([[0.0], self.cdf])) > 0)
        if self.kind == "points":
            return float(self.knots[positive[0]]), float(self.knots[positive[-1]])
        return float(self.knots[max(positive[0] - 1, 0)]), float(self.knots[positive[-1]])


def target_distribution(side: SideSpec, name: str, symbol: sp.Symbol, region, contains, file: str | None) -> Distribution1D:
    lo, hi = (float(v[0]) for v in region.bounds())
    if side.kind == "points":
        measure = points_measure(side, [name], contains, file)
        y = measure.points[:, 0]
        if measure.kind == "quadrature":  # a grid: each node's mass spread over its cell
            knots, cdf = cell_edges(y, measure.weights, float(measure.cell[0]), lo, hi)
            return Distribution1D(lo, hi, knots, cdf, "density", measure.description, measure.count)
        order = np.argsort(y, kind="stable")
        ys, ws = y[order], measure.weights[order]
        knots, start = np.unique(ys, return_index=True)
        cdf = np.cumsum(np.add.reduceat(ws, start))
        cdf[-1] = 1.0
        return Distribution1D(lo, hi, knots, cdf, "points", measure.description, measure.count)
    knots = np.linspace(lo, hi, TARGET_NODES)
    mids = 0.5 * (knots[1:] + knots[:-1])
    inside = contains(mids[:, None])
    values = np.zeros_like(mids)
    if inside.any():
        values[inside] = _density_values(side, [symbol], mids[inside][:, None], file)
    mass = values * np.diff(knots)
    if not mass.sum() > 0:
        raise CostFileError(f"the target density integrates to zero on {name} ∈ [{lo:g}, {hi:g}]", file=file,
                            field=side.origin or None)
    cdf = np.concatenate([[0.0], np.cumsum(mass) / mass.sum()])
    cdf[-1] = 1.0
    return Distribution1D(lo, hi, knots, cdf, "density", f"density {side.written} on {name} ∈ [{lo:g}, {hi:g}]",
                          TARGET_NODES)
