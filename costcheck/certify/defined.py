"""A refutation counts only where its condition is defined: D²_xy c certified invertible at the witness.

MTW, NNCC, c-convexity and Loeper's principle are stated where ``M = D²_xy c`` is invertible
(Ma, Trudinger & Wang, ARMA 177, 2005; Loeper, Acta Math. 202, 2009).  A witness is kept as a
refutation only when ball arithmetic (arb) shows, at each point the condition's construction
uses, the scale-free determinant of :mod:`costcheck.numerics.curvature.nondegenerate_part`

    ρ = |det M| / max(|M|_F, S)^n  ≥  DEFINED_RATIO

(a lower bound for ``|det M|`` over an upper bound for ``max(|M|_F, S)^n``), so a point next to
the singular set — where every curvature quantity blows up like ``1/ρ`` — is never a witness.
"""

from __future__ import annotations

from flint import arb

from ..numerics.curvature.nondegenerate_part import DEFINED_RATIO
from . import balls, quantities
from .enclosures import FieldEnclosures

#: the conditions stated only where D²_xy c is invertible
STATED_WHERE_INVERTIBLE = ("mtw", "nncc", "target_c_convex", "source_c_convex", "loeper", "g_mtw")


def witness_points(condition: str, w) -> list[tuple[list, list]]:
    """The pairs ``(x, y)`` at which the condition's construction inverts ``M``."""
    x, y, v = list(w.x), list(w.y), w.vectors
    if condition in ("mtw", "nncc", "g_mtw"):  # g_mtw: y is (y, z), the fields the effective ones
        return [(x, y)]
    if condition == "target_c_convex":  # c-segments in Y w.r.t. the fixed x
        return [(x, list(v[k])) for k in ("y0", "y1", "y_exit") if k in v]
    if condition == "source_c_convex":
        return [(list(v[k]), y) for k in ("x0", "x1", "x_exit") if k in v]
    if condition == "loeper":  # the c-segment y_t w.r.t. x, at its ends and at the worst t
        return [(x, list(v[k])) for k in ("y0", "y1") if k in v] + [(x, y)]
    return []


def certify_nondegenerate(cost, points, S: float, bits: int) -> tuple[dict | None, str]:
    """``(bound, text)``: ``bound`` (JSON-ready) when every point has ρ certified ≥ DEFINED_RATIO, else None."""
    fields = FieldEnclosures(cost, ("dxy",))
    n = cost.n
    lowest, first_det = None, None
    for x, y in points:
        f = fields.at_balls([arb(float(t)) for t in list(x) + list(y)])
        if f is None:
            return None, f"D²_xy c has no enclosure at x = {x}, y = {y}"
        M = f["dxy"]
        det = quantities.det(M)
        frob = sum((e * e for row in M for e in row), arb(0)).sqrt()
        big = max(balls.upper(frob), float(S))
        rho_lo = balls.lower(arb(max(balls.lower(balls.ball_abs(det)), 0.0)) / arb(big) ** n)  # rounded down
        if first_det is None:
            first_det = det
        if lowest is None or rho_lo < lowest:
            lowest = rho_lo
        if not (balls.excludes_zero(det) and rho_lo >= DEFINED_RATIO):
            return None, (f"at x = {x}, y = {y} det D²_xy c is enclosed in {balls.text(det)}, so ρ = |det| / "
                          f"max(|M|_F, S)^n is not certified ≥ {DEFINED_RATIO:g} (lower bound {rho_lo:.3g}): the "
                          "point is on or next to the singular set, where the condition is not stated")
    bound = {"det_interval": [balls.lower(first_det), balls.upper(first_det)], "relative_det_lower": lowest,
             "margin": DEFINED_RATIO, "scale_S": float(S), "points": len(points), "bits": bits}
    text = (f"D²_xy c certified non-degenerate at the witness ({len(points)} point{'s' if len(points) > 1 else ''}): "
            f"det enclosed in {balls.text(first_det)}, ρ = |det| / max(|M|_F, S)^n ≥ {lowest:.3g} "
            f"(margin {DEFINED_RATIO:g}, S = {float(S):.4g})")
    return bound, text
