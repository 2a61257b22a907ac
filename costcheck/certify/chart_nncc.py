"""NNCC over a chart's normal forms (:mod:`.charts`) by a Gram matrix built once in sympy (``n = 2``).

The cross-curvature form at a pair is ``Q(ξ, η) = Σ T_ijkl ξ_i ξ_j η_k η_l`` (:func:`.quantities.mtw_tensor`;
NNCC: ``Q ≥ 0`` for all ``ξ``, ``η``; Kim and McCann, JEMS 12, 2010).  With the four products
``w_(ik) = ξ_i η_k`` it is ``Q = wᵀ G w`` for the matrix ``G_(ik),(jl) = T_ijkl``, and also for
``G(μ) = G + μ(E_(00),(11) + E_(11),(00) − E_(01),(10) − E_(10),(01))`` for every ``μ``, because
``w_(00) w_(11) = w_(01) w_(10)`` (both are ``ξ₀ξ₁η₀η₁``).  If ``G(μ) ⪰ 0`` then ``Q ≥ 0``.  When the
form vanishes along a direction, as the round sphere's squared distance does along the geodesic
(``T_0000 = 0`` at the normal forms), no positive-minimum certificate can succeed, but ``G(μ)`` can
still be semidefinite: a zero diagonal entry forces its row to vanish, which fixes ``μ`` (``μ = −T_0101``
when ``G_(00),(00)`` or ``G_(11),(11)`` is 0, ``μ = T_0101`` when ``G_(01),(01)`` or ``G_(10),(10)`` is 0).

The entries are built at the normal forms in ``Q(s, atoms)`` (:mod:`.rational_forms`); rows that
reduce to 0 exactly are dropped (they are 0 wherever the fields are defined), and the rest is shown
positive definite on each cell by its leading principal minors (Sylvester's criterion), each reduced
and factored once; each factor is enclosed on its own by the mean-value form, and a minor is positive
on the cell when every factor excludes 0 there and the signs multiply to +.  A cell counts only when the original fields
are enclosed and ``det D²_xy c`` excludes 0 there (:func:`.chart_mtw.fields_defined`), so the reduced
forms equal the originals on it.  The chart's change of coordinates keeps the sign of ``Q`` (see
:mod:`.charts`), so ``Q ≥ 0`` at every normal form of the cover gives NNCC on the domain.
"""

from __future__ import annotations

import itertools
import math

import sympy as sp

from ..numerics.bounded import within
from . import balls, chart_mtw, radial
from .arb_eval import compile_exprs
from .branch_bound import Budget, Outcome, branch_and_bound
from .space import ProofSpace, RadialFrame

#: the products ξ_i η_k in the order of G's rows
PRODUCTS = ((0, 0), (0, 1), (1, 0), (1, 1))


def gram_matrix(T: dict, reduce) -> sp.Matrix | None:
    """``G(μ)`` with ``μ`` chosen so a zero diagonal entry has a zero row when it can; None if not rational."""
    def t(i, j, k, l):
        return T[(min(i, j), max(i, j), min(k, l), max(k, l))]

    G = sp.zeros(4, 4)
    for a, (i, k) in enumerate(PRODUCTS):
        for b, (j, l) in enumerate(PRODUCTS):
            entry = t(i, j, k, l)  # a sympy expression, or a plain 0 for an entry never formed
            value = reduce(entry if isinstance(entry, sp.Basic) else sp.Rational(entry))
            if value is None:
                return None
            G[a, b] = value
    tau = G[0, 3]
    mu = -tau if 0 in (G[0, 0], G[3, 3]) else (tau if 0 in (G[1, 1], G[2, 2]) else sp.Integer(0))
    corner, middle = reduce(G[0, 3] + mu), reduce(G[1, 2] - mu)
    if corner is None or middle is None:
        return None
    G[0, 3] = G[3, 0] = corner
    G[1, 2] = G[2, 1] = middle
    return G


def _leibniz(H: sp.Matrix) -> sp.Expr:
    """``det H`` as the plain sum over permutations (at most 4! terms), left for exact reduction: sympy's own
    determinant simplifies every product on the way and takes minutes on these entries."""
    n = H.shape[0]
    terms = []
    for p in itertools.permutations(range(n)):
        inversions = sum(1 for i in range(n) for j in range(i + 1, n) if p[i] > p[j])
        terms.append((-1) ** inversions * sp.Mul(*[H[i, p[i]] for i in range(n)]))
    return sp.Add(*terms)


def _minors(cost, frame: RadialFrame):
    """``(leading principal minors of G's non-zero rows, rows kept)`` as expressions in ``s``, or None."""
    built = chart_mtw.rational_frame(cost, frame)
    if built is None:
        return None
    reduced, forms = built
    tensor = radial.axis_tensor(cost, reduced)
    if tensor is None:
        return None
    G = gram_matrix(tensor[0], forms.reduce)
    if G is None:
        return None
    keep = [a for a in range(4) if any(G[a, b] != 0 for b in range(4))]
    H = G.extract(keep, keep)
    minors = [forms.reduce(_leibniz(H[:k, :k]), factor=True) for k in range(1, len(keep) + 1)]
    return None if any(m is None for m in minors) else (minors, [PRODUCTS[a] for a in keep])


def _factors(expression: sp.Expr) -> list:
    """``[(base, power)]`` with ``expression = Π base^power`` (the factored minor read off its product; each base
    is enclosed on its own, which keeps a factor's cancellation from spreading to the others)."""
    out = []
    for factor in sp.Mul.make_args(expression):
        base, power = factor.as_base_exp() if factor.is_Pow and factor.exp.is_Integer else (factor, 1)
        out.append((base, int(power)))
    return out


def chart_nncc(cost, space: ProofSpace, budget: Budget) -> Outcome | None:
    """Branch and bound over ``s`` for ``Q ≥ 0``; None when the route does not apply."""
    s, to_normal, rewrite = space.normal_form
    if space.enclosures.function.operations > chart_mtw.MAX_RATIONAL_OPERATIONS:
        return None
    frame = RadialFrame(s, to_normal, space.lo, space.hi, space.classify, space.description, rewrite,
                        composed=space.enclosures.composed)
    status, built = within(chart_mtw.SYMBOLIC_SECONDS, "the chart's Gram matrix", _minors, cost, frame)
    if status != "ok" or built is None or any(m.free_symbols - {s} for m in built[0]):
        return None
    minors, kept = built
    split = [_factors(m) for m in minors]
    bases = sorted({b for factors in split for b, _ in factors}, key=sp.default_sort_key)
    function = compile_exprs(tuple(bases), (s,))
    fields = space.enclosures

    def decide(a, b):
        duals, _, _ = function.duals_over_box(a, b)
        signs = {}
        for base, dual in zip(bases, duals):
            if not balls.excludes_zero(dual.value):
                return None
            signs[base] = 1 if balls.positive(dual.value) else -1
        if not all(math.prod(signs[base] ** power for base, power in factors) > 0 for factors in split):
            return None
        if not chart_mtw.fields_defined(fields, a, b):  # last: the costliest test, needed only on a proved cell
            return None
        return 0.0  # what is proved is Q ≥ 0 (the form may vanish): its lower bound is 0

    outcome = branch_and_bound(space.lo, space.hi, space.classify, decide, budget)
    outcome.space, outcome.names = space.description, space.names
    dropped = 4 - len(kept)
    outcome.what = ("the cross-curvature form Q(ξ, η) = Σ T_ijkl ξ_i ξ_j η_k η_l is wᵀ G w in the products w = ξ_i η_k "
                    f"(at the normal forms, G built once in sympy and reduced exactly; {dropped} of its 4 rows exactly 0); "
                    "the rest of G is enclosed positive definite (leading principal minors > 0), with every derivative "
                    "field enclosed and det D²_xy c away from 0, on every cell of a cover of the normal forms, so "
                    "Q ≥ 0 (NNCC)")
    return outcome
