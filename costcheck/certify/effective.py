"""G2 for any generating function: ``det E ≠ 0`` by branch and bound over cells of ``(x, y, z)``.

Trudinger ("On the local theory of prescribed Jacobian equations", DCDS-A 34, 2014; cited from
memory), condition G2: the extended mixed Hessian ``E = G_xy − G_xz ⊗ G_y / G_z`` is invertible at
every ``(x, y, z)`` of the domain.  The effective cost's mixed Hessian is ``−E``
(:mod:`costcheck.derivatives.generating`), so its entries are enclosed on each cell
(:class:`.enclosures.FieldEnclosures`, which forms a generating function's effective fields) and
a cell is proved when

1. every entry of ``E`` has a finite enclosure there (so ``G_z ≠ 0`` and ``E`` is defined on the whole
   cell), and
2. ``det E`` is enclosed away from 0: from the entries (natural ∩ mean-value form), or else from
   ``det E`` written as one fraction — ``cancel`` then numerator and denominator factored, exact
   rewriting in sympy, bounded in time.  Where (1) holds the fraction equals ``det E`` at every
   point of the cell (an identity of functions wherever the original is defined), and it has far
   fewer repeated variables: on the near-field reflector the entries' route proved 0.2 % of the box
   in 10 s, the fraction (a quadratic numerator over a squared denominator) the whole box
   (measured here).

The cells cover the bounding box of ``X × Y × [low, high]``; a cell is dropped only when
:class:`.region.Locator` shows it is outside the domain.  For ``G = −c − z`` the reduced-cost route
(:mod:`.generating`) runs first and this one is not needed.
"""

from __future__ import annotations

import numpy as np
import sympy as sp
from flint import arb

from ..derivatives.sympy_backend import symbolic_derivatives
from ..numerics.bounded import within
from . import balls, quantities
from .arb_eval import compile_exprs
from .branch_bound import Budget, branch_and_bound
from .dual import Dual, tighten
from .space import pair_space

#: seconds sympy may spend writing ``det E`` as one factored fraction
FRACTION_SECONDS = 3.0


def _one_fraction(d: sp.Expr) -> sp.Expr:
    numerator, denominator = sp.fraction(sp.cancel(sp.together(d)))
    return sp.factor(numerator) / sp.factor(denominator)


def _away_from_zero(value) -> float | None:
    if not balls.excludes_zero(value):
        return None
    return balls.lower(value) if balls.positive(value) else balls.lower(-value)


def nondegenerate(cost, budget: Budget):
    """``(outcome, reason)``: the G2 certificate, or ``(None, why)`` when it does not apply."""
    n, m = cost.n, cost.m - 1
    if cost.expr is None or n != m or n > 3:
        return None, "the extended-Hessian certificate is implemented for n = m ≤ 3"
    space = pair_space(cost, ("dxy",))
    if space.enclosures.function is None:
        return None, "a derivative of G could not be compiled for ball arithmetic"
    variables = tuple(cost.x_symbols) + tuple(cost.y_symbols)
    dxy = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 2, True)["dxy"]
    # the determinant by plain products (sympy's Matrix.det simplifies as it goes and ran for minutes)
    status, fraction = within(FRACTION_SECONDS, "det E as one fraction", _one_fraction,
                              quantities.rank_determinant(dxy))
    form = compile_exprs((fraction,), variables) if status == "ok" else None

    def decide(a, b):
        over, mid, offsets = space.enclosures.duals_on_cell(a, b)
        if over is None:  # an entry of E has no enclosure: it may be undefined on the cell
            return None
        if form is not None and (found := _away_from_zero(form.duals_over_box(a, b)[0][0].value)) is not None:
            return found
        q = quantities.rank_determinant(over["dxy"])
        q = q if isinstance(q, Dual) else Dual(arb(q), [arb(0)] * len(a))
        m_ = quantities.rank_determinant(mid["dxy"]) if mid is not None else balls.NAN
        return _away_from_zero(tighten(q, m_ if isinstance(m_, arb) else arb(m_), offsets))

    outcome = branch_and_bound(np.asarray(space.lo), np.asarray(space.hi), space.classify, decide, budget)
    outcome.space = "triples (x, y, z)"
    outcome.names = space.names
    outcome.what = ("every entry of the extended mixed Hessian E = G_xy − G_xz ⊗ G_y / G_z is enclosed and det E "
                    "is enclosed away from 0 on every cell of a cover of the domain")
    return outcome, ""
