"""Twist of a generating function: at each fixed ``x``, ``(y, z) ↦ (G_x(x, y, z), G(x, y, z))`` is
one-to-one on the domain.

Trudinger ("On the local theory of prescribed Jacobian equations", Discrete Contin. Dyn. Syst.
34 (2014) 1663–1681; cited from memory), condition G1: a supporting function ``G(·, y, z)`` is
determined by its value and gradient at one point, so ``(Y, Z)(x, u, p)`` is well defined.  For
``G = −c(x, y) − z`` the map is ``(y, z) ↦ (−c_x(x, y), −c(x, y) − z)``: the second component fixes
``z`` once ``y`` is known, so it is one-to-one exactly when ``y ↦ c_x(x, y)`` is — the ordinary
twist.  Its Jacobian determinant is ``G_z · det E`` (:mod:`.g_nondegenerate`): local injectivity
is monotonicity with G2; this check looks for global collisions.

How the verdict is reached: :mod:`.engines.collision` at 16 sampled ``x`` with 512 Sobol points
``(y, z)`` each: nearest images, refined by bounded least squares.  No collision → **holds**,
sampled evidence, not proof.  A floating-point collision is certified by Krawczyk's test in ball
arithmetic (:mod:`costcheck.certify.collisions`) → **fails**, evidence refuted, both points in the
witness; one the test cannot certify → **undecided**.
"""

from __future__ import annotations

from ..derivatives.generating import joint_map
from ..model.verdict import Verdict
from .engines import generating as gen
from .engines.collision import search
from .engines.twist_words import verdict_of

CONDITION = "g_twist"
_SALT = 0x6701


def check(ctx) -> Verdict:
    skip = gen.not_generating(ctx, CONDITION)
    if skip is not None:
        return skip
    cost = ctx.cost
    exprs = joint_map(cost.expr, tuple(cost.x_symbols), tuple(cost.y_symbols))
    free = list(range(cost.n, cost.n + cost.m))
    return verdict_of(ctx, CONDITION, search(ctx, exprs, free, _SALT), "(y, z) ↦ (G_x, G) at fixed x", exprs, free)
