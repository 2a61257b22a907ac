"""Shared helpers of the twist and non-degeneracy checks: evaluation, local search, confirmation.

Three kinds of help live here:

- **evaluation** at new points: masks of "inside the domain and defined", segments
  between pairs (evaluators come from the context; the JAX backend pads batch sizes itself);
- **high-precision confirmation** with mpmath: minimum-norm Newton refinement of a
  float witness to many digits (so a residual that is zero in exact arithmetic shows
  up as zero to the working precision), Newton refinement to a critical point (for
  zeros without a sign change, such as ``det = 3 a²``), and the two-precision error
  estimate of :func:`costcheck.derivatives.mp_backend.confirm`;
- **exact confirmation**: snapping a float point to nearby simple rationals
  (:meth:`fractions.Fraction.limit_denominator`) or closed forms (:func:`sympy.nsimplify`)
  and evaluating a sympy expression there exactly.

The Newton iterations use the Moore–Penrose pseudo-inverse, so they serve square,
over- and under-determined systems alike; for zero-residual problems with a Jacobian of
locally constant rank they converge quadratically (Ben-Israel, "A Newton–Raphson method
for the solution of systems of equations", J. Math. Anal. Appl. 15, 1966).
"""

from __future__ import annotations

from fractions import Fraction
from typing import Callable, Sequence

import mpmath
import numpy as np
import sympy as sp

from ..derivatives import Derivatives
from ..derivatives.mp_backend import confirm
from ..model.domain import Ball, Box

#: working precisions (decimal digits) of every high-precision confirmation
DPS_LOW = 50
DPS_HIGH = 80
#: precision of the Newton refinements that precede a confirmation
DPS_REFINE = 110
#: what a high-precision evaluation may raise at an awkward point (a pole, a branch cut, a function
#: the mpmath translation does not know): the confirmation then fails, the check goes on
HP_ERRORS = (ArithmeticError, ValueError, TypeError, NameError)


# --------------------------------------------------------------------------- evaluation


def usable(domain, derivs: Derivatives, xs, ys) -> np.ndarray:
    """Pairs inside the domain where every evaluated derivative is finite."""
    return domain.contains_pairs(np.atleast_2d(xs), np.atleast_2d(ys)) & derivs.defined


def region_diameter(region) -> float:
    lo, hi = region.bounds()
    return float(np.linalg.norm(hi - lo))


def region_is_convex(domain, side: str) -> bool:
    """A box or a ball with no ``where`` constraint on that side and no ``pairs`` constraint."""
    region = domain.x if side == "x" else domain.y
    extra = domain.where_x if side == "x" else domain.where_y
    return isinstance(region, (Box, Ball)) and not extra and not domain.pairs


def box_bounds(region) -> tuple[np.ndarray, np.ndarray]:
    """Bounds for a box; infinite bounds for a ball (kept inside by a penalty instead)."""
    lo, hi = region.bounds()
    if isinstance(region, Box):
        return lo, hi
    return np.full_like(lo, -np.inf), np.full_like(hi, np.inf)


def ball_penalty(region, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``max(|p - c| - R, 0) / R`` per row and its gradient, for a ball (zeros for a box).

    Local searches keep a ball's points inside with this penalty (a box is kept by bounds).
    """
    points = np.atleast_2d(points)
    if not isinstance(region, Ball):
        return np.zeros(points.shape[0]), np.zeros_like(points)
    c = np.asarray(region.center, float)
    diff = points - c
    dist = np.linalg.norm(diff, axis=1)
    out = np.maximum(dist - region.radius, 0.0) / region.radius
    with np.errstate(all="ignore"):
        grad = np.where((out > 0)[:, None], diff / (dist[:, None] * region.radius), 0.0)
    return out, grad


def clip_into(region, point: np.ndarray) -> np.ndarray:
    """The nearest point of the region's box or ball (no ``where`` constraints)."""
    p = np.asarray(point, float).copy()
    if isinstance(region, Box):
        lo, hi = region.bounds()
        return np.clip(p, lo, hi)
    c = np.asarray(region.center, float)
    d = np.linalg.norm(p - c)
    return c + (p - c) * (region.radius / d) if d > region.radius else p


def segment_is_usable(ctx, ev, z0: np.ndarray, z1: np.ndarray, count: int = 65) -> bool:
    """``count`` equally spaced points of the segment ``z0 -> z1`` are in the domain and defined."""
    n = ctx.cost.n
    t = np.linspace(0.0, 1.0, count)[:, None]
    z = (1 - t) * z0 + t * z1
    d = ev(z[:, :n], z[:, n:])
    return bool(usable(ctx.cost.domain, d, z[:, :n], z[:, n:]).all())


# --------------------------------------------------------------------------- batched local search


def batched_least_squares(
    model: Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray]],
    U0: np.ndarray,
    lower: np.ndarray,
    upper: np.ndarray,
    *,
    iterations: int = 60,
    tol: float = 1e-30,
):
    """Levenberg–Marquardt on many starts at once, kept inside bounds by projection.

    ``model(U)`` takes ``(S, q)`` parameter rows and returns residuals ``(S, p)``,
    Jacobians ``(S, p, q)`` and a mask of rows where both are finite.  Every iteration
    makes one ``model`` call for all starts (one batched derivative evaluation), which
    is what keeps a few dozen local searches within a fraction of a second; the damping
    follows Marquardt (SIAM J. Appl. Math. 11, 1963) with the diagonal scaling of
    Moré ("The Levenberg–Marquardt algorithm: implementation and theory", 1978).
    Returns the final parameters ``(S, q)`` and their squared residual norms ``(S,)``.
    """
    U = np.clip(np.array(U0, dtype=float), lower, upper)
    r, J, ok = model(U)
    cost = np.where(ok, np.sum(r * r, axis=1), np.inf)
    lam = np.full(U.shape[0], 1e-3)
    q = U.shape[1]
    eye = np.eye(q)
    for _ in range(iterations):
        active = ok & (cost > tol) & (lam < 1e12)
        if not active.any():
            break
        JT = np.transpose(J, (0, 2, 1))
        JTJ = JT @ J
        g = np.einsum("spq,sp->sq", J, r)
        diag = np.einsum("sqq->sq", JTJ)
        D = np.maximum(diag, 1e-12 * np.maximum(diag.max(axis=1, keepdims=True), 1e-300))
        A = JTJ + lam[:, None, None] * (D[:, :, None] * eye)
        A = np.where(np.isfinite(A), A, 0.0) + 1e-300 * eye
        try:
            step = -np.linalg.solve(A, g[:, :, None])[:, :, 0]
        except np.linalg.LinAlgError:
            step = -np.stack([np.linalg.lstsq(a, b, rcond=None)[0] for a, b in zip(A, g)])
        step = np.where(active[:, None] & np.isfinite(step), step, 0.0)
        trial = np.clip(U + step, lower, upper)
        r2, J2, ok2 = model(trial)
        cost2 = np.where(ok2, np.sum(r2 * r2, axis=1), np.inf)
        better = active & ok2 & (cost2 < cost)
        U[better], r[better], J[better], cost[better] = trial[better], r2[better], J2[better], cost2[better]
        lam = np.where(better, np.maximum(lam / 3.0, 1e-12), np.where(active, lam * 4.0, lam))
        stalled = active & ~better & (np.max(np.abs(step), axis=1) <= 1e-15 * (1 + np.max(np.abs(U), axis=1)))
        lam = np.where(stalled, 1e13, lam)
    return U, cost


def strict_constraints(domain):
    """``(constraint, side)`` for every strict inequality ``g > 0`` of the domain."""
    out = [(c, "x") for c in domain.where_x if c.inequality.strict]
    out += [(c, "y") for c in domain.where_y if c.inequality.strict]
    out += [(c, "pairs") for c in domain.pairs if c.inequality.strict]
    return out


def _constraint_values(constraint, side, xs, ys) -> np.ndarray:
    pts = xs if side == "x" else ys if side == "y" else np.concatenate([xs, ys], axis=1)
    with np.errstate(all="ignore"):
        g = np.asarray(constraint._evaluate(*pts.T), dtype=float)
    return np.broadcast_to(g, pts.shape[:1])


def near_open_boundary(ctx, x, y, relative: float = 1e-10) -> bool:
    """True when ``(x, y)`` is within ``relative`` (of a typical value) of a strict constraint's boundary.

    A strict constraint ``g > 0`` leaves its boundary out of the domain, so a "zero" found by
    refinement that closes in on ``g = 0`` (``det M = 2|x - y|²`` approaching the excluded
    diagonal, say) is the boundary's, not the domain's, and must not be reported as a witness.
    """
    xs, ys = np.atleast_2d(np.asarray(x, float)), np.atleast_2d(np.asarray(y, float))
    sample = ctx.sample
    for constraint, side in strict_constraints(ctx.cost.domain):
        typical = _constraint_values(constraint, side, sample.xs, sample.ys)
        typical = typical[np.isfinite(typical)]
        scale = float(np.median(np.abs(typical))) if typical.size else 1.0
        g = _constraint_values(constraint, side, xs, ys)
        if not np.all(np.isfinite(g)) or np.min(g) <= relative * max(scale, 1e-300):
            return True
    return False


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
            grad = mpmath.matrix(d, 1)
            hess = mpmath.matrix(d, d)
            plus, minus = [], []
            for i in range(d):
                up, um = list(u), list(u)
                up[i] += h
                um[i] -= h
                plus.append(at(up))
                minus.append(at(um))
                grad[i] = (plus[i] - minus[i]) / (2 * h)
                hess[i, i] = (plus[i] - 2 * f0 + minus[i]) / (h * h)
            for i in range(d):
                for j in range(i + 1, d):
                    pp, pm, mp_, mm = list(u), list(u), list(u), list(u)
                    pp[i] += h; pp[j] += h  # noqa: E702
                    pm[i] += h; pm[j] -= h  # noqa: E702
                    mp_[i] -= h; mp_[j] += h  # noqa: E702
                    mm[i] -= h; mm[j] -= h  # noqa: E702
                    hess[i, j] = hess[j, i] = (at(pp) - at(pm) - at(mp_) + at(mm)) / (4 * h * h)
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


_DENOMINATORS = (1, 2, 3, 4, 5, 6, 8, 10, 12, 16, 20, 25, 50, 100, 1000, 10**4, 10**6)


_CLOSED_FORM_BASES = (sp.sqrt(2), sp.sqrt(3), sp.sqrt(5), sp.sqrt(6), sp.pi, 1 / sp.pi, sp.E, sp.log(2))


def _closed_form(value: float, tol: float) -> sp.Expr | None:
    """A short closed form within ``tol``: ``(p/q)·b`` for a few constants ``b``, or ``±sqrt(p/q)``.

    A small, fast relative of integer-relation searches (:func:`sympy.nsimplify` is too slow
    to run on every coordinate of every candidate).
    """
    if value == 0:
        return sp.Integer(0)
    for base in _CLOSED_FORM_BASES:
        f = Fraction(value / float(base)).limit_denominator(24)
        if f != 0 and abs(float(f) * float(base) - value) <= tol:
            return sp.Rational(f.numerator, f.denominator) * base
    f = Fraction(value * value).limit_denominator(400)
    if f > 0 and abs(np.sign(value) * np.sqrt(float(f)) - value) <= tol:
        return int(np.sign(value)) * sp.sqrt(sp.Rational(f.numerator, f.denominator))
    return None


def _snap_one(value: float, tol: float, closed_forms: bool) -> sp.Expr:
    small = [d for d in _DENOMINATORS if d <= 1000]
    large = [d for d in _DENOMINATORS if d > 1000]
    for den in small:
        f = Fraction(value).limit_denominator(den)
        if abs(float(f) - value) <= tol:
            return sp.Rational(f.numerator, f.denominator)
    if closed_forms:
        guess = _closed_form(value, tol)
        if guess is not None:
            return guess
    for den in large:
        f = Fraction(value).limit_denominator(den)
        if abs(float(f) - value) <= tol:
            return sp.Rational(f.numerator, f.denominator)
    f = Fraction(value)  # the float itself, exactly
    return sp.Rational(f.numerator, f.denominator)


def snap_candidates(values: Sequence[float], widths: Sequence[float] | None = None,
                    levels: Sequence[float] = (1e-4, 1e-7, 1e-10)) -> list[tuple[sp.Expr, ...]]:
    """Nearby simple exact points, coordinate by coordinate.

    For each relative tolerance in ``levels`` (times the coordinate's domain width), each
    coordinate becomes the simplest rational within it (smallest denominator first,
    :meth:`fractions.Fraction.limit_denominator`); at the finest level a short closed form
    from :func:`sympy.nsimplify` (with ``pi``) is tried before falling back to the float's
    exact binary value.  Snapping works on the float *values* found by the search, never on
    file text.  The caller decides by exact evaluation which candidate, if any, is a witness.
    """
    values = [float(v) for v in values]
    widths = [1.0] * len(values) if widths is None else [float(w) if w > 0 else 1.0 for w in widths]
    out: list[tuple[sp.Expr, ...]] = []
    for k, level in enumerate(levels):
        last = k == len(levels) - 1
        point = tuple(_snap_one(v, level * w, closed_forms=last) for v, w in zip(values, widths))
        if point not in out:
            out.append(point)
    return out


def exact_expression(expr: sp.Expr) -> tuple[sp.Expr, bool]:
    """The expression with each decimal constant (a sympy ``Float``) read as the exact decimal it spells.

    ``0.123456789`` becomes ``123456789/10**9`` — the value the user wrote, which is also what
    the mpmath evaluator uses (it reads the same digits at its working precision); float64
    evaluation uses the nearest binary number instead.  Returns the expression and whether
    anything was replaced, so a witness can say so.
    """
    floats = expr.atoms(sp.Float)
    if not floats:
        return expr, False
    return expr.xreplace({f: sp.Rational(str(f)) for f in floats}), True


def exactly_zero(expr: sp.Expr, digits: int = 40, max_ops: int = 200) -> bool:
    """True if a constant sympy expression is shown to be exactly zero (sound, not complete).

    A numeric screen at ``digits`` digits rejects clear non-zeros cheaply.  Then the
    expression must be zero as sympy builds it (exact rational and algebraic arithmetic
    cancel automatically), or its expansion must vanish identically when transcendental
    numbers such as ``tanh(1/3)`` are treated as independent symbols — a polynomial
    identity, so a ``True`` is always right.  ``sympy.simplify`` is deliberately not used: on
    expressions with a few transcendental constants it can take minutes.  ``False`` means
    "not shown exactly"; the caller then falls back to high precision.
    """
    try:
        approx = sp.N(expr, digits)
        value = complex(approx)
    except (TypeError, ValueError):
        return False
    if value != 0 and abs(value) > 10.0 ** (-(digits // 2)):
        return False
    if expr == 0:
        return True
    if sp.count_ops(expr) > max_ops:
        return False
    return sp.expand(expr) == 0


def exact_det(rows: sp.Matrix) -> sp.Expr | None:
    """The determinant of a matrix of exact numbers without sympy's intermediate simplification.

    ``None`` when a cheap numeric screen (40 digits) already shows it is not zero, so no
    exact work is wasted on it.
    """
    with mpmath.workdps(40):
        try:
            numeric = mpmath.matrix([[mpmath.mpf(sp.N(e, 40)) for e in rows.row(i)] for i in range(rows.rows)])
        except (TypeError, ValueError):
            return None
        if not all(mpmath.isfinite(v) for v in numeric):
            return None
        d = mp_det(numeric)
        scale = max([abs(numeric[i, j]) for i in range(numeric.rows) for j in range(numeric.cols)] + [mpmath.mpf(1)])
        if not mpmath.isfinite(d) or abs(d) > mpmath.mpf(10) ** -20 * scale ** numeric.rows:
            return None
    from sympy.matrices.utilities import dotprodsimp

    with dotprodsimp(False):
        return rows.det(method="berkowitz")


def points_in_domain(domain, x_exact: Sequence[sp.Expr], y_exact: Sequence[sp.Expr]) -> bool:
    xs = np.array([[float(v) for v in x_exact]])
    ys = np.array([[float(v) for v in y_exact]])
    return bool(domain.contains_pairs(xs, ys)[0])
