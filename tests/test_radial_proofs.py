"""Proofs for costs of |x − y| alone: the one-dimensional cover of the distances is sound.

Each certificate rests on a reduction (costcheck.certify.space, .proofs, .radial); these tests
check every reduction against an independent computation that does not use it: the MTW form
from mpmath derivative fields at arbitrary pairs and directions (``form_mp``), and dense float
sampling of the margin.
"""

from __future__ import annotations

import mpmath
import numpy as np
import sympy as sp
from hypothesis import given, settings, strategies as st

import costcheck
from costcheck.certify import proofs, quantities, radial
from costcheck.certify.branch_bound import Budget
from costcheck.certify.space import radial_frame
from costcheck.derivatives.mp_backend import high_precision
from costcheck.numerics.curvature import margins
from costcheck.numerics.curvature.precise import form_mp

from pathlib import Path

CATALOG = Path(__file__).resolve().parent.parent / "catalog"


def _cost3(expr: str, lo=0.0, hi=1.0, ylo=1.5, yhi=2.5):
    names = dict(x=["x1", "x2", "x3"], y=["y1", "y2", "y3"])
    box = lambda a, b: {"box": [[a, b]] * 3}  # noqa: E731
    return costcheck.from_expression(expr, **names, domain={"x": box(lo, hi), "y": box(ylo, yhi)})


R2 = "((x1 - y1)**2 + (x2 - y2)**2 + (x3 - y3)**2)"
RADIAL_3D = {"power 1/2": f"-2*{R2}**(1/4)", "sqrt(1 + r²)": f"sqrt(1 + {R2})", "-log r": f"-log({R2})/2"}


def _orthonormal(rng, n):
    q, _ = np.linalg.qr(rng.normal(size=(n, 2)))
    return q[:, 0], q[:, 1]


def test_triangle_form_equals_the_mtw_form_at_arbitrary_pairs_and_directions():
    # The reduction S(ξ, η) = c0 + c1 A + c2 B + c3 AB (A = (ξ·u)², B = (η·u)², u = (x − y)/|x − y|)
    # follows from rotation invariance and the invariants of O(n − 1) (Weyl, The Classical Groups,
    # 1939).  Reference: S computed by mpmath at 40 digits from the cost's own derivative fields at
    # the pair, with no reduction.
    rng = np.random.default_rng(5)
    for name, expr in RADIAL_3D.items():
        cost = _cost3(expr)
        frame = radial_frame(cost)
        assert frame is not None, name
        coefficients = radial.triangle_coefficients(cost, frame)
        hp = high_precision(cost, 4)
        for _ in range(4):
            x, y = rng.uniform(0, 1, 3), rng.uniform(1.5, 2.5, 3)
            xi, eta = _orthonormal(rng, 3)
            u = (x - y) / np.linalg.norm(x - y)
            with mpmath.workdps(40):
                direct = form_mp(hp(x, y, 40), xi, eta, orthogonal=True)
                r = mpmath.sqrt(mpmath.fsum((mpmath.mpf(a) - mpmath.mpf(b)) ** 2 for a, b in zip(x, y)))
                c = [sp.lambdify(frame.r, e, "mpmath")(r) for e in coefficients]
                A, B = mpmath.mpf(float(xi @ u)) ** 2, mpmath.mpf(float(eta @ u)) ** 2
                reduced = c[0] + c[1] * A + c[2] * B + c[3] * A * B
            # xi, eta, u are rounded floats: agreement to ~1e-13 relative is all that can be asked
            assert abs(direct - reduced) <= 1e-12 * (1 + abs(direct)), (name, direct, reduced)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-3, 3), min_size=4, max_size=4))
def test_triangle_bound_is_below_the_minimum_over_a_dense_grid(c):
    # soundness of the bilinear bound (elementary: a bilinear function's minimum on a triangle)
    from flint import arb
    bound = quantities.triangle_lower_bound([arb(v) for v in c])
    A, B = np.meshgrid(np.linspace(0, 1, 201), np.linspace(0, 1, 201))
    inside = A + B <= 1
    values = (c[0] + c[1] * A + c[2] * B + c[3] * A * B)[inside]
    if bound is not None:
        assert bound <= values.min() + 1e-12
    else:
        assert values.min() < 0.05 * (1 + max(abs(v) for v in c))  # refuses only near a non-positive minimum


def test_radial_mtw_proofs_stay_below_every_sampled_margin():
    # The catalog's power costs (MTW 2005: A3s for -2 < p < 1) prove strong over distances; the
    # certified κ must lie below S at every densely sampled pair and orthogonal unit pair.
    for rel in ["euclidean/power-0.5.yaml", "euclidean/power-0.5-3d.yaml", "euclidean/power-minus1.yaml"]:
        cost = costcheck.load(CATALOG / rel)
        outcome, _ = proofs.mtw_strong(cost, Budget(seconds=30, cells=3000))
        assert outcome.proved and "distances" in outcome.space, rel
        rng = np.random.default_rng(3)
        (lo, hi), (ylo, yhi) = cost.domain.x.bounds(), cost.domain.y.bounds()
        xs, ys = rng.uniform(lo, hi, (20000, cost.n)), rng.uniform(ylo, yhi, (20000, cost.n))
        keep = cost.domain.contains_pairs(xs, ys)
        raw = margins.a3w_margin(cost.derivatives(order=4)(xs[keep], ys[keep])).raw
        assert outcome.bound > 0 and np.nanmin(raw) >= outcome.bound, rel


def _plane(expr: str, pairs=None):
    domain = {"x": {"box": [[0, 1], [0, 1]]}, "y": {"box": [[0, 1], [0, 1]]}}
    if pairs:
        domain["pairs"] = pairs
    return costcheck.from_expression(expr, x=["x1", "x2"], y=["y1", "y2"], domain=domain)


R2_PLANE = "((x1 - y1)**2 + (x2 - y2)**2)"


def test_radial_twist_is_proved_only_where_the_profile_is_monotone():
    # D_x c = f(r)(x − y)/r for c = g(|x − y|²); with g(t) = (t − 1)², f(r) = 4r(r² − 1) turns at
    # r = 1/√3 (elementary calculus): inside the distances of [0, 1]² twist fails there, so no proof.
    turning = _plane(f"({R2_PLANE} - 1)**2", pairs=[f"{R2_PLANE} >= 0.04"])
    outcome, _ = proofs.twist(turning, Budget(seconds=5, cells=2000))
    assert outcome is None or not outcome.proved
    # the power cost of p = 1/2 (MTW 2005: twist for p ≠ 1) is proved over the distances
    power = _plane(f"-2*{R2_PLANE}**(1/4)", pairs=[f"{R2_PLANE} >= 0.04"])
    outcome, _ = proofs.twist(power, Budget(seconds=5, cells=2000))
    assert outcome.proved and "connected cover" in outcome.what


def test_radial_twist_needs_one_interval_of_distances():
    # g(t) = (t − 1)²: f(r) = 4r(r² − 1) turns at r = 1/√3 and vanishes at r = 1 (elementary
    # calculus).  With the distances cut to [0.2, 0.447] ∪ [1.1, 1.42] det D²_xy c vanishes only in
    # the gap, so the proved cells form two intervals and the monotone-profile argument is refused.
    split = _plane(f"({R2_PLANE} - 1)**2",
                   pairs=[f"{R2_PLANE} >= 0.04", f"({R2_PLANE} - 0.2)*({R2_PLANE} - 1.21) >= 0"])
    outcome, why = proofs.twist(split, Budget(seconds=10, cells=4000))
    assert outcome is None and "several intervals" in why
    # a gap where det D²_xy c does not vanish is covered by proved cells all the same: the profile is
    # monotone on an interval containing every distance, and the proof stands
    bridged = _plane(f"-2*{R2_PLANE}**(1/4)",
                     pairs=[f"{R2_PLANE} >= 0.04", f"({R2_PLANE} - 0.25)*({R2_PLANE} - 0.81) >= 0"])
    outcome, _ = proofs.twist(bridged, Budget(seconds=5, cells=2000))
    assert outcome.proved


def test_non_radial_costs_are_not_reduced():
    # a translation-invariant cost that is not a function of |x − y| keeps the difference space
    cost = _plane("exp(x1 - y1) + (x2 - y2)**2")
    assert radial_frame(cost) is None


PROFILES = ["({t})**({a})", "exp({a}*{t})", "log(1 + {t})*{a}", "sqrt(1 + {a}*{t})", "({t})**({a}) + {t}/2",
            "-({t})**({a})", "cosh({a}*sqrt({t}))"]


@settings(max_examples=8, deadline=None)
@given(st.sampled_from(PROFILES), st.sampled_from([-1.5, -0.75, -0.25, 0.25, 0.5, 0.75, 1.25, 2]),
       st.sampled_from([2, 3]), st.floats(0.05, 0.5))
def test_random_radial_proofs_agree_with_dense_sampling(profile, a, n, gap):
    # Soundness on costs drawn from a grammar of radial profiles g(|x − y|²): every "proved" of the
    # distance space must agree with dense float sampling at pairs of the declared domain (the
    # sampled margin and det D²_xy c computed from the cost's own derivatives, no reduction).
    xs_, ys_ = [f"x{i}" for i in range(1, n + 1)], [f"y{i}" for i in range(1, n + 1)]
    t = "(" + " + ".join(f"({x} - {y})**2" for x, y in zip(xs_, ys_)) + ")"
    expr = profile.format(t=t, a=a)
    domain = {"x": {"box": [[0, 1]] * n}, "y": {"box": [[0, 1]] * n}, "pairs": [f"{t} >= {gap ** 2}"]}
    cost = costcheck.from_expression(expr, x=xs_, y=ys_, domain=domain)
    if radial_frame(cost) is None:
        return
    rng = np.random.default_rng(11)
    X, Y = rng.uniform(0, 1, (3000, n)), rng.uniform(0, 1, (3000, n))
    keep = cost.domain.contains_pairs(X, Y)
    d = cost.derivatives(order=4)(X[keep], Y[keep])
    budget = Budget(seconds=3, cells=1000)
    outcome, _ = proofs.nondegenerate(cost, budget)
    if outcome is not None and outcome.proved:
        det = np.linalg.det(d.dxy)
        assert np.all(det > 0) or np.all(det < 0), expr
    outcome, _ = proofs.mtw_strong(cost, budget)
    if outcome is not None and outcome.proved:
        raw = margins.a3w_margin(d).raw
        assert np.nanmin(raw) >= outcome.bound * (1 - 1e-9), expr
