"""A generating function that is an ordinary cost in disguise: ``G(x, y, z) = −c(x, y) − z``.

Trudinger ("On the local theory of prescribed Jacobian equations", Discrete Contin. Dyn. Syst.
34 (2014) 1663–1681; cited from memory) writes an ordinary cost ``c`` as the generating function
``G = −c(x, y) − z``.  The detection here is exact and deliberately narrow: ``G`` is a *reduced
cost* when ``expand(G + z)`` does not contain ``z``, i.e. ``G_z ≡ −1``; then ``c = −(G + z)``, taken
at ``z = 0`` (an exact substitution that keeps the structure the proofs recognise: a function of
``x − y``, of ``|x − y|``, a chart).

For such a ``G`` the effective cost is ``c`` up to a function of ``y``
(:mod:`costcheck.derivatives.generating`: at fixed ``x₀`` and ``u``, ``ζ(y) = −c(x₀, y) − u`` and
``c̃(x, y) = c(x, y) − c(x₀, y) − u``), so every field a condition reads (``D_x``, ``D²_xy``, the MTW
tensor) is ``c``'s, at every ``z``: the conditions of ``G`` on ``X × Y × [low, high]`` are those of
``c`` on ``X × Y`` —

- G2 (extended mixed Hessian invertible): ``E = −c_xy``, the ordinary non-degeneracy of ``c``;
- G1 (twist): ``(y, z) ↦ (−c_x, −c − z)`` is one-to-one exactly when ``y ↦ c_x(x, y)`` is, the
  ordinary twist of ``c`` (the second component gives ``z`` once ``y`` is known);
- G1* (dual twist): ``x ↦ G_y / G_z = c_y(x, y)`` one-to-one at fixed ``y`` is the ordinary twist of
  ``c*(y, x) = c(x, y)``, the cost with the roles of ``x`` and ``y`` exchanged (:func:`dual_cost`);
- G3w / G3s: the G3 form is ``c``'s MTW form.

This holds only when the domain is the product of ``c``'s domain with the range of ``z``: a
``where`` or ``pairs`` constraint that mentions ``z`` makes :func:`reduced_cost` return None.
"""

from __future__ import annotations

import dataclasses

import sympy as sp

from ..model.cost import Cost
from ..model.domain import Box, Constraint, Domain


def _without(constraints, symbols):
    """The constraints rebuilt on ``symbols`` (``z`` dropped), or None when one of them uses ``z``."""
    out = []
    for c in constraints:
        if not c.inequality.g.free_symbols <= set(symbols):
            return None
        out.append(Constraint.build(c.inequality, symbols))
    return tuple(out)


def reduced_cost(cost) -> Cost | None:
    """The ordinary cost ``c`` of a generating function ``G = −c − z`` (same ``x``, ``y``, parameters and
    domain, without ``z``), or None when ``G_z`` is not identically −1 or a constraint mentions ``z``."""
    if getattr(cost, "generating", None) is None or cost.expr is None:
        return None
    z = cost.y_symbols[-1]
    if sp.expand(cost.expr + z).has(z):
        return None
    c = (-(cost.expr + z)).xreplace({z: sp.Integer(0)})
    xs, ys = cost.x_symbols, cost.y_symbols[:-1]
    d = cost.domain
    if not isinstance(d.y, Box):
        return None
    where_x, where_y, pairs = _without(d.where_x, xs), _without(d.where_y, ys), _without(d.pairs, xs + ys)
    if where_x is None or where_y is None or pairs is None:
        return None
    y_box = Box(tuple(d.y.lower[:-1]), tuple(d.y.upper[:-1]))
    return Cost(id=cost.id, title=cost.title, x_names=cost.x_names, y_names=cost.y_names[:-1],
                domain=Domain(d.x, y_box, where_x, where_y, pairs), expr=c, params=cost.params, written_expr=c,
                source=cost.source, file=cost.file)


def dual_cost(cost: Cost) -> Cost:
    """``c*(y, x) = c(x, y)``: the same cost with the roles of ``x`` and ``y`` exchanged (its twist is ``c``'s
    dual twist, ``x ↦ c_y(x, y)`` one-to-one)."""
    d = cost.domain
    xs, ys = cost.x_symbols, cost.y_symbols
    pairs = tuple(Constraint.build(c.inequality, ys + xs) for c in d.pairs)
    return dataclasses.replace(cost, x_names=cost.y_names, y_names=cost.x_names,
                               domain=Domain(d.y, d.x, d.where_y, d.where_x, pairs))


def describe(c: Cost) -> str:
    """``c`` as one short line for the evidence (long expressions cut)."""
    text = sp.sstr(c.expr)
    return text if len(text) <= 120 else text[:117] + "..."
