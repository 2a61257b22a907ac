"""Non-negative cross-curvature (NNCC): ``S(x, y)(ξ, η) >= 0`` for all ``ξ, η``, with a witness.

The cross-curvature of Kim & McCann ("Continuity, curvature, and the general covariance of
optimal transportation", J. Eur. Math. Soc. 12 (2010) 1009–1040) is the MTW form ``S`` of
:mod:`costcheck.checks.tensor` without the constraint ``ξ · η = 0``; NNCC implies A3w.  It
makes the monopolist's screening problem a convex program (Figalli, Kim & McCann,
"When is multidimensional screening a convex program?", J. Econom. Theory 146 (2011) 454–478).

The procedure is that of :mod:`costcheck.checks.mtw` (scale-free margins on the sample,
batched local searches over ``(x, y)`` from the worst samples, high-precision confirmation of a
negative value) with the NNCC margin ``min_{|ξ|=|η|=1} S(ξ, η)`` of :func:`tensor.nncc_margin`
and the same tolerance: ``μ < -TOLERANCE`` confirmed → **fails**, otherwise **holds**
(sampled evidence).  For ``n = m = 1`` the condition is ``T_{11,11} >= 0`` and is checked as is.
"""

from __future__ import annotations

from ..verdict import Evidence, Verdict, not_applicable, undecided
from . import tensor
from .mtw import (SCALE_TEXT, TOLERANCE, confirm_minimum, coverage, fmt, location, search_minimum,
                  skipped_notes, where, witness)

CONDITION = "nncc"


def check(ctx) -> Verdict:
    n, m = ctx.cost.n, ctx.cost.m
    if n != m:
        return not_applicable(CONDITION, f"cross-curvature is not defined for n ≠ m (here n = {n}, m = {m}): it "
                                         "needs the inverse of the square mixed Hessian")
    s = search_minimum(ctx, tensor.nncc_margin, orthogonal=False)
    if s is None:
        return undecided(CONDITION, "no sampled pair has finite derivatives up to order 4 and an invertible mixed "
                                    "Hessian, so the cross-curvature could not be evaluated anywhere")
    tol = TOLERANCE
    best = s.best
    notes = skipped_notes(s)
    meaning = ("the smallest scale-free cross-curvature margin found, min over pairs and unit ξ, η of " + SCALE_TEXT
               + f"; the tolerance is ±{tol:g}; the witness value is the raw S(ξ, η) at the unit vectors shown")
    details = {"tolerance": tol, "local_searches": s.starts, "smallest_at": location(best),
               "smallest_raw": best.raw, "sampled_minimum": s.sample_min}

    if best.rel < -tol:
        conf = confirm_minimum(ctx, s, orthogonal=False)
        rel_conf = conf.value / best.normaliser if best.normaliser > 0 else 0.0
        if conf.negative and rel_conf < -tol:
            kind_text = "in high precision" if conf.high_precision else "in float64 only"
            summary = (f"NNCC fails: at {where(best)} S(ξ, η) = {conf.value:.6g} ± {conf.error:.2g}, confirmed "
                       f"{kind_text}; scale-free margin {rel_conf:.4g} (tolerance {tol:g})")
            if not conf.high_precision:
                notes.append("the witness is confirmed in float64 only (no high-precision evaluator for a "
                             "Python-function cost)")
            return Verdict(CONDITION, "fails",
                           Evidence("refuted", summary, samples=s.samples, resolution=s.resolution,
                                    details={**details, "scale_free_value": rel_conf}),
                           value=best.rel, value_meaning=meaning,
                           witness=witness(best, conf.value, conf.error,
                                           conf.text + f"; scale-free value {rel_conf:.6g}"),
                           notes=tuple(notes))
        notes.append(f"float64 found a scale-free margin {best.rel:.3g} below -{tol:g} at {where(best)}, but the "
                     f"high-precision re-evaluation gives S = {conf.value:.3g} ± {conf.error:.2g} "
                     f"(scale-free {rel_conf:.3g}), not negative beyond its error and the tolerance; "
                     "reported as holding")
        summary = (f"no confirmed negative cross-curvature among {coverage(s)}; the one float64 candidate did not "
                   "survive high-precision re-evaluation: evidence, not proof")
        return Verdict(CONDITION, "holds", Evidence("sampled", summary, samples=s.samples, resolution=s.resolution,
                                                    details=details),
                       value=rel_conf, value_meaning=meaning,
                       witness=witness(best, conf.value, conf.error, conf.text), notes=tuple(notes))

    summary = (f"no pair with a scale-free cross-curvature margin below -{tol:g} among {coverage(s)}; the "
               f"smallest, {best.rel:.4g}, is at x = {fmt(best.x)}, y = {fmt(best.y)}: evidence, not proof")
    return Verdict(CONDITION, "holds", Evidence("sampled", summary, samples=s.samples, resolution=s.resolution,
                                                details=details),
                   value=best.rel, value_meaning=meaning, notes=tuple(notes))
