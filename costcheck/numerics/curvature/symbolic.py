"""The MTW tensor in closed form (sympy), simplified only where it is cheap.

    T_{ijkl}(x, y) = Σ_{r,s} c_{ij,r} c^{r,s} c_{s,kl} − c_{ij,kl}

(Ma–Trudinger–Wang, ARMA 177, 2005; notation of Kim–McCann, JEMS 12, 2010), with
``c^{r,s}`` the inverse of the mixed Hessian ``M``.  ``T`` is symmetric in ``(i, j)``
and in ``(k, l)``, so only those components are formed.

Simplification can take sympy minutes on a chart of the sphere, so it runs in a
child process with a time limit for all components together; a component not
simplified in time is returned as formed (correct, only longer) and marked so.
"""

from __future__ import annotations

import itertools
import multiprocessing
import queue as queue_module
import time
from dataclasses import dataclass

import sympy as sp

from ...derivatives.sympy_backend import symbolic_derivatives
from ...errors import UsageError
from ...model.cost import Cost

SIMPLIFY_SECONDS = 10.0  # in total, for all components


@dataclass(frozen=True)
class TensorComponent:
    index: tuple[int, int, int, int]
    expr: sp.Expr
    simplified: bool


#: the rewriting a caller may ask for: general simplification, or rational-function normal form
#: (``cancel`` is exact and fast for rational expressions, where ``simplify`` may take minutes)
SIMPLIFIERS = {"simplify": sp.simplify, "cancel": sp.cancel}


def _simplify_worker(exprs, queue, method="simplify"):
    for index, expr in enumerate(exprs):
        queue.put((index, SIMPLIFIERS[method](expr)))


def simplify_all_bounded(exprs: list[sp.Expr], seconds: float = SIMPLIFY_SECONDS,
                         method: str = "simplify") -> list[tuple[sp.Expr, bool]]:
    """Simplify each expression in a child process, keeping those done within ``seconds`` in total."""
    results = [(e, False) for e in exprs]
    if not exprs or seconds <= 0:
        return results
    ctx = multiprocessing.get_context("fork")
    queue = ctx.Queue()
    proc = ctx.Process(target=_simplify_worker, args=(exprs, queue, method), daemon=True)
    proc.start()
    deadline = time.monotonic() + seconds
    done = 0
    while done < len(exprs):
        remaining = deadline - time.monotonic()
        if remaining <= 0:
            break
        try:
            index, simple = queue.get(timeout=min(remaining, 0.5))
        except queue_module.Empty:
            if not proc.is_alive() and queue.empty():
                break
            continue
        results[index] = (simple, True)
        done += 1
    if proc.is_alive():
        proc.terminate()
    proc.join()
    return results


def mtw_tensor_symbolic(cost: Cost, simplify_seconds: float = SIMPLIFY_SECONDS,
                        method: str = "simplify") -> list[TensorComponent]:
    """The independent components ``T_{ijkl}`` (``i <= j``, ``k <= l``) of a cost with ``n == m``."""
    if cost.expr is None:
        raise UsageError(f"cost '{cost.id}' has no symbolic form (it is a Python function)")
    if cost.n != cost.m:
        raise UsageError(f"the MTW tensor needs n == m; cost '{cost.id}' has n={cost.n}, m={cost.m}")
    n = cost.n
    d = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 4)
    M = sp.Matrix(d["dxy"])
    det = sp.factor_terms(M.det())
    if det == 0:
        raise UsageError(f"det D²_xy c is identically zero for '{cost.id}': the MTW tensor is not defined")
    Minv = M.adjugate() / det  # adjugate over determinant keeps the expression smaller than .inv()
    indices, exprs = [], []
    for i, j in itertools.combinations_with_replacement(range(n), 2):
        for k, l in itertools.combinations_with_replacement(range(n), 2):
            first = sum(d["dxxy"][i][j][r] * Minv[r, s] * d["dxyy"][s][k][l] for r in range(n) for s in range(n))
            indices.append((i, j, k, l))
            exprs.append(first - d["dxxyy"][i][j][k][l])
    simplified = simplify_all_bounded(exprs, simplify_seconds, method)
    return [TensorComponent(index, expr, ok) for index, (expr, ok) in zip(indices, simplified)]
