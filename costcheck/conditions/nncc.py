"""Non-negative cross-curvature (NNCC): ``S(x, y)(ξ, η) >= 0`` for all ``ξ, η``, with a witness.

The cross-curvature of Kim & McCann ("Continuity, curvature, and the general covariance of
optimal transportation", J. Eur. Math. Soc. 12 (2010) 1009–1040) is the MTW form ``S`` of
:mod:`costcheck.numerics.curvature.margins` without the constraint ``ξ · η = 0``; NNCC implies A3w.  It
makes the monopolist's screening problem a convex program (Figalli, Kim & McCann,
"When is multidimensional screening a convex program?", J. Econom. Theory 146 (2011) 454–478).

The procedure is that of :mod:`costcheck.conditions.mtw` (scale-free margins on the sample,
batched local searches over ``(x, y)`` from the worst samples, high-precision confirmation of a
negative value) with the NNCC margin ``min_{|ξ|=|η|=1} S(ξ, η)`` of :func:`margins.nncc_margin`
and the same tolerance: ``μ < -TOLERANCE`` confirmed → **fails**, otherwise **holds**
(sampled evidence).  For ``n = m = 1`` the condition is ``T_{11,11} >= 0`` and is checked as is.
"""

from __future__ import annotations

from ..model.verdict import Evidence, Verdict, not_applicable, undecided
from ..numerics.curvature import margins
from .engines.curvature_search import (
    SCALE_TEXT,
    TOLERANCE,
    coverage,
    fmt,
    location,
    nowhere_defined,
    part_details,
    part_notes,
    part_prefix,
    refuted_or_unconfirmed,
    scope,
    search_minimum,
    skipped_notes,
)

CONDITION = "nncc"


def check(ctx) -> Verdict:
    n, m = ctx.cost.n, ctx.cost.m
    if n != m:
        return not_applicable(CONDITION, f"cross-curvature is not defined for n ≠ m (here n = {n}, m = {m}): it "
                                         "needs the inverse of the square mixed Hessian")
    s = search_minimum(ctx, margins.nncc_margin, orthogonal=False)
    if s is None:
        return undecided(CONDITION, nowhere_defined("the cross-curvature"))
    tol = TOLERANCE
    best = s.best
    notes = part_notes(s, skipped_notes(s))
    meaning = ("the smallest scale-free cross-curvature margin found, min over pairs and unit ξ, η of " + SCALE_TEXT
               + f"; the tolerance is ±{tol:g}; the witness value is the raw S(ξ, η) at the unit vectors shown")
    details = {"tolerance": tol, "local_searches": s.starts, "smallest_at": location(best),
               "smallest_raw": best.raw, "sampled_minimum": s.sample_min,
               "nondegenerate_part": part_details(s)}

    if best.rel < -tol:
        return refuted_or_unconfirmed(ctx, s, condition=CONDITION, orthogonal=False, failure="NNCC fails",
                                      fallback="holds", meaning=meaning, details=details, notes=notes)

    summary = (f"{part_prefix(s)}no pair with a scale-free cross-curvature margin below -{tol:g} among {coverage(s)}; the "
               f"smallest, {best.rel:.4g}, is at x = {fmt(best.x)}, y = {fmt(best.y)}: evidence, not proof")
    return Verdict(CONDITION, "holds", Evidence("sampled", summary, samples=s.samples, resolution=s.resolution,
                                                details=details),
                   value=best.rel, value_meaning=meaning, notes=tuple(notes), scope=scope(s))
