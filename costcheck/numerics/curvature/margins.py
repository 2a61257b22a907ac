"""The Ma–Trudinger–Wang tensor and its margins, as pure vectorised functions.

Everything here is a function of arrays in, arrays out (no hidden state), batched
over ``N`` pairs ``(x, y)``; the field shapes are those of
:class:`costcheck.derivatives.Derivatives`.  The mathematics is that of
``docs/conditions.md`` (section ``mtw``):

    T_{ijkl} = sum_{r,s} c_{ij,r} c^{r,s} c_{s,kl} - c_{ij,kl},     c^{r,s} = (M^{-1})[r, s]
    S(ξ, η)  = sum T_{ijkl} ξ_i ξ_j η'_k η'_l,                        η' = M^{-1} η

(Ma, Trudinger & Wang, "Regularity of potential functions of the optimal transportation
problem", Arch. Ration. Mech. Anal. 177 (2005) 151–183; Trudinger & Wang, "On the second
boundary value problem for Monge–Ampère type equations and optimal transportation",
Ann. Sc. Norm. Super. Pisa 8 (2009) 143–174; the cross-curvature reading is Kim & McCann,
"Continuity, curvature, and the general covariance of optimal transportation",
J. Eur. Math. Soc. 12 (2010) 1009–1040).  The cost is minimised and positive is good.

For fixed ``(x, y, ξ)``, ``S`` is the quadratic form ``Q_ξ = M^{-T} A(ξ) M^{-1}`` in the
covector ``η``, with ``A(ξ)_{kl} = sum_ij T_{ijkl} ξ_i ξ_j``.  Margins:

* A3w (weak MTW): ``min_{|ξ|=1} λ_min(Q_ξ restricted to ξ^⊥)``;
* NNCC (non-negative cross-curvature): ``min_{|ξ|=1} λ_min(Q_ξ)``.

**Scale-free margins** (:func:`algebra.finish`).  For unit ``ξ`` and the minimising unit covector
``η``, ``S(ξ, η) / |M^{-1} η|^2`` is ``T`` on the unit vectors ``ξ`` and ``η' / |η'|``, so
``|S(ξ, η)| <= scale * |M^{-1} η|^2`` with ``scale = ||c_{ij,r} c^{r,s} c_{s,kl}||_F + ||c_{ij,kl}||_F``,
the size of the two terms whose difference is ``T``.  The scale-free margin
``margin / (scale * |M^{-1} η|^2)`` therefore lies in ``[-1, 1]``, does not change when the
cost is multiplied by a positive constant, does not depend on the conditioning of ``M``, and
measures the margin against the size of the terms that cancel to make it: a value near
``1e-16`` is rounding, a value of ``-0.005`` is a half-percent violation.  Where ``scale == 0``
(``T`` vanishes exactly) the margin is exactly 0.  (Dividing by ``||M^{-1}||_2^2`` instead made
strong costs next to a degenerate one read as weak; see ``docs/evidence.md#margins``.)

For ``n = 2`` the A3w margin is exact: with ``ξ = (cos θ, sin θ)`` and ``η = (-sin θ, cos θ)``,
``S(θ)`` is a homogeneous quartic in ``(cos θ, sin θ)`` whose minimum is found exactly, with a
certificate, by :mod:`costcheck.numerics.curvature.n2.quartic`; the plane's algebra is written out on columns
in :mod:`costcheck.numerics.curvature.n2.plane_margin`.
"""

from __future__ import annotations

import numpy as np

from .algebra import DEFAULT_DIRECTIONS, Margins, finish, form_min, mtw_form, polished_scan, prepare, sphere_directions
from .n2 import plane_margin

# --------------------------------------------------------------------------- tensor


# --------------------------------------------------------------------------- n >= 3 helpers


# --------------------------------------------------------------------------- margins

def a3w_margin(derivs, *, directions: int = DEFAULT_DIRECTIONS, polish: int | None = None) -> Margins:
    """Per pair: the A3w margin ``min S(ξ, η)`` over unit ``ξ ⊥ η``, scale-free and raw, and its minimisers.

    ``n = 2``: exact (the certified minimum of the quartic ``S(θ)``).  ``n = 3``:
    :func:`costcheck.numerics.curvature.n3.space_margin.a3w_margin`, compiled per pair (a scan of ``directions``
    ξ with the exact η for each, then at most ``polish`` Newton iterations on SO(3) from the two
    best separated directions; ``None``: its default).  ``n >= 4``: ``directions`` quasi-uniform ξ, then
    ``polish`` (default 20) steps of :func:`sphere_descent` from each pair's 3 best directions.
    ``n = 1``: the condition is empty (ξ^⊥ = {0}); every margin is reported as 0.
    """
    n = np.shape(derivs.dxy)[1]
    if n == 2:  # written out on columns, no tensor arrays
        m = plane_margin.a3w_margin(derivs)
        return Margins(m.rel, m.raw, m.xi, m.eta, m.normaliser, m.valid)
    if n == 3:  # compiled per pair
        from .n3 import space_margin

        return space_margin.a3w_margin(derivs, directions=directions, iterations=polish)
    T, inv, G, normalising, valid = prepare(derivs, need_g=n >= 3)
    N = T.shape[0]
    if n == 1:
        return finish(np.zeros(N), np.ones((N, 1)), np.zeros((N, 1)), normalising, valid)
    raw, xi, eta = polished_scan(G, valid, True, sphere_directions(n, directions), 20 if polish is None else polish)
    return finish(raw, xi, eta, normalising, valid)


def _nncc_2d(G, grid: int = 64, iterations: int = 40):
    """n = 2: λ_min(Q_ξ) on a θ grid, then a vectorised golden-section search in each bracket."""
    N = G.shape[0]
    # Q(θ) = cos²θ G_00 + 2 cosθ sinθ G_01 + sin²θ G_11 (G is symmetric in its first two indices);
    # with cos²θ = (1 + cos2θ)/2 etc. each entry of Q is  m + u cos2θ + v sin2θ
    G00, G01, G11 = G[:, 0, 0], 0.5 * (G[:, 0, 1] + G[:, 1, 0]), G[:, 1, 1]
    G00 = 0.5 * (G00 + np.swapaxes(G00, 1, 2))
    G01 = 0.5 * (G01 + np.swapaxes(G01, 1, 2))
    G11 = 0.5 * (G11 + np.swapaxes(G11, 1, 2))
    entries = [(0, 0), (0, 1), (1, 1)]
    mean = [(0.5 * (G00[:, a, b] + G11[:, a, b]))[:, None] for a, b in entries]
    ucos = [(0.5 * (G00[:, a, b] - G11[:, a, b]))[:, None] for a, b in entries]
    vsin = [G01[:, a, b][:, None] for a, b in entries]

    def quad(theta):
        c2, s2 = np.cos(2 * theta), np.sin(2 * theta)
        return [m + u * c2 + v * s2 for m, u, v in zip(mean, ucos, vsin)]

    def lam_at(theta):  # theta (N, K) -> λ_min (N, K)
        a, b, d = quad(theta)
        return 0.5 * (a + d) - np.hypot(0.5 * (a - d), b)

    step = np.pi / grid
    rows = np.arange(N)
    thetas = (np.arange(grid) * step)[None, :]
    lam = lam_at(thetas)
    best = np.argmin(np.where(np.isfinite(lam), lam, np.inf), axis=1)
    lo, hi = thetas[0, best] - step, thetas[0, best] + step
    g = (np.sqrt(5) - 1) / 2
    a1, a2 = hi - g * (hi - lo), lo + g * (hi - lo)
    f1, f2 = lam_at(a1[:, None])[:, 0], lam_at(a2[:, None])[:, 0]
    for _ in range(iterations):  # golden section: one new evaluation per step
        left = f1 < f2
        hi = np.where(left, a2, hi)
        lo = np.where(left, lo, a1)
        new = np.where(left, hi - g * (hi - lo), lo + g * (hi - lo))
        fn = lam_at(new[:, None])[:, 0]
        a2, f2, a1, f1 = (np.where(left, a1, new), np.where(left, f1, fn),
                          np.where(left, new, a2), np.where(left, fn, f2))
    cand = np.stack([0.5 * (lo + hi), thetas[0, best]], axis=1)
    lam = lam_at(cand)
    pick = np.argmin(np.where(np.isfinite(lam), lam, np.inf), axis=1)
    theta = cand[rows, pick]
    a, b, d = (q[:, 0] for q in quad(theta[:, None]))
    ang = 0.5 * np.arctan2(2 * b, a - d) + np.pi / 2  # eigenvector of the smaller eigenvalue
    eta = np.stack([np.cos(ang), np.sin(ang)], axis=1)
    return lam[rows, pick], np.stack([np.cos(theta), np.sin(theta)], axis=1), eta


def nncc_margin(derivs, *, directions: int = DEFAULT_DIRECTIONS, polish: int = 20) -> Margins:
    """Per pair: the NNCC margin ``min S(ξ, η)`` over unit ``ξ, η`` (no orthogonality), scale-free and raw.

    The sign of ``λ_min(Q_ξ)`` is that of ``λ_min(A(ξ))`` (Sylvester's law of inertia:
    ``Q_ξ = M^{-T} A(ξ) M^{-1}`` is congruent to ``A(ξ)``); the value uses unit covectors η.
    ``n = 2``: 64-angle grid then a vectorised golden-section search in the best bracket.
    ``n >= 3``: ``directions`` quasi-uniform ξ, then ``polish`` steps of :func:`sphere_descent`.
    ``n = 1``: ``S = T_{1111} (c^{1,1})^2``.
    """
    T, inv, G, normalising, valid = prepare(derivs)
    N, n = T.shape[0], T.shape[1]
    if n == 1:
        return finish(G[:, 0, 0, 0, 0], np.ones((N, 1)), np.ones((N, 1)), normalising, valid)
    if n == 2:
        raw, xi, eta = _nncc_2d(G)
        return finish(raw, xi, eta, normalising, valid)
    raw, xi, eta = polished_scan(G, valid, False, sphere_directions(n, directions), polish)
    return finish(raw, xi, eta, normalising, valid)


def margin_at(derivs, xi: np.ndarray, orthogonal: bool) -> Margins:
    """Margins at given directions ξ (N, n), minimised over η only; used by joint (x, y, ξ) searches."""
    _, _, G, normalising, valid = prepare(derivs)
    xi = np.asarray(xi, dtype=float)
    xi = xi / np.linalg.norm(xi, axis=1, keepdims=True)
    lam, eta = form_min(G, xi[:, None, :], orthogonal, exact=True)
    return finish(lam[:, 0], xi, eta[:, 0], normalising, valid)


def form_at(derivs, xi: np.ndarray, eta: np.ndarray) -> np.ndarray:
    """``S(ξ, η)`` per pair at given vectors (N, n) each, exactly as given (no normalisation)."""
    T, inv, _, _, valid = prepare(derivs, need_g=False)
    return np.where(valid, mtw_form(T, inv, np.asarray(xi, float), np.asarray(eta, float)), np.nan)


# --------------------------------------------------------------------------- high precision


# --------------------------------------------------------------------------- local search

