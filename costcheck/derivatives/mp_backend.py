"""High-precision re-evaluation of the derivatives at single points (mpmath).

Used to confirm witnesses: a value found in float64 is recomputed at two working
precisions; their difference (plus the last digit of the finer one) is the stated
error estimate.  This is a numerical confirmation, not a rigorous enclosure.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Sequence

import mpmath
import numpy as np
import sympy as sp

from .fields import fields_up_to
from .composition import composed_derivatives
from .sympy_backend import shared_cse, symbolic_derivatives


def _mp_delta(u, *_):
    # derivative of sign(u) (from abs): zero away from u = 0, undefined (NaN) at the kink
    return mpmath.nan if u == 0 else mpmath.mpf(0)


def _mp_heaviside(u, *_):
    return mpmath.nan if u == 0 else (mpmath.mpf(1) if u > 0 else mpmath.mpf(0))


_MP_KINKS = {"DiracDelta": _mp_delta, "Heaviside": _mp_heaviside, "sign": mpmath.sign}


class HighPrecision:
    """``hp(x, y, dps)`` → dict of field name → nested lists of ``mpmath.mpf``."""

    def __init__(self, expr: sp.Expr, xs: Sequence[sp.Symbol], ys: Sequence[sp.Symbol], order: int = 4,
                 extra: Sequence[sp.Symbol] = (), generating: bool = False):
        """``extra``: parameter symbols of a family, given values at each call (see ``Cost.family``)."""
        self.order = order
        self.names = fields_up_to(order)
        # the float64 evaluator's expressions (Faà di Bruno's where the cost is F(t)): exact
        # derivatives all the same, and their elimination of common subexpressions is shared
        sym = (symbolic_derivatives(expr, xs, ys, order, True) if generating
               else composed_derivatives(expr, xs, ys, order))
        self._shapes = {k: np.shape(np.array(sym[k], dtype=object)) for k in self.names}
        flat = [e for k in self.names for e in np.array(sym[k], dtype=object).reshape(-1)]
        self._sizes = [int(np.prod(self._shapes[k], dtype=int)) for k in self.names]
        self._fn = sp.lambdify(list(xs) + list(ys) + list(extra), flat, modules=[_MP_KINKS, "mpmath"],
                               dummify=True, cse=shared_cse)
        self.extra_values: tuple = ()

    def bound(self, values: Sequence[sp.Expr]) -> "HighPrecision":
        """The same evaluator with the family's parameters set to the exact ``values``."""
        other = object.__new__(HighPrecision)
        other.__dict__.update(self.__dict__)
        other.extra_values = tuple(values)
        return other

    def __call__(self, x, y, dps: int = 50) -> dict:
        with mpmath.workdps(dps):
            # the exact binary value of each float, so the point is the one the search found
            args = [v if isinstance(v, mpmath.mpf) else mpmath.mpf(float(v)) for v in list(x) + list(y)]
            # parameters are exact numbers (a decimal as written): rounded to the working precision only
            args += [mpmath.mpf(str(sp.N(v, dps + 10))) for v in self.extra_values]
            values = self._fn(*args)
            out, at = {}, 0
            for name, size in zip(self.names, self._sizes):
                chunk = [mpmath.mpf(v) if not isinstance(v, mpmath.mpc) else v for v in values[at: at + size]]
                at += size
                out[name] = np.array(chunk, dtype=object).reshape(self._shapes[name])
            return out


@lru_cache(maxsize=32)
def _cached(expr, xs, ys, order, extra=(), generating=False):
    return HighPrecision(expr, xs, ys, order, extra, generating)


def high_precision(cost, order: int = 4) -> HighPrecision | None:
    """The high-precision evaluator of a cost, or ``None`` for a Python-function cost.

    For one value of a sweep's family the template's evaluator is shared, with the value bound.
    """
    if cost.expr is None:
        return None
    family = getattr(cost, "family", None)
    if family is not None:
        template, values = family
        shared = _cached(template, cost.x_symbols, cost.y_symbols, order, tuple(s for s, _ in values))
        return shared.bound([v for _, v in values])
    generating = getattr(cost, "generating", None) is not None
    return _cached(cost.expr, cost.x_symbols, cost.y_symbols, order, (), generating)


def confirm(compute, dps_low: int = 30, dps_high: int = 60) -> tuple[mpmath.mpf, mpmath.mpf]:
    """Run ``compute(dps)`` at two precisions; return the finer value and an error estimate."""
    low = compute(dps_low)
    high = compute(dps_high)
    with mpmath.workdps(dps_high):
        err = abs(mpmath.mpf(high) - mpmath.mpf(low)) + abs(mpmath.mpf(high)) * mpmath.mpf(10) ** (-dps_low) \
            + mpmath.mpf(10) ** (-dps_high)
    return high, err
