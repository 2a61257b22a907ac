"""c-convexity of the target domain: is ``Y`` c-convex with respect to ``X``?

``Y`` is c-convex w.r.t. ``X`` when, for every ``x ∈ X``, the image ``-D_x c(x, Y_x)`` is a
convex subset of ``R^n``; equivalently every c-segment ``t ↦ y_t`` with
``-D_x c(x, y_t) = (1 - t)(-D_x c(x, y0)) + t(-D_x c(x, y1))``, ``y0, y1 ∈ Y_x``, stays in
``Y_x`` (Ma, Trudinger & Wang, ARMA 177, 2005, §2, where it is hypothesis A-convexity of the
target for the regularity theorem; Trudinger & Wang, Ann. Sc. Norm. Super. Pisa 8, 2009, who
show it cannot be dropped; Villani, *Optimal Transport: Old and New*, 2009, ch. 12).  For the
quadratic cost ``-D_x c(x, y) = y - x`` and c-convexity is ordinary convexity.

``Y_x`` is ``Y`` cut by the file's ``pairs`` constraints at ``x``.  The procedure, tolerance
and confirmation are those of :mod:`costcheck.conditions.engines.cconvex`: verdict ``fails`` (evidence
``refuted``, an mpmath-confirmed point of a c-segment outside the domain, with ``y0``, ``y1``,
the exit time and point), ``holds`` (evidence ``sampled``), ``not-applicable`` for ``n ≠ m``,
``undecided`` when the segments cannot be followed (twist or non-degeneracy fails).
"""

from __future__ import annotations

from .engines.cconvex import SideSpec, check_side

CONDITION = "target_c_convex"
SPEC = SideSpec(CONDITION, moving="y", salt=0x6C01)


def check(ctx):
    return check_side(ctx, SPEC)
