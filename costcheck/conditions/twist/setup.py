"""What every twist step shares: the constants, the value meanings and :class:`Setup`.

:class:`Setup` holds the cost, its domain, the order-2 evaluator and the lazily built
high-precision (mpmath) first derivatives that confirmation uses.
"""

from __future__ import annotations

import mpmath
import numpy as np
import sympy as sp

from ...numerics import exact, search

CONDITION = "twist"
#: stream of the random far-apart pairs in the general search
SALT = 0x7715

#: a float collision residual (relative to the spread of D_x c) below this goes to confirmation
CANDIDATE_RESIDUAL = 1e-6
#: |y - y'| must exceed this fraction of diam Y for a witness
MIN_SEPARATION = 1e-3
LOCAL_STARTS = 16
CONFIRM_TRIES = 3
#: a float collision this close that is neither confirmed nor refuted in high precision makes the verdict undecided
UNRESOLVED = 1e-14

VALUE_MEANING_FAIL = ("|D_x c(x, y) - D_x c(x, y')| at the witness, evaluated in mpmath at the refined point, or 0 "
                      "when the collision was shown exactly with sympy (0 within its error bound: twist fails)")
VALUE_MEANING_HOLD_1D = ("smallest |c_xy| on the samples divided by the median |c_xy| (scale-free; > 0 means "
                         "c_x(x, ·) strictly monotone on every sampled grid)")
VALUE_MEANING_HOLD = ("smallest collision residual |D_x c(x, y) - D_x c(x, y')| / s_p reached by the local "
                      "searches with |y - y'| kept apart (s_p: spread of D_x c over y; 0 would be a collision)")


class Setup:
    """The cost, its domain and evaluators, shared by the steps of one twist check."""

    def __init__(self, ctx):
        self.ctx = ctx
        self.cost = ctx.cost
        self.domain = ctx.cost.domain
        self.n, self.m = ctx.cost.n, ctx.cost.m
        self.ev = ctx.evaluator(2)
        self.diam_y = search.region_diameter(self.domain.y) or 1.0
        lo_x, hi_x = self.domain.x.bounds()
        self.width_x = np.where(hi_x - lo_x > 0, hi_x - lo_x, 1.0)
        self._grad_sym = None
        self.decimals = False

    def derivs(self, xs, ys):
        d = self.ev(xs, ys)
        return d, search.usable(self.domain, d, xs, ys)

    @property
    def hp(self):
        # first derivatives suffice here, and their mpmath form avoids the DiracDelta that a second
        # derivative of abs() brings
        return self.ctx.usable_high_precision(1)[0]

    @property
    def hp_reason(self) -> str | None:
        """Why there is no high-precision form (``None`` while there is one or it was not asked for)."""
        return self.ctx.usable_high_precision(1)[1]

    def exact_gradient(self) -> list:
        """``D_x c`` as exact sympy expressions (decimal constants read as the decimals written)."""
        if self._grad_sym is None:
            expr, self.decimals = exact.exact_expression(self.cost.expr)
            self._grad_sym = [sp.diff(expr, v) for v in self.cost.x_symbols]
        return self._grad_sym

    def hp_dx(self, x, y, dps):
        with mpmath.workdps(dps):
            return list(self.hp(x, y, dps)["dx"])

    def hp_residual(self, x, y, yp, dps):
        with mpmath.workdps(dps):
            a, b = self.hp_dx(x, y, dps), self.hp_dx(x, yp, dps)
            return [u - v for u, v in zip(a, b)]
