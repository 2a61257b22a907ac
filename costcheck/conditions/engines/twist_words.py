"""The verdict of a twist-type condition of a generating function from a collision search
(:mod:`.collision`): shared by ``g_twist`` and ``g_dual_twist``.

A floating-point collision is handed to :func:`costcheck.certify.collisions.certify_collision`
(Krawczyk's test in ball arithmetic): certified, it is a refutation (**fails**, evidence
*refuted*, both points in the witness); not certified, the verdict stays **undecided** and says why.
"""

from __future__ import annotations


from ...certify.collisions import certify_collision
from ...model.verdict import Evidence, Verdict, Witness
from . import generating as gen
from .collision import Outcome

VALUE_MEANING = ("the smallest ratio, among sampled neighbours, of the distance of two images to the distance "
                 "of their arguments (both scaled by their spread; 0: two arguments with one image)")


def _at(cost, w) -> str:
    n = cost.n
    return f"x = {[round(float(v), 6) for v in w[:n]]}, (y, z) = {[round(float(v), 6) for v in w[n:]]}"


def verdict_of(ctx, condition: str, outcome: Outcome, what: str, exprs, free) -> Verdict:
    """``holds`` on sampled evidence, ``fails`` at a certified collision, ``undecided`` at an uncertified one."""
    cost = ctx.cost
    details = {"points_mapped": outcome.tried, "fixed_parts": outcome.fixed, "closest_ratio": outcome.closest}
    if outcome.tried == 0:
        return Verdict(condition, "undecided", Evidence("undecided", f"{what}: no point of the domain could be "
                                                        "mapped", details=details))
    if outcome.collision is not None:
        return _collision(ctx, condition, outcome, what, exprs, free, details)
    summary = (f"{what}: no two of {outcome.tried} points mapped (at {outcome.fixed} fixed parts, "
               f"{outcome.tried // max(outcome.fixed, 1)} each) share an image after refinement; the smallest "
               f"image-to-argument ratio among neighbours is {outcome.closest:.3g}: evidence, not proof")
    return Verdict(condition, "holds", Evidence("sampled", summary, samples=outcome.tried, details=details),
                   value=outcome.closest, value_meaning=VALUE_MEANING)


def _collision(ctx, condition, outcome, what, exprs, free, details) -> Verdict:
    cost, c = ctx.cost, outcome.collision
    details.update({"first": c.w.tolist(), "second": c.w2.tolist(), "residual": c.residual,
                    "separation": c.separation})
    try:
        certified, why = certify_collision(cost.domain, cost.n, exprs, gen.symbols(cost), free, c.w, c.w2)
    except (ValueError, ArithmeticError) as exc:  # an arithmetic failure is reported, not raised
        certified, why = None, f"ball evaluation failed ({exc})"
    if certified is None:
        summary = (f"{what}: two points, {_at(cost, c.w)} and {_at(cost, c.w2)}, have the same image to "
                   f"{c.residual:.2g} (scaled) at a distance {c.separation:.3g} apart in floating point; the exact "
                   f"collision is not certified ({why}), so the condition is not decided — strong numerical "
                   "evidence that it fails")
        return Verdict(condition, "undecided", Evidence("undecided", summary, samples=outcome.tried,
                                                        details={**details, "certification": why}),
                       value=0.0, value_meaning=VALUE_MEANING,
                       notes=("a floating-point collision, not a certified refutation",))
    n = cost.n
    second = c.w.copy()
    second[list(free)] = certified.second
    moving_y = min(free) >= n
    name, side = ("y_prime", "y") if moving_y else ("x_prime", "x")
    witness = Witness(x=[float(v) for v in c.w[:n]], y=[float(v) for v in c.w[n:]], value=0.0, error_bound=0.0,
                      confirmation=(f"Certified: {certified.text}; the exact partner lies within "
                                    f"{certified.radius:.3g} of {name} in every coordinate"),
                      vectors={name: [float(v) for v in (second[n:] if moving_y else second[:n])]},
                      vector_sides={name: side})
    details.update({"second": second.tolist(), "enclosure": {"half_width": certified.radius, "bits": 128,
                                                             "text": certified.text}})
    summary = (f"{what}: {_at(cost, c.w)} and {_at(cost, second)} have the same image — a certified collision "
               f"(Krawczyk's test in ball arithmetic), so the map is not one-to-one")
    return Verdict(condition, "fails", Evidence("refuted", summary, samples=outcome.tried, details=details),
                   value=0.0, value_meaning=VALUE_MEANING, witness=witness)
