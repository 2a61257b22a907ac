"""The exact rewrites used at a chart's normal forms (costcheck.certify.range_identities,
costcheck.certify.rational_forms) keep every value: checked against mpmath at 30 digits on the
original expression, at random points of the range."""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

import mpmath
import numpy as np
import sympy as sp

import costcheck
from costcheck.certify.range_identities import RangeRewriter
from costcheck.certify.rational_forms import RationalForms
from costcheck.derivatives.sympy_backend import symbolic_derivatives

CATALOG = Path(__file__).resolve().parent.parent / "catalog"
s = sp.Dummy("s", positive=True)


def _agree(original, rewritten, points, digits=30):
    f, g = (sp.lambdify(s, e, modules="mpmath") for e in (original, rewritten))
    with mpmath.workdps(digits):
        for p in points:
            a, b = f(mpmath.mpf(p)), g(mpmath.mpf(p))
            assert abs(a - b) <= mpmath.mpf(10) ** (5 - digits) * (1 + abs(a)), (p, a, b)


@lru_cache(maxsize=1)
def _sphere_fields():
    """The sphere's d²/2 cost's mixed Hessian at u = (−s, 0), v = (s, 0) (its gnomonic chart)."""
    cost = costcheck.load(CATALOG / "sphere" / "sphere-dist-sq.yaml")
    (u1, u2), (v1, v2) = cost.x_symbols, cost.y_symbols
    to_normal = {u1: -s, u2: sp.Integer(0), v1: s, v2: sp.Integer(0)}
    dxy = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 2)["dxy"]
    return tuple(e.xreplace(to_normal) for row in dxy for e in row)


def test_half_angle_and_roots_keep_the_sphere_fields():
    # tangent half-angle substitution: cos(2 atan s) = (1 − s²)/(1 + s²) (common practice); the rewritten
    # fields equal the originals at 20 random s of the range, by mpmath at 30 digits
    rewrite = RangeRewriter(s, 0.0, 1.5)
    fields = _sphere_fields()
    rewritten = [rewrite(e) for e in fields]
    assert rewrite.applied["half-angle"] >= 1 and rewrite.applied["root of a square"] >= 1
    assert not any(e.has(sp.acos) for e in rewritten)
    points = np.random.default_rng(3).uniform(0.01, 1.5, 20)
    for a, b in zip(fields, rewritten):
        _agree(a, b, points)


def test_identities_are_taken_only_where_they_hold():
    half = sp.acos((1 - s**2) / (1 + s**2))
    # for s < 0, acos(...) = −2 atan(s): the rewrite must not be taken on a range reaching below 0
    assert RangeRewriter(s, -1.0, 1.0)(half) == half
    assert RangeRewriter(s, 0.0, 1.0)(half) == 2 * sp.atan(s)
    root = sp.sqrt(s**2 - 2 * s + 1)  # = |s − 1|
    assert RangeRewriter(s, 0.0, 2.0)(root) == root  # s − 1 changes sign: kept
    assert sp.expand(RangeRewriter(s, 1.0, 2.0)(root)) == s - 1
    assert sp.expand(RangeRewriter(s, 0.0, 0.5)(root)) == 1 - s
    assert RangeRewriter(s, 0.0, 1.0)(sp.sqrt(s**2 + 1)) == sp.sqrt(s**2 + 1)  # not a square
    assert RangeRewriter(s, 0.0, 1.0)(sp.sqrt(s**4 + 2 * s**2 + 1)) == s**2 + 1
    _agree(root, RangeRewriter(s, 1.0, 2.0)(root), [1.1, 1.5, 1.9])


def test_rational_forms_keep_values_and_refuse_what_is_not_rational():
    rewrite = RangeRewriter(s, 0.0, 1.5)
    fields = [rewrite(e) for e in _sphere_fields()]
    forms = RationalForms(s, fields)
    assert forms.atoms == [sp.atan(s)]
    reduced = [forms.reduce(e, factor=True) for e in fields]
    assert all(r is not None for r in reduced)
    assert sum(sp.count_ops(r) for r in reduced) < sum(sp.count_ops(e) for e in fields) / 3
    _agree_all = np.random.default_rng(5).uniform(0.01, 1.5, 20)
    for a, b in zip(fields, reduced):
        _agree(a, b, _agree_all)
    y = sp.Symbol("y")
    assert forms.reduce(sp.atan(s) * y) is None  # another variable
    assert forms.reduce(sp.Float(0.5) * s) is None  # a rounded number is not a rational


def test_gram_matrix_gives_the_cross_curvature_form():
    # w = (ξ_i η_k): Σ T_ijkl ξ_i ξ_j η_k η_l = wᵀ G w for the matrix chosen (exact rationals; algebra)
    from costcheck.certify.chart_nncc import PRODUCTS, gram_matrix

    rng = np.random.default_rng(8)
    pairs = [(0, 0), (0, 1), (1, 1)]
    for zero_row in (False, True):
        T = {(i, j, k, l): sp.Rational(int(rng.integers(-9, 10)), 7) for i, j in pairs for k, l in pairs}
        if zero_row:  # the pattern of the sphere's normal forms: Q vanishes at ξ = η = e₀
            T[(0, 0, 0, 0)] = T[(0, 0, 0, 1)] = T[(0, 1, 0, 0)] = 0
        G = gram_matrix(T, lambda e: e)
        for _ in range(5):
            xi, eta = rng.integers(-5, 6, 2), rng.integers(-5, 6, 2)
            w = sp.Matrix([int(xi[i] * eta[k]) for i, k in PRODUCTS])
            Q = sum(T[(min(i, j), max(i, j), min(k, l), max(k, l))] * int(xi[i] * xi[j] * eta[k] * eta[l])
                    for i in range(2) for j in range(2) for k in range(2) for l in range(2))
            assert (w.T * G * w)[0] == Q
        if zero_row:
            assert all(G[0, b] == 0 for b in range(4))
