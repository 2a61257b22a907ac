"""Proofs over the normal forms of a chart (costcheck.certify.charts) are sound.

The reduction rests on three facts, each checked here against a computation that does not use
it: the cost is F(σ) (exact rewriting, checked by evaluation), the enclosure [L, U] of σ over the
domain contains σ at domain points (mpmath at 30 digits), and the conditions' signs at a pair
equal those at its normal form (mpmath derivative fields at both pairs, no reduction).
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import mpmath
import numpy as np
import sympy as sp
from hypothesis import given, settings, strategies as st

import costcheck
from costcheck.certify import charts, proofs
from costcheck.certify.branch_bound import Budget
from costcheck.derivatives.mp_backend import high_precision
from costcheck.numerics.curvature.precise import form_mp

CATALOG = Path(__file__).resolve().parent.parent / "catalog"


@lru_cache(maxsize=None)
def _cost(rel):
    return costcheck.load(CATALOG / rel)


@lru_cache(maxsize=None)
def _range(rel, which):
    cost = _cost(rel)
    numerator, scale = which.pairing(cost.x_symbols, cost.y_symbols)
    return charts.pairing_range(cost, numerator / scale)


def test_chart_costs_are_recognised_and_others_are_not():
    # the squared geodesic distance of S² is acos(σ)²/2 with σ = P(u)·P(v), the gnomonic chart
    # (its definition: the central projection, common practice); a cost with an extra u1 is not F(σ)
    cost = _cost("sphere/sphere-dist-sq.yaml")
    t = sp.Dummy("t")
    F = charts.through_pairing(cost.expr, cost.x_symbols, cost.y_symbols, charts.SPHERE, t)
    assert F == sp.acos(t) ** 2 / 2
    other = cost.expr + cost.x_symbols[0]
    assert charts.through_pairing(other, cost.x_symbols, cost.y_symbols, charts.SPHERE, t) is None
    # the half-plane model needs x₂, y₂ > 0: a domain reaching x₂ ≤ 0 is not reduced
    bad = costcheck.from_expression("acosh(1 + ((x1 - y1)**2 + (x2 - y2)**2)/(2*x2*y2))", x=["x1", "x2"],
                                    y=["y1", "y2"], domain={"x": {"box": [[0, 1], [-1, 1]]},
                                                            "y": {"box": [[0, 1], [0.5, 1]]}})
    assert charts.chart_space(bad, ("dxy",)) is None


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(0, 1), min_size=4, max_size=4))
def test_pairing_range_contains_sigma_at_domain_points(unit):
    # σ at the point by mpmath at 30 digits, from its definition (cosh d = 1 + |x − y|²/(2x₂y₂) in the
    # half-plane model: Beardon, The Geometry of Discrete Groups, 1983, §7.2)
    rel = "hyperbolic/hyperbolic-dist-sq.yaml"
    cost = _cost(rel)
    L, U, _ = _range(rel, charts.HYPERBOLIC)
    x1, x2, y1, y2 = -0.5 + unit[0], 0.5 + unit[1], -0.5 + unit[2], 0.5 + unit[3]
    if not cost.domain.contains_pairs(np.array([[x1, x2]]), np.array([[y1, y2]]))[0]:
        return
    with mpmath.workdps(30):
        sigma = ((mpmath.mpf(x1) - y1) ** 2 + (mpmath.mpf(x2) - y2) ** 2) / (mpmath.mpf(x2) * y2)
    assert L <= sigma <= U


def _min_form(fields, thetas=48):
    return min(form_mp(fields, [mpmath.cos(t), mpmath.sin(t)], [-mpmath.sin(t), mpmath.cos(t)], orthogonal=True)
               for t in np.linspace(0, np.pi, thetas, endpoint=False))


def _det(fields):
    M = fields["dxy"]
    return M[0][0] * M[1][1] - M[0][1] * M[1][0]


def test_signs_at_a_pair_are_those_at_its_normal_form():
    # Kim and McCann (JEMS 12, 2010): the cross-curvature is kept by a product of diffeomorphisms that
    # keeps the cost; checked at random pairs of the reflector cost (Wang 2004: A3s on S²) by mpmath
    # fields at the pair and at u = (−s, 0), v = (s, 0) with s = tan(d/2), d = acos(σ).
    cost = _cost("sphere/sphere-reflector.yaml")
    hp = high_precision(cost, 4)
    rng = np.random.default_rng(11)
    for _ in range(4):
        x, y = rng.uniform(-1, 1, 2), rng.uniform(-1, 1, 2)
        with mpmath.workdps(30):
            sigma = (1 + mpmath.fsum(mpmath.mpf(a) * b for a, b in zip(x, y))) / mpmath.sqrt(
                (1 + mpmath.mpf(x @ x)) * (1 + mpmath.mpf(y @ y)))
            s = float(mpmath.tan(mpmath.acos(sigma) / 2))
            here, there = hp(x, y, 30), hp(np.array([-s, 0.0]), np.array([s, 0.0]), 30)
            assert mpmath.sign(_det(here)) != 0 and mpmath.sign(_det(there)) != 0
            assert _min_form(here) > 0 and _min_form(there) > 0


def test_chart_determinant_proof_agrees_with_dense_sampling():
    # hyperbolic plane d²/2: non-degenerate (Cartan–Hadamard, no conjugate points), proved over normal
    # forms; det D²_xy c never vanishes nor changes sign on 20000 sampled pairs of the domain
    cost = _cost("hyperbolic/hyperbolic-dist-sq.yaml")
    outcome, _ = proofs.nondegenerate(cost, Budget(seconds=20, cells=2000))
    assert outcome.proved and "normal-form" in outcome.space
    rng = np.random.default_rng(2)
    xs = rng.uniform([-0.5, 0.5], [0.5, 1.5], (20000, 2))
    ys = rng.uniform([-0.5, 0.5], [0.5, 1.5], (20000, 2))
    keep = cost.domain.contains_pairs(xs, ys)
    M = cost.derivatives(order=2)(xs[keep], ys[keep]).dxy
    det = M[:, 0, 0] * M[:, 1, 1] - M[:, 0, 1] * M[:, 1, 0]
    assert np.all(det > 0) or np.all(det < 0)


def test_chart_mtw_proof_agrees_with_dense_sampling():
    # the far-field reflector -log(1 - x·y) on S² is A3s (Wang, Calc. Var. 20, 2004; Loeper, ARMA 199,
    # 2011): proved over the normal forms with the simplified quartic; the MTW margin is positive at every
    # one of 4000 sampled pairs of the domain (floats, the cost's own fields, no reduction)
    from costcheck.numerics.curvature import margins
    cost = _cost("sphere/sphere-reflector.yaml")
    outcome, _ = proofs.mtw_strong(cost, Budget(seconds=20, cells=2000))
    assert outcome.proved and "normal-form" in outcome.space and "simplified" in outcome.what
    rng = np.random.default_rng(4)
    xs, ys = rng.uniform(-1, 1, (4000, 2)), rng.uniform(-1, 1, (4000, 2))
    keep = cost.domain.contains_pairs(xs, ys)
    raw = margins.a3w_margin(cost.derivatives(order=4)(xs[keep], ys[keep])).raw
    assert np.nanmin(raw) > 0



def test_chart_nncc_proof_agrees_with_dense_sampling():
    # the round sphere's d²/2 has non-negative cross-curvature (Kim and McCann, J. reine angew. Math. 664,
    # 2012), zero along the geodesic, so only the semidefinite Gram certificate can prove it (within the
    # default budget: ~1 s); the scale-free margin is ≥ −1e-7 at every one of 3000 sampled
    # pairs (floats, no reduction)
    from costcheck.defaults import DEFAULT_PROOF_CELLS, DEFAULT_PROOF_SECONDS
    from costcheck.numerics.curvature import margins
    cost = _cost("sphere/sphere-dist-sq.yaml")
    outcome, _ = proofs.nncc_positive(cost, Budget(seconds=DEFAULT_PROOF_SECONDS, cells=DEFAULT_PROOF_CELLS))
    assert outcome.proved and "normal-form" in outcome.space
    assert "wᵀ G w" in outcome.what and outcome.bound == 0.0
    rng = np.random.default_rng(6)
    xs, ys = rng.uniform(-1, 1, (3000, 2)), rng.uniform(-1, 1, (3000, 2))
    keep = cost.domain.contains_pairs(xs, ys)
    scaled = margins.nncc_margin(cost.derivatives(order=4)(xs[keep], ys[keep])).rel
    assert np.nanmin(scaled) > -1e-7


def test_nncc_positive_minimum_route_is_not_run_where_the_sampled_minimum_is_zero():
    # a sampled margin within the tolerance of 0 means no positive lower bound exists on every cell
    # (elementary: a bound > 0 on a cover would put every value above it), so off a chart nothing
    # is attempted and the reason says so; a margin above the tolerance still runs the branch and
    # bound (the radial cover of sqrt(1 - |x - y|^2), whose proof the catalog run reports)
    outcome, why = proofs.nncc_positive(_cost("euclidean/power-0.5.yaml"), Budget(seconds=4.0, cells=20000),
                                        sampled_margin=(-2.9e-13, 1e-7))
    assert outcome is None and "cannot succeed" in why and "-2.9e-13" in why and "not written in one" in why
    outcome, why = proofs.nncc_positive(_cost("euclidean/sqrt-one-minus.yaml"), Budget(seconds=4.0, cells=20000),
                                        sampled_margin=(0.0188, 1e-7))
    assert outcome is not None and outcome.proved and why == ""
