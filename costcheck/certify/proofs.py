"""Certificates over the whole domain: one branch-and-bound proof per condition.

Each function returns ``(outcome, reason)``: an :class:`~.branch_bound.Outcome` of the
search, or ``None`` with the reason no proof was attempted (no symbolic form, a dimension
without an implemented certificate, a domain the sufficient condition does not cover).

- **Non-degeneracy** (A2): ``det M ≠ 0`` on every cell (``det MᵀM`` when ``n > m``, ``det MMᵀ``
  when ``n < m``).  Each cell's ball excludes 0; nothing else is needed.
- **Twist** (A1), by a sufficient condition on the whole domain (docs/conditions.md#twist; Gangbo–McCann,
  Acta Math. 177, 1996, for the monotone-map argument): for ``n = m = 1``, ``c_xy ≠ 0`` with
  every y-slice an interval; for ``n = m ≥ 2``, the symmetric part of ``M(x, ·)`` definite
  with every y-slice convex: then ``⟨D_x c(x, y₁) − D_x c(x, y₀), y₁ − y₀⟩ =
  ∫₀¹ (y₁ − y₀)ᵀ sym M(x, y_t) (y₁ − y₀) dt ≠ 0`` for ``y₀ ≠ y₁`` (definiteness keeps one sign
  on a connected slice by continuity).  Slices are convex when ``Y`` is a box or ball and no
  ``where`` on ``y`` nor ``pairs`` constraint cuts them.
- **MTW strong** (A3s) for ``n = 2``: on each cell the quartic ``S(cos θ, sin θ)`` on orthogonal
  pairs is bounded below by a positive number (Fourier bound, then θ-intervals).
- **NNCC with a positive minimum** for ``n = 2``: ``A(ξ)`` positive definite for all unit ``ξ``.
"""

from __future__ import annotations

from ..model.domain import Ball, Box
from flint import arb

from . import balls, quantities
from .branch_bound import Budget, Outcome, branch_and_bound
from .dual import Dual, tighten
from .enclosures import TENSOR_FIELDS
from .space import space_for


def _run(cost, fields, coefficients, decide, budget: Budget) -> Outcome:
    """Branch and bound where a cell is proved when ``decide(coefficients(fields on cell))`` is a number.

    ``coefficients`` is the condition's algebra from the derivative fields to a few numbers
    (a determinant, a quartic's coefficients); it runs on dual numbers over the cell and on
    balls at the cell's middle, and each number is enclosed by the mean-value form.
    """
    space = space_for(cost, fields)

    def decide_cell(a, b):
        over, mid, offsets = space.enclosures.duals_on_cell(a, b)
        if over is None:
            return None
        with_grad = coefficients(over)
        if with_grad is None:
            return None
        at_mid = coefficients(mid) if mid is not None else None
        tight = []
        for i, q in enumerate(with_grad):
            q = q if isinstance(q, Dual) else Dual(arb(q), [arb(0)] * len(a))
            m = at_mid[i] if at_mid is not None else balls.NAN
            tight.append(tighten(q, arb(m) if not isinstance(m, arb) else m, offsets))
        return decide(tight)

    outcome = branch_and_bound(space.lo, space.hi, space.classify, decide_cell, budget)
    outcome.space = space.description
    outcome.names = space.names
    return outcome


def _nonzero(values):
    d = values[0]
    if not balls.excludes_zero(d):
        return None
    return balls.lower(d) if balls.positive(d) else balls.lower(-d)


def _needs_symbols(cost) -> str | None:
    if cost.expr is None:
        return "a Python-function cost has no symbolic form to enclose"
    return None


def nondegenerate(cost, budget: Budget):
    if (why := _needs_symbols(cost)) is not None:
        return None, why
    if max(cost.n, cost.m) > 3 and cost.n == cost.m or min(cost.n, cost.m) > 3:
        return None, "determinant certificates are implemented up to dimension 3"
    def coefficients(f):
        return [quantities.rank_determinant(f["dxy"])]

    return _run(cost, ("dxy",), coefficients, _nonzero, budget), ""


def _slices_convex(cost) -> bool:
    d = cost.domain
    return isinstance(d.y, (Box, Ball)) and not d.where_y and not d.pairs


def twist(cost, budget: Budget):
    if (why := _needs_symbols(cost)) is not None:
        return None, why
    if cost.n != cost.m:
        return None, "the sufficient conditions for twist used here need n = m"
    if cost.n > 3:
        return None, "definiteness certificates are implemented up to dimension 3"
    if not _slices_convex(cost):
        return None, ("the sufficient condition needs every y-slice of the domain convex; a 'where' on y or a "
                      "'pairs' constraint may cut it")

    def coefficients(f):
        return quantities.leading_minors(quantities.symmetric_part(f["dxy"]))

    def decide(minors):
        if not quantities.definite(minors):
            return None
        return min(_nonzero([d]) for d in minors)

    return _run(cost, ("dxy",), coefficients, decide, budget), ""


def _tensor_on(f):
    inv = quantities.inverse(f["dxy"])
    if inv is None:
        return None, None
    return quantities.mtw_tensor(f, inv), inv


def _plane_only(cost, what: str) -> str | None:
    """Why a certificate built for ``n = m = 2`` cannot run here, or None."""
    if (why := _needs_symbols(cost)) is not None:
        return why
    if cost.n != 2 or cost.m != 2:
        return f"the {what} certificate is implemented for n = m = 2"
    return None


def mtw_strong(cost, budget: Budget):
    if (why := _plane_only(cost, "MTW")) is not None:
        return None, why

    def coefficients(f):
        T, inv = _tensor_on(f)
        return None if T is None else quantities.orthogonal_quartic(T, inv)

    return _run(cost, TENSOR_FIELDS, coefficients, quantities.circle_lower_bound, budget), ""


def nncc_positive(cost, budget: Budget):
    if (why := _plane_only(cost, "NNCC")) is not None:
        return None, why

    def coefficients(f):
        T, _ = _tensor_on(f)
        if T is None:
            return None
        a00, a01, a11 = quantities.cross_forms(T)
        return a00 + quantities.cross_determinant(a00, a01, a11)

    def decide(values):
        first = quantities.circle_lower_bound(values[:3])
        if first is None:
            return None
        second = quantities.circle_lower_bound(values[3:])
        return None if second is None else min(first, second)

    return _run(cost, TENSOR_FIELDS, coefficients, decide, budget), ""
