"""Weighted points on a regular grid are integrated as a grid (a midpoint rule), not read as a sample."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import costcheck
from costcheck.conditions.nested.analysis import analyse, map_at
from costcheck.conditions.nested.grid import grid_spacing
from costcheck.errors import CostFileError
from costcheck.spec.data import SideSpec

N = 20
H = 1.0 / N
NODES = (np.arange(N) + 0.5) * H  # cell midpoints of [0, 1]


def _csv(path: Path, name: str, coords, weights) -> Path:
    path.write_text(f"{name},weight\n" + "".join(f"{c:.6g},{w:.6g}\n" for c, w in zip(coords, weights)))
    return path


def _line_model(tmp_path, layout=None):
    # n = m = 1, s = x·y (supermodular); source density 2x and uniform target, both given as
    # weighted grids: each node's weight is its cell's mass (the midpoint rule is exact for a
    # linear density: ∫ 2x dx over a cell = 2·x_i·h)
    source = SideSpec("source", "points", path=_csv(tmp_path / "s.csv", "x", NODES, 2 * NODES * H), layout=layout)
    target = SideSpec("target", "points", path=_csv(tmp_path / "t.csv", "y", NODES, np.full(N, H)), layout=layout)
    cost = costcheck.from_expression("x*y", x=["x"], y=["y"], sense="surplus",
                                     domain={"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}})
    return analyse(cost, source, target)


def test_a_weighted_grid_is_integrated_as_a_grid_and_maps_as_the_rearrangement(tmp_path):
    # Source: with ∂²s/∂x∂y > 0 and n = m = 1 the optimal map is the monotone rearrangement
    # T = G⁻¹∘F (Villani, Topics in Optimal Transportation, 2003, ch. 2, from memory); here
    # F(x) = x², G(y) = y, so T(x) = x².  The mass of node x_i is that of its cell, so T(x_i) lies
    # between the values at the cell's edges: |T(x_i) − x_i²| ≤ x_i·h + h²/4.
    grid = _line_model(tmp_path)
    assert grid.verdict.verdict == "holds", grid.verdict.evidence.summary
    assert grid.source.kind == "quadrature" and "on a regular grid" in grid.source.description
    # the target's CDF is the grid's, linear inside each cell: exact for a uniform density
    assert grid.target.G(np.array([0.33, 0.5, 0.915])) == pytest.approx([0.33, 0.5, 0.915], abs=1e-12)
    inner = NODES[2:-2, None]
    T, clamped = map_at(grid, inner)
    assert clamped == 0
    assert np.all(np.abs(T - inner[:, 0] ** 2) <= inner[:, 0] * H + H**2 / 4 + 1e-9)
    # the tolerance is the mass of the cells a level curve can cross (∂s/∂y = x: at most two
    # cells, each of mass ≤ 2h), not the DKW band of 20 random points
    assert grid.levels.band.max() <= 2 * 2 * H + 1e-6
    sample = _line_model(tmp_path, layout="sample")
    assert sample.source.kind == "points" and sample.levels.band.max() > 3 * grid.levels.band.max()
    assert sample.target.G(np.array([0.33]))[0] == pytest.approx(0.35)  # a step: 7 of 20 atoms


def test_which_point_sets_are_grids():
    square = np.stack(np.meshgrid(NODES[:5], np.round(np.arange(3) / 3, 5), indexing="ij"), -1).reshape(-1, 2)
    assert grid_spacing(square, None, "f", None) == pytest.approx([H, 1 / 3], abs=1e-5)  # rounded values too
    assert grid_spacing(square[:-1], None, "f", None) is None  # not every node: only if declared
    assert grid_spacing(square[:-1], "grid", "f", None) == pytest.approx([H, 1 / 3], abs=1e-5)
    assert grid_spacing(square, "sample", "f", None) is None
    assert grid_spacing(np.vstack([square, square[:1]]), None, "f", None) is None  # a node twice
    rng = np.random.default_rng(0)
    assert grid_spacing(rng.uniform(size=(500, 2)), None, "f", None) is None
    assert grid_spacing(np.round(rng.uniform(size=(500, 2)), 2), None, "f", None) is None  # rounded sample
    with pytest.raises(CostFileError, match="not distinct nodes of one regular grid") as info:
        grid_spacing(rng.uniform(size=(50, 2)), "grid", "m.yaml", "data.source.layout")
    assert "data.source.layout" in str(info.value)


@pytest.mark.parametrize(("side", "needle"), [
    ({"density": "1", "layout": "grid"}, "it goes with 'points'"),
    ({"layout": "grid"}, "it goes with 'points'"),
    ({"points": "w.csv", "layout": "lattice"}, "use one of: 'sample', 'grid'"),
    ({"points": "w.csv", "density": "1"}, "exactly one of 'density' or 'points'"),
])
def test_layout_is_checked_by_the_schema(tmp_path, side, needle):
    from costcheck.spec.loader import load_cost

    (tmp_path / "w.csv").write_text("x1,x2\n0.1,0.2\n")
    sides = ", ".join(f"{k}: {v}" for k, v in side.items())
    (tmp_path / "m.yaml").write_text("id: m\nx: [x1, x2]\ny: [y]\nexpr: x1*y\ndomain: {x: {box: [[0, 1], [0, 1]]}, "
                                     f"y: {{box: [[0, 1]]}}}}\ndata: {{source: {{{sides}}}}}\n")
    with pytest.raises(CostFileError) as info:
        load_cost(tmp_path / "m.yaml")
    assert needle in str(info.value) and "data.source" in str(info.value)


def test_a_declared_grid_masked_by_a_disc_is_read_from_the_cost_file(tmp_path):
    # a grid clipped to the unit disc is not a full grid: read as one only because the file says so
    axis = (np.arange(16) + 0.5) / 8 - 1
    pts = np.stack(np.meshgrid(axis, axis, indexing="ij"), -1).reshape(-1, 2)
    pts = pts[np.sum(pts**2, axis=1) < 1]
    (tmp_path / "w.csv").write_text("x1,x2,weight\n" + "".join(f"{a:.6g},{b:.6g},1\n" for a, b in pts))
    (tmp_path / "m.yaml").write_text(
        "id: m\nsense: surplus\nx: [x1, x2]\ny: [y]\nexpr: y*x1\n"
        "domain: {x: {ball: {center: [0, 0], radius: 1}}, y: {box: [[0, 1]]}}\n"
        "data: {source: {points: w.csv, layout: grid}, target: {density: 1}}\n")
    result = analyse(costcheck.load(tmp_path / "m.yaml"), with_map=False)
    assert result.source.kind == "quadrature" and result.source.cell == pytest.approx([0.125, 0.125])
    assert result.verdict.verdict == "holds"  # ∂s/∂y = x1: vertical lines, nested (elementary)
