"""Monotonicity of a generating function in its third variable: ``G_z < 0`` on the whole domain.

Trudinger ("On the local theory of prescribed Jacobian equations", Discrete Contin. Dyn. Syst.
34 (2014) 1663–1681; cited from memory) asks a generating function to be strictly monotone in
``z``; our convention (docs/conditions.md#z_monotone) fixes the sign: ``G`` *decreases* in ``z``,
as ``G = −c(x, y) − z`` does for an ordinary cost (``G_z = −1``, so the condition always holds
there).  Where ``G_z ≠ 0`` the level set ``G(x, y, ·) = u`` defines ``z`` as a function of
``(x, y, u)``, which every other condition of a generating function uses.

How the verdict is reached: ``G_z`` at every sampled triple ``(x, y, z)`` and a batched local
ascent from the 8 largest values (:func:`engines.generating.largest`).  A point with ``G_z > 0``
is re-evaluated in mpmath (50 digits) and enclosed in ball arithmetic (arb); the ball lying above
0 makes it a certified refutation.  A largest value that is zero to rounding, or a ball that
contains 0, leaves the verdict undecided.  Otherwise **holds** on sampled evidence, not proof.
"""

from __future__ import annotations

import numpy as np

from ..derivatives.generating import z_derivative
from ..model.verdict import Evidence, Verdict, Witness, undecided
from .engines import generating as gen

CONDITION = "z_monotone"
VALUE_MEANING = "the largest G_z found divided by the median |G_z| on the samples (negative: G decreases in z)"


def check(ctx) -> Verdict:
    skip = gen.not_generating(ctx, CONDITION)
    if skip is not None:
        return skip
    cost = ctx.cost
    Gz = z_derivative(cost.expr, cost.y_symbols[-1])
    scale = float(np.nanmedian(np.abs(gen.evaluate(cost, Gz, gen.sample_points(ctx))))) or 1.0
    point, top, sampled, count = gen.largest(ctx, cost, Gz)
    if point is None:
        return undecided(CONDITION, "G_z is undefined at every sampled triple")
    n = cost.n
    details = {"largest_G_z": top, "sampled_largest": sampled, "scale": scale, "samples": count}
    if top / scale > 1e-12:
        return _refute(ctx, cost, Gz, point, top, scale, count, details)
    if top / scale > -1e-12:
        return undecided(CONDITION, f"G_z reaches {top:.3g} (zero to rounding, scale {scale:.3g}) at "
                                    f"x = {_short(point[:n])}, (y, z) = {_short(point[n:])}: not decided", **details)
    summary = (f"G_z < 0 at all {count} sampled triples (x, y, z) and at the ends of 8 local ascents; the "
               f"largest, {top:.4g} (scale-free {top / scale:.3g}), is at x = {_short(point[:n])}, "
               f"(y, z) = {_short(point[n:])}: evidence, not proof")
    return Verdict(CONDITION, "holds", Evidence("sampled", summary, samples=count,
                                                resolution=float(ctx.sample.resolution), details=details),
                   value=top / scale, value_meaning=VALUE_MEANING)


def _short(values) -> list[float]:
    return [round(float(v), 6) for v in values]


def _refute(ctx, cost, Gz, point, top, scale, count, details) -> Verdict:
    n = cost.n
    hp = gen.high_precision(cost, Gz, point)
    ball = gen.enclose(cost, Gz, point)
    certified = ball is not None and gen.ball_positive(ball)
    text = (f"mpmath at 50 digits gives G_z = {float(hp.real if hasattr(hp, 'real') else hp):.6g}; "
            + (f"ball arithmetic (arb) encloses it in {gen.ball_text(ball)}, above 0" if certified
               else "the ball enclosure does not exclude 0"))
    witness = Witness(x=list(map(float, point[:n])), y=list(map(float, point[n:])), value=top, error_bound=0.0,
                      confirmation=text)
    if not certified:
        return Verdict(CONDITION, "undecided", Evidence("undecided", f"G_z = {top:.3g} > 0 at a point found in "
                                                        f"float64, but not certified: {text}", samples=count,
                                                        details=details), value=top / scale,
                       value_meaning=VALUE_MEANING)
    summary = (f"G_z > 0 at x = {witness.x}, (y, z) = {witness.y}: G is not decreasing in z there "
               "(certified by ball arithmetic)")
    return Verdict(CONDITION, "fails", Evidence("refuted", summary, samples=count,
                                                resolution=float(ctx.sample.resolution), details=details),
                   value=top / scale, value_meaning=VALUE_MEANING, witness=witness)
