"""Pictures of a quantity that is zero up to rounding say so instead of drawing rounding noise."""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

import numpy as np

from costcheck.render.plots import heatmap, rounding
from costcheck.spec.loader import load_cost

ROOT = Path(__file__).resolve().parent.parent

# -Φ(x)·Ψ(y) with Φ = Ψ = exp componentwise: the bilinear cost -x·y in other coordinates.  The
# MTW tensor changes as a tensor under x -> Φ(x), y -> Ψ(y) (Kim & McCann, J. Eur. Math. Soc. 12,
# 2010), so S ≡ 0 as for -x·y (Ma, Trudinger & Wang, ARMA 177, 2005); evaluated in floats its
# two terms cancel only up to rounding (noise of size 1e-17, measured), unlike |x - y|², whose
# fourth and third derivatives are exactly 0.
REPARAMETRISED = """\
id: exp-bilinear
title: the bilinear cost in exponential coordinates
x: [x1, x2]
y: [y1, y2]
expr: -(exp(x1)*exp(y1) + exp(x2)*exp(y2))
domain:
  x: {box: [[0, 1], [0, 1]]}
  y: {box: [[0, 1], [0, 1]]}
"""


def _report(cost, word):
    # the maker reads only the cost and the MTW verdict's word and witness
    return SimpleNamespace(cost=cost, verdicts={"mtw": SimpleNamespace(verdict=word, witness=None)})


def test_snap_keeps_values_above_the_rounding_level():
    values = np.array([3e-17, -1e-15, 1e-3, np.nan])
    snapped = rounding.snap_to_zero(values, rounding.rounding_level(np.ones(4)))
    assert snapped[0] == 0 and snapped[1] == 0 and snapped[2] == 1e-3 and np.isnan(snapped[3])
    assert rounding.identically_zero(snapped[:2]) and not rounding.identically_zero(snapped)


def test_margin_zero_up_to_rounding_is_drawn_flat(tmp_path):
    path = tmp_path / "exp-bilinear.yaml"
    path.write_text(REPARAMETRISED, encoding="utf-8")
    # S ≡ 0 for |x - y|² (MTW 2005; common practice) and for the reparametrised bilinear cost
    for cost in (load_cost(ROOT / "catalog/euclidean/sq-euclid.yaml"), load_cost(path)):
        x = np.full(2, 0.5)
        panels = heatmap.margin_slices(cost, x, x)
        assert all(rounding.identically_zero(p[5]) for p in panels), cost.id
        [figure] = heatmap.mtw_margin_slices(_report(cost, "weak"), tmp_path / cost.id)
        assert "no colour map is drawn" in figure.caption and figure.png.stat().st_size > 1000


def test_a_varying_margin_keeps_its_colour_map(tmp_path):
    # the squared geodesic distance on the sphere: MTW strictly positive (Loeper, ARMA 199, 2011)
    cost = load_cost(ROOT / "catalog/sphere/sphere-dist-sq.yaml")
    [figure] = heatmap.mtw_margin_slices(_report(cost, "strong"), tmp_path)
    assert "flat" not in figure.caption and "no colour map" not in figure.caption
