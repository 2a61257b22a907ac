"""Differentiation of a real expression, with ``sign``'s derivative made explicit.

Its own module so that both :mod:`.sympy_backend` and :mod:`.generating` (which the backend
calls for a generating function's fields) use it without importing each other.
"""

from __future__ import annotations

import sympy as sp


def diff(e: sp.Expr, v: sp.Symbol) -> sp.Expr:
    """``∂e/∂v``, with ``sign``'s derivative made explicit.

    sympy differentiates ``sign(u)`` only when it can prove ``u`` real; for ``u = cos(x/(sin(y)
    + 2)) + 2`` it cannot (it does not bound the denominator away from 0) and leaves an
    unevaluated ``Derivative(sign(u), v)``, which no printer can evaluate.  Every variable here
    is real, so ``∂ sign(u)/∂v = 2 δ(u) ∂u/∂v`` (``δ`` evaluates to 0 off ``u = 0`` and is
    undefined on it, like the kink it comes from).
    """
    return _explicit_sign(sp.diff(e, v))


def _explicit_sign(e: sp.Expr) -> sp.Expr:
    if not e.has(sp.Derivative):  # the usual case: nothing to rebuild
        return e

    def evaluate(d):
        u = d.expr.args[0]
        variables = list(d.variables)
        out = 2 * sp.DiracDelta(u) * sp.diff(u, variables[0])
        for v in variables[1:]:
            out = sp.diff(out, v)
        return _explicit_sign(out)

    return e.replace(lambda a: isinstance(a, sp.Derivative) and isinstance(a.expr, sp.sign), evaluate)
