"""c-convexity of the source domain: is ``X`` c-convex with respect to ``Y``?

The dual of :mod:`.target_c_convex`: ``X`` is c-convex w.r.t. ``Y`` (c*-convex in some texts)
when, for every ``y ∈ Y``, ``-D_y c(X_y, y)`` is convex, i.e. every dual c-segment ``s ↦ x_s``
with ``-D_y c(x_s, y) = (1 - s)(-D_y c(x0, y)) + s(-D_y c(x1, y))``, ``x0, x1 ∈ X_y``, stays in
``X_y`` (Ma, Trudinger & Wang, ARMA 177, 2005, §2; Loeper, Acta Math. 202, 2009, who needs it
for the equivalence of A3w with the maximum principle; Villani, *Optimal Transport: Old and
New*, 2009, ch. 12).  For the quadratic cost it is ordinary convexity of ``X``.

Procedure, tolerance and confirmation: :mod:`costcheck.conditions.engines.cconvex` with the roles of
``x`` and ``y`` exchanged; the witness gives ``y`` (fixed), ``x0``, ``x1``, ``x_exit`` and the
confirmed point ``x`` outside.
"""

from __future__ import annotations

from .engines.cconvex import SideSpec, check_side

CONDITION = "source_c_convex"
SPEC = SideSpec(CONDITION, moving="x", salt=0x7C02)


def check(ctx):
    return check_side(ctx, SPEC)
