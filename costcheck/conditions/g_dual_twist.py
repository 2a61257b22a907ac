"""Dual twist of a generating function: at each fixed ``(y, z)``, ``x ↦ G_y(x, y, z) / G_z(x, y, z)``
is one-to-one on the domain.

Trudinger ("On the local theory of prescribed Jacobian equations", Discrete Contin. Dyn. Syst.
34 (2014) 1663–1681; cited from memory), condition G1*: the dual generating function is then
well defined and the generated map is invertible.  ``G_y / G_z`` is the y-gradient of the effective
cost (:mod:`costcheck.derivatives.generating`); for ``G = −c − z`` it is exactly ``c_y(x, y)``, and
the condition is the ordinary dual twist, ``x ↦ c_y(x, y)`` one-to-one.

How the verdict is reached: :mod:`.engines.collision` at 16 sampled ``(y, z)`` with 512 Sobol
points ``x`` each, as for :mod:`.g_twist`: no collision → **holds** (sampled evidence, not proof);
a collision certified by Krawczyk's test (:mod:`costcheck.certify.collisions`) → **fails**
(refuted, the partner as ``x_prime``); one it cannot certify → **undecided**.
"""

from __future__ import annotations

from ..derivatives.generating import dual_map
from ..model.verdict import Verdict
from .engines import generating as gen
from .engines.collision import search
from .engines.twist_words import verdict_of

CONDITION = "g_dual_twist"
_SALT = 0x6702


def check(ctx) -> Verdict:
    skip = gen.not_generating(ctx, CONDITION)
    if skip is not None:
        return skip
    cost = ctx.cost
    exprs = dual_map(cost.expr, tuple(cost.y_symbols))
    free = list(range(cost.n))
    return verdict_of(ctx, CONDITION, search(ctx, exprs, free, _SALT), "x ↦ G_y / G_z at fixed (y, z)", exprs, free)
