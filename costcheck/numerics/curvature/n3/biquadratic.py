"""Minimum of a biquadratic form over orthogonal pairs of unit vectors in R³, array-agnostic.

The A3w (weak MTW) margin at one pair ``(x, y)`` is

    m = min { G(ξ, ξ, η, η) : |ξ| = |η| = 1, ξ · η = 0 },     G(ξ, ξ, η, η) = sum G_{ijab} ξ_i ξ_j η_a η_b,

with ``G`` from :func:`costcheck.numerics.curvature.margins.eta_form_tensor` (symmetric in ``(i, j)`` and in
``(a, b)``; Ma, Trudinger & Wang, Arch. Ration. Mech. Anal. 177 (2005) 151–183; see
``docs/conditions.md``, section ``mtw``).  A biquadratic form on orthogonal unit pairs has no closed-form
minimum for ``n >= 3`` (it is the "M-eigenvalue" problem of an elasticity-type tensor: Qi, Dai & Han,
"Conditions for strong ellipticity and M-eigenvalues", Front. Math. China 4 (2009) 349–364,
cited from memory), so
the minimum is found numerically, in two stages with fixed work per pair:

1. **Scan.**  For each of ``D`` fixed directions ``ξ_d`` on the half-sphere (±ξ give the same
   value), the exact minimum over ``η ⊥ ξ_d`` is the smallest eigenvalue of ``Q_ξ = G(ξ, ξ, ·, ·)``
   restricted to ``ξ_d^⊥``, a 2 × 2 symmetric matrix.  Its three entries are linear in ``G``,
   so the whole scan is one matrix product of the 36 independent entries of ``G`` (scaled to
   ``max |G| = 1`` and in single precision: it only ranks directions) with a fixed ``(36, 3D)``
   matrix (:func:`scan`, BLAS), followed per pair by the closed-form 2 × 2 eigenvalue; the
   ``seeds`` best directions (each further one at least 0.5 rad from the earlier ones) and
   their eigenvectors η start stage 2.
2. **Newton polish on SO(3).**  In ``n = 3`` the orthonormal pairs ``(ξ, η)`` are the rotations
   ``[ξ, η, ξ × η]``: a 3-dimensional manifold without boundary.  Rotating both vectors by
   ``exp([ω]×)`` gives ``ξ' = ξ + ω × ξ + ½ ω × (ω × ξ) + O(|ω|³)`` (and the same for η), hence the
   exact second-order model ``f(ω) = f + g · ω + ωᵀ H ω`` (``H`` half the Hessian) with
   ``B = G(·, ·, η, η)``, ``Q = G(ξ, ξ, ·, ·)``, ``C_{jb} = G(ξ, ·_j, η, ·_b)``, ``f = ξᵀBξ = ηᵀQη``:

       g = 2 (ξ × Bξ + η × Qη)
       H = [ξ]×ᵀ B [ξ]× + [η]×ᵀ Q [η]× + sym(ξ (Bξ)ᵀ) + sym(η (Qη)ᵀ) − 2 f I
           + 4 sym([ξ]×ᵀ C [η]×)

   (``[v]×`` the cross-product matrix, ``sym(M) = (M + Mᵀ)/2``).  Each iteration takes the
   regularised Newton step ``ω = −½ (H + μ I)⁻¹ g`` with ``μ`` lifting the smallest eigenvalue
   of ``H`` (Smith's closed form) above zero (a Levenberg–Marquardt-type shift: Nocedal & Wright,
   *Numerical Optimization*, 2nd ed. (2006), §3.4), the angle capped at 0.5 rad, and moves both
   vectors by the Cayley rotation ``(I − [c]×)⁻¹(I + [c]×)`` with ``c = ω/2``, which agrees with
   ``exp([ω]×)`` to second order (so the model above is its model too, and Newton's local
   quadratic convergence is kept: Absil, Mahony & Sepulchre, *Optimization Algorithms on Matrix
   Manifolds* (2008), §6.3).  A step is kept only where it lowers the value (else the shift
   grows for the next iteration), so the value never increases; from a scan seed a handful of
   iterations reaches rounding level where the Hessian is positive definite.  Whether ``H``
   exceeds the floor is first asked of its ``LDLᵀ`` pivots, then whether ``H`` plus the floor
   does (``|λ_min|`` below the floor, as at the degenerate minima of rotation-invariant costs:
   the shift is then three floors); only where neither holds (or a step is rejected) is
   ``λ_min`` computed, as its closed form's arc-cosine and cosine are a large part of a step
   (the power cost's Newton loop ran about 10 % faster without them).  A pair stops early once the step's predicted
   decrease is below rounding where ``H`` is positive semi-definite (:data:`CONVERGED_DECREASE`), or
   right after an unshifted Newton step that predicted less than :data:`SETTLED_DECREASE` (the next
   one would only confirm it: measured on 50,000 power-0.5-3d pairs and 20,000 random tensors,
   every value within 1.2e-13·max|G| of the iterations run without this stop).  The seed's
   η, the restricted 2 × 2 form's smaller eigenvector, comes from the half-angle formulas, not
   from an arc-tangent, a cosine and a sine.

Like any local method this finds the global minimum only when a seed lies in its basin; the
scan spacing (about 0.26 rad for ``D = 96``) and several seeds guard against a missed basin.

Stage 2 runs per pair in compiled code (:mod:`costcheck.numerics.curvature.n3.compiled`, numba): each
pair's chain of small dependent steps stays in registers, which element-wise passes over
``N``-long columns (numpy, or XLA, which recomputed the loop body's shared work for each of its
outputs) could not do; the kernel releases the GIL, so callers run blocks on several threads.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy

from .compiled import inline, kernel
from .small3 import cross, dot, exceeds, smallest_eigenvalue, solve, sym_matvec, sym_rows, unit

#: scan directions on the half-sphere (a Fibonacci lattice)
DEFAULT_DIRECTIONS = 96
#: best scan directions polished by Newton's method
DEFAULT_SEEDS = 2
#: Newton iterations in all; the first ``DEFAULT_SEED_ITERATIONS`` run from every seed, the rest from
#: the best seed per pair only.  8 and 4: on 500 random tensors and 4000 power-0.5-3d pairs every value
#: is within 4e-15·max|G| of 16 iterations (6 and 6 left 1 in 500 random tensors at 6e-10, and the
#: degenerate minima of the rotation-invariant power cost at up to 8e-13)
DEFAULT_ITERATIONS = 8
DEFAULT_SEED_ITERATIONS = 4
#: largest rotation angle of one Newton step (radians)
_MAX_ANGLE = 0.5
#: the shift keeps H + μ I above this times max|G|
SHIFT_FLOOR = 1e-13
#: a pair's iterations end where the Hessian is positive semi-definite (to the shift's floor) and
#: the step's predicted decrease is below this times max|G|: the value is then at a local minimum
#: to rounding (f itself is a sum of dozens of terms of size max|G|), and no later step could be
#: seen to lower it (such steps were rejected on rounding noise until the iterations ran out)
CONVERGED_DECREASE = 1e-16
#: a Newton step (no shift but the floor's, ``H`` above minus the floor, the angle not capped) whose predicted
#: decrease is below this times max|G| is the last one: near a minimum with ``H`` positive definite
#: Newton's method converges quadratically, so the next predicted decrease is about the square of
#: this one relative to max|G|, below :data:`CONVERGED_DECREASE`; stopping there saves the model
#: evaluation that would only have confirmed it
SETTLED_DECREASE = 1e-12

#: the packed index pairs of a symmetric 3 × 3 matrix (diagonal first)
PACKED_PAIRS = ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2))
PACKED_ROW = numpy.array([i for i, _ in PACKED_PAIRS])
PACKED_COL = numpy.array([j for _, j in PACKED_PAIRS])
#: position of entry (i, j) of a symmetric 3 × 3 matrix in the packed vector
UNPACK = numpy.array([[0, 3, 4], [3, 1, 5], [4, 5, 2]])
#: the rows of UNPACK as tuples (compiled code indexes the packed G with them)
_U0, _U1, _U2 = (0, 3, 4), (3, 1, 5), (4, 5, 2)


def _packed_square(v):
    """``w (6, ...)`` with ``sum_p w_p S_p = vᵀ S v`` for a packed symmetric ``S``: ``v_i v_j`` (doubled off the diagonal)."""
    return numpy.stack([v[0] * v[0], v[1] * v[1], v[2] * v[2], 2 * v[0] * v[1], 2 * v[0] * v[2], 2 * v[1] * v[2]])


@lru_cache(maxsize=8)
def scan_plan(directions: int = DEFAULT_DIRECTIONS, separation: float = 0.5):
    """The scan's constants: ``(ξ_d (D, 3), P_d (D, 3, 2), Lᵀ (36, 3D) float32, near (D, D))``.

    ``P_d`` spans ``ξ_d^⊥``; ``L`` maps the packed ``G (36,)`` to ``(mean, half difference, off-
    diagonal)`` of the restricted 2 × 2 matrix ``P_dᵀ Q_ξd P_d`` (rows ``k·D + d``), so that its
    smallest eigenvalue is ``mean − hypot(half difference, off-diagonal)``; ``near[d, e]`` says
    that directions ``d`` and ``e`` are less than ``separation`` radians apart (seeds are kept
    apart with it).
    """
    from ..algebra import complement_basis, sphere_directions

    xi = sphere_directions(3, directions)
    P = numpy.ascontiguousarray(complement_basis(xi))  # (D, 3, 2)
    w = _packed_square(xi.T)  # (6, D)

    def restricted(r, s):  # m (6, D): sum_q Q_q m_q = (Pᵀ Q P)_{rs} for packed symmetric Q
        return numpy.stack([P[:, a, r] * P[:, b, s] + (P[:, b, r] * P[:, a, s] if a != b else 0.0) for a, b in PACKED_PAIRS])

    m00, m01, m11 = restricted(0, 0), restricted(0, 1), restricted(1, 1)
    entries = [0.5 * (m00 + m11), 0.5 * (m00 - m11), m01]
    L = numpy.concatenate([numpy.einsum("pd,qd->dpq", w, m).reshape(directions, 36) for m in entries])
    LT = numpy.ascontiguousarray(L.T, dtype=numpy.float32)
    near = numpy.abs(xi @ xi.T) > numpy.cos(separation)
    for array in (xi, P, LT, near):
        array.setflags(write=False)
    return xi, P, LT, near


def pack(G):
    """``g (N, 36)``: the part of ``G (N, 3, 3, 3, 3)`` symmetric in (i, j) and (a, b), packed
    (row ``p``, column ``q`` of the packed 6 × 6 at ``6 p + q``, pairs in the order of ``PACKED_PAIRS``)."""
    G = 0.5 * (G + numpy.swapaxes(G, 1, 2))
    G = 0.5 * (G + numpy.swapaxes(G, 3, 4))
    g = G[:, PACKED_ROW[:, None], PACKED_COL[:, None], PACKED_ROW[None, :], PACKED_COL[None, :]]  # (N, 6, 6)
    return numpy.ascontiguousarray(g.reshape(G.shape[0], 36), dtype=float)


def scaled_for_scan(g):
    """``g`` scaled to ``max |g| = 1`` per pair, in single precision (NaN rows become 0; such
    pairs are skipped by :func:`minimise_rows`)."""
    size = numpy.max(numpy.abs(g), axis=1, keepdims=True)
    with numpy.errstate(all="ignore"):
        s = g / numpy.where(size > 0, size, 1.0)
    return numpy.where(s == s, s, 0.0).astype(numpy.float32)


def scan(g32, directions: int = DEFAULT_DIRECTIONS):
    """``R (N, 3D)`` float32: per pair and direction, the restricted 2 × 2 form's
    ``(mean, half difference, off-diagonal)`` (blocks of ``D`` columns), as one matrix product."""
    return g32 @ scan_plan(directions)[2]


# --------------------------------------------------------------------------- compiled helpers
# Vectors are 3-tuples, symmetric matrices packed 6-tuples (the order of PACKED_PAIRS), general 3 × 3
# matrices tuples of rows, and G a (6, 6) array: tuples stay in registers once inlined.


@inline
def _square(v):
    """Packed ``v vᵀ`` with off-diagonal entries doubled: ``sum_p w_p S_p = vᵀ S v``."""
    return (v[0] * v[0], v[1] * v[1], v[2] * v[2], 2 * v[0] * v[1], 2 * v[0] * v[2], 2 * v[1] * v[2])


@inline
def _row_dot(g, p, w):
    return g[p, 0] * w[0] + g[p, 1] * w[1] + g[p, 2] * w[2] + g[p, 3] * w[3] + g[p, 4] * w[4] + g[p, 5] * w[5]


@inline
def _column_dot(g, q, w):
    return g[0, q] * w[0] + g[1, q] * w[1] + g[2, q] * w[2] + g[3, q] * w[3] + g[4, q] * w[4] + g[5, q] * w[5]


@inline
def _quadratic_in_second(g, w):
    """Packed ``B = G(·, ·, η, η)`` from ``w = _square(η)``."""
    return (_row_dot(g, 0, w), _row_dot(g, 1, w), _row_dot(g, 2, w),
            _row_dot(g, 3, w), _row_dot(g, 4, w), _row_dot(g, 5, w))


@inline
def _quadratic_in_first(g, w):
    """Packed ``Q = G(ξ, ξ, ·, ·)`` from ``w = _square(ξ)``."""
    return (_column_dot(g, 0, w), _column_dot(g, 1, w), _column_dot(g, 2, w),
            _column_dot(g, 3, w), _column_dot(g, 4, w), _column_dot(g, 5, w))


@inline
def _mixed_entry(g, xi, eta, rows, cols):
    """``sum_ia ξ_i η_a G[rows_i, cols_a]``: with ``rows``, ``cols`` rows of ``UNPACK``, an entry ``G(ξ, e_j, η, e_b)``."""
    return (xi[0] * (eta[0] * g[rows[0], cols[0]] + eta[1] * g[rows[0], cols[1]] + eta[2] * g[rows[0], cols[2]])
            + xi[1] * (eta[0] * g[rows[1], cols[0]] + eta[1] * g[rows[1], cols[1]] + eta[2] * g[rows[1], cols[2]])
            + xi[2] * (eta[0] * g[rows[2], cols[0]] + eta[1] * g[rows[2], cols[1]] + eta[2] * g[rows[2], cols[2]]))


@inline
def _mixed(g, xi, eta):
    """``C_{jb} = G(ξ, e_j, η, e_b)`` as rows."""
    return ((_mixed_entry(g, xi, eta, _U0, _U0), _mixed_entry(g, xi, eta, _U0, _U1), _mixed_entry(g, xi, eta, _U0, _U2)),
            (_mixed_entry(g, xi, eta, _U1, _U0), _mixed_entry(g, xi, eta, _U1, _U1), _mixed_entry(g, xi, eta, _U1, _U2)),
            (_mixed_entry(g, xi, eta, _U2, _U0), _mixed_entry(g, xi, eta, _U2, _U1), _mixed_entry(g, xi, eta, _U2, _U2)))


@inline
def _crossed_both_sides(A, u, v):
    """``[u]×ᵀ A [v]×`` for ``A`` given by rows: each row crossed with ``v``, then each column with ``u``."""
    r0, r1, r2 = cross(A[0], v), cross(A[1], v), cross(A[2], v)
    k0 = cross((r0[0], r1[0], r2[0]), u)
    k1 = cross((r0[1], r1[1], r2[1]), u)
    k2 = cross((r0[2], r1[2], r2[2]), u)
    return ((k0[0], k1[0], k2[0]), (k0[1], k1[1], k2[1]), (k0[2], k1[2], k2[2]))


@inline
def _cayley(v, c):
    """``(I − [c]×)⁻¹(I + [c]×) v = v + 2 (c × v + c × (c × v)) / (1 + |c|²)``: a rotation by ``2 arctan|c|``
    about ``c`` (A. Cayley, 1846), exactly orthogonal and rational in ``c``."""
    k = 2.0 / (1.0 + dot(c, c))
    cv = cross(c, v)
    ccv = cross(c, cv)
    return (v[0] + k * (cv[0] + ccv[0]), v[1] + k * (cv[1] + ccv[1]), v[2] + k * (cv[2] + ccv[2]))


@inline
def _value(g, xi, eta):
    """``(G(ξ, ξ, η, η), B = G(·, ·, η, η))``."""
    B = _quadratic_in_second(g, _square(eta))
    return dot(sym_matvec(B, xi), xi), B


@inline
def newton_model(g, xi, eta, B):
    """``(f, g, H)``: value, gradient and half-Hessian (packed) with
    ``G(e^{[ω]×}ξ, ·, e^{[ω]×}η, ·) = f + g·ω + ωᵀHω + O(|ω|³)``, for ``B = G(·, ·, η, η)`` packed."""
    Q = _quadratic_in_first(g, _square(xi))
    Bx, Qe = sym_matvec(B, xi), sym_matvec(Q, eta)
    f = dot(Bx, xi)
    a, b = cross(xi, Bx), cross(eta, Qe)
    grad = (2 * (a[0] + b[0]), 2 * (a[1] + b[1]), 2 * (a[2] + b[2]))
    M1 = _crossed_both_sides(sym_rows(B), xi, xi)   # [ξ]×ᵀ B [ξ]×
    M2 = _crossed_both_sides(sym_rows(Q), eta, eta)  # [η]×ᵀ Q [η]×
    M3 = _crossed_both_sides(_mixed(g, xi, eta), xi, eta)  # [ξ]×ᵀ C [η]×

    def half_hessian(i, j):
        return (M1[i][j] + M2[i][j] + 2 * (M3[i][j] + M3[j][i])
                + 0.5 * (xi[i] * Bx[j] + xi[j] * Bx[i] + eta[i] * Qe[j] + eta[j] * Qe[i]))

    H = (half_hessian(0, 0) - 2 * f, half_hessian(1, 1) - 2 * f, half_hessian(2, 2) - 2 * f,
         half_hessian(0, 1), half_hessian(0, 2), half_hessian(1, 2))
    return f, grad, H


@kernel
def newton_polish(g, xi, eta, iterations, size):
    """Regularised Newton iterations on SO(3) from orthonormal ``ξ, η``; ``(f, ξ, η, settled)``
    (``size = max |G|``; ``settled``: the iterations ended at a local minimum to rounding, by
    :data:`CONVERGED_DECREASE` or :data:`SETTLED_DECREASE`, not because they ran out).

    The value never increases: a step is kept only where it lowers the value; where it does not,
    the shift ``μ`` grows for the next iteration (and shrinks after a success).
    """
    fval, B = _value(g, xi, eta)
    damp = 0.0
    cap = math.tan(0.5 * _MAX_ANGLE)
    floor = SHIFT_FLOOR * size
    settled = False
    for _ in range(iterations):
        f, grad, H = newton_model(g, xi, eta, B)
        # shift so that H + μ I >= max(|λ_min|, floor) I: a descent step of bounded length
        newton = damp == 0  # a Newton step: no shift, or only the floor's at a degenerate minimum
        if exceeds(H, floor):
            lift = -1.0  # not needed unless the step is rejected
            mu = damp
        elif exceeds(H, -floor):  # |λ_min| < floor (a degenerate minimum): the same shift's scale
            lift = 3 * floor
            mu = lift + damp
        else:
            lam = smallest_eigenvalue(H)
            lift = floor + 2 * abs(lam)
            newton = newton and lam > floor
            mu = (0.0 if lam > floor else lift) + damp
        step = solve((H[0] + mu, H[1] + mu, H[2] + mu, H[3], H[4], H[5]), grad)  # the step is −step/2
        # the model's decrease along ω = −step/2 is at least g·step/4 (H + μI >= H)
        decrease = 0.25 * dot(grad, step)
        if decrease <= CONVERGED_DECREASE * size and (mu == 0 or exceeds(H, -floor)):
            settled = True
            break
        # Cayley's rotation (I − [c]×)⁻¹(I + [c]×) with c = −step/4 agrees with exp(−[step/2]×)
        # to second order, so the Newton model is the same; its angle is capped at _MAX_ANGLE
        length = 0.25 * math.sqrt(dot(step, step))
        shrink = -0.25 * min(1.0, cap / (length if length > 0 else 1.0))
        c = (step[0] * shrink, step[1] * shrink, step[2] * shrink)
        tx = unit(_cayley(xi, c))
        te = _cayley(eta, c)
        d = dot(te, tx)
        te = unit((te[0] - d * tx[0], te[1] - d * tx[1], te[2] - d * tx[2]))
        tf, tB = _value(g, tx, te)
        if tf < fval:
            fval, xi, eta, B = tf, tx, te, tB
            damp = 0.25 * damp
            if newton and length <= cap and decrease <= SETTLED_DECREASE * size:
                settled = True
                break
        else:
            if lift < 0:
                lift = floor + 2 * abs(smallest_eigenvalue(H))
            damp = 4 * damp + lift
    return fval, xi, eta, settled


@inline
def _smaller_eigenvector(h, o):
    """Unit eigenvector ``(−sin φ, cos φ)``, ``φ = ½ atan2(o, h)``, of the smaller eigenvalue of
    ``[[m + h, o], [o, m − h]]``, by the half-angle formulas (no trigonometric calls): with
    ``r = hypot(h, o)``, ``cos 2φ = h / r`` and ``sin 2φ = 2 sin φ cos φ = o / r``; the larger of
    ``|cos φ|``, ``|sin φ|`` from the square root, the other by the division, so both are accurate."""
    h, o = numpy.float64(h), numpy.float64(o)  # (float() of a float32 stays float32 in numba)
    r = math.sqrt(h * h + o * o)
    if not r > 0:
        return -0.0, 1.0
    if h >= 0:
        c = math.sqrt(0.5 * (1.0 + h / r))
        return -o / (2 * r * c), c
    sn = math.sqrt(0.5 * (1.0 - h / r))
    if o < 0:
        sn = -sn
    return -sn, o / (2 * r * sn)


@kernel
def minimise_rows(g, R, xi_d, P_d, near, seeds, iterations, seed_iterations, raw, xi_out, eta_out):
    """Stage 2 for every row of ``g (N, 36)`` (packed ``G``) with its scan ``R (N, 3D)``, written
    into ``raw (N,)``, ``xi_out``, ``eta_out (N, 3)``; NaN where ``g`` is not finite.

    Seed ``s`` is the best direction not ``near`` an earlier seed; every seed gets
    ``seed_iterations`` Newton iterations and the best of them the remaining ones.
    """
    N, D = g.shape[0], xi_d.shape[0]
    G = numpy.empty((6, 6))
    lam = numpy.empty(D)
    for n in range(N):
        size, finite = 0.0, True
        for p in range(6):
            for q in range(6):
                G[p, q] = g[n, 6 * p + q]
                finite = finite and math.isfinite(G[p, q])  # max() would pass over a NaN
                size = max(size, abs(G[p, q]))
        if not finite or size == 0:  # (G = 0: every orthonormal pair is a minimiser)
            raw[n] = 0.0 if finite else numpy.nan
            for k in range(3):
                xi_out[n, k] = (1.0 if k == 2 else 0.0) if finite else numpy.nan
                eta_out[n, k] = (1.0 if k == 0 else 0.0) if finite else numpy.nan
            continue
        # the smallest restricted eigenvalue per direction, and the best direction in the same pass
        e, low = 0, numpy.inf
        for d in range(D):
            half, off = R[n, D + d], R[n, 2 * D + d]
            lam[d] = R[n, d] - math.sqrt(half * half + off * off)
            if lam[d] < low:
                e, low = d, lam[d]
        best_f = numpy.inf
        best_xi = best_eta = (0.0, 0.0, 0.0)
        best_settled = False
        for s in range(seeds):
            if s > 0:  # the best direction not near an earlier seed (the first of equals, as before)
                last, e, low = e, 0, numpy.inf
                for d in range(D):
                    if near[last, d]:
                        lam[d] = numpy.inf
                    elif lam[d] < low:
                        e, low = d, lam[d]
            xi = (xi_d[e, 0], xi_d[e, 1], xi_d[e, 2])
            ca, sa = _smaller_eigenvector(R[n, D + e], R[n, 2 * D + e])
            eta = (P_d[e, 0, 0] * ca + P_d[e, 0, 1] * sa, P_d[e, 1, 0] * ca + P_d[e, 1, 1] * sa,
                   P_d[e, 2, 0] * ca + P_d[e, 2, 1] * sa)
            f, xi, eta, settled = newton_polish(G, xi, eta, min(seed_iterations, iterations), size)
            if s == 0 or f < best_f:
                best_f, best_xi, best_eta, best_settled = f, xi, eta, settled
        if best_settled:  # further iterations would stop at once, the value unchanged
            f, xi, eta = best_f, best_xi, best_eta
        else:
            f, xi, eta, _ = newton_polish(G, best_xi, best_eta, iterations - min(seed_iterations, iterations), size)
        raw[n] = f if math.isfinite(f) else numpy.nan
        for k in range(3):
            xi_out[n, k] = xi[k]
            eta_out[n, k] = eta[k]


# --------------------------------------------------------------------------- entry points

def minimise_packed(g, g32=None, *, directions: int = DEFAULT_DIRECTIONS, seeds: int = DEFAULT_SEEDS,
                    iterations: int = DEFAULT_ITERATIONS, seed_iterations: int = DEFAULT_SEED_ITERATIONS):
    """``(raw (N,), ξ (N, 3), η (N, 3))`` for packed ``g (N, 36)`` (see :func:`pack`);
    ``g32``: :func:`scaled_for_scan` of it, if the caller has it already."""
    g = numpy.ascontiguousarray(g, dtype=float)
    if g32 is None:
        g32 = scaled_for_scan(g)
    xi_d, P_d, _, near = scan_plan(directions)
    N = g.shape[0]
    raw, xi, eta = numpy.empty(N), numpy.empty((N, 3)), numpy.empty((N, 3))
    minimise_rows(g, scan(g32, directions), xi_d, P_d, near, seeds, iterations, seed_iterations, raw, xi, eta)
    return raw, xi, eta


def orthogonal_biquadratic_min(G, *, directions: int = DEFAULT_DIRECTIONS, seeds: int = DEFAULT_SEEDS,
                               iterations: int = DEFAULT_ITERATIONS, seed_iterations: int = DEFAULT_SEED_ITERATIONS):
    """``(raw (N,), ξ (N, 3), η (N, 3))``: ``min G(ξ, ξ, η, η)`` over unit ``ξ ⊥ η`` and a minimiser.

    ``G (N, 3, 3, 3, 3)`` as from :func:`costcheck.numerics.curvature.margins.eta_form_tensor` (its part
    symmetric in ``(i, j)`` and ``(a, b)`` is used).  Every seed gets ``seed_iterations`` Newton
    iterations, the best of them per pair the remaining ``iterations − seed_iterations``.
    ``raw`` is the form at the returned unit, orthogonal ``ξ, η`` (NaN where ``G`` is not
    finite).  Memory is about ``N · (1.5 · directions + 60)`` doubles besides ``G``: callers chunk large N.
    """
    G = numpy.asarray(G, dtype=float)
    if G.ndim != 5 or tuple(G.shape[1:]) != (3, 3, 3, 3):
        raise ValueError(f"orthogonal_biquadratic_min needs G of shape (N, 3, 3, 3, 3), got {tuple(G.shape)}")
    return minimise_packed(pack(G), directions=directions, seeds=seeds, iterations=iterations,
                           seed_iterations=seed_iterations)
