"""The Ma–Trudinger–Wang condition: strong (A3s), weak (A3w), or failed, with a witness.

For a cost ``c`` (minimised) with ``n = m`` the MTW form is
``S(x, y)(ξ, η) = sum T_{ijkl} ξ_i ξ_j η'_k η'_l`` (see :mod:`costcheck.numerics.curvature.margins`);
A3w asks ``S >= 0`` and A3s ``S >= κ |ξ|²|η|²`` (``κ > 0``) whenever ``ξ · η = 0``
(Ma, Trudinger & Wang, Arch. Ration. Mech. Anal. 177 (2005) 151–183; Trudinger & Wang,
Ann. Sc. Norm. Super. Pisa 8 (2009) 143–174; Loeper, Acta Math. 202 (2009) 241–283, who
showed A3w is necessary for regularity).

How the verdict is reached
--------------------------
1. The scale-free A3w margin (:func:`margins.a3w_margin`) at every sampled pair where the
   derivatives are finite and the mixed Hessian is invertible; for ``n = 2`` the inner
   minimum over directions is exact.
2. A local minimisation of the margin over ``(x, y)`` (the inner minimum over ``ξ`` is done
   exactly or by the direction search at each point) from the :data:`STARTS` worst, mutually
   separated samples, all at once (:func:`search.batched_descent`), never leaving the domain.
3. The smallest margin ``μ`` found decides, with the stated tolerance :data:`TOLERANCE`:
   ``μ < -TOLERANCE`` → **fails**, but only once the witness is re-evaluated in high precision
   (mpmath at 30 and 60 digits) and is negative beyond its error estimate (otherwise weak,
   with a note); ``|μ| <= TOLERANCE`` → **weak** (A3w but not A3s on the evidence);
   ``μ > TOLERANCE`` → **strong**.  Both non-failing verdicts are sampled evidence, not proof.

Why ``TOLERANCE = 1e-7`` on the scale-free margin: the margin is ``S`` divided by the size of
the two terms whose difference is ``T`` (times ``|M⁻¹|²``), so a cost whose tensor vanishes
identically (``|x - y|²/2``, ``-x·y``, ``-φ(x)·ψ(y)``) shows rounding of order
``1e-16 · cond(M)`` there, far below ``1e-7`` for any reasonably conditioned cost, while a
genuine violation of a tenth of a percent (``-1e-3``) is four orders of magnitude above it.
"""

from __future__ import annotations

from ..model.verdict import Evidence, Verdict, not_applicable, undecided
from ..numerics.curvature.margins import a3w_margin
from .engines.curvature_search import (
    SCALE_TEXT,
    TOLERANCE,
    confirm_minimum,
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
    where,
    witness,
)

CONDITION = "mtw"


# --------------------------------------------------------------------------- the check

def check(ctx) -> Verdict:
    n, m = ctx.cost.n, ctx.cost.m
    if n != m:
        return not_applicable(CONDITION, f"the MTW tensor is not defined for n ≠ m (here n = {n}, m = {m}): it "
                                         "needs the inverse of the square mixed Hessian")
    if n == 1:
        return not_applicable(CONDITION, "for n = m = 1 the MTW condition is empty: ξ · η = 0 in one dimension "
                                         "forces ξ = 0 or η = 0, so S(ξ, η) = 0 for every admissible pair")
    return decide(ctx, CONDITION, "the MTW tensor")


def decide(ctx, condition: str, tensor: str, weak: str = "A3w", strong: str = "A3s") -> Verdict:
    """The search, confirmation and wording of the strong / weak / fails verdict on the derivative
    fields of ``ctx`` (also those of a generating function's effective cost: :mod:`.g_mtw`)."""
    CONDITION = condition  # noqa: N806 - the same wording for both conditions
    s = search_minimum(ctx, a3w_margin, orthogonal=True)
    if s is None:
        return undecided(CONDITION, nowhere_defined(tensor))
    tol = TOLERANCE
    best = s.best
    notes = part_notes(s, skipped_notes(s))
    meaning = (f"the smallest scale-free {weak} margin found, min over pairs and unit ξ ⊥ η of " + SCALE_TEXT
               + f"; the tolerance is ±{tol:g}; the witness value is the raw S(ξ, η) at the unit vectors shown")
    details = {"tolerance": tol, "local_searches": s.starts, "smallest_at": location(best),
               "smallest_raw": best.raw, "sampled_minimum": s.sample_min,
               "nondegenerate_part": part_details(s)}

    if best.rel < -tol:
        return refuted_or_unconfirmed(ctx, s, condition=CONDITION, orthogonal=True, failure=f"{weak} fails",
                                      fallback="weak", meaning=meaning, details=details, notes=notes)

    if best.rel <= tol:
        text = "float64 evaluation at the smallest margin found; not a failure witness"
        value, error = best.raw, None
        if best.rel < 0 and best.normaliser > 0:
            conf = confirm_minimum(ctx, s, orthogonal=True)
            value, error, text = conf.value, conf.error, conf.text + "; not a failure witness"
        summary = (f"{part_prefix(s)}no pair with a scale-free margin below -{tol:g} among {coverage(s)}; the smallest margin, "
                   f"{best.rel:.3g}, is within ±{tol:g} of zero at {where(best)}: {weak} holds but {strong} is not "
                   "seen (evidence, not proof)")
        if s.flat == s.valid:
            summary += "; T vanishes at every usable sample, as for bilinear costs"
        return Verdict(CONDITION, "weak", Evidence("sampled", summary, samples=s.samples, resolution=s.resolution,
                                                   details=details),
                       value=best.rel, value_meaning=meaning, witness=witness(best, value, error, text),
                       notes=tuple(notes), scope=scope(s))

    summary = (f"{part_prefix(s)}no pair with a scale-free margin at or below {tol:g} among {coverage(s)}; the smallest, "
               f"{best.rel:.4g}, is at x = {fmt(best.x)}, y = {fmt(best.y)}: evidence of {strong} on the sampled region, "
               "not proof")
    return Verdict(CONDITION, "strong", Evidence("sampled", summary, samples=s.samples, resolution=s.resolution,
                                                 details=details),
                   value=best.rel, value_meaning=meaning, notes=tuple(notes), scope=scope(s))


