"""Twist of a chart cost F(σ) proved along the distance (costcheck.certify.chart_twist) is sound.

The argument: D_x c is F'(σ) times the differential of σ, a covector whose Riemannian length is
|dσ/dd|, so D_x c fixes the tangent vector towards y and its length |g(d)|, g = F'(σ)·dσ/dd; g of
one sign and strictly monotone fixes d, hence y.  Checked here against computations that do not
use the module: the length of D_x c by mpmath from the cost's own derivatives and the chart's
metric, g's monotonicity at many points by mpmath, and a cost whose g turns inside the range.
"""

from __future__ import annotations

import time
from functools import lru_cache
from pathlib import Path

import mpmath
import numpy as np
import pytest
import sympy as sp

import costcheck
from costcheck.certify import chart_twist, charts, proofs
from costcheck.certify.branch_bound import Budget

CATALOG = Path(__file__).resolve().parent.parent / "catalog"
CHART_FILES = ["sphere/sphere-dist-sq.yaml", "sphere/sphere-reflector.yaml", "hyperbolic/hyperbolic-dist-sq.yaml"]
SPHERE_BOX = {"x": {"box": [[-1, 1], [-1, 1]]}, "y": {"box": [[-1, 1], [-1, 1]]}, "pairs": []}
DOT = "(1 + u1*v1 + u2*v2) / sqrt((1 + u1**2 + u2**2) * (1 + v1**2 + v2**2))"


@lru_cache(maxsize=None)
def _cost(rel):
    return costcheck.load(CATALOG / rel)


def test_sphere_squared_distance_twist_is_proved_by_the_default_check():
    # twist of d²/2 on the sphere away from the cut locus (McCann, GAFA 11, 2001; Loeper, Acta Math.
    # 202, 2009; recalled from memory); the pairs of this file are at distances in [0.15, 1.91]
    started = time.perf_counter()
    report = costcheck.check(_cost("sphere/sphere-dist-sq.yaml"), conditions=["twist"])
    verdict = report.verdicts["twist"]
    assert verdict.verdict == "holds" and verdict.evidence.kind == "proved"
    assert "F'(cos d) sin d" in verdict.evidence.summary and "negative" in verdict.evidence.summary
    assert time.perf_counter() - started < 30


@pytest.mark.parametrize("rel", CHART_FILES)
def test_chart_twist_proves_the_catalog_chart_costs(rel):
    outcome, why = chart_twist.chart_twist(_cost(rel), Budget(seconds=10))
    assert outcome is not None and outcome.proved, why
    assert outcome.bound > 0


def test_sphere_squared_distance_profile_is_minus_the_distance():
    # F(σ) = acos(σ)²/2 gives F'(σ) = −acos σ/√(1 − σ²), so g(d) = F'(cos d) sin d = −d (elementary calculus)
    built, _ = chart_twist.profile(_cost("sphere/sphere-dist-sq.yaml"))
    h = sp.lambdify(built.t, built.h, "mpmath")
    for d in np.linspace(0.2, 1.9, 9):
        assert abs(h(mpmath.cos(mpmath.mpf(d))) + d) < 1e-12


def _turning_cost():
    # F(σ) = (σ + 1/2)²/2: g(d) = (cos d + 1/2) sin d > 0 for σ > −1/2, but dg/dd = 2cos²d + cos d/2 − 1
    # vanishes at cos d = (√33 − 1)/8 ≈ 0.593, inside the box's σ range [−1/3, 1] (elementary calculus)
    return costcheck.from_expression(f"({DOT} + 0.5)**2 / 2", x=["u1", "u2"], y=["v1", "v2"], domain=SPHERE_BOX)


def test_a_profile_that_turns_inside_the_range_is_not_proved():
    cost = _turning_cost()
    built, _ = chart_twist.profile(cost)
    assert built is not None and built.lo < 0.593 < built.hi
    outcome, _ = chart_twist.chart_twist(cost, Budget(seconds=2))
    assert outcome is not None and not outcome.proved
    # the search is stuck where dg/dσ = 0
    turning = (33 ** 0.5 - 1) / 8
    assert any(lo[0] - 1e-3 <= turning <= hi[0] + 1e-3 for lo, hi in outcome.stuck)
    outcome, _ = proofs.twist(cost, Budget(seconds=2))
    assert outcome is None or not outcome.proved
    # and twist really fails: two distances with equal g, one either side of the turning point, give
    # the same D_x c at two targets on one geodesic from x (elementary calculus, by mpmath)
    g = lambda d: (mpmath.cos(d) + 0.5) * mpmath.sin(d)  # noqa: E731
    d1 = mpmath.mpf("0.5")
    d2 = mpmath.findroot(lambda d: g(d) - g(d1), 1.5)
    assert abs(d2 - d1) > 0.5


def _metric_length(cost, chart_sphere, x, y):
    """The Riemannian length of D_x c at (x, y), by mpmath from the cost's own derivatives and the chart's
    metric (gnomonic: G = JᵀJ with J = dP/du; half-plane: G = I/x₂²)."""
    xs, ys = tuple(cost.x_symbols), tuple(cost.y_symbols)
    grad = [sp.lambdify(xs + ys, sp.diff(cost.expr, s), "mpmath") for s in xs]
    with mpmath.workdps(30):
        point = [mpmath.mpf(v) for v in (*x, *y)]
        D = mpmath.matrix([g(*point) for g in grad])
        if chart_sphere:
            u = mpmath.matrix([point[0], point[1], 1])
            P = lambda w: w / mpmath.norm(w)  # noqa: E731
            J = mpmath.matrix(3, 2)
            for k in range(2):
                e = mpmath.matrix([1 if i == k else 0 for i in range(3)])
                column = (P(u + e * mpmath.mpf("1e-12")) - P(u - e * mpmath.mpf("1e-12"))) / mpmath.mpf("2e-12")
                for i in range(3):
                    J[i, k] = column[i]
            G = J.T * J
        else:
            G = mpmath.eye(2) / point[1] ** 2
        return mpmath.sqrt((D.T * mpmath.inverse(G) * D)[0])


@pytest.mark.parametrize("rel", CHART_FILES)
def test_the_length_of_D_x_c_is_the_profile(rel):
    # the length of D_x c in the chart's metric is |F'(σ) dσ/dd| = |g| (the Gauss lemma: |∇_x d| = 1 away
    # from x and the cut locus; recalled from memory), computed without the module at random domain pairs
    cost = _cost(rel)
    built, _ = chart_twist.profile(cost)
    h = sp.lambdify(built.t, built.h, "mpmath")
    numerator_scale = (charts.SPHERE if built.sphere else charts.HYPERBOLIC).pairing(
        cost.x_symbols, cost.y_symbols)
    sigma = sp.lambdify(tuple(cost.x_symbols) + tuple(cost.y_symbols), numerator_scale[0] / numerator_scale[1],
                        "mpmath")
    rng = np.random.default_rng(7)
    (xl, xh), (yl, yh) = cost.domain.x.bounds(), cost.domain.y.bounds()
    lo, hi = np.concatenate([xl, yl]), np.concatenate([xh, yh])
    tested = 0
    for point in lo + (hi - lo) * rng.random((40, 4)):
        if not cost.domain.contains_pairs(point[None, :2], point[None, 2:])[0]:
            continue
        with mpmath.workdps(30):
            expected = abs(h(sigma(*[mpmath.mpf(v) for v in point])))
        assert abs(_metric_length(cost, built.sphere, point[:2], point[2:]) - expected) < 1e-8 * (1 + expected)
        tested += 1
    assert tested >= 10


@pytest.mark.parametrize("rel", CHART_FILES)
def test_proved_profiles_are_monotone_and_one_signed_at_many_points(rel):
    # dense sampling consistency: g by mpmath at 400 points of the proved σ range (no ball arithmetic)
    cost = _cost(rel)
    built, _ = chart_twist.profile(cost)
    outcome, _ = chart_twist.chart_twist(cost, Budget(seconds=10))
    assert outcome.proved
    h = sp.lambdify(built.t, built.h, "mpmath")
    hi = min(built.hi, 0.98877) if built.sphere else built.hi  # the sphere files keep d ≥ 0.15
    with mpmath.workdps(30):
        values = [h(mpmath.mpf(s)) for s in np.linspace(built.lo, hi, 400)]
    assert all(v > 0 for v in values) or all(v < 0 for v in values)
    steps = [b - a for a, b in zip(values, values[1:])]
    assert all(s > 0 for s in steps) or all(s < 0 for s in steps)


def test_a_profile_monotone_on_two_separate_ranges_is_not_proved():
    # the same turning profile with the σ around its turning point (≈ 0.593) cut out by a pairs constraint:
    # dg/dσ ≠ 0 on each of the two remaining intervals, but g takes equal values on both (it rises then
    # falls in d), so twist fails and the proved cells, which do not join, must not make a proof (pairs at
    # distance < 0.15 are left out too, where g → 0 and nothing can be proved)
    cut = f"({DOT} - 0.55) * ({DOT} - 0.65) >= 0"
    cost = costcheck.from_expression(f"({DOT} + 0.5)**2 / 2", x=["u1", "u2"], y=["v1", "v2"],
                                     domain={**SPHERE_BOX, "pairs": [cut, f"{DOT} <= cos(0.15)"]})
    outcome, why = chart_twist.chart_twist(cost, Budget(seconds=2))
    assert outcome is None and "several intervals" in why
    outcome, _ = proofs.twist(cost, Budget(seconds=2))
    assert outcome is None or not outcome.proved
