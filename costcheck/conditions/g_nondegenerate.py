"""Non-degeneracy of a generating function: the extended mixed Hessian is invertible.

Trudinger ("On the local theory of prescribed Jacobian equations", Discrete Contin. Dyn. Syst.
34 (2014) 1663–1681; cited from memory), condition G2:

    det E(x, y, z) ≠ 0,    E = G_xy − G_xz ⊗ G_y / G_z,   E_ik = G_{x_i y_k} − G_{x_i z} G_{y_k} / G_z,

at every ``(x, y, z)`` of the domain.  ``E`` is the derivative in ``y`` of ``G_x`` along the level
set ``G(x, ·, ·) = u`` (:mod:`costcheck.derivatives.generating`), so ``−E`` is the mixed Hessian of
the effective cost, and ``Y_p = E⁻¹`` where ``(Y, Z)`` solves ``G_x = p``, ``G = u``.  The Jacobian of
``(y, z) ↦ (G_x, G)`` is ``[[G_xy, G_xz], [G_y, G_z]]``, whose determinant is ``G_z · det E``
(Schur complement): G2 with ``G_z ≠ 0`` is the local invertibility of the twist map.  For
``G = −c − z``, ``E = −c_xy`` exactly, and this is the ordinary condition.

How the verdict is reached: the steps of :mod:`costcheck.conditions.nondegenerate` — sign
changes of ``det`` bracketed and confirmed, batched local minimisation of the scale-free
singular value, exact and high-precision zeros — on the effective fields at sampled triples
``(x, y, z)``; a sign-change refutation is certified by :mod:`costcheck.certify` (``det`` enclosed
with opposite signs at the bracket ends and ``E`` enclosed on the segment) or it is not called
refuted.  ``holds`` is sampled evidence, not proof.
"""

from __future__ import annotations

import dataclasses

from ..model.verdict import Verdict
from . import nondegenerate
from .engines import generating as gen

CONDITION = "g_nondegenerate"


def check(ctx) -> Verdict:
    skip = gen.not_generating(ctx, CONDITION)
    if skip is not None:
        return skip
    verdict = nondegenerate.check(ctx)
    note = "M here is the extended mixed Hessian −E = −(G_xy − G_xz ⊗ G_y / G_z), at triples (x, y, z)"
    return dataclasses.replace(verdict, condition=CONDITION, notes=verdict.notes + (note,))
