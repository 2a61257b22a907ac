"""Confirmation of a zero of ``det M`` without a sign change: exactly, or in high precision.

:func:`confirm_zero` takes a refined float point where ``M`` is nearly rank-deficient and
tries, in this order, an exact zero (the point snapped to nearby simple numbers and
``det M``, or ``det MᵀM`` when ``n ≠ m``, evaluated exactly with sympy) and a high-precision
zero (Newton's method for a critical point of ``det M`` at 110 digits, then ``|det M|`` below
its error estimate at 50/80 digits); otherwise it says why not (a clearly non-zero minimum,
the boundary of an open domain, or unresolved).
"""

from __future__ import annotations

import mpmath
import numpy as np
import sympy as sp
from sympy.matrices.utilities import dotprodsimp

from ...model.verdict import Witness
from ...numerics import exact, precision
from ..engines import admissible
from .setup import Setup
from ...model.display import with_error


def _exact_zero(st: Setup, values) -> tuple | None:
    """A nearby exact point where det M (det AᵀA) is exactly 0, as sympy numbers."""
    if st.cost.expr is None:
        return None
    symbols = list(st.cost.x_symbols) + list(st.cost.y_symbols)
    for point in exact.snap_candidates(values, st.width):
        if not exact.points_in_domain(st.domain, point[: st.n], point[st.n:]):
            continue
        try:
            Mx = st.M_sym.xreplace(dict(zip(symbols, point)))
            if any(e.has(sp.nan, sp.zoo, sp.oo, -sp.oo) for e in Mx):
                continue
            if st.k == 1 and st.n != st.m:
                # rank 0 < 1 means every entry of M vanishes
                if all(exact.exactly_zero(e) for e in Mx):
                    return point
                continue
            with dotprodsimp(False):
                G = Mx if st.n == st.m else (Mx.T * Mx if st.n > st.m else Mx * Mx.T)
            F = exact.exact_det(G)
            if F is not None and exact.exactly_zero(F):
                return point
        except (TypeError, ValueError, ZeroDivisionError):
            continue
    return None


def _exact_witness(st: Setup, point, found_at) -> Witness:
    n = st.n
    xs = [float(v) for v in point[:n]]
    ys = [float(v) for v in point[n:]]
    what = "det M" if st.n == st.m else ("det(MᵀM)" if st.n > st.m else "det(MMᵀ)")
    text = (f"{what} = 0 exactly (sympy, exact arithmetic) at the exact point x = ({', '.join(map(str, point[:n]))}), "
            f"y = ({', '.join(map(str, point[n:]))}), obtained by snapping the refined float point "
            f"{precision.fmt_vec(found_at, 8)} to simple numbers; the point is inside the domain."
            + ("  Decimal constants of the expression were read as the exact decimals written." if st.decimals else ""))
    return Witness(x=xs, y=ys, value=0.0, error_bound=0.0, confirmation=text)


def confirm_zero(st: Setup, z) -> tuple[Witness | None, str]:
    """Confirm a zero near the float point ``z``: ``(witness, "confirmed")`` or ``(None, status)``.

    ``status`` is ``"nonzero"`` when high precision settled on a critical point where the
    value is clearly not zero, ``"boundary"`` when the refinement closed in on the boundary of
    an open domain, and ``"unresolved"`` otherwise (no high precision, or no convergence).
    """
    point = _exact_zero(st, z)
    if point is not None:
        return _exact_witness(st, point, z), "confirmed"
    if admissible.near_open_boundary(st.ctx, z[: st.n], z[st.n:]):
        return None, "boundary"
    if st.hp is None:
        return None, "unresolved"
    n = st.n
    project = precision.compose(precision.mp_project_box(st.domain.x, 0), precision.mp_project_box(st.domain.y, n))
    u, _, settled = precision.mp_critical_point(lambda u: st.hp_F(u, precision.DPS_REFINE), precision.mp_vector(z),
                                             project=project)
    if u is None:
        return None, "unresolved"
    zf = np.array([float(v) for v in u])
    if admissible.near_open_boundary(st.ctx, zf[:n], zf[n:]):
        return None, "boundary"
    if not bool(st.domain.contains_pairs(zf[None, :n], zf[None, n:])[0]):
        return None, "unresolved"
    point = _exact_zero(st, zf)
    if point is not None:
        return _exact_witness(st, point, zf), "confirmed"
    val, err = precision.confirm_value(lambda dps: st.hp_F(u, dps))
    power = st.k if st.n == st.m else 2 * st.k
    scale = mpmath.mpf(st.S) ** power
    if not (abs(val) <= err and err <= scale * mpmath.mpf(10) ** -30):
        return None, ("nonzero" if settled and abs(val) > err else "unresolved")
    what = "det M" if st.n == st.m else ("det(MᵀM)" if st.n > st.m else "det(MMᵀ)")
    text = (f"{what} = {with_error(val, err, 3)} (mpmath at 50 and 80 digits) at the point "
            f"x = {precision.fmt_vec(u[:n], 30)}, y = {precision.fmt_vec(u[n:], 30)} (given here to 30 digits; the "
            f"float coordinates above are its rounding), while the scale S^{power} = {float(scale):.3g}: zero to "
            f"the working precision.  The point was reached from the float search by Newton's method for a "
            f"critical point of {what} at {precision.DPS_REFINE} digits (a zero without a sign change).")
    return Witness(x=zf[:n].tolist(), y=zf[n:].tolist(), value=float(abs(val) / scale), error_bound=float(err / scale),
                   confirmation=text), "confirmed"
