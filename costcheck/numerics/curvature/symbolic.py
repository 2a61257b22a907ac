"""The MTW tensor in closed form (sympy), tidied only within a time limit.

    T_{ijkl}(x, y) = Σ_{r,s} c_{ij,r} c^{r,s} c_{s,kl} − c_{ij,kl}

(Ma–Trudinger–Wang, ARMA 177, 2005; notation of Kim–McCann, JEMS 12, 2010), with
``c^{r,s}`` the inverse of the mixed Hessian ``M``.  ``T`` is symmetric in ``(i, j)``
and in ``(k, l)``, so only those components are formed.

Tidying (``factor`` of the expression over one common denominator: numerator and
denominator are factored, never multiplied out) can take sympy minutes on a chart of the
sphere, and a hostile expression could take for ever, so it runs in a child process with a
time limit for all the work together; an expression not tidied in time is returned as formed
(correct, only longer) and marked so.
"""

from __future__ import annotations

import itertools
import multiprocessing
import queue as queue_module
import time
from dataclasses import dataclass, field

import sympy as sp
from sympy.matrices.utilities import dotprodsimp

from ...derivatives.sympy_backend import symbolic_derivatives
from ...errors import UsageError
from ...model.cost import Cost

SIMPLIFY_SECONDS = 10.0  # in total, for all components


@dataclass(frozen=True)
class TensorComponent:
    index: tuple[int, int, int, int]
    expr: sp.Expr
    simplified: bool


def tidy(expr: sp.Expr) -> sp.Expr:
    """One common denominator, numerator and denominator factored (not expanded)."""
    return sp.factor(sp.together(expr))


#: the rewriting a caller may ask for: factored form (the default of ``costcheck tensor``),
#: general simplification, or rational-function normal form (``cancel`` is exact and fast for
#: rational expressions, where ``simplify`` may take minutes)
SIMPLIFIERS = {"factor": tidy, "simplify": sp.simplify, "cancel": sp.cancel}


def _simplify_worker(exprs, method):
    for index, expr in enumerate(exprs):
        yield index, SIMPLIFIERS[method](expr)


def _stream_worker(producer, args, queue):
    for item in producer(*args):
        queue.put(item)


def stream_bounded(producer, args: tuple, expected: int, seconds: float) -> dict:
    """Run the generator ``producer(*args)`` in a child process; ``{key: value}`` for the
    ``(key, value)`` pairs it yielded within ``seconds`` (at most ``expected`` of them).

    The child is a fork, so ``producer`` and ``args`` need not be picklable; the values must be.
    Past the limit the child is terminated: a runaway simplification cannot hang the caller.
    """
    results: dict = {}
    if expected <= 0 or seconds <= 0:
        return results
    ctx = multiprocessing.get_context("fork")
    queue = ctx.Queue()
    proc = ctx.Process(target=_stream_worker, args=(producer, args, queue), daemon=True)
    proc.start()
    deadline = time.monotonic() + seconds
    try:
        while len(results) < expected:
            remaining = deadline - time.monotonic()
            if remaining <= 0:
                break
            try:
                key, value = queue.get(timeout=min(remaining, 0.5))
            except queue_module.Empty:
                if not proc.is_alive() and queue.empty():
                    break
                continue
            results[key] = value
    finally:  # also when an enclosing time bound interrupts the wait: the child never outlives it
        if proc.is_alive():
            proc.terminate()
        proc.join()
    return results


def simplify_all_bounded(exprs: list[sp.Expr], seconds: float = SIMPLIFY_SECONDS,
                         method: str = "simplify") -> list[tuple[sp.Expr, bool]]:
    """Simplify each expression in a child process, keeping those done within ``seconds`` in total."""
    done = stream_bounded(_simplify_worker, (exprs, method), len(exprs), seconds)
    return [(done[i], True) if i in done else (e, False) for i, e in enumerate(exprs)]


@dataclass(frozen=True)
class FormedTensor:
    """The tensor as formed (nothing simplified): components by index, and ``M⁻¹``."""

    n: int
    components: dict  # (i, j, k, l) with i <= j, k <= l -> expression
    inverse: sp.Matrix  # M⁻¹ = adj(M) / det(M)
    det: sp.Expr  # det(M) as formed (it may still be identically zero)
    #: the derivatives T is made of (``symbolic_derivatives`` fields), to tidy piece by piece
    derivatives: dict | None = field(default=None, compare=False)

    def entry(self, i: int, j: int, k: int, l: int) -> sp.Expr:
        """``T_{ijkl}`` for any indices (by the symmetries in ``ij`` and in ``kl``)."""
        return self.components[(min(i, j), max(i, j), min(k, l), max(k, l))]


def singular(cost: Cost) -> UsageError:
    return UsageError(f"det D²_xy c is identically zero for '{cost.id}': the MTW tensor is not defined")


def form_tensor(cost: Cost) -> FormedTensor:
    """The independent components ``T_{ijkl}`` (``i <= j``, ``k <= l``) of a cost with ``n == m``."""
    if cost.expr is None:
        raise UsageError(f"cost '{cost.id}' has no symbolic form (it is a Python function)")
    if cost.n != cost.m:
        raise UsageError(f"the MTW tensor needs n == m; cost '{cost.id}' has n={cost.n}, m={cost.m}")
    d = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 4)
    det, Minv = determinant_and_inverse(sp.Matrix(d["dxy"]))
    if det == 0:
        raise singular(cost)
    return FormedTensor(cost.n, compose(cost.n, d, Minv), Minv, det, d)


def determinant_and_inverse(M: sp.Matrix) -> tuple[sp.Expr, sp.Matrix]:
    """``(det M, adj(M) / det M)``, with no intermediate simplification (sympy's default
    "dotprodsimp" took minutes on the 3 × 3 matrix of a power cost); Berkowitz is division-free,
    and adjugate over determinant keeps the expression smaller than ``.inv()``."""
    with dotprodsimp(False):
        det = sp.factor_terms(M.det(method="berkowitz"))
        adjugate = M.adjugate(method="berkowitz")
    return det, (adjugate / det if det != 0 else adjugate)


def compose(n: int, d: dict, Minv: sp.Matrix) -> dict:
    """``T_{ijkl} = Σ c_{ij,r} c^{r,s} c_{s,kl} − c_{ij,kl}`` for ``i <= j``, ``k <= l``, from the
    derivative fields ``d`` and ``M⁻¹`` as given (tidied or not)."""
    components = {}
    for i, j in itertools.combinations_with_replacement(range(n), 2):
        for k, l in itertools.combinations_with_replacement(range(n), 2):
            first = sum(d["dxxy"][i][j][r] * Minv[r, s] * d["dxyy"][s][k][l] for r in range(n) for s in range(n))
            components[(i, j, k, l)] = first - d["dxxyy"][i][j][k][l]
    return components


def mtw_tensor_symbolic(cost: Cost, simplify_seconds: float = SIMPLIFY_SECONDS,
                        method: str = "factor") -> list[TensorComponent]:
    """The independent components ``T_{ijkl}`` (``i <= j``, ``k <= l``), each simplified by
    ``method`` (:data:`SIMPLIFIERS`) if that finished within ``simplify_seconds`` in all."""
    formed = form_tensor(cost)
    indices = list(formed.components)
    # the determinant first: one that simplifies to 0 means T is not defined anywhere
    (det, _), *simplified = simplify_all_bounded([formed.det] + [formed.components[i] for i in indices],
                                                 simplify_seconds, method)
    if det == 0:
        raise singular(cost)
    return [TensorComponent(index, expr, ok) for index, (expr, ok) in zip(indices, simplified)]
