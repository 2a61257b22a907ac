"""Minimum of a biquadratic form over orthogonal pairs of unit vectors in R³, array-agnostic.

The A3w (weak MTW) margin at one pair ``(x, y)`` is

    m = min { G(ξ, ξ, η, η) : |ξ| = |η| = 1, ξ · η = 0 },     G(ξ, ξ, η, η) = sum G_{ijab} ξ_i ξ_j η_a η_b,

with ``G`` from :func:`costcheck.checks.tensor.eta_form_tensor` (symmetric in ``(i, j)`` and in
``(a, b)``; Ma, Trudinger & Wang, Arch. Ration. Mech. Anal. 177 (2005) 151–183; see
``shared/reference/conditions.md``).  A biquadratic form on orthogonal unit pairs has no closed-form
minimum for ``n >= 3`` (it is the "M-eigenvalue" problem of an elasticity-type tensor: Qi, Dai & Han,
"Conditions for strong ellipticity and M-eigenvalues", Front. Math. China 4 (2009) 349–364,
cited from memory), so
the minimum is found numerically, in two stages with fixed work per pair:

1. **Scan.**  For each of ``D`` fixed directions ``ξ_d`` on the half-sphere (±ξ give the same
   value), the exact minimum over ``η ⊥ ξ_d`` is the smallest eigenvalue of ``Q_ξ = G(ξ, ξ, ·, ·)``
   restricted to ``ξ_d^⊥``, a 2 × 2 symmetric matrix.  Its three entries are linear in ``G``,
   so the whole scan is one matrix product of the 36 independent entries of ``G`` (scaled to
   ``max |G| = 1`` and in single precision: it only ranks directions) with a fixed ``(36, 3D)``
   matrix, followed by the closed-form 2 × 2 eigenvalue; the ``seeds`` best directions (each
   further one at least 0.5 rad from the earlier ones) and their eigenvectors η start stage 2.
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
   iterations reaches rounding level where the Hessian is positive definite.

Like any local method this finds the global minimum only when a seed lies in its basin; the
scan spacing (about 0.26 rad for ``D = 96``) and several seeds guard against a missed basin.

Every step is written with ``xp`` (``numpy`` or ``jax.numpy``): no data-dependent shapes, no
masks, no in-place assignment, fixed iteration counts, so the same code runs under ``jax.jit``.
The numpy path never imports JAX.
"""

from __future__ import annotations

from functools import lru_cache

import numpy

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


#: the packed index pairs of a symmetric 3 × 3 matrix (diagonal first)
_PAIRS = ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2))
_ROW = numpy.array([i for i, _ in _PAIRS])
_COL = numpy.array([j for _, j in _PAIRS])
#: position of entry (i, j) of a symmetric 3 × 3 matrix in the packed vector
_UNPACK = numpy.array([[0, 3, 4], [3, 1, 5], [4, 5, 2]])


def _packed_square(v, xp):
    """``w (6, ...)`` with ``sum_p w_p S_p = vᵀ S v`` for a packed symmetric ``S``: ``v_i v_j`` (doubled off the diagonal)."""
    return xp.stack([v[0] * v[0], v[1] * v[1], v[2] * v[2], 2 * v[0] * v[1], 2 * v[0] * v[2], 2 * v[1] * v[2]])


@lru_cache(maxsize=8)
def scan_plan(directions: int = DEFAULT_DIRECTIONS):
    """The scan's constants: ``(ξ_d (D, 3), P_d (D, 3, 2), L (3D, 36), |cos| (D, D))``.

    ``P_d`` spans ``ξ_d^⊥``; ``L`` maps the packed ``G (36,)`` to ``(mean, half difference, off-
    diagonal)`` of the restricted 2 × 2 matrix ``P_dᵀ Q_ξd P_d`` (rows ``k·D + d``), so that its
    smallest eigenvalue is ``mean − hypot(half difference, off-diagonal)``; ``|cos|`` holds the
    angles between the directions (seeds are kept apart with it).
    """
    from .tensor import complement_basis, sphere_directions

    xi = sphere_directions(3, directions)
    P = complement_basis(xi)  # (D, 3, 2)
    w = _packed_square(xi.T, numpy)  # (6, D)

    def restricted(r, s):  # m (6, D): sum_q Q_q m_q = (Pᵀ Q P)_{rs} for packed symmetric Q
        return numpy.stack([P[:, a, r] * P[:, b, s] + (P[:, b, r] * P[:, a, s] if a != b else 0.0) for a, b in _PAIRS])

    m00, m01, m11 = restricted(0, 0), restricted(0, 1), restricted(1, 1)
    entries = [0.5 * (m00 + m11), 0.5 * (m00 - m11), m01]
    L = numpy.concatenate([numpy.einsum("pd,qd->dpq", w, m).reshape(directions, 36) for m in entries])
    cos = numpy.abs(xi @ xi.T)
    for array in (xi, P, L, cos):
        array.setflags(write=False)
    return xi, P, L, cos


def form_value(G, xi, eta, xp=numpy):
    """``G(ξ, ξ, η, η)`` for ``G (N, 3, 3, 3, 3)`` and ``ξ, η (N, 3)`` (a plain contraction, for checking)."""
    return xp.einsum("nijab,ni,nj,na,nb->n", G, xi, xi, eta, eta)


# --------------------------------------------------------------------------- scalar fields
# The search works on "scalar fields": every vector is a tuple of 3 arrays of shape (M,), every
# symmetric matrix a tuple of 6 (packed as in _PAIRS), every general matrix a 3 × 3 nested tuple,
# G a 6 × 6 nested tuple; all arithmetic is written out.  numpy then runs long contiguous
# element-wise loops (no per-pair small-matrix calls), and XLA fuses the lot into a few loops
# (its CPU reductions over the small axes of pairs-last arrays, and its batched tiny dot
# products, are several times slower than the written-out sums).

def _lin(terms):
    """``sum a * b`` over ``terms = [(a, b), ...]``."""
    out = None
    for a, b in terms:
        out = a * b if out is None else out + a * b
    return out


def _square(v):
    """Packed ``v vᵀ`` with off-diagonal entries doubled: ``sum_p w_p S_p = vᵀ S v``."""
    return (v[0] * v[0], v[1] * v[1], v[2] * v[2], 2 * v[0] * v[1], 2 * v[0] * v[2], 2 * v[1] * v[2])


def _entry(S, i, j):
    return S[_UNPACK[i][j]]


def _sym_matvec(S, v):
    return tuple(_lin([(_entry(S, i, j), v[j]) for j in range(3)]) for i in range(3))


def _dot(a, b):
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def _cross(a, b):
    return (a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0])


def _rows_cross(rows, v):
    """The matrix whose rows are ``row_i × v`` (``A [v]×`` for ``A`` given by its rows)."""
    return tuple(_cross(r, v) for r in rows)


def _cols_cross(A, v):
    """``−[v]× A``: each column of ``A`` (nested rows) crossed with ``v`` on the right, as rows."""
    cols = [_cross((A[0][k], A[1][k], A[2][k]), v) for k in range(3)]
    return tuple(tuple(cols[k][i] for k in range(3)) for i in range(3))


def _sym_rows(S):
    return tuple(tuple(_entry(S, i, j) for j in range(3)) for i in range(3))


def _smallest_eigenvalue(S, xp):
    """Smallest eigenvalue of a packed symmetric 3 × 3 matrix (O. K. Smith, Commun. ACM 4 (1961) 168)."""
    q = (S[0] + S[1] + S[2]) / 3
    a, d, f = S[0] - q, S[1] - q, S[2] - q
    b, c, e = S[3], S[4], S[5]
    p = xp.sqrt((a * a + d * d + f * f + 2 * (b * b + c * c + e * e)) / 6)
    safe = xp.where(p > 0, p, 1.0)
    det = (a * (d * f - e * e) - b * (b * f - e * c) + c * (b * e - d * c)) / (safe * safe * safe)
    r = xp.clip(det / 2, -1.0, 1.0)
    return xp.where(p > 0, q + 2 * p * xp.cos(xp.arccos(r) / 3 + 2 * numpy.pi / 3), q)


def _solve(S, b, xp):
    """``S⁻¹ b`` for a packed symmetric 3 × 3 ``S`` by the adjugate; 0 where ``det S = 0``."""
    s00, s11, s22, s01, s02, s12 = S
    c00 = s11 * s22 - s12 * s12
    c01 = s02 * s12 - s01 * s22
    c02 = s01 * s12 - s02 * s11
    c11 = s00 * s22 - s02 * s02
    c12 = s02 * s01 - s00 * s12
    c22 = s00 * s11 - s01 * s01
    det = s00 * c00 + s01 * c01 + s02 * c02
    ok = det != 0
    inv_det = xp.where(ok, 1.0 / xp.where(ok, det, 1.0), 0.0)
    return ((c00 * b[0] + c01 * b[1] + c02 * b[2]) * inv_det,
            (c01 * b[0] + c11 * b[1] + c12 * b[2]) * inv_det,
            (c02 * b[0] + c12 * b[1] + c22 * b[2]) * inv_det)


def _cayley(v, c, xp):
    """``(I − [c]×)⁻¹(I + [c]×) v = v + 2 (c × v + c × (c × v)) / (1 + |c|²)``: a rotation by ``2 arctan|c|``
    about ``c`` (A. Cayley, 1846), exactly orthogonal and rational in ``c``."""
    k = 2.0 / (1.0 + _dot(c, c))
    cv = _cross(c, v)
    ccv = _cross(c, cv)
    return tuple(v[i] + k * (cv[i] + ccv[i]) for i in range(3))


def _unit(v, xp):
    r = 1.0 / xp.sqrt(_dot(v, v))
    return tuple(x * r for x in v)


def _where(cond, a, b, xp):
    return tuple(xp.where(cond, x, y) for x, y in zip(a, b))


def _quadratic_in_first(g6, w):
    """Packed ``Q = G(ξ, ξ, ·, ·)`` from ``w = _square(ξ)``."""
    return tuple(_lin([(w[p], g6[p][q]) for p in range(6)]) for q in range(6))


def _quadratic_in_second(g6, w):
    """Packed ``B = G(·, ·, η, η)`` from ``w = _square(η)``."""
    return tuple(_lin([(g6[p][q], w[q]) for q in range(6)]) for p in range(6))


def _mixed(g6, xi, eta):
    """``C_{jb} = G(ξ, e_j, η, e_b)`` as nested rows."""
    K = [[_lin([(xi[i], g6[_UNPACK[i][j]][q]) for i in range(3)]) for q in range(6)] for j in range(3)]
    return tuple(tuple(_lin([(eta[a], K[j][_UNPACK[a][b]]) for a in range(3)]) for b in range(3)) for j in range(3))


def _repeat(step, count: int, state, xp):
    """``count`` applications of ``step(i, state)``: a Python loop for numpy, ``lax.fori_loop`` for
    JAX (one compiled loop body: unrolled, XLA's fusion duplicates work across iterations)."""
    if xp is numpy or count == 0:
        for i in range(count):
            state = step(i, state)
        return state
    from ..derivatives.jax_backend import _jax

    jax, _ = _jax()
    return jax.lax.fori_loop(0, count, step, state)


# --------------------------------------------------------------------------- the two stages

def newton_model(g6, xi, eta, B):
    """``(f, g, H)``: value, gradient and half-Hessian (packed) with
    ``G(e^{[ω]×}ξ, ·, e^{[ω]×}η, ·) = f + g·ω + ωᵀHω + O(|ω|³)``, for ``B = G(·, ·, η, η)`` packed."""
    Q = _quadratic_in_first(g6, _square(xi))
    C = _mixed(g6, xi, eta)
    Bx, Qe = _sym_matvec(B, xi), _sym_matvec(Q, eta)
    f = _dot(Bx, xi)
    g = tuple(2 * (a + b) for a, b in zip(_cross(xi, Bx), _cross(eta, Qe)))
    # [ξ]×ᵀ B [ξ]× = −[ξ]× (B [ξ]×): rows of B crossed with ξ, then columns crossed with ξ
    M1 = _cols_cross(_rows_cross(_sym_rows(B), xi), xi)
    M2 = _cols_cross(_rows_cross(_sym_rows(Q), eta), eta)
    M3 = _cols_cross(_rows_cross(C, eta), xi)  # [ξ]×ᵀ C [η]×
    H = []
    for i, j in _PAIRS:
        h = (M1[i][j] + M2[i][j] + 2 * (M3[i][j] + M3[j][i])
             + 0.5 * (xi[i] * Bx[j] + xi[j] * Bx[i] + eta[i] * Qe[j] + eta[j] * Qe[i]))
        H.append(h - 2 * f if i == j else h)
    return f, g, tuple(H)


def newton_polish(g6, xi, eta, xp=numpy, iterations: int = DEFAULT_ITERATIONS):
    """Regularised Newton iterations on SO(3) from orthonormal ``ξ, η`` (scalar fields); ``(f, ξ, η)``.

    The value never increases: a step is kept only where it lowers the value; where it does not,
    the shift ``μ`` grows for the next iteration (and shrinks after a success).
    """
    size = None
    for row in g6:
        for x in row:
            size = xp.abs(x) if size is None else xp.maximum(size, xp.abs(x))
    floor = 1e-13 * size
    B = _quadratic_in_second(g6, _square(eta))
    fval = _dot(_sym_matvec(B, xi), xi)
    damp = 0.0 * fval

    def step(_, state):
        fval, xi, eta, B, damp = state
        f, g, H = newton_model(g6, xi, eta, B)
        lam = _smallest_eigenvalue(H, xp)
        # shift so that H + μ I >= max(|λ_min|, floor) I: a descent step of bounded length
        lift = floor + 2 * xp.abs(lam)
        mu = xp.where(lam > floor, 0.0, lift) + damp
        step = _solve(tuple(h + mu if k < 3 else h for k, h in enumerate(H)), g, xp)  # the step is −step/2
        # Cayley's rotation (I − [c]×)⁻¹(I + [c]×) with c = −step/4 agrees with exp(−[step/2]×)
        # to second order, so the Newton model is the same; its angle is capped at _MAX_ANGLE
        length = 0.25 * xp.sqrt(_dot(step, step))
        cap = numpy.tan(0.5 * _MAX_ANGLE)
        shrink = -0.25 * xp.minimum(1.0, cap / xp.where(length > 0, length, 1.0))
        c = tuple(w * shrink for w in step)
        tx = _unit(_cayley(xi, c, xp), xp)
        te = _cayley(eta, c, xp)
        d = _dot(te, tx)
        te = _unit(tuple(e - d * x for e, x in zip(te, tx)), xp)
        tB = _quadratic_in_second(g6, _square(te))
        tf = _dot(_sym_matvec(tB, tx), tx)
        take = tf < fval
        return (xp.where(take, tf, fval), _where(take, tx, xi, xp), _where(take, te, eta, xp),
                _where(take, tB, B, xp), xp.where(take, 0.25 * damp, 4 * damp + lift))

    fval, xi, eta, _, _ = _repeat(step, iterations, (fval, xi, eta, B, damp), xp)
    return fval, xi, eta


def scan_seeds(g36, xp=numpy, directions: int = DEFAULT_DIRECTIONS, seeds: int = DEFAULT_SEEDS,
               separation: float = 0.5):
    """``(ξ, η)`` of shape ``(3, seeds, N)``: per pair, the best scan direction, then the best one
    more than ``separation`` radians from every earlier seed (so that seeds sit in different
    basins where there are several), each with its minimising η.  ``g36`` is ``G`` packed, (36, N)."""
    xi_d, P_d, L, cos = scan_plan(directions)
    # the scan only ranks directions, and Newton polishes whatever it picks in float64: single
    # precision (after scaling each pair to max |G| = 1, so nothing overflows) halves its cost
    size = xp.max(xp.abs(g36), axis=0)
    g = g36 / xp.where(size > 0, size, 1.0)
    g = xp.where(g == g, g, 0.0)  # NaN pairs: any seed (their polish stays NaN)
    R = xp.transpose(g).astype(xp.float32) @ xp.asarray(L.T, dtype=xp.float32)  # (N, 3D): one matrix product
    D = directions
    mean, half, off = R[:, :D], R[:, D:2 * D], R[:, 2 * D:]
    lam = mean - xp.sqrt(half * half + off * off)
    near = xp.asarray(cos > numpy.cos(separation))
    picks = []
    for _ in range(seeds):
        best = xp.argmin(lam, axis=1)  # (N,)
        picks.append(best)
        lam = xp.where(near[best], xp.inf, lam)
    idx = xp.stack(picks, axis=1)  # (N, S)
    take = lambda a: xp.transpose(xp.take_along_axis(a, idx, axis=1))  # (S, N)
    # eigenvector of the smaller eigenvalue of [[m + h, o], [o, m − h]]: at half the angle, plus π/2
    ang = 0.5 * xp.arctan2(take(off), take(half)).astype(g36.dtype) + numpy.pi / 2
    P = xp.asarray(P_d)[xp.transpose(idx)]  # (S, N, 3, 2)
    eta = xp.moveaxis(P[..., 0] * xp.cos(ang)[..., None] + P[..., 1] * xp.sin(ang)[..., None], 2, 0)
    xi = xp.moveaxis(xp.asarray(xi_d)[xp.transpose(idx)], 2, 0)
    return xi, eta


def pack(G, xp=numpy):
    """``g36 (36, N)``: the part of ``G (N, 3, 3, 3, 3)`` symmetric in (i, j) and (a, b), packed, pairs last."""
    G = 0.5 * (G + xp.swapaxes(G, 1, 2))
    G = 0.5 * (G + xp.swapaxes(G, 3, 4))
    g = G[:, _ROW[:, None], _COL[:, None], _ROW[None, :], _COL[None, :]]  # (N, 6, 6)
    return xp.transpose(g.reshape(G.shape[0], 36))


def orthogonal_biquadratic_min(G, *, xp=numpy, directions: int = DEFAULT_DIRECTIONS,
                               seeds: int = DEFAULT_SEEDS, iterations: int = DEFAULT_ITERATIONS,
                               seed_iterations: int = DEFAULT_SEED_ITERATIONS):
    """``(raw (N,), ξ (N, 3), η (N, 3))``: ``min G(ξ, ξ, η, η)`` over unit ``ξ ⊥ η`` and a minimiser.

    ``G (N, 3, 3, 3, 3)`` as from :func:`costcheck.checks.tensor.eta_form_tensor` (its part
    symmetric in ``(i, j)`` and ``(a, b)`` is used).  ``xp`` is ``numpy`` or ``jax.numpy`` (the
    function is then traceable by ``jax.jit`` with ``directions``, ``seeds``, ``iterations``,
    ``seed_iterations`` static).  Every seed gets ``seed_iterations`` Newton iterations, the best
    of them per pair the remaining ``iterations − seed_iterations``.  ``raw`` is the form at the returned unit, orthogonal ``ξ, η`` (NaN where ``G`` is
not finite).  Memory is about
    ``N · (4 · directions + 200 · seeds)`` floats: callers chunk large N.
    """
    if tuple(G.shape[1:]) != (3, 3, 3, 3):
        raise ValueError(f"orthogonal_biquadratic_min needs G of shape (N, 3, 3, 3, 3), got {tuple(G.shape)}")
    N = G.shape[0]
    g36 = pack(G, xp)
    xi, eta = scan_seeds(g36, xp, directions, seeds)
    S = xi.shape[1]
    split = lambda a: tuple(tuple(a[6 * p + q] for q in range(6)) for p in range(6))
    first = min(seed_iterations, iterations)
    if S > 1:
        # every seed gets `first` iterations; the best of them per pair gets the rest
        tiled = xp.concatenate([g36] * S, axis=1)  # seed-major: column s·N + pair
        f, xi, eta = newton_polish(split(tiled), tuple(xi.reshape(3, S * N)), tuple(eta.reshape(3, S * N)), xp, first)
        f = xp.where(f == f, f, xp.inf).reshape(S, N)
        best = xp.argmin(f, axis=0)[None]  # (1, N)
        pick = lambda v: xp.take_along_axis(xp.stack(v).reshape(3, S, N), best[None], axis=1)[:, 0]
        xi, eta, rest = pick(xi), pick(eta), iterations - first
    else:
        xi, eta, rest = xi[:, 0], eta[:, 0], iterations
    raw, xi, eta = newton_polish(split(g36), tuple(xi), tuple(eta), xp, rest)
    return xp.where(xp.isfinite(raw), raw, xp.nan), xp.stack(xi, axis=1), xp.stack(eta, axis=1)
