"""High-precision confirmation with mpmath, shared by every check that confirms a witness.

- minimum-norm Newton refinement of a float witness to many digits (so a residual that is zero
  in exact arithmetic shows up as zero to the working precision), and Newton refinement to a
  critical point (for zeros without a sign change, such as ``det = 3 a²``);
- the two-precision error estimate of :func:`costcheck.derivatives.mp_backend.confirm`, at the
  working precisions :data:`DPS_LOW` and :data:`DPS_HIGH`;
- the formatting of high-precision numbers in witness text.

The Newton iterations use the Moore–Penrose pseudo-inverse, so they serve square,
over- and under-determined systems alike; for zero-residual problems with a Jacobian of
locally constant rank they converge quadratically (Ben-Israel, "A Newton–Raphson method
for the solution of systems of equations", J. Math. Anal. Appl. 15, 1966).
"""

from __future__ import annotations

from typing import Callable, Sequence

import mpmath
import numpy as np

from ..derivatives.mp_backend import confirm
from ..model.domain import Box

#: working precisions (decimal digits) of every high-precision confirmation
DPS_LOW = 50
DPS_HIGH = 80
#: precision of the Newton refinements that precede a confirmation
DPS_REFINE = 110
#: what a high-precision evaluation may raise at an awkward point (a pole, a branch cut, a function
#: the mpmath translation does not know): the confirmation then fails, the check goes on
HP_ERRORS = (ArithmeticError, ValueError, TypeError, NameError)


# --------------------------------------------------------------------------- evaluation


# --------------------------------------------------------------------------- batched local search


# --------------------------------------------------------------------------- mpmath helpers


def mp_matrix(rows) -> mpmath.matrix:
    arr = np.asarray(rows, dtype=object)
    if arr.ndim == 1:
        arr = arr.reshape(-1, 1)
    return mpmath.matrix([[arr[i, j] for j in range(arr.shape[1])] for i in range(arr.shape[0])])


def mp_det(A: mpmath.matrix) -> mpmath.mpf:
    """Determinant by Gaussian elimination with partial pivoting, at the current precision.

    ``mpmath.det`` (1.3.0) raises ``TypeError`` instead of returning 0 for some exactly
    singular matrices (e.g. ``[[0, 1], [0, -1]]``: a zero column below the diagonal leaves
    its LU pivot undefined) — exactly the matrices a non-degeneracy witness produces.
    """
    n = A.rows
    M = [[A[i, j] for j in range(n)] for i in range(n)]
    det = mpmath.mpf(1)
    for k in range(n):
        p = max(range(k, n), key=lambda i: abs(M[i][k]))
        if M[p][k] == 0:
            return mpmath.mpf(0)
        if p != k:
            M[k], M[p] = M[p], M[k]
            det = -det
        det *= M[k][k]
        for i in range(k + 1, n):
            f = M[i][k] / M[k][k]
            for j in range(k + 1, n):
                M[i][j] -= f * M[k][j]
    return det


def mp_vector(values) -> list:
    return [v if isinstance(v, mpmath.mpf) else mpmath.mpf(float(v)) for v in values]


def mp_pinv_solve(J: mpmath.matrix, r: mpmath.matrix, rcond=None) -> mpmath.matrix:
    """The (regularised) minimum-norm least-squares solution of ``J s = r``.

    ``s = Jᵀ (J Jᵀ + λ I)⁻¹ r`` for a wide or square ``J``, ``(JᵀJ + λ I)⁻¹ Jᵀ r`` for a tall one,
    with ``λ = rcond² · trace / size``: the pseudo-inverse solution in every direction whose
    singular value exceeds ``rcond`` times the typical one, damped in the others (Tikhonov).
    Much faster in mpmath than an SVD, and at 100+ digits the squared condition number costs
    nothing that a confirmation reads.
    """
    rcond = mpmath.mpf(10) ** (-(mpmath.mp.dps // 3)) if rcond is None else rcond
    # equilibrate the rows first: the equations J s = r keep their solutions (and, for a wide J,
    # their minimum-norm solution), while rows of very different sizes (one equation nearly
    # satisfied, another not) no longer look like a rank deficiency to the damping below
    J, r = J.copy(), r.copy()
    for i in range(J.rows):
        norm = mpmath.sqrt(sum(J[i, j] ** 2 for j in range(J.cols)))
        if norm > 0:
            for j in range(J.cols):
                J[i, j] /= norm
            r[i] /= norm
    wide = J.rows <= J.cols
    G = J * J.T if wide else J.T * J
    size = G.rows
    trace = sum(G[i, i] for i in range(size))
    out = mpmath.matrix(J.cols, 1)
    if trace == 0:
        return out
    lam = rcond * rcond * trace / size
    for i in range(size):
        G[i, i] += lam
    try:
        if wide:
            return J.T * mpmath.lu_solve(G, r)
        return mpmath.lu_solve(G, J.T * r)
    except ZeroDivisionError:
        return out


def mp_norm(values) -> mpmath.mpf:
    return mpmath.sqrt(sum(v * v for v in values)) if len(values) else mpmath.mpf(0)


def mp_newton_solve(
    residual: Callable[[list], list],
    u0: Sequence,
    *,
    dps: int = DPS_REFINE,
    iterations: int = 14,
    project: Callable[[list], list] | None = None,
    jacobian: Callable[[list], mpmath.matrix] | None = None,
):
    """Minimum-norm Newton iteration for ``residual(u) = 0`` at ``dps`` digits.

    ``residual`` maps a list of mpf to a list of mpf (any length); the Jacobian is
    ``jacobian(u)`` if given, else central differences with step ``10**(-dps*0.35)``
    (truncation error ``~ h²`` and rounding ``~ 10**-dps / h`` both far below the
    digits a confirmation reads).  Returns ``(u, |residual(u)|, settled)``: the best iterate
    (``None`` when the iteration produced no finite value), its residual, and whether the
    last step was negligible (the iteration reached a fixed point — a zero, or a non-zero
    least-squares minimum — rather than stalling on the way).
    """
    with mpmath.workdps(dps):
        u = [mpmath.mpf(v) if not isinstance(v, mpmath.mpf) else +v for v in u0]
        h = mpmath.mpf(10) ** (-int(dps * 0.35))
        try:
            r = residual(u)
        except HP_ERRORS:
            return None, mpmath.inf, False
        best_u, best_norm = None, mpmath.inf
        slow = 0
        last_step = mpmath.inf
        for _ in range(iterations + 1):
            norm = mp_norm(r)
            if not mpmath.isfinite(norm):
                break
            # a zero-residual problem converges fast; a residual that stops shrinking is no zero
            slow = slow + 1 if not norm < best_norm / 4 else 0
            if norm < best_norm:
                best_u, best_norm = list(u), norm
            if slow >= 3 or norm == 0 or norm < mpmath.mpf(10) ** (-(dps - 5)):
                break
            if jacobian is not None:
                J = jacobian(u)
            else:
                J = mpmath.matrix(len(r), len(u))
                for j in range(len(u)):
                    up, um = list(u), list(u)
                    up[j] += h
                    um[j] -= h
                    rp, rm = residual(up), residual(um)
                    for i in range(len(r)):
                        J[i, j] = (rp[i] - rm[i]) / (2 * h)
            step = mp_pinv_solve(J, mpmath.matrix(r))
            if not all(mpmath.isfinite(v) for v in step):
                break
            # Newton converges only linearly to a multiple root (a residual quadratic in the distance,
            # e.g. r = (x - s)² a); the step scaled by the multiplicity restores quadratic convergence
            # (Schröder 1870), so the multiples 1, 2, 3 of the step are tried and the best one kept.
            best_trial = None
            for mult in (1, 2, 3):
                cand = [u[j] - mult * step[j] for j in range(len(u))]
                if project is not None:
                    cand = project(cand)
                try:
                    rc = residual(cand)
                except HP_ERRORS:
                    continue
                cn = mp_norm(rc)
                if mpmath.isfinite(cn) and (best_trial is None or cn < best_trial[0]):
                    best_trial = (cn, cand, rc)
            if best_trial is None:
                break
            last_step = mp_norm([best_trial[1][j] - u[j] for j in range(len(u))])
            _, u, r = best_trial
        settled = last_step <= mpmath.mpf(10) ** (-(dps // 4)) * (1 + mp_norm(u))
        return best_u, best_norm, bool(settled)


def _central_differences(at: Callable[[list], mpmath.mpf], u: list, f0, h):
    """Gradient and Hessian of ``at`` at ``u`` (``f0 = at(u)``) by central differences of step ``h``."""
    d = len(u)
    grad = mpmath.matrix(d, 1)
    hess = mpmath.matrix(d, d)
    for i in range(d):
        up, um = list(u), list(u)
        up[i] += h
        um[i] -= h
        plus, minus = at(up), at(um)
        grad[i] = (plus - minus) / (2 * h)
        hess[i, i] = (plus - 2 * f0 + minus) / (h * h)
    for i in range(d):
        for j in range(i + 1, d):
            pp, pm, mp_, mm = list(u), list(u), list(u), list(u)
            pp[i] += h; pp[j] += h  # noqa: E702
            pm[i] += h; pm[j] -= h  # noqa: E702
            mp_[i] -= h; mp_[j] += h  # noqa: E702
            mm[i] -= h; mm[j] -= h  # noqa: E702
            hess[i, j] = hess[j, i] = (at(pp) - at(pm) - at(mp_) + at(mm)) / (4 * h * h)
    return grad, hess


def mp_critical_point(
    value: Callable[[list], mpmath.mpf],
    u0: Sequence,
    *,
    dps: int = DPS_REFINE,
    iterations: int = 10,
    project: Callable[[list], list] | None = None,
):
    """Newton's method for ``∇value = 0`` (gradient and Hessian by central differences).

    A zero of ``value`` without a sign change (``value ≥ 0`` near it, e.g. ``3 a²``) is a
    critical point, and Newton converges to it quadratically where plain root finding on
    ``value`` converges only linearly.  The pseudo-inverse of the Hessian lets the
    iterate move only across a zero *set* (a curve or surface), not along it.
    Returns ``(u, |value(u)|, settled)`` for the iterate with the smallest ``|value|``;
    ``settled`` says the last step was negligible (a critical point was reached).
    """
    with mpmath.workdps(dps):
        u = [mpmath.mpf(v) if not isinstance(v, mpmath.mpf) else +v for v in u0]
        d = len(u)
        h = mpmath.mpf(10) ** (-int(dps * 0.22))
        best_u, best_val = None, mpmath.inf

        def at(point):
            if not all(mpmath.isfinite(c) for c in point):
                return mpmath.nan
            try:
                v = value(point)
            except HP_ERRORS:
                return mpmath.nan
            return v

        f0 = at(u)
        slow = 0
        last_step = mpmath.inf
        for _ in range(iterations + 1):
            if not mpmath.isfinite(f0):
                break
            slow = slow + 1 if not abs(f0) < best_val / 4 else 0
            if abs(f0) < best_val:
                best_u, best_val = list(u), abs(f0)
            if f0 == 0 or slow >= 3:
                break
            grad, hess = _central_differences(at, u, f0, h)
            if not all(mpmath.isfinite(v) for v in list(grad) + list(hess)):
                break
            if mp_norm(list(grad)) == 0:
                break
            step = mp_pinv_solve(hess, grad, rcond=mpmath.mpf(10) ** (-int(dps * 0.15)))
            # at a degenerate critical point (value ~ (x y)², quartic) Newton's step falls short by a
            # constant factor; multiples of it (as for multiple roots, Schröder 1870) restore the pace
            best_trial = None
            for mult in (1, 2, 3, 4):
                cand = [u[j] - mult * step[j] for j in range(d)]
                if project is not None:
                    cand = project(cand)
                fc = at(cand)
                if mpmath.isfinite(fc) and (best_trial is None or abs(fc) < best_trial[0]):
                    best_trial = (abs(fc), cand, fc)
            if best_trial is None:
                break
            last_step = mp_norm([best_trial[1][j] - u[j] for j in range(d)])
            _, u, f0 = best_trial
        settled = last_step <= mpmath.mpf(10) ** (-(dps // 4)) * (1 + mp_norm(u))
        return best_u, best_val, bool(settled)


def confirm_value(compute: Callable[[int], mpmath.mpf]) -> tuple[mpmath.mpf, mpmath.mpf]:
    """``compute(dps)`` at :data:`DPS_LOW` and :data:`DPS_HIGH` digits: value and error estimate.

    An evaluation that fails returns ``(nan, inf)``, which confirms nothing.
    """
    try:
        return confirm(compute, dps_low=DPS_LOW, dps_high=DPS_HIGH)
    except HP_ERRORS:
        return mpmath.nan, mpmath.inf


def usable_high_precision(cost, order: int, x0, y0):
    """The cost's mpmath evaluator if it evaluates at ``(x0, y0)``; else ``(None, reason)``.

    Python-function costs have none; the mpmath translation of an expression may also fail
    (e.g. a ``DiracDelta`` from differentiating ``abs`` twice), and then the checks fall back
    to float64 confirmation and say so.
    """
    if cost.expr is None:
        return None, "a Python-function cost has no symbolic form for high precision"
    from ..derivatives.mp_backend import high_precision

    try:
        hp = high_precision(cost, order)
        hp(list(x0), list(y0), 20)
    except HP_ERRORS as exc:
        return None, f"the high-precision evaluator failed ({type(exc).__name__}: {exc})"
    return hp, ""


def mp_project_box(region, offset: int = 0):
    """A projection of an mpf vector's slice ``[offset, offset + dim)`` onto a box (a no-op for a ball)."""
    if not isinstance(region, Box):
        return lambda u: u
    lo, hi = region.lower, region.upper

    def project(u):
        u = list(u)
        for i, (a, b) in enumerate(zip(lo, hi)):
            k = offset + i
            u[k] = min(max(u[k], mpmath.mpf(a)), mpmath.mpf(b))
        return u

    return project


def compose(*functions):
    def run(u):
        for f in functions:
            u = f(u)
        return u

    return run


def fmt(value, digits: int = 30) -> str:
    """An mpf (or float) as a decimal string with ``digits`` significant digits."""
    if isinstance(value, (mpmath.mpf, mpmath.mpc)):
        return mpmath.nstr(value, digits, min_fixed=-4, max_fixed=6)
    return f"{float(value):.17g}"


def fmt_vec(values, digits: int = 30) -> str:
    return "(" + ", ".join(fmt(v, digits) for v in values) + ")"


# --------------------------------------------------------------------------- exact snapping


