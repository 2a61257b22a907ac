"""Derivatives of c = F(t) by Faà di Bruno's formula (costcheck.derivatives.composition).

The reference is the direct symbolic differentiation of the whole expression
(costcheck.derivatives.sympy_backend.symbolic_derivatives); the two must give the same values.
"""

from math import comb
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import costcheck
from costcheck.derivatives.composition import _partitions, composed_derivatives, inner_expression
from costcheck.derivatives.sympy_backend import LAMBDIFY_MODULES, distinct_entries, symbolic_derivatives

from strategies import box_domain, cost_expressions, x_names, y_names

CATALOG = Path(__file__).resolve().parent.parent / "catalog"
FIELDS = ("dx", "dy", "dxy", "dxxy", "dxyy", "dxxyy")


def test_partitions_are_the_set_partitions():
    # their numbers are the Bell numbers 1, 1, 2, 5, 15 (OEIS A000110; B(k+1) = Σ C(k, i) B(i))
    bell = [1]
    for k in range(4):
        bell.append(sum(comb(k, i) * bell[i] for i in range(k + 1)))
    for k in range(5):
        items = list("abcd"[:k])
        seen = {tuple(sorted(tuple(sorted(b)) for b in p)) for p in _partitions(items)}
        assert len(seen) == len(list(_partitions(items))) == bell[k]
        for p in seen:
            assert sorted(x for b in p for x in b) == items


def _cost(expr, n=2, m=2):
    return costcheck.from_expression(expr, x=x_names(n), y=y_names(m), domain=box_domain(n, m))


def test_inner_expression_is_the_smallest_common_argument():
    cost = _cost("sqrt(1 + (x1 - y1)**2 + (x2 - y2)**2)")
    variables = list(cost.x_symbols) + list(cost.y_symbols)
    outer, T, t = inner_expression(cost.expr, variables)
    assert outer.xreplace({T: t}) == cost.expr
    assert not outer.free_symbols & set(variables) and set(variables) <= t.free_symbols
    assert sp.count_ops(t) < sp.count_ops(cost.expr)
    # the variables enter through two places: no common argument
    assert inner_expression(_cost("x1*y1 + x2*y2").expr, variables) is None


def _values(fields, cost, xs, ys):
    """Every entry of every field (rows), at every point (columns)."""
    flat, layout = distinct_entries(fields, FIELDS)
    fn = sp.lambdify(list(cost.x_symbols) + list(cost.y_symbols), flat, modules=LAMBDIFY_MODULES, cse=True)
    columns = np.array([np.broadcast_to(np.asarray(c, float), xs.shape[:1]) for c in fn(*xs.T, *ys.T)])
    return np.concatenate([columns[layout[name].reshape(-1)] for name in FIELDS])


def _assert_same_derivatives(cost, xs, ys):
    xsym, ysym = tuple(cost.x_symbols), tuple(cost.y_symbols)
    composed = composed_derivatives(cost.expr, xsym, ysym, 4)
    direct = symbolic_derivatives(cost.expr, xsym, ysym, 4)
    for name in FIELDS:  # the same layout, and symmetric entries formed once
        assert np.shape(np.array(composed[name], dtype=object)) == np.shape(np.array(direct[name], dtype=object))
    n, m = cost.n, cost.m
    for i in range(n):
        for j in range(n):
            for k in range(m):
                for l in range(m):
                    assert composed["dxxyy"][i][j][k][l] is composed["dxxyy"][j][i][l][k]
    with np.errstate(all="ignore"):
        a, b = _values(composed, cost, xs, ys), _values(direct, cost, xs, ys)
    ok = np.isfinite(b).all(axis=0)
    assert ok.any()
    scale = np.abs(b[:, ok]).max(axis=0)
    np.testing.assert_array_less(np.abs(a[:, ok] - b[:, ok]) / scale, 1e-11)


@pytest.mark.parametrize("name", ["sphere/sphere-dist-sq.yaml", "sphere/sphere-reflector.yaml",
                                  "hyperbolic/hyperbolic-dist-sq.yaml", "euclidean/power-0.5.yaml",
                                  "euclidean/neg-log-dist.yaml", "euclidean/power-0.5-3d.yaml"])
def test_catalog_costs_same_derivatives(name):
    from costcheck.numerics.sampling import sample_pairs

    cost = costcheck.load(CATALOG / name)
    assert inner_expression(cost.expr, list(cost.x_symbols) + list(cost.y_symbols)) is not None
    s = sample_pairs(cost.domain, cost.n, cost.m, 64, 5)
    _assert_same_derivatives(cost, s.xs, s.ys)


OUTER = ["log(2 + sin({}))", "({})**3", "exp(tanh({}))", "sqrt(1 + ({})**2)", "atan({}) * cos({})"]


@settings(max_examples=12, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
@given(data=st.data())
def test_random_functions_of_one_argument_same_derivatives(data):
    n, m = data.draw(st.sampled_from([(1, 1), (2, 2), (2, 1)]))
    inner = data.draw(cost_expressions(n, m, max_depth=1))
    outer = data.draw(st.sampled_from(OUTER))
    cost = _cost(outer.format(inner, inner), n, m)
    rng = np.random.default_rng(data.draw(st.integers(0, 1000)))
    _assert_same_derivatives(cost, rng.uniform(-1, 1, (16, n)), rng.uniform(-1, 1, (16, m)))
