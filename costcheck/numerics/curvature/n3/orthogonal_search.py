"""The minimum of ``G(ξ, ξ, η, η)`` over unit ``ξ ⊥ η`` in R³, written on columns (numpy or a jitted kernel).

The method is that of :mod:`costcheck.numerics.curvature.n3.biquadratic` (a scan of fixed
directions ξ with the exact η for each, then regularised Newton iterations on SO(3) from the best
scan points), rewritten for long columns of pairs with fixed shapes and a fixed number of
iterations, so that XLA runs every stage as one vectorised loop:

1. **Scan** (:func:`seeds`).  ``D`` fixed directions on the half-sphere; for each, the 2 × 2 form
   on ``ξ_d^⊥`` comes from one matrix product of the packed ``G`` (scaled to ``max |G| = 1``,
   single precision: it only ranks directions) with the fixed map of
   :func:`biquadratic.scan_plan`, and its smallest eigenvalue from the closed form.  The best
   direction, and the best one at least 0.5 rad from it, are chosen by chains of elementwise
   minima (no ``argmin``, no gathers: either breaks XLA's loop);
2. **Newton on SO(3)** (:func:`newton_steps`): the exact second-order model of
   :func:`biquadratic.newton_model`, the shift ``μ`` lifting the Hessian's smallest eigenvalue
   (Smith's closed form) above a floor, Cayley's rotation, a step kept only where it lowers the
   value (Nocedal & Wright, *Numerical Optimization*, 2nd ed. (2006), §3.4; Absil, Mahony &
   Sepulchre, *Optimization Algorithms on Matrix Manifolds* (2008), §6.3).

**What "exact" means here.**  A row is *converged* once a Newton model at its point has a
Hessian that is positive semi-definite to ``SHIFT_FLOOR · max|G|`` and a predicted decrease below
``CONVERGED_DECREASE · max|G|`` (the tolerances of :mod:`biquadratic`): the value is then a local
minimum to rounding.  Rows not converged within the fixed iterations are reported, and the caller
redoes them by the per-pair path.  As for every local method, the minimum found is the global one
when a seed lies in its basin: the scan (spacing about 0.26 rad for ``D = 96``) and two seeds
guard against a missed basin; the tests hold the result to the per-pair path's.
"""

from __future__ import annotations

import numpy as np

from .biquadratic import CONVERGED_DECREASE, DEFAULT_DIRECTIONS, SHIFT_FLOOR, UNPACK, scan_plan

#: largest rotation angle of one Newton step (radians), as in the per-pair path
MAX_ANGLE = 0.5
#: the second seed is at least this far (radians) from the first
SEPARATION = 0.5


def _dot(a, b):
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def _cross(a, b):
    return (a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0])


def _sym_matvec(S, v):
    return (S[0] * v[0] + S[3] * v[1] + S[4] * v[2],
            S[3] * v[0] + S[1] * v[1] + S[5] * v[2],
            S[4] * v[0] + S[5] * v[1] + S[2] * v[2])


def _square(v):
    """Packed ``v vᵀ`` with off-diagonal entries doubled: ``Σ_p w_p S_p = vᵀ S v``."""
    return (v[0] * v[0], v[1] * v[1], v[2] * v[2], 2 * v[0] * v[1], 2 * v[0] * v[2], 2 * v[1] * v[2])


def _in_second(g, w):
    """Packed ``B = G(·, ·, η, η)`` from ``w = _square(η)``."""
    return tuple(sum(g[6 * p + q] * w[q] for q in range(6)) for p in range(6))


def _in_first(g, w):
    """Packed ``Q = G(ξ, ξ, ·, ·)`` from ``w = _square(ξ)``."""
    return tuple(sum(g[6 * p + q] * w[p] for p in range(6)) for q in range(6))


def _mixed(g, xi, eta):
    """``C_{jb} = G(ξ, e_j, η, e_b)`` as rows."""
    return tuple(tuple(sum(xi[i] * eta[a] * g[6 * UNPACK[j, i] + UNPACK[b, a]] for i in range(3) for a in range(3))
                       for b in range(3)) for j in range(3))


def _crossed_both_sides(A, u, v):
    """``[u]×ᵀ A [v]×`` for ``A`` given by rows."""
    r = [_cross(A[k], v) for k in range(3)]
    k = [_cross((r[0][c], r[1][c], r[2][c]), u) for c in range(3)]
    return tuple(tuple(k[c][i] for c in range(3)) for i in range(3))


def _rows(S):
    return ((S[0], S[3], S[4]), (S[3], S[1], S[5]), (S[4], S[5], S[2]))


def smallest_eigenvalue(S, xp=np):
    """Smallest eigenvalue of packed symmetric 3 × 3 columns (O. K. Smith, Commun. ACM 4 (1961) 168)."""
    q = (S[0] + S[1] + S[2]) / 3
    a, d, f = S[0] - q, S[1] - q, S[2] - q
    b, c, e = S[3], S[4], S[5]
    p = xp.sqrt((a * a + d * d + f * f + 2 * (b * b + c * c + e * e)) / 6)
    safe = xp.where(p > 0, p, 1.0)
    det = (a * (d * f - e * e) - b * (b * f - e * c) + c * (b * e - d * c)) / (safe * safe * safe)
    phi = xp.arccos(xp.clip(det / 2, -1.0, 1.0)) / 3
    return q + xp.where(p > 0, 2 * p * xp.cos(phi + 2 * np.pi / 3), 0.0)


def exceeds(S, t, xp=np):
    """``S − t I`` is positive definite: its ``LDLᵀ`` pivots are all positive."""
    d0 = S[0] - t
    ok0 = d0 > 0
    d0 = xp.where(ok0, d0, 1.0)
    l10, l20 = S[3] / d0, S[4] / d0
    d1 = S[1] - t - l10 * S[3]
    ok1 = ok0 & (d1 > 0)
    d1 = xp.where(ok1, d1, 1.0)
    l21 = (S[5] - l20 * S[3]) / d1
    return ok1 & (S[2] - t - l20 * S[4] - l21 * l21 * d1 > 0)


def _solve(S, b, xp):
    """``S⁻¹ b`` for packed symmetric ``S`` by the adjugate (0 where ``det S = 0``)."""
    s00, s11, s22, s01, s02, s12 = S
    c00, c01, c02 = s11 * s22 - s12 * s12, s02 * s12 - s01 * s22, s01 * s12 - s02 * s11
    c11, c12, c22 = s00 * s22 - s02 * s02, s02 * s01 - s00 * s12, s00 * s11 - s01 * s01
    det = s00 * c00 + s01 * c01 + s02 * c02
    inv_det = xp.where(det != 0, 1.0 / xp.where(det != 0, det, 1.0), 0.0)
    return ((c00 * b[0] + c01 * b[1] + c02 * b[2]) * inv_det,
            (c01 * b[0] + c11 * b[1] + c12 * b[2]) * inv_det,
            (c02 * b[0] + c12 * b[1] + c22 * b[2]) * inv_det)


def _unit(v, xp):
    r = 1.0 / xp.sqrt(_dot(v, v))
    return (v[0] * r, v[1] * r, v[2] * r)


def _cayley(v, c):
    """``(I − [c]×)⁻¹(I + [c]×) v``: a rotation by ``2 arctan|c|`` about ``c`` (A. Cayley, 1846)."""
    k = 2.0 / (1.0 + _dot(c, c))
    cv = _cross(c, v)
    ccv = _cross(c, cv)
    return tuple(v[i] + k * (cv[i] + ccv[i]) for i in range(3))


def value(g, xi, eta):
    """``G(ξ, ξ, η, η)`` on columns."""
    return _dot(_sym_matvec(_in_second(g, _square(eta)), xi), xi)


def _same(v):
    return v


def model(g, xi, eta, hold=_same):
    """``(f, gradient, half-Hessian packed)`` of ``ω ↦ G(e^{[ω]×}ξ, ·, e^{[ω]×}η, ·)`` at ``ω = 0``
    (the model of :func:`biquadratic.newton_model`).  ``hold`` marks the values several later
    ones share (see :func:`newton_step`)."""
    B = tuple(hold(v) for v in _in_second(g, _square(eta)))
    Q = tuple(hold(v) for v in _in_first(g, _square(xi)))
    Bx, Qe = _sym_matvec(B, xi), _sym_matvec(Q, eta)
    f = _dot(Bx, xi)
    a, b = _cross(xi, Bx), _cross(eta, Qe)
    grad = tuple(2 * (a[i] + b[i]) for i in range(3))
    M1 = _crossed_both_sides(_rows(B), xi, xi)
    M2 = _crossed_both_sides(_rows(Q), eta, eta)
    M3 = _crossed_both_sides(tuple(tuple(hold(v) for v in row) for row in _mixed(g, xi, eta)), xi, eta)

    def half_hessian(i, j):
        return (M1[i][j] + M2[i][j] + 2 * (M3[i][j] + M3[j][i])
                + 0.5 * (xi[i] * Bx[j] + xi[j] * Bx[i] + eta[i] * Qe[j] + eta[j] * Qe[i]))

    H = (half_hessian(0, 0) - 2 * f, half_hessian(1, 1) - 2 * f, half_hessian(2, 2) - 2 * f,
         half_hessian(0, 1), half_hessian(0, 2), half_hessian(1, 2))
    return hold(f), tuple(hold(v) for v in grad), tuple(hold(v) for v in H)


def largest_entry(g, xp=np):
    size = xp.abs(g[0])
    for column in g[1:]:
        size = xp.maximum(size, xp.abs(column))
    return size


def newton_step(g, size, state, xp=np, hold=_same):
    """One regularised Newton iteration on SO(3) for every row: ``state = (ξ, η, f, damp, done)``
    in and out (``done``: the row's model met the convergence test; it moves no further).

    The shift keeps ``H + μI`` above ``max(|λ_min|, floor)``; a step is kept only where it lowers
    the value, else the shift grows for the next iteration (and shrinks after a success).

    ``hold(v)`` returns ``v``; a jitted caller makes it a division by a traced 1, which XLA does
    not copy into each consumer: without it, each of the state's eight outputs recomputed the
    whole model (the step ran 20x slower, measured).
    """
    xi, eta, f, damp, done = state
    floor = SHIFT_FLOOR * size
    _, grad, H = model(g, xi, eta, hold)
    lam = hold(smallest_eigenvalue(H, xp))
    near_singular = ~exceeds(H, floor, xp) & exceeds(H, -floor, xp)  # |λ_min| < floor: three floors
    lift = xp.where(near_singular, 3 * floor, floor + 2 * xp.abs(lam))
    mu = xp.where(lam > floor, 0.0, lift) + damp
    step = _solve((H[0] + mu, H[1] + mu, H[2] + mu, H[3], H[4], H[5]), grad, xp)  # ω = −step/2
    settled = (0.25 * _dot(grad, step) <= CONVERGED_DECREASE * size) & ((mu == 0) | exceeds(H, -floor, xp))
    done = done | settled
    length = 0.25 * xp.sqrt(_dot(step, step))
    cap = np.tan(0.5 * MAX_ANGLE)
    shrink = -0.25 * xp.minimum(1.0, cap / xp.where(length > 0, length, 1.0))
    c = tuple(s * shrink for s in step)
    tx = _unit(_cayley(xi, c), xp)
    te = _cayley(eta, c)
    d = _dot(te, tx)
    te = _unit(tuple(te[i] - d * tx[i] for i in range(3)), xp)
    tx, te = tuple(hold(v) for v in tx), tuple(hold(v) for v in te)
    tf = hold(value(g, tx, te))
    keep = (tf < f) & ~done
    xi = tuple(xp.where(keep, a, b) for a, b in zip(tx, xi))
    eta = tuple(xp.where(keep, a, b) for a, b in zip(te, eta))
    damp = xp.where(keep, 0.25 * damp, xp.where(done, damp, 4 * damp + floor + 2 * xp.abs(lam)))
    return xi, eta, xp.where(keep, tf, f), damp, done


def seeds(g, xp=np, directions: int = DEFAULT_DIRECTIONS):
    """Each row's two seed directions packed in one column, ``d₁ + D·d₂`` (see :func:`direction`):
    the best scan direction, and the best one at least :data:`SEPARATION` from it.

    One output, every chain a chain of elementwise minima: with several outputs XLA copied the
    chains into each (the scan ran at 83k pairs/s)."""
    _, _, LT, _ = scan_plan(directions)
    size = largest_entry(g, xp)
    packed = xp.stack(g, axis=0) / xp.where(size > 0, size, 1.0)[None, :]
    # (3D, N): mean, half difference, off-diagonal; one row per direction and entry, so that each
    # is read contiguously (columns of an (N, 3D) product were strided reads, 2x slower)
    R = xp.matmul(xp.asarray(LT.T), packed.astype(np.float32))
    lam = R[:directions] - xp.sqrt(R[directions:2 * directions] ** 2 + R[2 * directions:] ** 2)  # (D, N)
    first = _first_smallest(lam, xp)
    xi = direction(first, directions, xp)
    table = sphere_table(directions).astype(np.float32)
    cosine = sum(xp.asarray(table[:, k])[:, None] * xi[k].astype(np.float32)[None, :] for k in range(3))
    second = _first_smallest(xp.where(xp.abs(cosine) <= np.cos(SEPARATION), lam, np.inf), xp)
    return first + directions * second


def split(packed, directions: int = DEFAULT_DIRECTIONS, xp=np):
    """The two direction indices of :func:`seeds`' column."""
    second = xp.floor(packed / directions)
    return packed - directions * second, second


def _first_smallest(lam, xp):
    """The first index (a float column) of each column's smallest entry of ``lam (D, N)``, as an
    argmin would give it, by two reductions (an argmin broke XLA's loop)."""
    best = xp.min(lam, axis=0)
    count = lam.shape[0]
    index = xp.arange(count, dtype=np.float32)[:, None]
    return xp.minimum(xp.min(xp.where(lam == best[None, :], index, float(count)), axis=0), count - 1).astype(float)


def sphere_table(directions: int):
    from ..algebra import sphere_directions

    return sphere_directions(3, directions)


def direction(index, directions: int = DEFAULT_DIRECTIONS, xp=np):
    """Scan direction number ``index`` (a float column) of the Fibonacci lattice of
    :func:`costcheck.numerics.curvature.algebra.sphere_directions`, from its formula (no gather)."""
    k = index + 0.5
    z = k / directions
    phi = k * (np.pi * (3.0 - np.sqrt(5.0)))
    r = xp.sqrt(1 - z * z)
    return r * xp.cos(phi), r * xp.sin(phi), z


def exact_eta(g, xi, xp=np):
    """The unit ``η ⊥ ξ`` minimising ``G(ξ, ξ, η, η)`` for unit ``ξ``: the eigenvector of the
    smaller eigenvalue of ``Q_ξ`` on the Householder basis of ``ξ^⊥`` (as
    :func:`costcheck.numerics.curvature.algebra.complement_basis` builds it)."""
    sign = xp.where(xi[0] >= 0, 1.0, -1.0)
    v = _unit((xi[0] + sign, xi[1], xi[2]), xp)
    p0 = (-2 * v[0] * v[1], 1 - 2 * v[1] * v[1], -2 * v[2] * v[1])
    p1 = (-2 * v[0] * v[2], -2 * v[1] * v[2], 1 - 2 * v[2] * v[2])
    Q = _in_first(g, _square(xi))
    Qp0, Qp1 = _sym_matvec(Q, p0), _sym_matvec(Q, p1)
    r00, r01, r11 = _dot(p0, Qp0), _dot(p0, Qp1), _dot(p1, Qp1)
    angle = 0.5 * xp.arctan2(2 * r01, r00 - r11) + np.pi / 2
    ca, sa = xp.cos(angle), xp.sin(angle)
    return tuple(ca * p0[k] + sa * p1[k] for k in range(3))
