"""Tests of the derivative engine (:mod:`costcheck.derivatives`).

The two backends compute the same numbers by different routes (sympy: symbolic
differentiation lambdified to numpy; jax: forward-mode automatic differentiation),
so most tests pit one against the other, against finite differences, or against
derivatives worked out by hand (elementary calculus).

Index conventions under test (``costcheck/derivatives/__init__.py``)::

    dx[i] = c_{i}   dy[k] = c_{,k}   dxy[i,k] = c_{i,k}
    dxxy[i,j,k] = c_{ij,k}   dxyy[i,k,l] = c_{i,kl}   dxxyy[i,j,k,l] = c_{ij,kl}
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import costcheck
from costcheck import UsageError
from costcheck.derivatives.fields import ORDER_FIELDS, fields_up_to
from strategies import box_domain, costs, points_in, x_names, y_names

BACKENDS = ("sympy", "jax")
ALL_FIELDS = fields_up_to(4)

# jax compiles one evaluator per cost (about a second), so hypothesis tests run few
# examples; deadline=None because that compile time varies a lot between machines.
SLOW = dict(deadline=None, suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


def expected_shape(name: str, N: int, n: int, m: int) -> tuple[int, ...]:
    return {
        "value": (N,),
        "dx": (N, n),
        "dy": (N, m),
        "dxy": (N, n, m),
        "dxxy": (N, n, n, m),
        "dxyy": (N, n, m, m),
        "dxxyy": (N, n, n, m, m),
    }[name]


def assert_normwise_close(actual, expected, *, rtol: float, atol: float, what: str = "") -> None:
    """``max|actual - expected| <= rtol * max|expected| + atol`` (one norm for the whole array)."""
    actual, expected = np.asarray(actual, float), np.asarray(expected, float)
    assert actual.shape == expected.shape, f"{what}: shape {actual.shape} != {expected.shape}"
    assert np.all(np.isfinite(actual)) and np.all(np.isfinite(expected)), f"{what}: non-finite entries"
    error = float(np.max(np.abs(actual - expected), initial=0.0))
    scale = float(np.max(np.abs(expected), initial=0.0))
    bound = rtol * scale + atol
    assert error <= bound, f"{what}: max error {error:.3e} > {bound:.3e} (scale {scale:.3e})"


def evaluate(cost, backend, xs, ys, order=4):
    return cost.derivatives(backend=backend, order=order)(xs, ys)


SYMMETRY_RTOL, SYMMETRY_ATOL = 1e-12, 1e-13  # jax forms c_{ij,k} and c_{ji,k} separately: rounding only


def check_symmetries(d):
    assert_normwise_close(d.dxxy, np.swapaxes(d.dxxy, 1, 2), rtol=SYMMETRY_RTOL, atol=SYMMETRY_ATOL,
                          what="c_{ij,k} = c_{ji,k}")
    assert_normwise_close(d.dxyy, np.swapaxes(d.dxyy, 2, 3), rtol=SYMMETRY_RTOL, atol=SYMMETRY_ATOL,
                          what="c_{i,kl} = c_{i,lk}")
    assert_normwise_close(d.dxxyy, np.swapaxes(d.dxxyy, 1, 2), rtol=SYMMETRY_RTOL, atol=SYMMETRY_ATOL,
                          what="c_{ij,kl} = c_{ji,kl}")
    assert_normwise_close(d.dxxyy, np.swapaxes(d.dxxyy, 3, 4), rtol=SYMMETRY_RTOL, atol=SYMMETRY_ATOL,
                          what="c_{ij,kl} = c_{ij,lk}")


# ----------------------------------------------------------------------------------
# 2. sympy and jax agree
# ----------------------------------------------------------------------------------

# Tolerance: normwise per field, max|sympy - jax| <= 1e-8 * max|sympy| + 1e-12.
# Both are float64 evaluations of the same exact derivatives, differing only in
# rounding (a few ulps times the conditioning of the expression, ~1e-15 relative
# for these moderate costs, see tests/strategies.py); 1e-8 leaves a wide margin yet
# any wrong index, sign or factor is an O(1) relative error.  The absolute floor
# 1e-12 covers fields that are identically zero, where one backend may return exact
# zeros and the other rounding noise of order 1e-16 times the cost's scale (<= ~1e2).
CROSS_RTOL, CROSS_ATOL = 1e-8, 1e-12


# 12 examples: each costs a JAX compilation (~1.4 s); the catalog cross-check adds 27 fixed costs
@settings(max_examples=12, **SLOW)
@given(data=st.data())
def test_sympy_and_jax_agree_on_random_costs(data):
    cost = data.draw(costs(sense=st.sampled_from(["cost", "surplus"])), label="cost")
    xs, ys = data.draw(points_in(cost, count=6), label="points")
    a = evaluate(cost, "sympy", xs, ys)
    b = evaluate(cost, "jax", xs, ys)
    assert a.defined.all() and b.defined.all(), "generated costs are smooth on the box"
    for name in ALL_FIELDS:
        A, B = getattr(a, name), getattr(b, name)
        assert A.shape == B.shape == expected_shape(name, 6, cost.n, cost.m), name
        assert_normwise_close(B, A, rtol=CROSS_RTOL, atol=CROSS_ATOL, what=f"{name} jax vs sympy")
    # jax forms c_{ij,k} and c_{ji,k} (etc.) separately, so its symmetries are a real check;
    # done here rather than in a test of its own to spare a second jax compilation per cost
    check_symmetries(b)


# ----------------------------------------------------------------------------------
# 3. finite differences of each field against the next order
# ----------------------------------------------------------------------------------

FD_STEP = 1e-5  # coordinates are O(1) on the box, so this is the ~1e-5 relative step
FD_RTOL = 1e-5
# Tolerance for a central difference (F(p + h e) - F(p - h e)) / 2h against G = ∂F:
#   truncation error  h²/6 · max|∂³F|  ≈ 2e-11 · max|∂³F|, and ∂³F / ∂F is at most a
#     few hundred for the generated costs (frequencies <= ~10), so <= ~1e-8 · max|G|;
#   rounding error    ~ eps · max|F| / h ≈ 2e-11 · max|F|, bounded below with a
#     100x margin by FD_ROUND · max|F|;
# so tol = 1e-5 · max|G| + 100 · eps/h · max|F| + 1e-12 is ~1000x above the expected
# error, while an index, sign or factor mistake is an error of order max|G|.
FD_ROUND = 100 * np.finfo(float).eps / FD_STEP

# (lower field, coordinate differenced, higher field, einsum mapping the higher field
#  onto the layout "lower field's indices + the new index last")
FD_PAIRS = [
    ("value", "x", "dx", "Ni->Ni"),
    ("value", "y", "dy", "Nk->Nk"),
    ("dx", "y", "dxy", "Nik->Nik"),
    ("dy", "x", "dxy", "Nik->Nki"),
    ("dx", "x", None, None),  # c_{ij}: no field of its own, but must be symmetric (checked below)
    ("dxy", "x", "dxxy", "Nijk->Nikj"),
    ("dxy", "y", "dxyy", "Nikl->Nikl"),
    ("dxxy", "y", "dxxyy", "Nijkl->Nijkl"),
    ("dxyy", "x", "dxxyy", "Nijkl->Niklj"),
]


def central_difference(evaluator, xs, ys, field: str, wrt: str, h: float) -> np.ndarray:
    """``∂ field / ∂ wrt_l`` by central differences, the new index ``l`` last."""
    dim = xs.shape[1] if wrt == "x" else ys.shape[1]
    columns = []
    for l in range(dim):
        step = np.zeros(dim)
        step[l] = h
        if wrt == "x":
            plus, minus = evaluator(xs + step, ys), evaluator(xs - step, ys)
        else:
            plus, minus = evaluator(xs, ys + step), evaluator(xs, ys - step)
        columns.append((getattr(plus, field) - getattr(minus, field)) / (2 * h))
    return np.stack(columns, axis=-1)


def check_finite_differences(cost, backend, xs, ys):
    ev = cost.derivatives(backend=backend, order=4)
    d = ev(xs, ys)
    assert d.defined.all()
    for lower, wrt, higher, mapping in FD_PAIRS:
        fd = central_difference(ev, xs, ys, lower, wrt, FD_STEP)
        f_scale = float(np.max(np.abs(getattr(d, lower))))
        if higher is None:  # the Hessian in x, c_{ij}, is symmetric
            assert_normwise_close(fd, np.swapaxes(fd, 1, 2), rtol=FD_RTOL, atol=FD_ROUND * f_scale + 1e-12,
                                  what=f"{backend}: FD Hessian of c in x is symmetric")
            continue
        exact = np.einsum(mapping, getattr(d, higher))
        assert_normwise_close(fd, exact, rtol=FD_RTOL, atol=FD_ROUND * f_scale + 1e-12,
                              what=f"{backend}: FD of {lower} in {wrt} vs {higher}")


@settings(max_examples=15, **SLOW)
@given(data=st.data())
def test_finite_differences_sympy(data):
    cost = data.draw(costs(), label="cost")
    xs, ys = data.draw(points_in(cost, count=5), label="points")
    check_finite_differences(cost, "sympy", xs, ys)


@settings(max_examples=8, **SLOW)
@given(data=st.data())
def test_finite_differences_jax(data):
    cost = data.draw(costs(), label="cost")
    xs, ys = data.draw(points_in(cost, count=5), label="points")
    check_finite_differences(cost, "jax", xs, ys)


# ----------------------------------------------------------------------------------
# 4. closed forms (elementary calculus)
# ----------------------------------------------------------------------------------

def _points(n, m, N=5, seed=0):
    rng = np.random.default_rng(seed)
    return rng.uniform(-1, 1, (N, n)), rng.uniform(-1, 1, (N, m))


def _cost(expr, n, m, **kw):
    return costcheck.from_expression(expr, x=x_names(n), y=y_names(m), domain=box_domain(n, m), **kw)


EXACT = dict(rtol=1e-12, atol=1e-14)


@pytest.mark.parametrize("backend", BACKENDS)
def test_quadratic_cost_closed_form(backend):
    # c = |x - y|²/2: ∇_x c = x - y, ∇_y c = y - x, D²_xy c = -I, all higher mixed derivatives 0
    cost = _cost("(x1-y1)**2/2 + (x2-y2)**2/2", 2, 2)
    xs, ys = _points(2, 2)
    d = evaluate(cost, backend, xs, ys)
    assert_normwise_close(d.value, 0.5 * np.sum((xs - ys) ** 2, axis=1), **EXACT, what="value")
    assert_normwise_close(d.dx, xs - ys, **EXACT, what="dx")
    assert_normwise_close(d.dy, ys - xs, **EXACT, what="dy")
    assert_normwise_close(d.dxy, np.broadcast_to(-np.eye(2), (5, 2, 2)), **EXACT, what="dxy")
    for name in ("dxxy", "dxyy", "dxxyy"):
        assert_normwise_close(getattr(d, name), np.zeros(expected_shape(name, 5, 2, 2)), **EXACT, what=name)


@pytest.mark.parametrize("backend", BACKENDS)
def test_quartic_product_closed_form(backend):
    # c = -x1 y1 x2 y2: each derivative removes one factor; c_{ij,kl} = -1 iff i≠j and k≠l
    cost = _cost("-x1*y1*x2*y2", 2, 2)
    xs, ys = _points(2, 2)
    d = evaluate(cost, backend, xs, ys)
    x1, x2, y1, y2 = xs[:, 0], xs[:, 1], ys[:, 0], ys[:, 1]
    dxy = np.stack([np.stack([-x2 * y2, -x2 * y1], -1), np.stack([-x1 * y2, -x1 * y1], -1)], 1)
    assert_normwise_close(d.dxy, dxy, **EXACT, what="dxy")
    # c_{12,k} = -(the other y);  c_{ii,k} = 0
    other_y = np.stack([-y2, -y1], -1)
    dxxy = np.zeros((5, 2, 2, 2))
    dxxy[:, 0, 1] = dxxy[:, 1, 0] = other_y
    assert_normwise_close(d.dxxy, dxxy, **EXACT, what="dxxy")
    # c_{i,12} = -(the other x);  c_{i,kk} = 0
    dxyy = np.zeros((5, 2, 2, 2))
    dxyy[:, 0, 0, 1] = dxyy[:, 0, 1, 0] = -x2
    dxyy[:, 1, 0, 1] = dxyy[:, 1, 1, 0] = -x1
    assert_normwise_close(d.dxyy, dxyy, **EXACT, what="dxyy")
    dxxyy = np.zeros((2, 2, 2, 2))
    for i, j, k, l in np.ndindex(2, 2, 2, 2):
        dxxyy[i, j, k, l] = -1.0 if (i != j and k != l) else 0.0
    assert_normwise_close(d.dxxyy, np.broadcast_to(dxxyy, (5, 2, 2, 2, 2)), **EXACT, what="dxxyy")
    assert_normwise_close(d.dx, np.stack([-y1 * x2 * y2, -x1 * y1 * y2], -1), **EXACT, what="dx")
    assert_normwise_close(d.dy, np.stack([-x1 * x2 * y2, -x1 * y1 * x2], -1), **EXACT, what="dy")


@pytest.mark.parametrize("backend", BACKENDS)
def test_exponential_cost_closed_form(backend):
    # c = exp(x y) in one dimension, t = x y:
    #   c_{x,y} = e^t (1 + t),  c_{xx,y} = e^t y (2 + t),  c_{x,yy} = e^t x (2 + t),
    #   c_{xx,yy} = e^t (2 + 4t + t²)
    cost = _cost("exp(x1*y1)", 1, 1)
    xs, ys = _points(1, 1, N=7, seed=3)
    d = evaluate(cost, backend, xs, ys)
    x, y = xs[:, 0], ys[:, 0]
    t = x * y
    e = np.exp(t)
    assert_normwise_close(d.dx[:, 0], y * e, **EXACT, what="dx")
    assert_normwise_close(d.dy[:, 0], x * e, **EXACT, what="dy")
    assert_normwise_close(d.dxy[:, 0, 0], e * (1 + t), **EXACT, what="dxy")
    assert_normwise_close(d.dxxy[:, 0, 0, 0], e * y * (2 + t), **EXACT, what="dxxy")
    assert_normwise_close(d.dxyy[:, 0, 0, 0], e * x * (2 + t), **EXACT, what="dxyy")
    assert_normwise_close(d.dxxyy[:, 0, 0, 0, 0], e * (2 + 4 * t + t**2), **EXACT, what="dxxyy")


@pytest.mark.parametrize("backend", BACKENDS)
def test_surplus_inner_product_gives_minus_identity(backend):
    # surplus s = x·y is minimised as c = -x·y: ∇_x c = -y, ∇_y c = -x, D²_xy c = -I
    cost = _cost("x1*y1 + x2*y2", 2, 2, sense="surplus")
    xs, ys = _points(2, 2)
    d = evaluate(cost, backend, xs, ys)
    assert_normwise_close(d.value, -np.sum(xs * ys, axis=1), **EXACT, what="value")
    assert_normwise_close(d.dx, -ys, **EXACT, what="dx")
    assert_normwise_close(d.dy, -xs, **EXACT, what="dy")
    assert_normwise_close(d.dxy, np.broadcast_to(-np.eye(2), (5, 2, 2)), **EXACT, what="dxy")


@pytest.mark.parametrize("backend", BACKENDS)
def test_surplus_negates_every_field(backend):
    expr = "exp(x1*y2) + x2**2*sin(y1) + log(2 + cos(x1 - y2))"
    xs, ys = _points(2, 2, seed=7)
    as_cost = evaluate(_cost(expr, 2, 2), backend, xs, ys)
    as_surplus = evaluate(_cost(expr, 2, 2, sense="surplus"), backend, xs, ys)
    for name in ALL_FIELDS:
        a = getattr(as_cost, name)
        assert np.max(np.abs(a)) > 1e-3, f"{name} should not vanish for this cost"
        assert_normwise_close(getattr(as_surplus, name), -a, **EXACT, what=name)


# ----------------------------------------------------------------------------------
# 5. index conventions and symmetries
# ----------------------------------------------------------------------------------

@settings(max_examples=15, **SLOW)
@given(data=st.data())
def test_symmetries_sympy(data):
    cost = data.draw(costs(), label="cost")
    xs, ys = data.draw(points_in(cost, count=4), label="points")
    check_symmetries(evaluate(cost, "sympy", xs, ys))


def _expected_2_1(x, y):
    """c = x1² y1 + x2 y1³ + x1 x2 y1² (n = 2, m = 1), worked out by hand at one point."""
    x1, x2 = x
    (y1,) = y
    return {
        "value": x1**2 * y1 + x2 * y1**3 + x1 * x2 * y1**2,
        "dx": [2 * x1 * y1 + x2 * y1**2, y1**3 + x1 * y1**2],
        "dy": [x1**2 + 3 * x2 * y1**2 + 2 * x1 * x2 * y1],
        "dxy": [[2 * x1 + 2 * x2 * y1], [3 * y1**2 + 2 * x1 * y1]],
        "dxxy": [[[2], [2 * y1]], [[2 * y1], [0]]],
        "dxyy": [[[2 * x2]], [[6 * y1 + 2 * x1]]],
        "dxxyy": [[[[0]], [[2]]], [[[2]], [[0]]]],
    }


def _expected_3_2(x, y):
    """c = x1 y2 + x2² y1 y2 + x3 y1² + x1 x3 y2³ (n = 3, m = 2), worked out by hand at one point."""
    x1, x2, x3 = x
    y1, y2 = y
    dxxy = np.zeros((3, 3, 2))
    dxxy[0, 2, 1] = dxxy[2, 0, 1] = 3 * y2**2
    dxxy[1, 1] = [2 * y2, 2 * y1]
    dxyy = np.zeros((3, 2, 2))
    dxyy[0, 1, 1] = 6 * x3 * y2
    dxyy[1, 0, 1] = dxyy[1, 1, 0] = 2 * x2
    dxyy[2, 0, 0] = 2
    dxyy[2, 1, 1] = 6 * x1 * y2
    dxxyy = np.zeros((3, 3, 2, 2))
    dxxyy[0, 2, 1, 1] = dxxyy[2, 0, 1, 1] = 6 * y2
    dxxyy[1, 1, 0, 1] = dxxyy[1, 1, 1, 0] = 2
    return {
        "value": x1 * y2 + x2**2 * y1 * y2 + x3 * y1**2 + x1 * x3 * y2**3,
        "dx": [y2 + x3 * y2**3, 2 * x2 * y1 * y2, y1**2 + x1 * y2**3],
        "dy": [x2**2 * y2 + 2 * x3 * y1, x1 + x2**2 * y1 + 3 * x1 * x3 * y2**2],
        "dxy": [[0, 1 + 3 * x3 * y2**2], [2 * x2 * y2, 2 * x2 * y1], [2 * y1, 3 * x1 * y2**2]],
        "dxxy": dxxy,
        "dxyy": dxyy,
        "dxxyy": dxxyy,
    }


NON_SYMMETRIC = [
    ("x1**2*y1 + x2*y1**3 + x1*x2*y1**2", 2, 1, _expected_2_1),
    ("x1*y2 + x2**2*y1*y2 + x3*y1**2 + x1*x3*y2**3", 3, 2, _expected_3_2),
]


@pytest.mark.parametrize("backend", BACKENDS)
@pytest.mark.parametrize("expr, n, m, expected", NON_SYMMETRIC, ids=["n2m1", "n3m2"])
def test_index_order_by_hand(backend, expr, n, m, expected):
    cost = _cost(expr, n, m)
    xs, ys = _points(n, m, N=4, seed=11)
    d = evaluate(cost, backend, xs, ys)
    for name in ALL_FIELDS:
        got = getattr(d, name)
        assert got.shape == expected_shape(name, 4, n, m), name
        want = np.stack([np.asarray(expected(x, y)[name], float) for x, y in zip(xs, ys)])
        assert_normwise_close(got, want, **EXACT, what=f"{backend} {name}")


# ----------------------------------------------------------------------------------
# 6. undefined points: NaN/inf rows flagged, no exception, no warning
# ----------------------------------------------------------------------------------

UNDEFINED_COSTS = [
    # (expression, n, m); each is undefined (NaN) where x1 < y1 and singular where x1 == y1
    ("sqrt(x1 - y1)", 1, 1),
    ("log(x1 - y1) + x1*y1", 1, 1),
    ("sqrt(x1 - y1) + x2*y1", 2, 1),
    ("log(x1 - y1) + x2*y2**2", 2, 2),
]


@pytest.mark.parametrize("backend", BACKENDS)
@pytest.mark.parametrize("expr, n, m", UNDEFINED_COSTS)
def test_undefined_points_are_flagged(backend, expr, n, m):
    cost = _cost(expr, n, m)
    rng = np.random.default_rng(5)
    xs = rng.uniform(-1, 1, (6, n))
    ys = rng.uniform(-1, 1, (6, m))
    # rows 0, 3: x1 > y1 (defined);  rows 1, 4: x1 < y1 (outside);  rows 2, 5: x1 == y1
    # (the boundary: sqrt is 0 there but its derivative infinite, log is -inf)
    xs[:, 0] = [0.5, -0.5, 0.25, 0.9, 0.0, -0.75]
    ys[:, 0] = [0.1, 0.2, 0.25, -0.3, 0.6, -0.75]
    ev = cost.derivatives(backend=backend)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # any RuntimeWarning from numpy/jax would raise here
        d = ev(xs, ys)
    np.testing.assert_array_equal(d.defined, [True, False, False, True, False, False])
    for name in ALL_FIELDS:
        arr = getattr(d, name).reshape(6, -1)
        assert np.all(np.isfinite(arr[[0, 3]])), f"{name} finite where defined"
    assert not np.any(np.isfinite(d.value[[1, 4]])), "the value itself is NaN outside"
    # the defined rows are right, not merely finite: c_{x1} = 1/(2 sqrt(x1-y1)) or 1/(x1-y1) + y1
    u = xs[[0, 3], 0] - ys[[0, 3], 0]
    want = 0.5 / np.sqrt(u) if expr.startswith("sqrt") else 1 / u
    if "x1*y1" in expr:
        want = want + ys[[0, 3], 0]
    assert_normwise_close(d.dx[[0, 3], 0], want, **EXACT, what="dx at defined rows")


@pytest.mark.parametrize("backend", BACKENDS)
@pytest.mark.parametrize(
    "expr, order, defined_on_kink",
    [
        # |u| has a kink at u = 0: its first derivative sign(u) is taken as 0 there (both
        # backends), and the second one (a point mass) is undefined
        ("abs(x1 - y1) + x1*y1", 1, True),
        ("abs(x1 - y1) + x1*y1", 2, False),
        ("abs(x1 - y1) + x1*y1", 4, False),
        # |u|³ is C² but not C³ at u = 0 (its third derivative jumps from -6 to 6)
        ("abs(x1 - y1)**3", 1, True),
        ("abs(x1 - y1)**3", 4, False),
    ],
)
def test_kink_of_abs_flagged_alike_by_both_backends(backend, expr, order, defined_on_kink):
    cost = _cost(expr, 1, 1)
    xs = np.array([[0.3], [0.5], [0.0], [-0.2]])
    ys = np.array([[0.3], [0.1], [0.0], [0.4]])  # rows 0 and 2 on the kink x1 == y1
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        d = cost.derivatives(backend=backend, order=order)(xs, ys)
    np.testing.assert_array_equal(d.defined, [defined_on_kink, True, defined_on_kink, True])
    u = (xs - ys)[:, 0]
    if expr.startswith("abs(x1 - y1) +"):
        want_dx = np.sign(u) + ys[:, 0]  # sign(0) = 0 on the kink
    else:
        want_dx = 3 * u * np.abs(u)
    assert_normwise_close(d.dx[:, 0], want_dx, **EXACT, what="dx")


@pytest.mark.parametrize("backend", BACKENDS)
def test_defined_with_lower_order(backend):
    cost = _cost("sqrt(x1 - y1)", 1, 1)
    d = cost.derivatives(backend=backend, order=0)([[0.5], [0.1]], [[0.1], [0.5]])
    np.testing.assert_array_equal(d.defined, [True, False])
    assert d.dx is None


def test_take_selects_rows():
    cost = _cost("x1*y1**2", 1, 1)
    xs, ys = _points(1, 1, N=4)
    d = cost.derivatives()(xs, ys)
    sub = d.take(np.array([2, 0]))
    for name in ALL_FIELDS:
        np.testing.assert_array_equal(getattr(sub, name), getattr(d, name)[[2, 0]])


# ----------------------------------------------------------------------------------
# 7. from_function, order, and usage errors
# ----------------------------------------------------------------------------------

EXPR_2_2 = "exp(x1*y1) + sin(x2 - y2)**2 + x1*x2*y2**3 / (2 + cos(y1))"


def _jax_version(x, y):
    import jax.numpy as jnp

    return jnp.exp(x[0] * y[0]) + jnp.sin(x[1] - y[1]) ** 2 + x[0] * x[1] * y[1] ** 3 / (2 + jnp.cos(y[0]))


@pytest.mark.parametrize("sense", ["cost", "surplus"])
def test_from_function_matches_expression(sense):
    fn_cost = costcheck.from_function(_jax_version, n=2, m=2, domain=box_domain(2, 2), sense=sense)
    ex_cost = _cost(EXPR_2_2, 2, 2, sense=sense)
    xs, ys = _points(2, 2, N=6, seed=2)
    a = evaluate(fn_cost, "jax", xs, ys)
    b = evaluate(ex_cost, "sympy", xs, ys)
    for name in ALL_FIELDS:
        assert_normwise_close(getattr(a, name), getattr(b, name), rtol=CROSS_RTOL, atol=CROSS_ATOL, what=name)
    # and the sign convention: a surplus is stored as the cost -s
    sign = -1.0 if sense == "surplus" else 1.0
    want = sign * (np.exp(xs[:, 0] * ys[:, 0]) + np.sin(xs[:, 1] - ys[:, 1]) ** 2 + xs[:, 0] * xs[:, 1] * ys[:, 1] ** 3 / (2 + np.cos(ys[:, 0])))
    assert_normwise_close(a.value, want, **EXACT, what="value")


def test_function_cost_refuses_sympy_backend():
    fn_cost = costcheck.from_function(_jax_version, n=2, m=2, domain=box_domain(2, 2))
    with pytest.raises(UsageError, match="jax"):
        fn_cost.derivatives(backend="sympy")


@pytest.mark.parametrize("backend", BACKENDS)
@pytest.mark.parametrize(
    "xs, ys",
    [
        (np.zeros((3, 3)), np.zeros((3, 2))),  # wrong n
        (np.zeros((3, 2)), np.zeros((3, 1))),  # wrong m
        (np.zeros((3, 2)), np.zeros((4, 2))),  # different numbers of points
        (np.zeros((3, 2, 1)), np.zeros((3, 2, 1))),  # not 2-D
        (np.zeros((2, 2)), np.zeros((2, 2, 2))),  # y not 2-D
    ],
    ids=["n", "m", "N", "3d", "y3d"],
)
def test_bad_input_shapes_raise_usage_error(backend, xs, ys):
    cost = _cost(EXPR_2_2, 2, 2)
    ev = cost.derivatives(backend=backend)
    with pytest.raises(UsageError):
        ev(xs, ys)


def test_bad_order_and_backend_raise_usage_error():
    cost = _cost(EXPR_2_2, 2, 2)
    for order in (-1, 5):
        with pytest.raises(UsageError, match="order"):
            cost.derivatives(order=order)
    with pytest.raises(UsageError, match="backend"):
        cost.derivatives(backend="torch")


@pytest.mark.parametrize("backend", BACKENDS)
@pytest.mark.parametrize("order", range(5))
def test_order_limits_the_fields(backend, order):
    cost = _cost(EXPR_2_2, 2, 2)
    xs, ys = _points(2, 2, N=3)
    d = evaluate(cost, backend, xs, ys, order=order)
    full = evaluate(cost, "sympy", xs, ys, order=4)
    present = set(fields_up_to(order))
    assert present == {f for k in range(order + 1) for f in ORDER_FIELDS[k]}
    for name in ALL_FIELDS:
        if name in present:
            assert_normwise_close(getattr(d, name), getattr(full, name), rtol=CROSS_RTOL, atol=CROSS_ATOL, what=name)
        else:
            assert getattr(d, name) is None, f"order={order} should not compute {name}"


@pytest.mark.parametrize("backend", BACKENDS)
def test_single_point_as_1d_arrays(backend):
    # one pair given as flat vectors is read as N = 1
    cost = _cost(EXPR_2_2, 2, 2)
    d = evaluate(cost, backend, [0.2, -0.4], [0.5, 0.1], order=1)
    assert d.value.shape == (1,) and d.dx.shape == (1, 2) and d.dy.shape == (1, 2)


def test_abs_of_an_expression_sympy_cannot_prove_real():
    # found by hypothesis: sympy leaves Derivative(sign(u), y1) unevaluated when it cannot prove
    # u = cos(x1/(sin(y1) + 2)) + 2 real, and lambdify cannot print it; here u > 0, so |u| = u
    # and the derivatives must equal those of the cost written without abs
    domain = {"x": {"box": [[-1, 1]]}, "y": {"box": [[-1, 1]]}}
    kinked = costcheck.from_expression("x1*y1 + abs(cos(x1/(sin(y1) + 2)) + 2)", x=["x1"], y=["y1"], domain=domain)
    smooth = costcheck.from_expression("x1*y1 + cos(x1/(sin(y1) + 2)) + 2", x=["x1"], y=["y1"], domain=domain)
    xs, ys = np.array([[0.3], [-0.7]]), np.array([[0.2], [0.9]])
    for backend in ("sympy", "jax"):
        a, b = evaluate(kinked, backend, xs, ys), evaluate(smooth, "sympy", xs, ys)
        for name in ALL_FIELDS:
            np.testing.assert_allclose(getattr(a, name), getattr(b, name), rtol=1e-12, atol=1e-12)


def test_chunks_on_threads_give_the_one_call_numbers(monkeypatch):
    # the sympy evaluator runs its lambdified function on chunks of rows, two at a time; the
    # numbers must be those of one call over all rows, and no warning may escape a worker
    # (numpy's error state belongs to each thread)
    from costcheck.derivatives import sympy_backend

    cost = _cost("sqrt(x1 - y1) + x2*y1", 2, 1)
    rng = np.random.default_rng(8)
    xs, ys = rng.uniform(-1, 1, (50, 2)), rng.uniform(-1, 1, (50, 1))
    ys[::7, 0] = xs[::7, 0]  # on the boundary: infinite derivatives
    ev = cost.derivatives(backend="sympy")
    monkeypatch.setattr(sympy_backend, "CHUNK", 10**9)
    whole = ev(xs, ys)
    monkeypatch.setattr(sympy_backend, "CHUNK", 7)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        chunked = ev(xs, ys)
    for name in ALL_FIELDS:
        np.testing.assert_array_equal(getattr(chunked, name), getattr(whole, name))
    assert not whole.defined.all() and whole.defined.any()
