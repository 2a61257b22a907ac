"""The determinant map: the quantity it draws, and the pictures it writes."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from costcheck.run.runner import run_checks
from costcheck.spec.loader import load_cost
from costcheck.render.plots import write_figures
from costcheck.render.plots.determinant import scaled_determinant

ROOT = Path(__file__).resolve().parent.parent


def _pairs(n: int, count: int = 50, seed: int = 3):
    rng = np.random.default_rng(seed)
    return rng.uniform(-0.9, 0.9, (count, n)), rng.uniform(-0.9, 0.9, (count, n))


def test_scaled_determinant_of_known_costs():
    # |x - y|²/2: D²_xy c = -I, so det = 1 in the plane (elementary calculus)
    quadratic = load_cost(ROOT / "catalog/euclidean/sq-euclid.yaml")
    xs, ys = _pairs(2)
    assert np.allclose(scaled_determinant(quadratic, xs, ys, 1.0), 1.0)
    # with S taken from the grid (the median σ_max, 1 here) the value is the same
    assert np.allclose(scaled_determinant(quadratic, xs, ys, None), 1.0)
    # |x - y|: D²_xy c = -(I - u uᵀ)/|x - y| with u the unit vector of x - y, rank 1, so det = 0
    # (elementary calculus; the classical degenerate example of Ma-Trudinger-Wang 2005)
    distance = load_cost(ROOT / "catalog/degenerate/euclid-dist.yaml")
    xs, ys = _pairs(2)
    far = np.linalg.norm(xs - ys, axis=1) > 0.3
    values = scaled_determinant(distance, xs[far], ys[far], None)
    assert np.all(values[np.isfinite(values)] == 0.0) and np.isfinite(values).any()


def test_maps_are_written_for_n_1_and_2_only(tmp_path):
    for relpath, expected in [("catalog/degenerate/neg-cos-1d.yaml", 1), ("catalog/euclidean/sq-euclid.yaml", 1),
                              ("catalog/euclidean/sq-euclid-3d.yaml", 0)]:
        report = run_checks(load_cost(ROOT / relpath), budget=128, conditions=["nondegenerate"])
        figures = [f for f in write_figures(report, tmp_path / report.cost.id) if f.kind == "determinant"]
        assert len(figures) == expected, relpath
        for f in figures:
            assert f.png.stat().st_size > 1000 and f.svg.stat().st_size > 1000
            assert "no proof" in f.caption  # a grid picture says what it does not establish
