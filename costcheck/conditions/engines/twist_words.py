"""The verdict of a twist-type condition of a generating function from a collision search
(:mod:`.collision`): shared by ``g_twist`` and ``g_dual_twist``."""

from __future__ import annotations


from ...model.verdict import Evidence, Verdict
from .collision import Outcome

VALUE_MEANING = ("the smallest ratio, among sampled neighbours, of the distance of two images to the distance "
                 "of their arguments (both scaled by their spread; 0: two arguments with one image)")


def _at(cost, w) -> str:
    n = cost.n
    return f"x = {[round(float(v), 6) for v in w[:n]]}, (y, z) = {[round(float(v), 6) for v in w[n:]]}"


def verdict_of(ctx, condition: str, outcome: Outcome, what: str) -> Verdict:
    """``holds`` on sampled evidence, or ``undecided`` at a floating-point collision (not certified)."""
    cost = ctx.cost
    details = {"points_mapped": outcome.tried, "fixed_parts": outcome.fixed, "closest_ratio": outcome.closest}
    if outcome.tried == 0:
        return Verdict(condition, "undecided", Evidence("undecided", f"{what}: no point of the domain could be "
                                                        "mapped", details=details))
    if outcome.collision is not None:
        c = outcome.collision
        details.update({"first": c.w.tolist(), "second": c.w2.tolist(), "residual": c.residual,
                        "separation": c.separation})
        summary = (f"{what}: two points, {_at(cost, c.w)} and {_at(cost, c.w2)}, have the same image to "
                   f"{c.residual:.2g} (scaled) at a distance {c.separation:.3g} apart in floating point; an exact "
                   "collision is not certified (no interval existence test for this map yet), so the condition is "
                   "not decided — strong numerical evidence that it fails")
        return Verdict(condition, "undecided", Evidence("undecided", summary, samples=outcome.tried,
                                                        details=details), value=0.0, value_meaning=VALUE_MEANING,
                       notes=("a floating-point collision, not a certified refutation",))
    summary = (f"{what}: no two of {outcome.tried} points mapped (at {outcome.fixed} fixed parts, "
               f"{outcome.tried // max(outcome.fixed, 1)} each) share an image after refinement; the smallest "
               f"image-to-argument ratio among neighbours is {outcome.closest:.3g}: evidence, not proof")
    return Verdict(condition, "holds", Evidence("sampled", summary, samples=outcome.tried, details=details),
                   value=outcome.closest, value_meaning=VALUE_MEANING)
