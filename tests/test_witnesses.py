"""Every witness of a failing catalog verdict, re-evaluated independently of the search.

The re-evaluation here shares no code with the checks: it differentiates the cost's
sympy expression directly, substitutes the witness coordinates as exact rationals (the
binary values of the printed floats) and evaluates with ``evalf`` at 40 digits.  The
quantities are the definitions of ``docs/conditions.md``:

- twist: ``D_x c(x, y) = D_x c(x, y')`` with ``y != y'``;
- non-degeneracy: ``det D²_xy c(x, y) = 0``;
- MTW / NNCC: ``S(ξ, η) = Σ T_ijkl ξ_i ξ_j η'_k η'_l < 0``, ``η' = M⁻¹ η``
  (Ma–Trudinger–Wang 2005; Kim–McCann 2010), with ``ξ · η = 0`` for MTW — here with every
  partial derivative taken numerically by mpmath at 40 digits, not symbolically;
- index form (n > m): the range of ``D²_xy c(x, y')`` is not inside that of ``D²_xy c(x, y)``;
- nestedness (m = 1, with data): ``y < y'``, at most ``ν((-∞, y])`` of the source has
  ``∂s/∂y(·, y) ≤ ∂s/∂y(x, y)`` and at least ``ν((-∞, y'])`` has ``∂s/∂y(·, y') < ∂s/∂y(x, y')``
  (Chiappori–McCann–Pass 2017), counted on the file's data with ``s = -c`` lambdified here.
- Loeper's maximum principle: ``f(t) = c(x, y_t) - c(x', y_t) > max(f(0), f(1))`` with ``y_t``
  on the c-segment w.r.t. ``x`` (Loeper 2009).
"""

from __future__ import annotations

import itertools
from functools import lru_cache
from pathlib import Path

import mpmath
import numpy as np
import pytest
import sympy as sp

import costcheck
from costcheck.run.runner import run_checks

CATALOG = Path(__file__).resolve().parent.parent / "catalog"
DIGITS = 40
#: sampled pairs per check: every published failure of the catalog is found at this budget
BUDGET = 256


def failing_cases():
    cases = []
    for path in sorted(CATALOG.rglob("*.yaml")):
        cost = costcheck.load(path)
        for condition, verdict in cost.expect.items():
            if verdict == "fails":
                cases.append(pytest.param(path, condition, id=f"{path.relative_to(CATALOG)}::{condition}"))
    return cases


def exact(values):
    return [sp.Rational(float(v)) for v in values]


@lru_cache(maxsize=None)
def _report_of(path: Path):
    """One run per file for all its published failures (a second run would redo the derivatives)."""
    cost = costcheck.load(path)
    return run_checks(cost, budget=BUDGET, conditions=[c for c, v in cost.expect.items() if v == "fails"])


def _report(path: Path, condition: str):
    return _report_of(path)


def _at(cost, expr, x, y):
    subs = dict(zip(cost.x_symbols, exact(x))) | dict(zip(cost.y_symbols, exact(y)))
    return sp.N(expr.subs(subs), DIGITS)


def _grad_x(cost):
    return [sp.diff(cost.expr, xi) for xi in cost.x_symbols]


def _mixed(cost):
    return sp.Matrix([[sp.diff(cost.expr, xi, yk) for yk in cost.y_symbols] for xi in cost.x_symbols])


def _s_value(cost, x, y, xi, eta):
    """S(ξ, η) from the definition at one point, by mpmath's numerical differentiation.

    No symbolic derivative is taken: the cost alone is turned into an mpmath function and each
    partial derivative is a finite-difference limit that ``mpmath.diff`` evaluates at
    :data:`DIGITS` digits (it raises its working precision to keep them) — a method that shares
    nothing with the checks' symbolic derivatives, and far faster than differentiating costs
    like the hyperbolic distance symbolically four times.
    """
    n = cost.n
    f = sp.lambdify(list(cost.x_symbols) + list(cost.y_symbols), cost.expr, modules="mpmath")
    with mpmath.workdps(DIGITS):
        point = [mpmath.mpf(float(v)) for v in list(x) + list(y)]  # the exact binary values
        partials: dict = {}

        def at(*wrt):  # wrt: indices into (x..., y...)
            orders = tuple(wrt.count(i) for i in range(2 * n))
            if orders not in partials:
                partials[orders] = mpmath.diff(f, point, orders)
            return partials[orders]

        Y = range(n, 2 * n)
        Minv = mpmath.matrix([[at(i, k) for k in Y] for i in range(n)]) ** -1
        eta_p = Minv * mpmath.matrix([mpmath.mpf(float(v)) for v in eta])
        xi_v = [mpmath.mpf(float(v)) for v in xi]
        total = mpmath.mpf(0)
        for i, j, k, l in itertools.product(range(n), repeat=4):
            first = sum(at(i, j, n + r) * Minv[r, s] * at(s, n + k, n + l) for r in range(n) for s in range(n))
            total += (first - at(i, j, n + k, n + l)) * xi_v[i] * xi_v[j] * eta_p[k] * eta_p[l]
        return total


@pytest.mark.parametrize("path, condition", failing_cases())
def test_failing_witness_reevaluated(path, condition):
    report = _report(path, condition)
    cost = report.cost
    verdict = report.verdicts[condition]
    # the file's source publishes a failure (see its `source` field); the check must agree
    assert verdict.verdict == "fails", f"{path}: {condition} {verdict.verdict}; source: {cost.source}"
    w = verdict.witness
    assert w is not None, f"{path}: a failure must carry a witness"
    assert cost.domain.contains_pairs(np.array([w.x], dtype=float), np.array([w.y], dtype=float))[0]
    if condition == "twist":
        y_prime = w.vectors["y_prime"]
        gap = max(abs(float(a) - float(b)) for a, b in zip(w.y, y_prime))
        assert gap > 1e-6, "y and y' must differ"
        g = _grad_x(cost)
        diff = [_at(cost, gi, w.x, w.y) - _at(cost, gi, w.x, y_prime) for gi in g]
        scale = max(abs(_at(cost, gi, w.x, w.y)) for gi in g) + 1
        assert max(abs(d) for d in diff) <= 1e-8 * scale
    elif condition == "nondegenerate":
        M = _mixed(cost)
        subs = dict(zip(cost.x_symbols, exact(w.x))) | dict(zip(cost.y_symbols, exact(w.y)))
        Mv = M.subs(subs).evalf(DIGITS)
        # |det| is small only relative to the size M has elsewhere in the domain (at the zero
        # itself every entry may be tiny); take that size from the centres of the two regions
        lx, ux = cost.domain.x.bounds()
        ly, uy = cost.domain.y.bounds()
        centre = dict(zip(cost.x_symbols, exact((lx + ux) / 2))) | dict(zip(cost.y_symbols, exact((ly + uy) / 2)))
        corner = dict(zip(cost.x_symbols, exact(lx))) | dict(zip(cost.y_symbols, exact(uy)))
        scale = max(abs(v) for point in (centre, corner, subs) for v in M.subs(point).evalf(DIGITS)
                    if v.is_finite) + sp.Rational(1, 10**30)
        if cost.n == cost.m:
            det = Mv.det()
            assert abs(det) <= 1e-8 * scale**cost.n
        else:
            singular = min(sp.Matrix(Mv.T * Mv).eigenvals(multiple=True), key=lambda v: abs(v))
            assert abs(singular) <= 1e-8 * scale**2
    elif condition == "index_form":
        M = _mixed(cost)
        A = M.subs(dict(zip(cost.x_symbols, exact(w.x))) | dict(zip(cost.y_symbols, exact(w.y)))).evalf(DIGITS)
        B = M.subs(dict(zip(cost.x_symbols, exact(w.x))) | dict(zip(cost.y_symbols, exact(w.vectors["y_prime"])))
                   ).evalf(DIGITS)
        outside = B - A * (A.T * A).inv() * A.T * B  # the part of range B outside range A
        assert float(outside.norm() / B.norm()) > 1e-8
    elif condition == "nested":
        _check_nested_witness(cost, w)
    elif condition == "loeper":
        # Loeper's maximum principle (Loeper 2009; docs/conditions.md#loeper): along the c-segment w.r.t. x,
        # f(t) = c(x, y_t) - c(x', y_t) rises above max(f(0), f(1)); y_t must lie on the segment,
        # i.e. -D_x c(x, y_t) = (1 - t) p0 + t p1 (checked from the expression, not the search)
        xp, y0, y1 = w.vectors["x_prime"], w.vectors["y0"], w.vectors["y1"]
        t = verdict.evidence.details["worst"]["t"]
        f = [_at(cost, cost.expr, w.x, yy) - _at(cost, cost.expr, xp, yy) for yy in (y0, w.y, y1)]
        assert f[1] > max(f[0], f[2]), f"f = {f} has no interior maximum above its ends"
        g = _grad_x(cost)
        p = [[-_at(cost, gi, w.x, yy) for gi in g] for yy in (y0, w.y, y1)]
        size = max(abs(a - b) for a, b in zip(p[2], p[0]))
        off = max(abs(pt - ((1 - t) * a + t * b)) for pt, a, b in zip(p[1], p[0], p[2]))
        assert off <= 1e-8 * size, "y_t is not on the c-segment at the reported t"
    else:
        xi, eta = w.vectors["xi"], w.vectors["eta"]
        if condition == "mtw":
            dot = sum(float(a) * float(b) for a, b in zip(xi, eta))
            assert abs(dot) < 1e-8, "MTW witnesses need ξ · η = 0"
        s = _s_value(cost, w.x, w.y, xi, eta)
        assert s < 0, f"S(ξ, η) = {s} at the witness should be negative"


def _check_nested_witness(cost, w):
    from costcheck.conditions.nested.analysis import source_measure, target_distribution

    (y_sym,) = cost.y_symbols
    phi = sp.lambdify(list(cost.x_symbols) + [y_sym], -sp.diff(cost.expr, y_sym), modules="numpy")
    source = source_measure(cost, cost.data.source)
    target = target_distribution(cost, cost.data.target)
    y, yp = float(w.y[0]), float(w.vectors["y_prime"][0])
    assert y < yp
    at = lambda pts, t: np.broadcast_to(phi(*pts.T, t), pts.shape[:1])  # noqa: E731
    x = np.array([w.x], dtype=float)
    inside = np.sum(source.weights[at(source.points, y) <= at(x, y)[0]])
    strictly_below = np.sum(source.weights[at(source.points, yp) < at(x, yp)[0]])
    assert inside <= target.G(np.array([y]))[0], "x must lie in X≤(y, k+(y))"
    assert strictly_below >= target.G(np.array([yp]))[0], "x must lie outside X<(y', k-(y'))"
