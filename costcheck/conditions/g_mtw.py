"""G3w / G3s: the MTW-type condition of a generating function, on orthogonal pairs ``ξ ⊥ η``.

Trudinger ("On the local theory of prescribed Jacobian equations", Discrete Contin. Dyn. Syst.
34 (2014) 1663–1681; cited from memory): with ``(Y, Z)(x, u, p)`` solving ``G_x(x, Y, Z) = p``,
``G(x, Y, Z) = u`` and ``A(x, u, p) = G_xx(x, Y, Z)``, condition G3w asks

    D²_{p_k p_l} A_ij(x, u, p) ξ_i ξ_j η_k η_l ≥ 0      for all ξ ⊥ η,

and G3s asks ``≥ κ |ξ|² |η|²`` with ``κ > 0``.  At fixed ``(x, u)`` the pair ``(Y, Z)`` moves on the
level set ``G(x, ·, ·) = u``, so ``A`` is the ordinary MTW matrix of the effective cost
``c̃(x, y) = −G(x, y, ζ(y))`` (:mod:`costcheck.derivatives.generating`), and the form above is
the MTW form ``S(ξ, η)`` of ``c̃``: for ``G = −c − z`` exactly ``c``'s MTW form (our sign: positive
is good, as for costs).  It is stated where ``G_z ≠ 0`` and the extended mixed Hessian is
invertible (:mod:`.g_nondegenerate`).

How the verdict is reached: the MTW check's own steps (:func:`costcheck.conditions.mtw.decide`)
on the effective fields at sampled triples ``(x, y, z)``: scale-free margins, batched local
descent, mpmath confirmation at 30 and 60 digits; a failure is kept as refuted only when
:mod:`costcheck.certify` encloses ``S(ξ, η⊥)`` below 0 in ball arithmetic at a witness where the
extended mixed Hessian is certified non-singular, else it is undecided.  ``strong`` and ``weak``
are sampled evidence, not proof.
"""

from __future__ import annotations

from ..model.verdict import Verdict, not_applicable
from .engines import generating as gen
from .mtw import decide

CONDITION = "g_mtw"


def check(ctx) -> Verdict:
    skip = gen.not_generating(ctx, CONDITION)
    if skip is not None:
        return skip
    if ctx.cost.n == 1:
        return not_applicable(CONDITION, "for n = 1 G3w is empty: ξ · η = 0 in one dimension forces ξ = 0 or η = 0")
    return decide(ctx, CONDITION, "the G3 tensor", weak="G3w", strong="G3s")
