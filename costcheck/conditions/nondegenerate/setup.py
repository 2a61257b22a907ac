"""What every step of the non-degeneracy check shares: the cost, its domain and the scale.

:class:`Setup` holds the cost's dimensions, the domain's widths, the scale ``S`` (set by the
check once the samples are measured) and the evaluators: ``A`` (``M = D²_{xy} c``, or ``Mᵀ``
when ``n < m``) and the scale-free measure ``μ`` in float, ``det M`` (``det AᵀA`` when
``n ≠ m``) in high precision, and ``M`` as a sympy matrix for the exact steps.
"""

from __future__ import annotations

import mpmath
import numpy as np
import sympy as sp

from ...derivatives.sympy_backend import symbolic_derivatives
from ...numerics import exact, precision, search


class Setup:
    def __init__(self, ctx):
        self.ctx = ctx
        self.cost = ctx.cost
        self.domain = ctx.cost.domain
        # a generating function's extended mixed Hessian is n × n over points (x, y, z)
        # (costcheck.derivatives.generating): m is then n, and a point has n + m + 1 coordinates
        self.generating = ctx.cost.generating is not None
        self.n, self.m = ctx.cost.n, (ctx.cost.n if self.generating else ctx.cost.m)
        self.k = min(self.n, self.m)
        self.d = self.n + ctx.cost.m
        self.ev = ctx.evaluator(2)
        lo_x, hi_x = self.domain.x.bounds()
        lo_y, hi_y = self.domain.y.bounds()
        self.width = np.concatenate([hi_x - lo_x, hi_y - lo_y])
        self.diam = float(np.linalg.norm(self.width))
        self.S = 1.0
        self._M_sym = None
        self.decimals = False

    # --- float evaluation
    def matrices(self, Z: np.ndarray):
        """``A`` (rows ≥ columns: ``M`` or ``Mᵀ``) at each row of ``Z`` and the usable mask."""
        Z = np.atleast_2d(Z)
        xs, ys = Z[:, : self.n], Z[:, self.n:]
        der = self.ev(xs, ys)
        ok = search.usable(self.domain, der, xs, ys)
        A = der.dxy if self.n >= self.m else np.transpose(der.dxy, (0, 2, 1))
        return A, ok

    def measure(self, A: np.ndarray):
        """``μ``, the signed scale-free determinant (``n = m``; else NaN) and ``σ_max``."""
        sv = np.linalg.svd(A, compute_uv=False)
        smax, smin = sv[:, 0], sv[:, -1]
        denom = np.maximum(smax, self.S)
        with np.errstate(all="ignore"):
            mu = np.where(denom > 0, smin / denom, 0.0)
            if self.n == self.m:
                sdet = np.linalg.det(A) / denom**self.n
                sdet = np.where(denom > 0, sdet, 0.0)
            else:
                sdet = np.full(A.shape[0], np.nan)
        return mu, sdet, smax

    # --- high precision
    @property
    def hp(self):
        return self.ctx.usable_high_precision(2)[0]

    @property
    def hp_reason(self):
        """Why high precision is not usable (read after :attr:`hp`; None while it is)."""
        return self.ctx.usable_high_precision(2)[1]

    def hp_F(self, u, dps):
        """``det M`` (``n = m``) or ``det AᵀA`` at the mpf point ``u`` and ``dps`` digits."""
        with mpmath.workdps(dps):
            fields = self.hp(u[: self.n], u[self.n:], dps)
            A = precision.mp_matrix(fields["dxy"])
            if not all(mpmath.isfinite(v) for v in A):
                return mpmath.nan
            if self.n != self.m:
                A = A.T * A if self.n > self.m else A * A.T
            return precision.mp_det(A)

    @property
    def M_sym(self):
        if self._M_sym is None:
            xs, ys = self.cost.x_symbols, self.cost.y_symbols
            expr, self.decimals = exact.exact_expression(self.cost.expr)
            if self.generating:
                M = symbolic_derivatives(expr, xs, ys, 2, generating=True)["dxy"]
                self._M_sym = sp.Matrix(M)
            else:
                self._M_sym = sp.Matrix(self.n, self.m, lambda i, j: sp.diff(expr, xs[i], ys[j]))
        return self._M_sym

    def z_of(self, x, y):
        return np.concatenate([np.asarray(x, float), np.asarray(y, float)])
