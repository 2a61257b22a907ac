"""Strong MTW for a cost of ``|x − y|``, with the algebra done once in sympy.

For ``n = 2`` the quartic ``S(cos θ, sin θ)`` of :func:`.quantities.orthogonal_quartic` is built
in sympy at ``x − y = (r, 0)`` and bounded on the circle as in the general certificate.  For
``n ≥ 3``, at ``x − y = (r, 0, …)`` the form on orthonormal pairs is ``c₀ + c₁A + c₂B + c₃AB`` with
``A = ξ₁²``, ``B = η₁²`` (:mod:`.proofs` gives the invariant-theory argument).  The four
coefficients are ``S`` at four orthonormal pairs (``(e₂, e₃)``, ``(e₁, e₂)``, ``(e₂, e₁)``,
``((e₁ + e₂)/√2, (e₁ − e₂)/√2)``), built here as sympy expressions in ``r`` from the symbolic
derivatives on the axis — the mixed Hessian there is inverted symbolically (it is diagonal for
such a cost) — so each cell evaluates four expressions of one variable instead of the whole
tensor in ball arithmetic, and the mean-value form acts on the coefficients themselves.
"""

from __future__ import annotations

import itertools

import sympy as sp

from ..derivatives.composition import composed_derivatives
from ..derivatives.sympy_backend import symbolic_derivatives
from . import quantities
from .arb_eval import compile_exprs
from .branch_bound import Budget, Outcome, branch_and_bound
from .space import RadialFrame
from .substitution import as_substitution


def _form(T: dict, inv, xi, eta) -> sp.Expr:
    n = len(xi)
    eta_p = [sum(inv[k, i] * eta[i] for i in range(n)) for k in range(n)]
    total = sp.Integer(0)
    for i, j, k, l in itertools.product(range(n), repeat=4):
        if xi[i] and xi[j] and eta_p[k] != 0 and eta_p[l] != 0:
            total += T[(min(i, j), max(i, j), min(k, l), max(k, l))] * xi[i] * xi[j] * eta_p[k] * eta_p[l]
    return total


def axis_tensor(cost, frame: RadialFrame):
    """``(T, M⁻¹)`` in sympy at ``x − y = (r, 0, …)``, or None if the rewrite keeps other symbols."""
    n = cost.n
    derive = composed_derivatives if frame.composed else symbolic_derivatives
    sym = derive(cost.expr, cost.x_symbols, cost.y_symbols, 4)
    to_axis = as_substitution(frame.to_axis)  # one for all four fields: shared subexpressions rewritten once
    on_axis = {name: _rewrite(sym[name], to_axis, frame.rewrite) for name in ("dxy", "dxxy", "dxyy", "dxxyy")}
    M = sp.Matrix(on_axis["dxy"])
    if M.free_symbols - {frame.r} or M.det() == 0:
        return None
    inv = adjugate_inverse(M, frame)
    return quantities.mtw_tensor(on_axis, [[inv[r, s] for s in range(n)] for r in range(n)]), inv


def adjugate_inverse(M: sp.Matrix, frame: RadialFrame) -> sp.Matrix:
    """``M⁻¹`` as adjugate over determinant: the matrix ``M.inv(method="ADJ")`` returns.

    ``inv`` first proves the determinant non-zero with ``equals(0)``, a simplification that
    takes seconds on these entries.  A determinant that is a non-zero number at one distance is
    not the zero function, and then ``inv`` would return exactly ``adjugate / det``; only when
    that evaluation does not show it (zero, undefined there, or too small to tell) is ``inv``
    itself asked, with its own test and its own error for a singular matrix.
    """
    det = M.det(method="berkowitz")
    lo, hi = float(frame.lo[0]), float(frame.hi[0])
    for t in ((lo + hi) / 2, lo + (hi - lo) / 3) if hi > lo else ():
        value = det.xreplace({frame.r: sp.Rational(t)}).evalf(30)
        if value.is_Float and abs(value) > 1e-12:
            return M.adjugate() / det
    return M.inv(method="ADJ")


def triangle_coefficients(cost, frame: RadialFrame) -> list[sp.Expr] | None:
    """``[c₀, c₁, c₂, c₃]`` as expressions in ``frame.r`` (``n ≥ 3``), or None."""
    n = cost.n
    built = axis_tensor(cost, frame)
    if built is None:
        return None
    T, inv = built
    e = [[1 if i == k else 0 for i in range(n)] for k in range(n)]
    plus = [a + b for a, b in zip(e[0], e[1])]
    minus = [a - b for a, b in zip(e[0], e[1])]
    c0 = _form(T, inv, e[1], e[2])
    c1 = _form(T, inv, e[0], e[1]) - c0
    c2 = _form(T, inv, e[1], e[0]) - c0
    c3 = _form(T, inv, plus, minus) - 4 * c0 - 2 * c1 - 2 * c2
    return _only_in(frame, [c0, c1, c2, c3])


def circle_coefficients(cost, frame: RadialFrame) -> list[sp.Expr] | None:
    """The five coefficients of ``S(u, v)`` on ``ξ = (u, v)``, ``η = (−v, u)`` (``n = 2``), or None."""
    built = axis_tensor(cost, frame)
    if built is None:
        return None
    T, inv = built
    return _only_in(frame, quantities.orthogonal_quartic(T, [[inv[0, 0], inv[0, 1]], [inv[1, 0], inv[1, 1]]]))


def _only_in(frame: RadialFrame, expressions: list):
    # the algebra starts some sums from the Python integer 0: make every entry a sympy number or expression
    expressions = [sp.Integer(e) if isinstance(e, int) else e for e in expressions]
    return None if any(e.free_symbols - {frame.r} for e in expressions) else expressions


def _rewrite(entries, substitution, identities=None):
    """``substitution``: a mapping for ``xreplace`` or a :class:`~.substitution.Substitution`."""
    substitution = as_substitution(substitution)  # one for all the entries: shared subexpressions once
    if isinstance(entries, list):
        return [_rewrite(e, substitution, identities) for e in entries]
    entry = substitution(entries)
    return identities(entry) if identities is not None else entry


#: θ-halvings of the half circle per distance cell (n = 2). The default 7 (intervals of π/128) left
#: sqrt(1/4 + |x − y|²) undecided for |x − y| ≳ 2, where S's harmonics are ~100 times its minimum,
#: however small the r-cell (measured on tests/heldout/sqrt-eps-plus.yaml: 69 % of the domain
#: proved, "cells too small to decide"); 9 halvings decided every cell tried up to |x − y| = 2.8.
#: The search is depth first and stops at the first interval it cannot decide, and each cell is
#: one-dimensional here, so the deeper limit costs little where the form is positive.
CIRCLE_DEPTH = 10


def _circle_bound(values):
    return quantities.circle_lower_bound(values, CIRCLE_DEPTH)


def radial_strong(cost, frame: RadialFrame, budget: Budget) -> Outcome | None:
    """Branch and bound over the distances; None when the symbolic algebra cannot be built."""
    if cost.n == 2:
        coefficients, bound = circle_coefficients(cost, frame), _circle_bound
        what = ("S(ξ, η) on orthogonal unit pairs (at x − y = (r, 0), its quartic built once in sympy) is enclosed "
                "above a positive κ on every cell of a cover of the distances")
    else:
        coefficients, bound = triangle_coefficients(cost, frame), quantities.triangle_lower_bound
        what = ("S(ξ, η) on orthonormal pairs, which for a cost of |x − y| is c₀ + c₁A + c₂B + c₃AB with "
                "A = ξ₁², B = η₁² on the triangle A, B ≥ 0, A + B ≤ 1 (at x − y = (r, 0, 0); the coefficients "
                "built once in sympy), is enclosed above a positive κ on every cell of a cover of the distances")
    if coefficients is None:
        return None
    function = compile_exprs(tuple(coefficients), (frame.r,))

    def decide(a, b):
        duals, _, _ = function.duals_over_box(a, b)
        values = [d.value for d in duals]
        if not all(v.is_finite() for v in values):
            return None
        return bound(values)

    outcome = branch_and_bound(frame.lo, frame.hi, frame.classify, decide, budget)
    outcome.space, outcome.names, outcome.what = frame.description, ["|x-y|"], what
    return outcome
