"""Proof by identity: the MTW tensor vanishes identically.

For a cost ``c = −φ(x)·ψ(y) + f(x) + g(y)`` (bilinear in transformed coordinates, plus
separable terms) the tensor ``T_{ijkl}`` is identically zero (Kim–McCann, JEMS 12, 2010;
the invariances in docs/conditions.md#mtw), so ``S(ξ, η) = 0`` for every ``ξ, η`` wherever ``M`` is
invertible: A3w and NNCC hold with equality, A3s fails.  sympy is asked to simplify each
component to ``0`` within a time limit; if any component is not shown to be zero in time,
the attempt gives up and says so — no verdict is drawn from a timeout.
"""

from __future__ import annotations

import time

import numpy as np
import sympy as sp

from ..errors import UsageError
from ..numerics.curvature.algebra import mtw_tensor
from ..numerics.curvature.symbolic import mtw_tensor_symbolic, simplify_all_bounded


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
    try:
        components = mtw_tensor_symbolic(cost, simplify_seconds=0)  # formed once, simplified below
    except UsageError as exc:
        return False, str(exc)
    # a component that is already the number 0 needs no simplification
    pending = [c.expr for c in components if c.expr != 0]
    shown_by, unfinished, nonzero = "no simplification needed", 0, 0
    for method in ("cancel", "simplify"):
        if not pending:
            break
        results = simplify_all_bounded(pending, seconds / 2, method)
        unfinished = sum(1 for _, done in results if not done)
        nonzero = sum(1 for e, done in results if done and e != sp.S.Zero)
        if not unfinished and not nonzero:
            pending, shown_by = [], f"sympy {method}"
    if pending and unfinished:
        return False, (f"sympy did not finish simplifying {unfinished} of {len(components)} components "
                       f"within {seconds:g} s")
    if pending:
        return False, f"{nonzero} of {len(components)} components simplify to non-zero expressions"
    return True, (f"all {len(components)} independent components of T_ijkl simplify to exactly 0 ({shown_by}, "
                  f"{time.perf_counter() - started:.1f} s)")
