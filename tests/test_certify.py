"""Certified verdicts (costcheck.certify): enclosures are sound, proofs survive cross-examination.

Soundness is the bar: every enclosure must contain the exact value (checked against mpmath at
40 digits at points inside the box), every "proved" verdict must survive dense sampling of its
quantity in high precision, and no catalog cost may be proved to have a verdict other than the
published one.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import mpmath
import numpy as np
import pytest
import sympy as sp
from flint import arb
from hypothesis import HealthCheck, given, settings, strategies as st
from strategies import costs

import costcheck
from costcheck.certify import ProofOptions, balls, identity, proofs, quantities
from costcheck.certify.arb_eval import BallFunction, Unsupported
from costcheck.certify.branch_bound import Budget
from costcheck.derivatives.sympy_backend import symbolic_derivatives
from costcheck.run.runner import run_checks
from costcheck.spec.expression import parse_expression

CATALOG = Path(__file__).resolve().parent.parent / "catalog"
X, Y = sp.Symbol("x", real=True), sp.Symbol("y", real=True)

# ------------------------------------------------------------------ the ball evaluator

#: expressions that reach the edges of their functions' domains on [-2, 2]^2
EDGE_TEXTS = [
    "sqrt(x)", "log(x)", "acos(x)", "asin(y/2)", "acosh(x + 1)", "atanh(x)", "1/(x - y)",
    "abs(x - y)**3", "x**(1/3)", "(x*x)**(3/2)", "sqrt(abs(x))", "x**y", "tan(x)",
    "exp(x)*cos(y) - sinh(x*y)", "atan(x/y)", "sqrt(1 - x**2 - y**2)", "log(1 + x) * acos(y - 1)",
    "(x - y)**4 - 3*(x - y)**2", "cosh(x)**-2 + tanh(y)", "abs(x)*y + abs(y - 1)",
]


def _mp_value(expr, point):
    """The exact value to 40 digits (mpmath), or None where the real function is undefined."""
    fn = sp.lambdify((X, Y), expr, modules="mpmath")
    try:
        with mpmath.workdps(40):
            value = fn(mpmath.mpf(float(point[0])), mpmath.mpf(float(point[1])))
    except (ZeroDivisionError, ValueError, TypeError):
        return None
    if isinstance(value, mpmath.mpc):
        return None if abs(value.imag) > 0 else value.real
    return value if mpmath.isfinite(value) else None


def _contains(b: arb, value) -> bool:
    lo, hi = balls.lower(b), balls.upper(b)
    return lo <= float(value) <= hi or abs(float(value) - lo) < 1e-300 or abs(float(value) - hi) < 1e-300


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(EDGE_TEXTS), st.floats(-2, 2), st.floats(-2, 2), st.floats(1e-6, 1.5),
       st.floats(1e-6, 1.5), st.integers(0, 2**31))


def test_box_enclosures_contain_every_exact_value(text, cx, cy, wx, wy, seed):
    # the defining property of an enclosure (Moore–Kearfott–Cloud, Introduction to Interval
    # Analysis, SIAM 2009, ch. 5): f(B) ⊂ F(B); the exact values come from sympy's expression evaluated at 40
    # digits (mpmath), an independent evaluator
    expr = parse_expression(text, {"x": X, "y": Y})
    fn = BallFunction([expr, sp.diff(expr, X)], (X, Y))
    lo, hi = np.array([cx - wx, cy - wy]), np.array([cx + wx, cy + wy])
    natural = fn([balls.from_bounds(a, b) for a, b in zip(lo, hi)])
    tight = fn.over_box(lo, hi)
    _, grads = fn.with_gradients([balls.from_bounds(a, b) for a, b in zip(lo, hi)])
    rng = np.random.default_rng(seed)
    points = np.vstack([lo, hi, [lo[0], hi[1]], [hi[0], lo[1]], rng.uniform(lo, hi, size=(6, 2))])
    dfdy = sp.diff(expr, Y)
    for p in points:
        for k, e in enumerate((expr, sp.diff(expr, X))):
            exact = _mp_value(e, p)
            for enclosure in (natural[k], tight[k]):
                if enclosure.is_finite():
                    assert exact is not None, f"{e} has an enclosure on a box where it is undefined at {p}"
                    assert _contains(enclosure, exact), f"{e} at {p}: {exact} outside {balls.text(enclosure)}"
        # the forward-mode gradient encloses both partial derivatives
        for g, e in zip(grads[0], (sp.diff(expr, X), dfdy)):
            if g.is_finite():
                exact = _mp_value(e, p)
                assert exact is not None and _contains(g, exact), f"∂({expr}) at {p}: {exact} outside {balls.text(g)}"


def test_ball_helpers_are_tight_where_arbs_own_are_not():
    # |[-3, 1]| = [0, 3] and [-1, 0.5]^2 = [0, 1]: arb's midpoint–radius forms include negatives
    assert balls.lower(balls.ball_abs(balls.from_bounds(-3, 1))) > -1e-6
    assert balls.upper(balls.ipow(balls.from_bounds(-1, 0.5), 2)) < 1.0 + 1e-6
    assert balls.lower(balls.ipow(balls.from_bounds(-1, 0.5), 2)) > -1e-6
    # odd powers are monotone
    cube = balls.ipow(balls.from_bounds(-2, 1), 3)
    assert balls.lower(cube) <= -8 and balls.upper(cube) >= 1 and balls.upper(cube) < 1.001
    # no enclosure where the real function is undefined or not differentiable
    assert not balls.sign(balls.from_bounds(-1e-9, 1)).is_finite()
    assert not balls.rpow(balls.from_bounds(-0.1, 1), 1, 2).is_finite()
    assert not balls.point_mass(balls.from_bounds(-1, 1)).is_finite()
    assert balls.point_mass(balls.from_bounds(0.5, 1)).is_zero()


def test_decimal_constants_enter_exactly():
    # 1/10 is not a binary float: the ball must contain the rational 1/10 itself
    expr = parse_expression("0.1 * x", {"x": X})
    with balls.precision(200):
        (value,) = BallFunction([expr], (X,))([arb(1)])
        assert value.contains(arb(1) / 10)
        assert not value.contains(arb(0.1))  # the float 0.1 is 5.5e-18 away; the ball is ~1e-61 wide


def test_unsupported_nodes_are_refused():
    with pytest.raises(Unsupported):
        BallFunction([sp.gamma(X)], (X,))


# ------------------------------------------------------------------ proofs, cross-examined

def _dense_points(cost, count, seed):
    lo = np.array(list(cost.domain.x.lower) + list(cost.domain.y.lower))
    hi = np.array(list(cost.domain.x.upper) + list(cost.domain.y.upper))
    rng = np.random.default_rng(seed)
    return rng.uniform(lo, hi, size=(count, lo.size))


def _hp_matrix(cost, z):
    sym = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 2)["dxy"]
    subs = {s: sp.Rational(float(v)) for s, v in zip(cost.x_symbols + cost.y_symbols, z)}
    return sp.Matrix([[e.evalf(30, subs=subs) for e in row] for row in sym])


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(costs(n=1, m=1, max_depth=1), st.integers(0, 2**31), st.floats(0.05, 0.6))
def test_nondegeneracy_and_twist_proofs_survive_dense_high_precision_sampling(cost, seed, half):
    # shrink the random cost's box to a random sub-box so proofs happen often enough to test
    rng = np.random.default_rng(seed)
    cx, cy = rng.uniform(-0.5, 0.5, size=2)
    cost = costcheck.from_expression(cost.raw["expr"], x=["x1"], y=["y1"], id="hypothesis",
                                     domain={"x": {"box": [[cx - half, cx + half]]},
                                             "y": {"box": [[cy - half, cy + half]]}})
    budget = Budget(seconds=3, cells=400)
    for outcome, _ in (proofs.nondegenerate(cost, budget), proofs.twist(cost, budget)):
        if outcome is None or not outcome.proved:
            continue
        # a proof of c_xy ≠ 0 on a connected box: every sample is non-zero with one sign
        signs = {sp.sign(_hp_matrix(cost, z)[0, 0]) for z in _dense_points(cost, 60, seed)}
        assert signs in ({1}, {-1}), f"proved c_xy ≠ 0 for {cost.raw['expr']} but saw signs {signs}"


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(costs(n=2, m=2, max_depth=1), st.integers(0, 2**31))
def test_two_dimensional_determinant_proofs_survive_sampling(cost, seed):
    cost = costcheck.from_expression(cost.raw["expr"], x=["x1", "x2"], y=["y1", "y2"], id="hypothesis",
                                     domain={"x": {"box": [[-0.3, 0.3], [-0.3, 0.3]]},
                                             "y": {"box": [[0.1, 0.5], [-0.2, 0.2]]}})
    outcome, _ = proofs.nondegenerate(cost, Budget(seconds=3, cells=300))
    if outcome is None or not outcome.proved:
        return
    signs = {sp.sign(_hp_matrix(cost, z).det()) for z in _dense_points(cost, 40, seed)}
    assert signs in ({1}, {-1}), f"proved det M ≠ 0 for {cost.raw['expr']} but saw signs {signs}"


def _sq_euclid_plus(term: str):
    return costcheck.from_expression(f"((x1 - y1)**2 + (x2 - y2)**2)/2 + {term}", x=["x1", "x2"], y=["y1", "y2"],
                                     domain={"x": {"box": [[0, 1], [0, 1]]}, "y": {"box": [[0, 1], [0, 1]]}})


def test_a_proved_strong_mtw_bound_is_below_every_sampled_margin():
    # sqrt(1 + |x - y|^2) on a small box: MTW strong (check-value table, docs/check-values.md; MTW 2005), proved here; the
    # certified κ must lie below S at every sampled orthogonal unit pair (float64, exact quartic)
    cost = costcheck.from_expression("sqrt(1 + (x1 - y1)**2 + (x2 - y2)**2)", x=["x1", "x2"], y=["y1", "y2"],
                                     domain={"x": {"box": [[0, 0.1], [0, 0.1]]}, "y": {"box": [[0, 0.1], [0, 0.1]]}})
    outcome, _ = proofs.mtw_strong(cost, Budget(seconds=30, cells=3000))
    assert outcome.proved and outcome.coverage == 1.0
    from costcheck.numerics.curvature import margins
    zs = _dense_points(cost, 400, 7)
    d = cost.derivatives(order=4)(zs[:, :2], zs[:, 2:])
    minimum = margins.a3w_margin(d).raw
    assert outcome.bound > 0 and np.all(minimum >= outcome.bound - 1e-12)


def test_a_proved_one_dimensional_nncc_bound_is_below_the_cross_curvature():
    # c = -cos(x - y), n = 1, |x - y| <= 1.2 < pi/2: the one entry of the form is
    # (c_xxy c_xyy / c_xy - c_xxyy) = sin²u / cos u + cos u = 1 / cos u with u = x - y (elementary calculus,
    # with MTW 2005's formula), so NNCC holds; the certified bound must lie below it at every sampled pair
    short = costcheck.from_expression("-cos(x - y)", x=["x"], y=["y"],
                                      domain={"x": {"box": [[0, 1]]}, "y": {"box": [[0.2, 1.2]]}})
    outcome, why = proofs.nncc_positive(short, Budget(seconds=30, cells=3000))
    assert why == "" and outcome.proved and outcome.coverage == 1.0
    rng = np.random.default_rng(3)
    us = rng.uniform(0, 1, 400) - rng.uniform(0.2, 1.2, 400)
    assert 0 < outcome.bound <= min(1 / mpmath.cos(mpmath.mpf(float(u))) for u in us)
    # on an interval longer than pi, c_xy = -cos u vanishes and 1 / cos u changes sign: never proved
    long = costcheck.from_expression("-cos(x - y)", x=["x"], y=["y"],
                                     domain={"x": {"box": [[0, 4]]}, "y": {"box": [[0, 4]]}})
    outcome, _ = proofs.nncc_positive(long, Budget(seconds=5, cells=3000))
    assert not outcome.proved


def test_vanishing_tensor_is_proved_by_identity_and_a_non_vanishing_one_is_not():
    # |x - y|²/2 + separable terms: T ≡ 0 (Kim–McCann 2010; invariances, docs/conditions.md#mtw)
    ok, text = identity.tensor_vanishes(_sq_euclid_plus("sin(x1) + exp(y2)"), 20)
    assert ok, text
    ok, text = identity.tensor_vanishes(_sq_euclid_plus("x1**2 * y1**2"), 5)
    assert not ok


# ------------------------------------------------------------------ the catalog: never a wrong proof

#: conditions whose failure witnesses are certified in ball arithmetic (costcheck.certify.witnesses)
CERTIFIED = {"twist", "nondegenerate", "mtw", "nncc", "loeper", "target_c_convex", "source_c_convex"}

#: costs whose proofs are cheap; together with their published verdicts (sources in the files)
QUICK = ["euclidean/sq-euclid.yaml", "euclidean/neg-inner.yaml", "economics/spence-mirrlees-1d.yaml",
         "economics/bilinear-matching-surplus.yaml", "euclidean/power-3.yaml", "degenerate/neg-cos-1d.yaml"]


@pytest.fixture(scope="module")
def proved_reports():
    options = ProofOptions(seconds=6, cells=3000, identity_seconds=10)
    return {name: run_checks(costcheck.load(CATALOG / name), budget=1024, prove=options) for name in QUICK}


@pytest.mark.parametrize("name", QUICK)
def test_catalog_proofs_never_contradict_the_published_verdict(proved_reports, name):
    report = proved_reports[name]
    for condition, expected in report.cost.expect.items():
        verdict = report.verdicts[condition]
        if verdict.evidence.kind == "proved":
            assert verdict.verdict == expected, f"{name}: {condition} proved {verdict.verdict}, published {expected}"
        if verdict.evidence.kind == "refuted" and condition in CERTIFIED:
            assert "enclosure" in verdict.evidence.details


def test_catalog_proofs_are_reached_where_they_should_be(proved_reports):
    v = proved_reports["euclidean/sq-euclid.yaml"].verdicts
    # |x - y|²/2 on boxes: M = -I, T ≡ 0 (Brenier 1991; MTW 2005 for A3w with equality)
    assert v["nondegenerate"].evidence.kind == "proved" and v["twist"].evidence.kind == "proved"
    assert v["mtw"].verdict == "weak" and v["mtw"].evidence.kind == "proved"
    assert v["nncc"].evidence.kind == "proved"
    # c_xy = −cos(x − y) changes sign on [0, 4]: the witness is certified (check-value table, degenerate row)
    v = proved_reports["degenerate/neg-cos-1d.yaml"].verdicts
    assert v["nondegenerate"].verdict == "fails" and v["nondegenerate"].evidence.kind == "refuted"
    assert "enclosure" in v["nondegenerate"].evidence.details


def test_refuted_mtw_enclosure_contains_the_high_precision_value(proved_reports):
    verdict = proved_reports["euclidean/power-3.yaml"].verdicts["mtw"]
    assert verdict.verdict == "fails" and verdict.evidence.kind == "refuted"
    lo, hi = verdict.evidence.details["enclosure"]["interval"]
    # mpmath's value (60 digits, η normalised in working precision) agrees with arb's ball to rounding
    assert hi < 0 and lo - 1e-12 * abs(lo) <= verdict.witness.value <= hi + 1e-12 * abs(hi)


def test_function_costs_are_never_called_refuted():
    import jax.numpy as jnp

    cost = costcheck.from_function(lambda x, y: -jnp.cos(x[0] - y[0]), n=1, m=1,
                                   domain={"x": {"box": [[0, 4]]}, "y": {"box": [[0, 4]]}}, id="fn")
    verdict = run_checks(cost, budget=512, backend="jax", conditions=["nondegenerate"]).verdicts["nondegenerate"]
    assert verdict.verdict == "fails" and verdict.evidence.kind == "sampled"
    assert "NOT certified" in verdict.evidence.summary


def test_cli_prove_reports_proofs_in_json(tmp_path):
    proc = subprocess.run([sys.executable, "-m", "costcheck.cli", "check", str(CATALOG / "euclidean/sq-euclid.yaml"),
                           "--prove", "--prove-seconds", "5", "--budget", "512", "--json"],
                          capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    doc = json.loads(proc.stdout)
    checks = doc["costs"][0]["checks"]
    proof = checks["nondegenerate"]["evidence"]["proof"]
    assert checks["nondegenerate"]["evidence"]["kind"] == "proved"
    assert proof["coverage"] == 1.0 and proof["proved"] and proof["cells"] >= 1 and "seconds" in proof
    assert checks["mtw"]["evidence"]["proof"]["method"] == "identity"
    assert doc["options"]["prove"]["seconds"] == 5.0
