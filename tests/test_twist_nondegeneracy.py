"""Twist (A1) and non-degeneracy (A2): verdicts, witnesses re-checked independently, reproducibility.

Every comparison with the outside world names its source beside the assertion.  Witnesses
are re-evaluated here with sympy directly (exact substitution of the reported floats, then
``evalf(50)``), independently of the search and of the checks' own mpmath confirmation.
"""

from __future__ import annotations

import json
import time
from fractions import Fraction

import numpy as np
import pytest
import sympy as sp

import costcheck
from costcheck.run.runner import run_checks

B2 = {"x": {"box": [[-1, 1], [-1, 1]]}, "y": {"box": [[-1, 1], [-1, 1]]}}
X2, Y2 = ["x1", "x2"], ["y1", "y2"]
R2 = "((x1-y1)**2 + (x2-y2)**2)"
OFF_DIAGONAL = dict(B2, pairs=[f"{R2} > 0"])
CONDITIONS = ["twist", "nondegenerate"]


def run(expr, x, y, domain, *, budget=1024, seed=7):
    cost = costcheck.from_expression(expr, x=x, y=y, domain=domain)
    report = run_checks(cost, budget=budget, seed=seed, conditions=CONDITIONS)
    return cost, report.verdicts


_cache: dict = {}


def cached(expr, x, y, domain, **kw):
    key = (expr, tuple(x), tuple(y), json.dumps(domain, sort_keys=True), tuple(sorted(kw.items())))
    if key not in _cache:
        _cache[key] = run(expr, x, y, domain, **kw)
    return _cache[key]


# --------------------------------------------------------------------------- independent re-evaluation


def exact(value: float) -> sp.Rational:
    """The binary float as an exact rational: substituting it is exact."""
    f = Fraction(float(value))
    return sp.Rational(f.numerator, f.denominator)


def sympy_at(cost, exprs, x, y, digits=50):
    subs = {s: exact(v) for s, v in zip(list(cost.x_symbols) + list(cost.y_symbols), list(x) + list(y))}
    return [complex(sp.N(e.xreplace(subs), digits)).real for e in exprs]


def sympy_dx(cost, x, y):
    return np.array(sympy_at(cost, [sp.diff(cost.expr, s) for s in cost.x_symbols], x, y))


def sympy_M(cost, x, y):
    entries = [sp.diff(cost.expr, a, b) for a in cost.x_symbols for b in cost.y_symbols]
    return np.array(sympy_at(cost, entries, x, y)).reshape(cost.n, cost.m)


def coords(cost, side_values, side):
    names = cost.x_names if side == "x" else cost.y_names
    return np.array([side_values[name] for name in names])


def witness_points(cost, verdict):
    w = verdict.to_json(cost.x_names, cost.y_names)["witness"]
    assert w is not None
    return w, coords(cost, w["x"], "x"), coords(cost, w["y"], "y")


def check_collision_independently(cost, verdict, min_separation=1e-2):
    """D_x c(x, y) = D_x c(x, y') recomputed with sympy, y' clearly apart from y, both pairs in the domain."""
    w, x, y = witness_points(cost, verdict)
    yp = coords(cost, w["y_prime"], "y")
    a, b = sympy_dx(cost, x, y), sympy_dx(cost, x, yp)
    scale = max(np.linalg.norm(a), 1e-300)
    # the reported floats are roundings of the confirmed point: a collision up to float rounding
    assert np.linalg.norm(a - b) <= 1e-10 * max(scale, 1.0)
    assert np.linalg.norm(y - yp) >= min_separation
    assert cost.domain.contains_pairs(np.array([x, x]), np.array([y, yp])).all()
    return x, y, yp


def check_degenerate_independently(cost, verdict):
    w, x, y = witness_points(cost, verdict)
    M = sympy_M(cost, x, y)
    sv = np.linalg.svd(M, compute_uv=False)
    assert sv[-1] <= 1e-7 * max(sv[0], 1.0)
    assert cost.domain.contains_pairs(x[None], y[None])[0]
    return x, y, M


# --------------------------------------------------------------------------- the quadratic cost


@pytest.mark.parametrize("expr", [f"{R2}/2", "-(x1*y1 + x2*y2)"])
def test_quadratic_and_bilinear_costs_twist_and_nondegenerate(expr):
    cost, v = cached(expr, X2, Y2, B2)
    # MTW 2005 (table of check values); Gangbo–McCann 1996: D_x c = x - y is injective, M = -I
    assert v["twist"].verdict == "holds"
    assert v["nondegenerate"].verdict == "holds"  # MTW 2005
    assert v["twist"].evidence.kind == "sampled" and v["nondegenerate"].evidence.kind == "sampled"
    # M = -I: the scale-free smallest singular value is exactly 1 (elementary)
    assert v["nondegenerate"].value == pytest.approx(1.0, abs=1e-12)
    # Y is a box and sym(Q M) = I for Q = -I: the sufficient condition (b) holds (Gangbo–McCann 1996)
    assert "(b) holds" in v["twist"].evidence.details["sufficient_condition"]
    assert v["twist"].code == "twist-holds" and v["nondegenerate"].code == "nondegenerate-holds"


# --------------------------------------------------------------------------- |x - y|


def test_distance_cost_fails_twist_with_collinear_witness():
    cost, v = cached(f"sqrt{R2}", X2, Y2, OFF_DIAGONAL)
    tw = v["twist"]
    assert tw.verdict == "fails"  # elementary: D_x c = (x-y)/|x-y|
    # the collisions form a continuum (the whole ray), so no box isolates one for the Krawczyk test:
    # rigorous only when snapped to an exact point; otherwise honestly "sampled", NOT certified
    assert (tw.evidence.kind == "refuted" and "enclosure" in tw.evidence.details) or (
        tw.evidence.kind == "sampled" and "NOT certified" in tw.evidence.summary)
    x, y, yp = check_collision_independently(cost, tw)
    # elementary: the unit vector (x - y)/|x - y| only sees the direction, so y' lies on the ray from x through y
    u, up = (x - y) / np.linalg.norm(x - y), (x - yp) / np.linalg.norm(x - yp)
    assert abs(u[0] * up[1] - u[1] * up[0]) < 1e-10 and u @ up > 0
    assert tw.witness.error_bound is not None and tw.witness.value <= tw.witness.error_bound


def test_distance_cost_fails_nondegeneracy_rank_n_minus_1():
    cost, v = cached(f"sqrt{R2}", X2, Y2, OFF_DIAGONAL)
    nd = v["nondegenerate"]
    assert nd.verdict == "fails" and nd.evidence.kind == "refuted"  # elementary: M = -(I - u uᵀ)/|x - y|
    x, y, M = check_degenerate_independently(cost, nd)
    # rank n - 1 = 1, not 0 (elementary): the larger singular value is 1/|x - y|
    sv = np.linalg.svd(M, compute_uv=False)
    assert sv[0] == pytest.approx(1 / np.linalg.norm(x - y), rel=1e-9)


def test_distance_cost_in_one_dimension_fails_both():
    dom = {"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}, "pairs": ["(x-y)**2 > 0"]}
    cost, v = cached("abs(x-y)", ["x"], ["y"], dom)
    # elementary: c_x = sign(x - y) takes two values only, and c_xy = 0 off the diagonal
    assert v["twist"].verdict == "fails"
    assert v["nondegenerate"].verdict == "fails"
    check_collision_independently(cost, v["twist"])
    check_degenerate_independently(cost, v["nondegenerate"])


# --------------------------------------------------------------------------- -cos(x - y), n = 1


def test_cosine_cost_on_a_long_interval_fails_both():
    dom = {"x": {"box": [[0, 4]]}, "y": {"box": [[0, 4]]}}  # length 4 > π
    cost, v = cached("-cos(x-y)", ["x"], ["y"], dom)
    # elementary: c_x = sin(x - y) is not monotone in y once x - y passes ±π/2; c_xy = -cos(x - y) vanishes there
    assert v["twist"].verdict == "fails" and v["twist"].evidence.kind == "refuted"
    assert v["nondegenerate"].verdict == "fails" and v["nondegenerate"].evidence.kind == "refuted"
    x, y, yp = check_collision_independently(cost, v["twist"])
    # elementary: sin(x - y) = sin(x - y') with y ≠ y' means y + y' = 2x - π (mod 2π)
    k = (2 * x[0] - y[0] - yp[0] - np.pi) / (2 * np.pi)
    assert abs(k - round(k)) < 1e-9
    # the non-degeneracy witness is a bracketed sign change of c_xy; check both ends with sympy
    w = v["nondegenerate"].to_json(cost.x_names, cost.y_names)["witness"]
    cxy = [sp.diff(cost.expr, cost.x_symbols[0], cost.y_symbols[0])]
    fa = sympy_at(cost, cxy, [w["bracket_a_x"]["x"]], [w["bracket_a_y"]["y"]])[0]
    fb = sympy_at(cost, cxy, [w["bracket_b_x"]["x"]], [w["bracket_b_y"]["y"]])[0]
    assert fa * fb < 0  # intermediate value theorem (elementary)
    assert abs(np.cos(w["x"]["x"] - w["y"]["y"])) < 1e-10  # the zero is where x - y = ±π/2 (elementary)


def test_cosine_cost_on_a_short_interval_holds():
    dom = {"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}}
    cost, v = cached("-cos(x-y)", ["x"], ["y"], dom)
    # elementary: |x - y| ≤ 1 < π/2, so c_xy = -cos(x - y) < 0 and c_x = sin(x - y) is monotone in y
    assert v["twist"].verdict == "holds" and v["nondegenerate"].verdict == "holds"
    assert "(a) holds" in v["twist"].evidence.details["sufficient_condition"]


# --------------------------------------------------------------------------- zeros of det M


def test_double_zero_without_sign_change_found_and_confirmed():
    expr = "-(x1**3*y1 + x2*y2)"
    cost, v = cached(expr, X2, Y2, B2)
    M = sp.Matrix(2, 2, lambda i, j: sp.diff(cost.expr, cost.x_symbols[i], cost.y_symbols[j]))
    # elementary: M = diag(-3 x1², -1), so det M = 3 x1² ≥ 0: a zero (x1 = 0) with no sign change
    assert sp.simplify(M.det() - 3 * cost.x_symbols[0] ** 2) == 0
    nd = v["nondegenerate"]
    assert nd.verdict == "fails"
    assert nd.evidence.details["method"] in ("exact", "high precision")
    # a zero without a sign change is rigorous only when exact; seen in high precision it is "sampled"
    assert nd.evidence.kind == ("refuted" if nd.evidence.details["method"] == "exact" else "sampled")
    x, y, _ = check_degenerate_independently(cost, nd)
    assert abs(x[0]) < 1e-6
    # twist fails too, at x1 = 0 where D_x c = (0, -y2) forgets y1 (elementary)
    assert v["twist"].verdict == "fails"
    tx, _, _ = check_collision_independently(cost, v["twist"])
    assert abs(tx[0]) < 1e-6


def test_double_zero_at_a_decimal_point_is_confirmed_in_high_precision():
    # det M = (x1 - a)² with a decimal constant a: no exact snapping (the constant is a float), so
    # the zero must be reached by the high-precision Newton refinement (elementary: M = diag(-(x1-a)², -1))
    cost, v = cached("-((x1 - 0.123456789)**3/3)*y1 - x2*y2", X2, Y2, B2)
    nd = v["nondegenerate"]
    assert nd.verdict == "fails" and nd.evidence.details["method"] == "high precision"
    assert nd.witness.error_bound > 0 and nd.witness.value <= nd.witness.error_bound
    x, _, _ = check_degenerate_independently(cost, nd)
    assert x[0] == pytest.approx(0.123456789, abs=1e-12)


def test_sign_change_of_det_is_bracketed():
    cost, v = cached("-x1*y1 - x2*y2*x1", X2, Y2, B2)
    M = sp.Matrix(2, 2, lambda i, j: sp.diff(cost.expr, cost.x_symbols[i], cost.y_symbols[j]))
    assert sp.simplify(M.det() - cost.x_symbols[0]) == 0  # elementary: det M = x1 changes sign
    nd = v["nondegenerate"]
    assert nd.verdict == "fails" and nd.evidence.details["method"] == "sign change"
    w = nd.to_json(cost.x_names, cost.y_names)["witness"]
    det = [M.det()]
    ends = []
    for end in ("a", "b"):
        xe, ye = coords(cost, w[f"bracket_{end}_x"], "x"), coords(cost, w[f"bracket_{end}_y"], "y")
        assert cost.domain.contains_pairs(xe[None], ye[None])[0]
        ends.append(sympy_at(cost, det, xe, ye)[0])
    assert ends[0] * ends[1] < 0  # intermediate value theorem (elementary)
    assert abs(w["x"]["x1"]) < 1e-9


def test_pole_of_det_is_not_a_zero():
    # elementary: M = diag(-1/x1, -1), det M = 1/x1 changes sign only across the excluded x1 = 0
    cost, v = cached("-log(abs(x1))*y1 - x2*y2", X2, Y2, dict(B2, where=["x1**2 > 0"]))
    assert v["nondegenerate"].verdict == "holds"
    assert v["twist"].verdict == "holds"  # elementary: D_x c = (-y1/x1, -y2) is injective for x1 ≠ 0


def test_limit_on_the_excluded_diagonal_is_not_a_witness():
    # -(1/3)|x - y|³: M = |z| I + z zᵀ/|z| (z = x - y), det M = 2|z|² > 0 off the diagonal but → 0 on it
    cost, v = cached(f"-(1/3)*{R2}**(3/2)", X2, Y2, OFF_DIAGONAL)
    assert v["nondegenerate"].verdict == "holds"  # MTW 2005 / Loeper 2009 table row p > 1: A2 holds
    assert v["twist"].verdict == "holds"  # same row: twist holds


def test_nearly_degenerate_but_nonzero_holds_with_a_note():
    # elementary: M = diag(-(x1² + 1e-12), -1), det M ≥ 1e-12 > 0
    cost, v = cached("-(x1**3/3 + 1e-12*x1)*y1 - x2*y2", X2, Y2, B2)
    nd = v["nondegenerate"]
    assert nd.verdict == "holds"
    assert nd.value < 1e-9 and any("nearly degenerate" in note for note in nd.notes)


def test_ball_domains():
    dom = {"x": {"ball": {"center": [0.3, 0], "radius": 0.5}}, "y": {"ball": {"center": [0, 0], "radius": 1}}}
    cost, v = cached("-(x1**3*y1 + x2*y2)", X2, Y2, dom)
    # elementary: x1 = 0 lies in the x ball, and det M = 3 x1² vanishes there
    assert v["nondegenerate"].verdict == "fails"
    check_degenerate_independently(cost, v["nondegenerate"])
    assert v["twist"].verdict == "fails"  # elementary: at x1 = 0, D_x c = (0, -y2)
    check_collision_independently(cost, v["twist"])


# --------------------------------------------------------------------------- unequal dimensions


def test_rank_for_n2_m1_holds():
    dom = {"x": {"box": [[-1, 1], [-1, 1]]}, "y": {"box": [[-1, 1]]}}
    cost, v = cached("-(x1 + x2**2)*y", X2, ["y"], dom)
    # elementary: M = (-1, -2 x2)ᵀ never vanishes (rank 1 = m), D_x c = -y (1, 2 x2) injective in y
    assert v["nondegenerate"].verdict == "holds"
    assert v["twist"].verdict == "holds"


def test_rank_for_n2_m1_fails_at_the_origin():
    dom = {"x": {"box": [[-1, 1], [-1, 1]]}, "y": {"box": [[-1, 1]]}}
    cost, v = cached("-(x1**2 + x2**2)*y", X2, ["y"], dom)
    # elementary: M = -2 (x1, x2)ᵀ has rank 0 < m = 1 at x = 0, where D_x c = 0 for every y
    nd = v["nondegenerate"]
    assert nd.verdict == "fails"
    x, _, _ = check_degenerate_independently(cost, nd)
    assert np.linalg.norm(x) < 1e-6
    assert v["twist"].verdict == "fails"
    tx, _, _ = check_collision_independently(cost, v["twist"])
    assert np.linalg.norm(tx) < 1e-6


def test_n1_m2_twist_fails_and_rank_is_checked_as_min_dimension():
    dom = {"x": {"box": [[-1, 1]]}, "y": {"box": [[-1, 1], [-1, 1]]}}
    cost, v = cached("-(x*y1 + x**2*y2)", ["x"], Y2, dom)
    # elementary: y ↦ D_x c(x, y) maps a 2-D set to R, so it cannot be injective
    assert v["twist"].verdict == "fails"
    check_collision_independently(cost, v["twist"])
    # elementary: M = (-1, -2x) never vanishes, so it has full rank min(n, m) = 1
    assert v["nondegenerate"].verdict == "holds"
    assert any("n < m" in note for note in v["nondegenerate"].notes)


# --------------------------------------------------------------------------- reproducibility and cost


@pytest.mark.parametrize("expr,domain", [(f"sqrt{R2}", OFF_DIAGONAL), (f"{R2}/2", B2)])
def test_same_seed_gives_identical_verdict_json(expr, domain):
    a_cost, a = run(expr, X2, Y2, domain, seed=11, budget=512)
    b_cost, b = run(expr, X2, Y2, domain, seed=11, budget=512)
    for name in CONDITIONS:
        ja = json.dumps(a[name].to_json(a_cost.x_names, a_cost.y_names), sort_keys=True)
        jb = json.dumps(b[name].to_json(b_cost.x_names, b_cost.y_names), sort_keys=True)
        assert ja == jb  # common practice: a seeded check is a pure function of its inputs


def test_default_budget_is_fast():
    cost = costcheck.from_expression(f"sqrt{R2}", x=X2, y=Y2, domain=OFF_DIAGONAL)
    started = time.perf_counter()
    run_checks(cost, conditions=CONDITIONS)  # default budget, including the derivative build
    # the project's budget: a whole default check of a 2-D cost well under 10 s; these two checks take ~1 s
    assert time.perf_counter() - started < 6.0


def test_collision_across_separate_pieces_of_y():
    # elementary: c_x = -y² takes the same value at y and -y, which lie in different pieces of Y = {|y| > 0.1}
    dom = {"x": {"box": [[0.5, 1]]}, "y": {"box": [[-1, 1]]}, "where": ["y**2 > 0.01"]}
    cost, v = cached("-x*y**2", ["x"], ["y"], dom)
    assert v["twist"].verdict == "fails"
    x, y, yp = check_collision_independently(cost, v["twist"])
    assert y[0] == pytest.approx(-yp[0], abs=1e-9)
    # elementary: c_xy = -2y ≠ 0 on Y; det M changes sign only across the excluded gap
    assert v["nondegenerate"].verdict == "holds"


def test_python_function_cost_falls_back_to_float64_and_says_so():
    jnp = pytest.importorskip("jax.numpy")
    cost = costcheck.from_function(lambda x, y: -jnp.cos(x[0] - y[0]) - x[1] * y[1], n=2, m=2, domain=B2)
    v = run_checks(cost, budget=512, seed=3, backend="jax", conditions=CONDITIONS).verdicts
    # elementary: x1 - y1 ranges over [-2, 2] ∋ ±π/2, where c_{x1 y1} = -cos(x1 - y1) changes sign
    assert v["nondegenerate"].verdict == "fails"
    assert "float64 only" in v["nondegenerate"].witness.confirmation
    assert v["twist"].verdict == "fails"  # elementary: sin(x1 - y1) is not monotone in y1 there
    assert "not confirmed in high precision" in v["twist"].witness.confirmation
