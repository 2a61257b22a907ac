"""The algebra of the MTW tensor on batched arrays: the mixed Hessian's inverse, ``T_ijkl``, the
forms ``S(ξ, η)`` and ``G``, directions on the sphere, and the scan-and-polish minimisation over
directions that the margins of :mod:`.margins` are made of.

    T_{ijkl} = sum_{r,s} c_{ij,r} c^{r,s} c_{s,kl} - c_{ij,kl},     c^{r,s} = (M^{-1})[r, s]
    S(ξ, η)  = sum T_{ijkl} ξ_i ξ_j η'_k η'_l,                        η' = M^{-1} η

(Ma, Trudinger & Wang, Arch. Ration. Mech. Anal. 177 (2005) 151–183.)  Arrays in, arrays out:
the field shapes are those of :class:`costcheck.derivatives.Derivatives`."""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from .n2 import plane_margin

#: pairs whose mixed Hessian has ``σ_min / σ_max`` below this are treated as singular (A2 fails there)
SINGULAR_RCOND = plane_margin.SINGULAR_RCOND

#: directions of ξ sampled on the half-sphere for ``n >= 3`` (then polished: Newton on SO(3) for n = 3, :func:`sphere_descent` above)
DEFAULT_DIRECTIONS = 96

#: pairs processed together for ``n >= 3`` (bounds the memory of the (N, D, n, n) arrays: about
#: 15 MB each at 2048 pairs × 96 directions for n = 3; larger chunks amortise numpy's per-call overhead
#: in the descent loop, and every pair is computed independently, so the results do not depend on it)
CHUNK = 2048


class Margins(NamedTuple):
    """Per-pair margins; entries are NaN where the pair is not ``valid``."""

    #: scale-free margin, ``raw / normaliser`` (0 where ``normaliser == 0``)
    rel: np.ndarray
    #: ``min S(ξ, η)`` over unit ``ξ, η`` (and ``ξ ⊥ η`` for A3w)
    raw: np.ndarray
    #: minimising ξ (unit), shape (N, n)
    xi: np.ndarray
    #: minimising covector η (unit, an x-space covector), shape (N, n)
    eta: np.ndarray
    #: ``scale * ||M^{-1}||_2^2``
    normaliser: np.ndarray
    #: finite derivatives and invertible M
    valid: np.ndarray


def mixed_inverse(dxy: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``(M^{-1}, ||M^{-1}||_2, valid)`` for ``M`` of shape (N, n, n); singular or non-finite M are not valid."""
    dxy = np.asarray(dxy, dtype=float)
    finite = np.all(np.isfinite(dxy.reshape(dxy.shape[0], -1)), axis=1)
    safe = np.where(finite[:, None, None], dxy, np.eye(dxy.shape[1]))
    sv = np.linalg.svd(safe, compute_uv=False)
    smax, smin = sv[:, 0], sv[:, -1]
    valid = finite & (smin > SINGULAR_RCOND * smax) & (smax > 0)
    safe = np.where(valid[:, None, None], safe, np.eye(dxy.shape[1]))
    inv = np.linalg.inv(safe)
    norm = np.where(valid, 1.0 / np.where(valid, smin, 1.0), np.nan)
    return inv, norm, valid


def mtw_tensor(derivs) -> tuple[np.ndarray, np.ndarray]:
    """``(T (N,n,n,n,n), scale (N,))`` with ``scale = ||c_{ij,r}c^{r,s}c_{s,kl}||_F + ||c_{ij,kl}||_F``.

    Pairs with a singular or non-finite mixed Hessian get NaN.
    """
    inv, _, valid = mixed_inverse(derivs.dxy)
    return _tensor(derivs, inv, valid)


def _tensor(derivs, inv, valid):
    # c_{ij,r} c^{r,s} c_{s,kl} as two batched matrix products ((n², n) @ (n, n) @ (n, n²)):
    # the same contractions as the einsum "nijr,nrs,nskl->nijkl", several times faster
    dxxy = np.asarray(derivs.dxxy, dtype=float)
    N, n, m = dxxy.shape[0], dxxy.shape[1], dxxy.shape[3]
    first = ((dxxy.reshape(N, n * n, m) @ inv) @ np.asarray(derivs.dxyy, dtype=float).reshape(N, m, m * m))
    first = first.reshape(N, n, n, m, m)
    fourth = np.asarray(derivs.dxxyy, dtype=float)
    T = first - fourth
    N = T.shape[0]
    scale = np.sqrt(np.sum(first.reshape(N, -1) ** 2, axis=1)) + np.sqrt(np.sum(fourth.reshape(N, -1) ** 2, axis=1))
    ok = valid & np.isfinite(scale)
    T = np.where(ok[:, None, None, None, None], T, np.nan)
    scale = np.where(ok, scale, np.nan)
    return T, scale


def mtw_form(T: np.ndarray, inv: np.ndarray, xi: np.ndarray, eta: np.ndarray) -> np.ndarray:
    """``S(ξ, η)`` per pair for ξ, η of shape (N, n) (η a covector; η' = M^{-1} η)."""
    eta_p = np.einsum("nkl,nl->nk", inv, eta)
    return np.einsum("nijkl,ni,nj,nk,nl->n", T, xi, xi, eta_p, eta_p)


def relative(raw, normaliser):
    with np.errstate(all="ignore"):
        rel = np.where(normaliser > 0, raw / np.where(normaliser > 0, normaliser, 1.0), 0.0)
    return np.where(np.isfinite(normaliser), rel, np.nan)


def sphere_directions(n: int, count: int = DEFAULT_DIRECTIONS) -> np.ndarray:
    """Quasi-uniform unit vectors on the half-sphere ``{ξ : ξ_n >= 0}`` (±ξ give the same margins).

    ``count`` is used as given for ``n <= 3`` and doubled for each further dimension.
    """
    if n == 1:
        return np.ones((1, 1))
    if n == 2:
        t = (np.arange(count) + 0.5) * np.pi / count
        return np.stack([np.cos(t), np.sin(t)], axis=1)
    if n == 3:  # Fibonacci lattice on the upper hemisphere
        k = np.arange(count) + 0.5
        z = k / count
        phi = k * np.pi * (3.0 - np.sqrt(5.0))
        r = np.sqrt(1 - z**2)
        return np.stack([r * np.cos(phi), r * np.sin(phi), z], axis=1)
    rng = np.random.default_rng(12345)
    v = rng.standard_normal((count * 2 ** (n - 3), n))
    v /= np.linalg.norm(v, axis=1, keepdims=True)
    return v * np.where(v[:, -1:] < 0, -1.0, 1.0)


def complement_basis(xi: np.ndarray) -> np.ndarray:
    """Orthonormal bases ``P (..., n, n-1)`` of ``ξ^⊥`` for unit ξ (..., n), via Householder reflections."""
    n = xi.shape[-1]
    e = np.zeros(n)
    e[0] = 1.0
    sign = np.where(xi[..., :1] >= 0, 1.0, -1.0)
    v = xi + sign * e
    v /= np.linalg.norm(v, axis=-1, keepdims=True)
    H = np.eye(n) - 2 * v[..., :, None] * v[..., None, :]
    return H[..., :, 1:]  # H maps e_0 to -sign ξ, so its other columns span ξ^⊥


def eta_form_tensor(T: np.ndarray, inv: np.ndarray) -> np.ndarray:
    """``G (N,n,n,n,n)`` with ``G_{ijab} = sum_kl T_{ijkl} c^{k,a} c^{l,b}``, so ``S(ξ, η) = G(ξ, ξ, η, η)``.

    ``Q_ξ = sum_ij G_{ij··} ξ_i ξ_j`` is then a quadratic matrix polynomial in ξ.
    """
    N, n = T.shape[0], T.shape[1]
    # (M^{-T} T_{ij··} M^{-1})_{ab} for every (i, j): batched matrix products, the einsum's sums
    G = np.swapaxes(inv, 1, 2)[:, None] @ T.reshape(N, n * n, n, n) @ inv[:, None]
    return G.reshape(T.shape)


def _forms(G, xi):
    """``Q_ξ (N, D, n, n)`` for directions xi (D, n) or (N, D, n)."""
    N, n = G.shape[0], G.shape[1]
    if xi.ndim == 2:
        xi = np.broadcast_to(xi[None], (N,) + xi.shape)
    w = (xi[..., :, None] * xi[..., None, :]).reshape(N, xi.shape[1], n * n)
    return (w @ G.reshape(N, n * n, n * n)).reshape(N, xi.shape[1], n, n)


def _det3(A):
    return (A[..., 0, 0] * (A[..., 1, 1] * A[..., 2, 2] - A[..., 1, 2] * A[..., 2, 1])
            - A[..., 0, 1] * (A[..., 1, 0] * A[..., 2, 2] - A[..., 1, 2] * A[..., 2, 0])
            + A[..., 0, 2] * (A[..., 1, 0] * A[..., 2, 1] - A[..., 1, 1] * A[..., 2, 0]))


def _cross(a, b):
    return np.stack([a[..., 1] * b[..., 2] - a[..., 2] * b[..., 1],
                     a[..., 2] * b[..., 0] - a[..., 0] * b[..., 2],
                     a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]], axis=-1)


def smallest_eigenpair(A: np.ndarray, exact: bool = False, vectors: bool = True):
    """Smallest eigenvalue and a unit eigenvector of symmetric matrices ``A (..., k, k)``.

    Closed forms for ``k <= 3`` (batched LAPACK calls on millions of tiny matrices are slow):
    ``k = 2`` directly; ``k = 3`` by the trigonometric formula (O. K. Smith, "Eigenvalues of a
    symmetric 3 × 3 matrix", Commun. ACM 4 (1961) 168) with the eigenvector from cross products
    of rows of ``A - λI``.  ``exact=True`` (or ``k > 3``) uses ``numpy.linalg.eigh``.
    With ``vectors=False`` the eigenvector is ``None``.
    """
    k = A.shape[-1]
    if exact or k > 3:
        if not vectors:
            return np.linalg.eigvalsh(A)[..., 0], None
        w, v = np.linalg.eigh(A)
        return w[..., 0], v[..., :, 0]
    if k == 1:
        return A[..., 0, 0], (np.ones(A.shape[:-1]) if vectors else None)
    if k == 2:
        a, b, d = A[..., 0, 0], 0.5 * (A[..., 0, 1] + A[..., 1, 0]), A[..., 1, 1]
        lam = 0.5 * (a + d) - np.hypot(0.5 * (a - d), b)
        if not vectors:
            return lam, None
        ang = 0.5 * np.arctan2(2 * b, a - d) + np.pi / 2  # the larger eigenvalue's vector is at half the angle
        return lam, np.stack([np.cos(ang), np.sin(ang)], axis=-1)
    q = (A[..., 0, 0] + A[..., 1, 1] + A[..., 2, 2]) / 3
    off = A[..., 0, 1] ** 2 + A[..., 0, 2] ** 2 + A[..., 1, 2] ** 2
    diag = (A[..., 0, 0] - q) ** 2 + (A[..., 1, 1] - q) ** 2 + (A[..., 2, 2] - q) ** 2
    p = np.sqrt((diag + 2 * off) / 6)
    safe = np.where(p > 0, p, 1.0)
    Bm = (A - q[..., None, None] * np.eye(3)) / safe[..., None, None]
    r = np.clip(_det3(Bm) / 2, -1.0, 1.0)
    lam = np.where(p > 0, q + 2 * p * np.cos(np.arccos(r) / 3 + 2 * np.pi / 3), q)
    if not vectors:
        return lam, None
    R = A - lam[..., None, None] * np.eye(3)
    rows = [R[..., 0, :], R[..., 1, :], R[..., 2, :]]
    cands = np.stack([_cross(rows[0], rows[1]), _cross(rows[0], rows[2]), _cross(rows[1], rows[2])], axis=-2)
    norms = np.sqrt(np.sum(cands**2, axis=-1))
    v = np.take_along_axis(cands, np.argmax(norms, axis=-1)[..., None, None], axis=-2)[..., 0, :]
    # a double smallest eigenvalue leaves R of rank 1: any vector orthogonal to its rows will do
    rn = np.sqrt(np.sum(R**2, axis=-1))
    top = np.take_along_axis(R, np.argmax(rn, axis=-1)[..., None, None], axis=-2)[..., 0, :]
    alt1, alt2 = _cross(top, np.eye(3)[0]), _cross(top, np.eye(3)[1])
    alt = np.where((np.sum(alt1**2, -1) >= np.sum(alt2**2, -1))[..., None], alt1, alt2)
    scale_r = np.max(rn, axis=-1)
    v = np.where((np.max(norms, axis=-1) <= 1e-10 * scale_r**2)[..., None], alt, v)
    v = np.where((scale_r == 0)[..., None], np.eye(3)[0], v)
    return lam, v / np.sqrt(np.sum(v**2, axis=-1, keepdims=True))


def form_min(G, xi, orthogonal: bool, exact: bool = False, vectors: bool = True):
    """For each pair and direction: ``(λ_min, η)`` of ``Q_ξ`` (restricted to ξ^⊥ if ``orthogonal``).

    ``G`` from :func:`eta_form_tensor`; ``xi`` is (D, n) (same directions for every pair) or
    (N, D, n); results are (N, D), (N, D, n) (η is ``None`` with ``vectors=False``).
    ``exact`` forces LAPACK eigenvalues.
    """
    Q = _forms(G, xi)
    Q = 0.5 * (Q + np.swapaxes(Q, -1, -2))
    finite = np.all(np.isfinite(Q.reshape(Q.shape[:2] + (-1,))), axis=-1)
    Q = np.where(finite[..., None, None], Q, 0.0)
    if orthogonal:
        P = complement_basis(xi)
        if P.ndim == 3:
            P = np.broadcast_to(P, Q.shape[:2] + P.shape[1:])
        w, v = smallest_eigenpair(np.swapaxes(P, -1, -2) @ Q @ P, exact, vectors)
        eta = (P @ v[..., :, None])[..., 0] if vectors else None
    else:
        w, eta = smallest_eigenpair(Q, exact, vectors)
    lam = np.where(finite, w, np.nan)
    return lam, eta


def prepare(derivs, need_g: bool = True):
    """``(T, inv, G, (scale, inv), valid)``; at invalid pairs T, G are 0 and inv is the identity.

    ``need_g=False`` skips ``G`` (returned as ``None``) for callers that do not use it.
    """
    inv, _, valid = mixed_inverse(derivs.dxy)
    T, scale = _tensor(derivs, inv, valid)
    valid = valid & np.isfinite(scale)
    n = inv.shape[1]
    T = np.where(valid[:, None, None, None, None], T, 0.0)
    inv = np.where(valid[:, None, None], inv, np.eye(n))
    scale = np.where(valid, scale, np.nan)
    return T, inv, (eta_form_tensor(T, inv) if need_g else None), (scale, inv), valid


def finish(raw, xi, eta, normalising, valid) -> Margins:
    """Margins with ``normaliser = scale · |M⁻¹ η|²`` at each pair's own unit ``η``.

    ``S(ξ, η) / |M⁻¹η|²`` is ``T`` on the unit vectors ``ξ`` and ``η' / |η'|``: bounded by
    ``scale`` and free of the conditioning of ``M``.  (Dividing by ``|M⁻¹|₂²`` instead makes the
    margin vanish like ``(1 − p)³`` as the power cost degenerates at ``p = 1``, where the
    admissible η' align with M's small direction, so a strong cost near a degenerate one read
    as weak.)
    """
    scale, inv = normalising
    raw = np.where(valid, raw, np.nan)
    xi = np.where(valid[:, None], xi, np.nan)
    eta = np.where(valid[:, None], eta, np.nan)
    with np.errstate(invalid="ignore"):
        eta_p = np.einsum("nkl,nl->nk", inv, np.where(valid[:, None], eta, 0.0))
        normaliser = np.where(valid, scale * np.sum(eta_p**2, axis=1), np.nan)
    return Margins(relative(raw, normaliser), raw, xi, eta, normaliser, valid)


def sphere_descent(G, xi, orthogonal: bool, iterations: int = 30):
    """Batched descent of ``f(ξ) = λ_min(Q_ξ)`` (on ``ξ^⊥`` if ``orthogonal``) over the unit sphere.

    ``G`` (N, n, n, n, n), starts ``xi`` (N, n); returns ``(f, ξ, η)``.  Where λ_min is simple,
    the envelope theorem gives the gradient: with η the minimising unit covector,
    ``∇f = 2 B(η) ξ - ν η`` where ``B(η)_{ij} = G_{ijab} η_a η_b`` and the multiplier of ``ξ · η = 0``
    is ``ν = 2 ξᵀ Q_ξ η`` (``ν = 0`` without the constraint); its tangential part gives a
    great-circle direction, and four step lengths are tried at once at every pair.
    """
    N, n = xi.shape
    lam, eta = form_min(G, xi[:, None, :], orthogonal)
    f, eta, xi = lam[:, 0], eta[:, 0], xi.copy()
    step = np.full(N, 0.1)
    factors = np.array([4.0, 1.0, 0.25, 1.0 / 16])
    for _ in range(iterations):
        act = np.flatnonzero((step > 1e-9) & np.isfinite(f))
        if act.size == 0:
            break
        Ga, xa, ea = G[act], xi[act], eta[act]
        B = np.einsum("nijab,na,nb->nij", Ga, ea, ea)
        g = 2 * np.einsum("nij,nj->ni", B, xa)
        if orthogonal:
            Q = np.einsum("nijab,ni,nj->nab", Ga, xa, xa)
            g -= 2 * np.einsum("na,nab,nb->n", xa, Q, ea)[:, None] * ea
        g -= np.sum(g * xa, axis=1, keepdims=True) * xa
        gn = np.linalg.norm(g, axis=1)
        d = -g / np.where(gn > 0, gn, 1.0)[:, None]
        angles = np.minimum(step[act, None] * factors[None, :], np.pi / 4)
        trial = np.cos(angles)[..., None] * xa[:, None, :] + np.sin(angles)[..., None] * d[:, None, :]
        trial /= np.linalg.norm(trial, axis=-1, keepdims=True)
        tl, _ = form_min(Ga, trial, orthogonal, vectors=False)
        tl = np.where(np.isfinite(tl), tl, np.inf)
        k = np.argmin(tl, axis=1)
        rows = np.arange(act.size)
        better = (gn > 0) & (tl[rows, k] < f[act])
        # a zero gradient is a stationary point: nothing left to do there
        step[act] = np.where(better, angles[rows, k], np.where(gn > 0, step[act] / 8, 0.0))
        if better.any():
            moved = act[better]
            xi[moved] = trial[rows[better], k[better]]
            lam, e = form_min(G[moved], xi[moved][:, None, :], orthogonal)
            f[moved], eta[moved] = lam[:, 0], e[:, 0]
    return f, xi, eta


def polished_scan(G, valid, orthogonal, directions, polish, starts: int = 3):
    """Direction scan, then :func:`sphere_descent` from each pair's ``starts`` best directions."""
    N, n = G.shape[0], G.shape[1]
    raw = np.full(N, np.nan)
    xi = np.full((N, n), np.nan)
    eta = np.full((N, n), np.nan)
    idx = np.flatnonzero(valid)
    for begin in range(0, idx.size, CHUNK):
        rows = idx[begin:begin + CHUNK]
        lam, _ = form_min(G[rows], directions, orthogonal, vectors=False)
        lam = np.where(np.isfinite(lam), lam, np.inf)
        top = np.argsort(lam, axis=1)[:, :starts]
        r = np.arange(rows.size)
        if polish:
            Gs = np.repeat(G[rows], top.shape[1], axis=0)
            f, x, e = sphere_descent(Gs, directions[top.reshape(-1)], orthogonal, polish)
            f = f.reshape(rows.size, -1)
            best = np.argmin(np.where(np.isfinite(f), f, np.inf), axis=1)
            pick = r * top.shape[1] + best
            raw[rows], xi[rows], eta[rows] = f[r, best], x[pick], e[pick]
        else:
            best = directions[top[:, 0]]
            f, e = form_min(G[rows], best[:, None, :], orthogonal)
            raw[rows], xi[rows], eta[rows] = f[:, 0], best, e[:, 0]
    return raw, xi, eta


