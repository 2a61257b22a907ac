"""Enclosures of a cost's derivative fields over a cell, from its symbolic derivatives.

The fields and their index layout are those of :class:`costcheck.derivatives.Derivatives`
(``dxy[i][k] = ∂²c/∂x_i∂y_k`` and so on); the values are ``arb`` balls.
"""

from __future__ import annotations

from typing import Callable, Sequence

import numpy as np

from ..derivatives.fields import ORDER_FIELDS
from ..derivatives.composition import composed_derivatives
from ..derivatives.sympy_backend import symbolic_derivatives
from .arb_eval import compile_exprs
from .substitution import Substitution, as_substitution

#: the derivative fields the MTW tensor is built from
TENSOR_FIELDS = ("dxy", "dxxy", "dxyy", "dxxyy")


def flat_fields(cost, fields: Sequence[str], substitution: dict | Substitution | None = None,
                rewrite: Callable | None = None, composed: bool = False):
    """``(distinct entries, layout, shapes)`` of the named derivative fields: ``layout[name]`` lists the
    position in the entries of each element of the field (row-major), ``shapes[name]`` its shape.
    ``rewrite`` (after ``substitution``) maps each entry to an expression equal to it where it is used.
    ``substitution`` is a mapping for ``xreplace`` or a :class:`~.substitution.Substitution` of one (shared
    by the callers that rewrite into the same variables, so each subexpression is rewritten once).

    ``composed``: the derivatives by Faà di Bruno's formula where the cost is ``F(t)``
    (:mod:`costcheck.derivatives.composition`), the same functions formed far faster on the charts;
    for enclosures at points (a witness), where the form does not change how tight they are.
    """
    order = max(k for k, names in ORDER_FIELDS.items() if set(names) & set(fields))
    if getattr(cost, "generating", None) is not None:  # a generating function's effective cost
        sym = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, order, True)
    else:
        derive = composed_derivatives if composed else symbolic_derivatives
        sym = derive(cost.expr, cost.x_symbols, cost.y_symbols, order)
    if substitution is not None:
        substitution = as_substitution(substitution)  # one for every entry: shared subexpressions once
    shapes, layout = {}, {}
    flat, position = [], {}
    for name in fields:
        arr = np.array(sym[name], dtype=object)
        shapes[name] = arr.shape
        idx = []
        for e in arr.reshape(-1):
            if substitution is not None:
                e = substitution(e)
            if rewrite is not None:
                e = rewrite(e)
            if e not in position:
                position[e] = len(flat)
                flat.append(e)
            idx.append(position[e])
        layout[name] = idx
    return flat, layout, shapes


class FieldEnclosures:
    """``enclose(cell) -> {field: nested lists of balls}`` for the named derivative fields."""

    def __init__(self, cost, fields: Sequence[str], substitution: dict | Substitution | None = None,
                 symbols: Sequence | None = None, rewrite: Callable | None = None, composed: bool = False):
        """``substitution`` rewrites the derivatives into other variables ``symbols`` (default: x, then y);
        ``rewrite`` then applies identities that hold where the fields are enclosed (:mod:`.range_identities`);
        ``composed`` as for :func:`flat_fields`."""
        self.fields = tuple(fields)
        self.composed = composed
        flat, self._layout, self._shapes = flat_fields(cost, self.fields, substitution, rewrite, composed)
        #: the distinct rewritten derivative entries compiled (callers must not modify the list)
        self.entries = flat
        variables = tuple(symbols) if symbols is not None else tuple(cost.x_symbols) + tuple(cost.y_symbols)
        #: every rewritten derivative is a function of ``symbols`` alone (else nothing is compiled)
        self.free_of_others = all(e.free_symbols <= set(variables) for e in flat)
        self.function = compile_exprs(tuple(flat), variables) if self.free_of_others else None

    def at_balls(self, cell: Sequence) -> dict | None:
        """Enclosures at the given input balls (natural form; for points and thin balls)."""
        return self._arrange(self.function(cell))

    def _arrange(self, values) -> dict | None:
        if not all(v.is_finite() for v in values):
            return None
        out = {}
        for name in self.fields:
            entries = [values[i] for i in self._layout[name]]
            out[name] = np.array(entries, dtype=object).reshape(self._shapes[name]).tolist()
        return out

    def duals_on_cell(self, lo, hi):
        """``(fields as duals over the cell, fields at its middle, offsets B − m)``; Nones where undefined.

        Each field's own value is already tightened by its mean-value form, so a determinant or an
        inverse is formed from narrow entries (their gradients stay natural enclosures).
        """
        duals, at_middle, offsets = self.function.duals_over_box(lo, hi)
        return self._arrange(duals), self._arrange(at_middle), offsets
