"""Proof by identity: the MTW tensor vanishes identically.

For a cost ``c = −φ(x)·ψ(y) + f(x) + g(y)`` (bilinear in transformed coordinates, plus
separable terms) the tensor ``T_{ijkl}`` is identically zero (Kim–McCann, JEMS 12, 2010;
the reference's invariances), so ``S(ξ, η) = 0`` for every ``ξ, η`` wherever ``M`` is
invertible: A3w and NNCC hold with equality, A3s fails.  sympy is asked to simplify each
component to ``0`` within a time limit; if any component is not shown to be zero in time,
the attempt gives up and says so — no verdict is drawn from a timeout.
"""

from __future__ import annotations

import time

import sympy as sp

import numpy as np

from ..checks.tensor import mtw_tensor
from ..errors import UsageError
from ..symbolic_tensor import mtw_tensor_symbolic


def tensor_vanishes(cost, seconds: float, derivs=None) -> tuple[bool, str]:
    """``(True, how)`` when every component of ``T`` simplifies to exactly 0; else ``(False, why)``.

    ``derivs`` (derivatives at sampled pairs) lets a tensor that is visibly non-zero skip the
    symbolic attempt.  Rational-function normal form (``cancel``) is tried first, then
    ``simplify``, each with half the time.
    """
    if cost.expr is None:
        return False, "a Python-function cost has no symbolic form"
    if cost.n != cost.m:
        return False, "the MTW tensor needs n = m"
    if derivs is not None:
        T, scale = mtw_tensor(derivs)
        size = np.nanmax(np.abs(T).reshape(T.shape[0], -1), axis=1) if T.size else np.array([])
        visible = np.isfinite(size) & (size > 1e-8 * np.where(np.isfinite(scale), scale, np.inf))
        if visible.any():
            return False, "the tensor is visibly non-zero at sampled pairs, so no identity was sought"
    started = time.perf_counter()
    components = None
    for method in ("cancel", "simplify"):
        try:
            components = mtw_tensor_symbolic(cost, simplify_seconds=seconds / 2, method=method)
        except UsageError as exc:
            return False, str(exc)
        if all(c.expr == 0 or (c.simplified and c.expr == sp.S.Zero) for c in components):
            break
    # a component that is already the number 0 needs no simplification
    pending = [c for c in components if not (c.expr == 0)]
    unsimplified = [c for c in pending if not c.simplified]
    if unsimplified:
        return False, (f"sympy did not finish simplifying {len(unsimplified)} of {len(components)} components "
                       f"within {seconds:g} s")
    nonzero = [c for c in pending if c.expr != sp.S.Zero]
    if nonzero:
        return False, f"{len(nonzero)} of {len(components)} components simplify to non-zero expressions"
    return True, (f"all {len(components)} independent components of T_ijkl simplify to exactly 0 (sympy "
                  f"{method}, {time.perf_counter() - started:.1f} s)")
