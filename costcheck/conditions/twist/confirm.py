"""Confirming a collision ``D_x c(x, y) = D_x c(x, y')``: exactly, in high precision, or not at all.

A float near-collision becomes a witness only here: snapped to simple numbers and shown
exactly with sympy, or refined by Newton's method in mpmath and confirmed at 50 and 80
digits (with, in one dimension, the intermediate value theorem on a bracketing cell).
"""

from __future__ import annotations

import mpmath
import numpy as np
import sympy as sp

from ...model.verdict import Evidence, Verdict, Witness
from ...numerics import exact, precision
from ..engines import admissible
from .setup import CONDITION, MIN_SEPARATION, VALUE_MEANING_FAIL, Setup
from ...model.display import with_error


def exact_collision(st: Setup, x, y, yp, extra: str = "") -> Witness | None:
    """Snap ``(x, y, y')`` to nearby simple numbers and check ``D_x c(x, y) = D_x c(x, y')`` exactly."""
    if st.cost.expr is None:
        return None
    n, m = st.n, st.m
    lo_y, hi_y = st.domain.y.bounds()
    widths = np.concatenate([st.width_x, hi_y - lo_y, hi_y - lo_y])
    xs_sym, ys_sym = st.cost.x_symbols, st.cost.y_symbols
    gradient = st.exact_gradient()
    values = np.concatenate([x, y, yp])
    for point in exact.snap_candidates(values, widths):
        px, py, pyp = point[:n], point[n: n + m], point[n + m:]
        if py == pyp:
            continue
        fx = np.array([float(v) for v in px])
        fy, fyp = np.array([float(v) for v in py]), np.array([float(v) for v in pyp])
        if np.linalg.norm(fy - fyp) < MIN_SEPARATION * st.diam_y:
            continue
        if not st.domain.contains_pairs(np.array([fx, fx]), np.array([fy, fyp])).all():
            continue
        try:
            sub_a = dict(zip(list(xs_sym) + list(ys_sym), list(px) + list(py)))
            sub_b = dict(zip(list(xs_sym) + list(ys_sym), list(px) + list(pyp)))
            a = [g.xreplace(sub_a) for g in gradient]
            b = [g.xreplace(sub_b) for g in gradient]
            if any(v.has(sp.nan, sp.zoo, sp.oo, -sp.oo) for v in a + b):
                continue
            if not all(exact.exactly_zero(u - v) for u, v in zip(a, b)):
                continue
        except (TypeError, ValueError, ZeroDivisionError):
            continue
        fmt = lambda vals: "(" + ", ".join(str(v) for v in vals) + ")"  # noqa: E731
        text = (f"D_x c(x, y) = D_x c(x, y') = {fmt(a)} exactly (sympy, exact arithmetic) at the exact point "
                f"x = {fmt(px)}, y = {fmt(py)}, y' = {fmt(pyp)} (|y - y'| = {np.linalg.norm(fy - fyp):.3g}), "
                "obtained by snapping a refined float collision to simple numbers; both pairs are inside the "
                "domain." + ("  Decimal constants of the expression were read as the exact decimals written."
                             if st.decimals else "") + extra)
        return Witness(x=fx.tolist(), y=fy.tolist(), value=0.0, error_bound=0.0, confirmation=text,
                       vectors={"y_prime": fyp.tolist()}, vector_sides={"y_prime": "y"})
    return None


def confirm_collision(st: Setup, x, y, yp, scale: float, extra: str = "", bracket=None):
    """Refine ``(x, y')`` in mpmath (``y`` fixed) and confirm the collision.

    Returns ``(witness, "confirmed")`` or ``(None, status)`` with ``status`` one of
    ``"nonzero"`` (Newton settled on a clearly non-zero residual: no collision there),
    ``"boundary"`` (the refinement left the domain or closed in on an open boundary, or
    ``y'`` merged with ``y``) and ``"unresolved"``.
    """
    n = st.n
    x, y, yp = np.asarray(x, float), np.asarray(y, float), np.asarray(yp, float)
    exact_witness = exact_collision(st, x, y, yp, extra)
    if exact_witness is not None:
        return exact_witness, "confirmed"
    if st.hp is None:
        # no usable high precision (a Python-function cost, or a failing mpmath translation): float64 only
        d, ok = st.derivs(np.array([x, x]), np.array([y, yp]))
        if not ok.all() or admissible.near_open_boundary(st.ctx, np.array([x, x]), np.array([y, yp])):
            return None, "boundary"
        res = float(np.linalg.norm(d.dx[0] - d.dx[1]))
        size = float(max(np.linalg.norm(d.dx[0]), scale))
        if res > 1e-12 * size:
            return None, "unresolved"
        text = (f"|D_x c(x, y) - D_x c(x, y')| = {res:.3g} in float64 with |D_x c| ≈ {size:.3g} and "
                f"|y - y'| = {np.linalg.norm(y - yp):.3g}; not confirmed in high precision ({st.hp_reason})."
                + extra)
        return Witness(x=x.tolist(), y=y.tolist(), value=res, error_bound=1e-15 * size, confirmation=text,
                       vectors={"y_prime": yp.tolist()}, vector_sides={"y_prime": "y"}), "confirmed"
    y_mp = precision.mp_vector(y)

    def residual(u):
        return st.hp_residual(u[:n], y_mp, u[n:], precision.DPS_REFINE)

    project = precision.compose(precision.mp_project_box(st.domain.x, 0), precision.mp_project_box(st.domain.y, n))
    u, _, settled = precision.mp_newton_solve(residual, precision.mp_vector(np.concatenate([x, yp])), project=project)
    if u is None:
        return None, "unresolved"
    xf = np.array([float(v) for v in u[:n]])
    ypf = np.array([float(v) for v in u[n:]])
    if np.linalg.norm(ypf - y) < MIN_SEPARATION * st.diam_y:
        return None, "boundary"
    if admissible.near_open_boundary(st.ctx, np.array([xf, xf]), np.array([y, ypf])):
        return None, "boundary"
    if not st.domain.contains_pairs(np.array([xf, xf]), np.array([y, ypf])).all():
        return None, "unresolved"
    exact_witness = exact_collision(st, xf, y, ypf, extra)
    if exact_witness is not None:
        return exact_witness, "confirmed"
    val, err = precision.confirm_value(lambda dps: precision.mp_norm(st.hp_residual(u[:n], y_mp, u[n:], dps)))
    with mpmath.workdps(precision.DPS_HIGH):
        size = max(precision.mp_norm(st.hp_dx(u[:n], y_mp, precision.DPS_HIGH)), mpmath.mpf(scale))
    if not (val <= err and err <= size * mpmath.mpf(10) ** -30):
        return None, ("nonzero" if settled and val > err else "unresolved")
    ivt = ""
    if bracket is not None:
        lo, hi = bracket

        def h_at(t):
            return lambda dps: st.hp_residual(u[:n], [mpmath.mpf(float(t))], y_mp, dps)[0]

        va, ea = precision.confirm_value(h_at(lo))
        vb, eb = precision.confirm_value(h_at(hi))
        if abs(va) > ea and abs(vb) > eb and mpmath.sign(va) != mpmath.sign(vb):
            ivt = (f"  Independently of the refinement, c_x(x, t) - c_x(x, y) = {with_error(va, ea, 6)}"
                   f" at t = {float(lo):.17g} and {with_error(vb, eb, 6)} at "
                   f"t = {float(hi):.17g} (mpmath, 50/80 digits), so a collision partner of y lies between them "
                   "(intermediate value theorem).")
    text = (f"|D_x c(x, y) - D_x c(x, y')| = {with_error(val, err, 3)} (mpmath at 50 and 80 digits) "
            f"while |D_x c(x, y)| ≈ {float(size):.3g} and |y - y'| = {np.linalg.norm(ypf - y):.3g}: a collision to "
            f"the working precision.  Exact point: x = {precision.fmt_vec(u[:n], 30)}, y = {precision.fmt_vec(y, 17)} "
            f"(the float itself), y' = {precision.fmt_vec(u[n:], 30)}; (x, y') were refined by Newton's method at "
            f"{precision.DPS_REFINE} digits from the float search, the float coordinates reported are their "
            "rounding." + extra + ivt)
    return Witness(x=xf.tolist(), y=y.tolist(), value=float(val), error_bound=float(err), confirmation=text,
                   vectors={"y_prime": ypf.tolist()}, vector_sides={"y_prime": "y"}), "confirmed"


def failed(st: Setup, witness: Witness, summary: str, count: int, details: dict) -> Verdict:
    shown_exactly = witness.value == 0.0 and witness.error_bound == 0.0 and "exact arithmetic" in witness.confirmation
    how = ("shown exactly (sympy)" if shown_exactly else "confirmed in high precision (mpmath)" if st.hp is not None
           else "seen in float64 only (no symbolic form)")
    summary = f"{summary}; the collision was {how}"
    details = {**details, "method": "exact" if shown_exactly else ("high precision" if st.hp is not None else "float64")}
    return Verdict(CONDITION, "fails",
                   Evidence("refuted", summary, samples=count, details=details),
                   value=witness.value, value_meaning=VALUE_MEANING_FAIL, witness=witness)


# --------------------------------------------------------------------------- n = m = 1
