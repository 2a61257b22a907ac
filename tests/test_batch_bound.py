"""Batched branch and bound (costcheck.certify.batch_bound, cell_deciders, cell_region), cross-examined.

Soundness first: a proved cover must survive dense sampling — the determinant in mpmath at 30
digits (sympy's symbolic D²_xy c evaluated by mpmath), the MTW margin by the float64 exact
quartic minimum (costcheck.numerics.curvature.margins, as tests/test_certify.py does for the
per-cell engine) — and a cell called outside the domain must hold no sampled domain point.
"""

from __future__ import annotations

import mpmath
import numpy as np
import sympy as sp
from hypothesis import HealthCheck, given, settings, strategies as st
from strategies import costs

import costcheck
from costcheck.certify import proofs
from costcheck.certify.batch_bound import batched_branch_and_bound, per_cell
from costcheck.certify.branch_bound import Budget
from costcheck.certify.cell_deciders import mtw_strong_plane, nonzero_determinant
from costcheck.certify.cell_enclosures import CellFieldEnclosures
from costcheck.certify.cell_region import CellLocator
from costcheck.certify.enclosures import TENSOR_FIELDS
from costcheck.certify.region import Locator, bounding_box
from costcheck.derivatives.sympy_backend import symbolic_derivatives


def _mp_det(cost):
    M = sp.Matrix(symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 2)["dxy"])
    return sp.lambdify(tuple(cost.x_symbols) + tuple(cost.y_symbols), M.det(), modules="mpmath")


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(costs(n=2, m=2, max_depth=1), st.integers(0, 2**31), st.sampled_from([4, 1, 0.25]))
def test_batched_determinant_proofs_survive_dense_mpmath_sampling(cost, seed, scale):
    # −x·y plus a random perturbation, small (usually non-degenerate, so proofs happen often enough to
    # be tested) or large (det may vanish: a proof would then be wrong)
    expr = f"-(x1*y1 + x2*y2) + ({cost.raw['expr']}) / {scale}"
    cost = costcheck.from_expression(expr, x=["x1", "x2"], y=["y1", "y2"], id="hypothesis",
                                     domain={"x": {"box": [[-0.3, 0.3], [-0.3, 0.3]]},
                                             "y": {"box": [[0.1, 0.5], [-0.2, 0.2]]}})
    lo, hi = bounding_box(cost.domain)
    try:
        decide = nonzero_determinant(CellFieldEnclosures(cost, ("dxy",)))
    except ValueError:  # a node with no rigorous arithmetic (Unsupported): nothing to prove
        return
    outcome = batched_branch_and_bound(lo, hi, CellLocator(cost.domain, 2).outside, decide,
                                       Budget(seconds=3, cells=4000), batch=64)
    if not outcome.proved:
        return
    fn = _mp_det(cost)
    rng = np.random.default_rng(seed)
    signs = set()
    for p in rng.uniform(lo, hi, size=(60, 4)):
        with mpmath.workdps(30):
            value = fn(*(mpmath.mpf(float(v)) for v in p))
        assert abs(value) >= outcome.bound, f"{cost.raw['expr']}: |det| = {value} below the proved {outcome.bound}"
        signs.add(mpmath.sign(value))
    assert len(signs) == 1, f"proved det ≠ 0 for {cost.raw['expr']} but saw signs {signs}"


def test_batched_strong_mtw_proof_bound_is_below_every_sampled_margin():
    # sqrt(1 + |x - y|^2) on a small box: MTW strong (reference table; Ma–Trudinger–Wang 2005), proved
    # by the per-cell engine too; the batched engine's certified κ must lie below S at every sample
    cost = costcheck.from_expression("sqrt(1 + (x1 - y1)**2 + (x2 - y2)**2)", x=["x1", "x2"], y=["y1", "y2"],
                                     domain={"x": {"box": [[0, 0.1], [0, 0.1]]}, "y": {"box": [[0, 0.1], [0, 0.1]]}})
    lo, hi = bounding_box(cost.domain)
    outcome = batched_branch_and_bound(lo, hi, CellLocator(cost.domain, 2).outside,
                                       mtw_strong_plane(CellFieldEnclosures(cost, TENSOR_FIELDS)),
                                       Budget(seconds=30, cells=3000), batch=256)
    assert outcome.proved and outcome.coverage == 1.0 and outcome.bound > 0
    per_cell_outcome, _ = proofs.mtw_strong(cost, Budget(seconds=30, cells=3000))
    assert per_cell_outcome.proved  # the two engines agree on the verdict
    from costcheck.numerics.curvature import margins

    zs = np.random.default_rng(7).uniform(lo, hi, size=(400, 4))
    minimum = margins.a3w_margin(cost.derivatives(order=4)(zs[:, :2], zs[:, 2:])).raw
    assert np.all(minimum >= outcome.bound - 1e-12)


def test_a_cost_that_fails_is_never_proved():
    # |x - y|^3 (power p = 3 > 1): MTW fails (reference table; Ma–Trudinger–Wang 2005) — no cover may be proved
    cost = costcheck.load(__import__("pathlib").Path(__file__).resolve().parent.parent / "catalog/euclidean/power-3.yaml")
    lo, hi = bounding_box(cost.domain)
    outcome = batched_branch_and_bound(lo, hi, CellLocator(cost.domain, cost.n).outside,
                                       mtw_strong_plane(CellFieldEnclosures(cost, TENSOR_FIELDS)),
                                       Budget(seconds=5, cells=4000), batch=512)
    assert not outcome.proved


def test_cells_called_outside_hold_no_domain_point_and_agree_with_the_per_cell_locator():
    # a ball side, a where and a pairs constraint (decimals that are not binary floats); dense samples of
    # every cell called outside must all fail the domain's own float test (common practice: sampling)
    cost = costcheck.from_expression(
        "(x1 - y1)**2 + (x2 - y2)**2", x=["x1", "x2"], y=["y1", "y2"],
        domain={"x": {"ball": {"center": [0.1, 0.0], "radius": 0.7}}, "y": {"box": [[-1, 1], [-1, 1]]},
                "where": ["x1 + x2 <= 0.3", "y2 >= -0.5"], "pairs": ["(x1 - y1)**2 + (x2 - y2)**2 >= 0.09"]})
    assert cost.domain.where_x and cost.domain.where_y and cost.domain.pairs
    lo0, hi0 = bounding_box(cost.domain)
    rng = np.random.default_rng(4)
    side = (hi0 - lo0) / 8
    lo = lo0 + rng.random((400, 4)) * (hi0 - lo0 - side)
    hi = lo + side
    ours = CellLocator(cost.domain, 2).outside(lo, hi)
    theirs = per_cell(Locator(cost.domain, 2).classify)(lo, hi)
    assert ours.sum() > 20
    assert np.mean(ours == theirs) > 0.95  # both rigorous; they may differ only by enclosure width
    for k in np.flatnonzero(ours):
        pts = rng.uniform(lo[k], hi[k], size=(200, 4))
        assert not cost.domain.contains_pairs(pts[:, :2], pts[:, 2:]).any()
