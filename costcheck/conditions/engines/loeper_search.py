"""The search steps of Loeper's maximum-principle check (:mod:`costcheck.conditions.loeper`).

A *configuration* is a row ``z = (x, x', y0, y1)``: the c-segment ``t ↦ y_t`` w.r.t. ``x`` from
``y0`` to ``y1`` (``-D_x c(x, y_t) = (1 - t) p0 + t p1``) and the profile
``f(t) = c(x, y_t) - c(x', y_t)``; the principle says ``f(t) <= max(f(0), f(1))`` (Loeper,
Acta Math. 202 (2009) 241–283).

Why short segments with a levelled profile.  Along a c-segment through ``y`` with direction
``p1 - p0 = L η`` and ``x' = x + ε ξ``, ``ξ · η = 0``, differentiating ``-D_x c(x, y_t) = p_t``
twice in ``t`` gives ``d²/dt² c_{ξξ}(x, y_t) = -L² S(ξ, η)`` (``S`` the MTW form of
:mod:`costcheck.numerics.curvature.margins`), so
``f(t) = const + ε (ξ · p_t) - (ε²/2) c_{ξξ}(x, y_t) + O(ε³)`` has
``f'' = (ε² L² / 2) S(ξ, η) + O(ε² L³, ε³ L²)``: where ``S < 0`` it is concave and bulges above
the chord.  That bulge, of order ``ε² L²``, is only visible once the chord is level: the ``ε²``
term tilts it by ``O(ε² L)``, more than the bulge for small ``L``.  The construction here (the
idea of Loeper's proof that the principle forces A3w, 2009, recalled from memory rather than
quoted) therefore moves ``x'`` along ``p1 - p0`` until ``f(0) = f(1)``
(:func:`levelled`; only cost values and first derivatives are needed: ``y_t`` does not depend
on ``x'``).  :func:`construction` builds these configurations at given ``(x, y, ξ, η)`` for a
ladder of sizes; :func:`local_rows` at sampled pairs with random directions (the independent
search, which never reads the MTW tensor); :func:`polish` maximises the violation with SciPy.

Only where ``D²_xy c`` is invertible: c-segments are defined by inverting the gradient map, so
a configuration counts only if ``σ_min / σ_max`` of ``D²_xy c`` exceeds :data:`RCOND` at every
grid point ``(x, y_t)`` and ``(x', y_t)``; the others are discarded and counted.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ...numerics.geometry.csegment import SOLVED, GradientMap, solve_direct

#: σ_min/σ_max of D²_xy c at or below this: the point is treated as singular and not evaluated
RCOND = 1e-6
#: segment lengths (fractions of Y's width) and offsets |x' - x| (fractions of X's width) tried
LENGTHS = (0.3, 0.1, 0.03, 0.01)
OFFSETS = (0.1, 0.03, 0.01)
#: grid steps of the profiles a SciPy maximisation evaluates
POLISH_STEPS = 8


def evaluations(budget: int) -> int:
    """Objective evaluations of each SciPy maximisation at a context budget (4096 → 64)."""
    return int(np.clip(budget // 64, 32, 256))


@dataclass(frozen=True)
class Profiles:
    """``f`` on the t grid for ``K`` configurations ``z = (x, x', y0, y1)``."""

    z: np.ndarray
    ts: np.ndarray
    ys: np.ndarray  # (K, T, n)
    f: np.ndarray  # (K, T), NaN where not admissible
    size: np.ndarray  # (K,) max |c(x, y_t)| + |c(x', y_t)|
    admissible: np.ndarray  # (K,)
    singular: np.ndarray  # (K,) followed inside the domain, but D²_xy c nearly singular on the way
    gap: np.ndarray  # (K,) max_t f - max(f(0), f(1)) (>= 0)
    J: np.ndarray  # (K,) signed interior gap / (|x - x'| |p1 - p0|); -inf where not admissible
    v: np.ndarray  # (K,) gap / (|x - x'| |p1 - p0|) >= 0: the scale-free violation; NaN where not admissible


def split(z: np.ndarray, n: int):
    return z[:, :n], z[:, n:2 * n], z[:, 2 * n:3 * n], z[:, 3 * n:]


def rcond(dxy: np.ndarray) -> np.ndarray:
    """σ_min / σ_max of each mixed Hessian (0 where not finite)."""
    finite = np.isfinite(dxy).reshape(dxy.shape[0], -1).all(axis=1)
    out = np.zeros(dxy.shape[0])
    if finite.any():
        s = np.linalg.svd(dxy[finite], compute_uv=False)
        out[finite] = np.where(s[:, 0] > 0, s[:, -1] / np.where(s[:, 0] > 0, s[:, 0], 1.0), 0.0)
    return out


def profiles(ctx, z: np.ndarray, steps: int = 6, fallback: bool = True) -> Profiles:
    """``f(t) = c(x, y_t) - c(x', y_t)`` along the c-segment w.r.t. ``x`` of every configuration row."""
    cost = ctx.cost
    n = cost.n
    ev = ctx.evaluator(2)
    z = np.atleast_2d(z)
    x, xp, y0, y1 = split(z, n)
    K = z.shape[0]
    dom = cost.domain
    ends_ok = dom.contains_pairs(np.concatenate([x, x]), np.concatenate([y0, y1])).reshape(2, K).all(axis=0)
    # a continuation that leaves Y_x can stop: such a configuration is not admissible anyway
    seg = solve_direct(GradientMap(ev, "y"), x, y0, y1, np.linspace(0.0, 1.0, steps + 1), fallback=fallback,
                       stop=lambda xs, ys: ~dom.contains_pairs(xs, ys))
    T = seg.ts.size
    pts = seg.points.reshape(-1, n)
    have = np.isfinite(pts).all(axis=1)
    safe = np.where(have[:, None], pts, np.repeat(y0, T, axis=0))
    X, XP = np.repeat(x, T, axis=0), np.repeat(xp, T, axis=0)
    d1, d2 = ev(X, safe), ev(XP, safe)
    c1, c2 = d1.value, d2.value
    inside = have & dom.contains_pairs(X, safe) & dom.contains_pairs(XP, safe) & np.isfinite(c1) & np.isfinite(c2)
    inside = inside.reshape(K, T).all(axis=1) & (seg.status == SOLVED) & ends_ok
    regular = ((rcond(d1.dxy) > RCOND) & (rcond(d2.dxy) > RCOND)).reshape(K, T).all(axis=1)
    singular = inside & ~regular
    inside &= regular
    f = np.where(inside[:, None], (c1 - c2).reshape(K, T), np.nan)
    size = np.where(inside, (np.abs(c1) + np.abs(c2)).reshape(K, T).max(axis=1), np.nan)
    with np.errstate(all="ignore"):
        top = np.maximum(f[:, 0], f[:, -1])
        gap = np.where(inside, np.maximum(np.max(np.where(inside[:, None], f, -np.inf), axis=1) - top, 0.0), np.nan)
        norm = np.linalg.norm(x - xp, axis=1) * np.linalg.norm(seg.p1 - seg.p0, axis=1)
        interior = np.max(np.where(inside[:, None], f[:, 1:-1], -np.inf), axis=1) - top
        J = np.where(inside & (norm > 0), interior / np.where(norm > 0, norm, 1.0), -np.inf)
        v = np.where(inside & (norm > 0), gap / np.where(norm > 0, norm, 1.0), np.nan)
    J = np.where(np.isfinite(J), J, -np.inf)
    return Profiles(z, seg.ts, seg.points, f, size, inside, singular, gap, J, np.where(inside, v, np.nan))


def far_rows(ctx, count: int, rng) -> np.ndarray:
    """``count`` rows ``(x, x', y0, y1)`` from the shared sample; half of the ``x'`` near ``x``."""
    s = ctx.sample
    xs, ys = s.xs[ctx.defined], s.ys[ctx.defined]
    N = xs.shape[0]
    i, j = rng.integers(0, N, count), rng.integers(0, N, count)
    k0, k1 = rng.integers(0, N, count), rng.integers(0, N, count)
    x, xp = xs[i], xs[j].copy()
    lo, hi = ctx.cost.domain.x.bounds()
    near = rng.random(count) < 0.5
    width = np.where(hi > lo, hi - lo, 1.0)
    xp[near] = np.clip(x[near] + 0.1 * width * rng.standard_normal((int(near.sum()), x.shape[1])), lo, hi)
    # ends that are no partners of x (pairs constraints) make the configuration inadmissible later
    return np.concatenate([x, xp, ys[k0], ys[k1]], axis=1)


def widths(ctx) -> tuple[float, float]:
    """Mean box widths of X and of Y (the unit of the construction's sizes)."""
    out = []
    for region in (ctx.cost.domain.x, ctx.cost.domain.y):
        lo, hi = region.bounds()
        w = np.where(hi > lo, hi - lo, 1.0)
        out.append(float(np.mean(w)))
    return out[0], out[1]


def levelled(ctx, x, xp, y0, y1, iterations: int = 4) -> np.ndarray:
    """``x'`` moved along ``p1 - p0`` until ``f(0) = f(1)``, by Newton steps (rows at once).

    ``f(1) - f(0) = [c(x, y1) - c(x, y0)] - [c(x', y1) - c(x', y0)]``; its derivative along a unit
    ``u`` at ``x'`` is ``-(D_x c(x', y1) - D_x c(x', y0)) · u``, about ``|p1 - p0|`` for ``u`` along
    ``p1 - p0``.
    """
    ev = ctx.evaluator(2)
    a, b = ev(x, y0), ev(x, y1)
    target = b.value - a.value
    u = a.dx - b.dx  # p1 - p0 with p = -D_x c
    u = u / np.where(np.linalg.norm(u, axis=1, keepdims=True) > 0, np.linalg.norm(u, axis=1, keepdims=True), 1.0)
    xp = np.array(xp, float)
    for _ in range(iterations):
        e0, e1 = ev(xp, y0), ev(xp, y1)
        r = target - (e1.value - e0.value)
        slope = -np.einsum("kd,kd->k", e1.dx - e0.dx, u)
        with np.errstate(all="ignore"):
            step = np.where(np.abs(slope) > 0, r / np.where(slope != 0, slope, 1.0), 0.0)
        xp = xp - np.where(np.isfinite(step), step, 0.0)[:, None] * u
    return xp


def construction(ctx, x, y, xi, eta, lengths=LENGTHS, offsets=OFFSETS, shifts=(0.0, 0.5, -0.5)) -> np.ndarray:
    """Loeper's configurations at pairs ``(x, y)`` (rows) with unit ``ξ`` and covector ``η``.

    The segment's tangent in Y is ``ẏ = -M⁻¹ η`` (``M = D²_xy c``; differentiate
    ``-D_x c(x, y_t) = p_t``), its ends ``y + (s ∓ 1/2) L w_Y ẏ/|ẏ|``, and ``x' = x ± ε w_X ξ``,
    levelled; every length, offset, shift ``s`` (a point on the boundary still has segments on
    one side of it) and sign of ``ξ`` gives a row.
    """
    x, y, xi, eta = (np.atleast_2d(np.asarray(a, float)) for a in (x, y, xi, eta))
    ev = ctx.evaluator(2)
    M = ev(x, y).dxy
    ok = np.isfinite(M).reshape(M.shape[0], -1).all(axis=1) & (rcond(np.where(np.isfinite(M), M, 0.0)) > RCOND)
    M = np.where(ok[:, None, None], M, np.eye(x.shape[1]))
    ydot = -np.linalg.solve(M, eta[..., None])[..., 0]
    ydot /= np.where(np.linalg.norm(ydot, axis=1, keepdims=True) > 0, np.linalg.norm(ydot, axis=1, keepdims=True), 1)
    xi = xi / np.linalg.norm(xi, axis=1, keepdims=True)
    wx, wy = widths(ctx)
    x, y, xi, ydot = x[ok], y[ok], xi[ok], ydot[ok]
    combos = [(L, e * g, h) for L in lengths for e in offsets for g in (1.0, -1.0) for h in shifts]
    if not combos or not x.shape[0]:
        return np.empty((0, 4 * x.shape[1]))
    L, eps, shift = (np.repeat(np.array(c, float), x.shape[0])[:, None] for c in zip(*combos))
    X, Y, XI, YD = (np.tile(a, (len(combos), 1)) for a in (x, y, xi, ydot))
    y0, y1 = Y + (shift - 0.5) * L * wy * YD, Y + (shift + 0.5) * L * wy * YD
    return np.concatenate([X, levelled(ctx, X, X + eps * wx * XI, y0, y1), y0, y1], axis=1)


#: fractions by which x and y are moved towards the domain's centre for :func:`near_point`
PULLS = ((0.0, 0.0), (0.05, 0.0), (0.0, 0.05), (0.05, 0.05), (0.15, 0.0), (0.0, 0.15), (0.15, 0.15))


def near_point(ctx, x, y, xi, eta, pulls=PULLS) -> np.ndarray:
    """:func:`construction` at ``(x, y)`` and with ``x``, ``y`` or both moved a fraction towards the
    centre of their bounding boxes (``S`` is continuous: a minimiser on the boundary, where most
    segments leave the domain, has negative ``S`` just inside too)."""
    x, y = np.asarray(x, float), np.asarray(y, float)
    cx, cy = (0.5 * (lo + hi) for lo, hi in (ctx.cost.domain.x.bounds(), ctx.cost.domain.y.bounds()))
    a, b = (np.array(c, float)[:, None] for c in zip(*pulls))
    k = len(pulls)
    return construction(ctx, x + a * (cx - x), y + b * (cy - y), np.tile(xi, (k, 1)), np.tile(eta, (k, 1)))


def random_directions(n: int, count: int, rng) -> tuple[np.ndarray, np.ndarray]:
    """``count`` unit ``ξ`` and unit ``η ⊥ ξ`` (uniform on the sphere, Gram–Schmidt)."""
    xi = rng.standard_normal((count, n))
    xi /= np.linalg.norm(xi, axis=1, keepdims=True)
    eta = rng.standard_normal((count, n))
    eta -= np.einsum("kd,kd->k", eta, xi)[:, None] * xi
    eta /= np.linalg.norm(eta, axis=1, keepdims=True)
    return xi, eta


def bending(ctx) -> np.ndarray:
    """Per sampled pair, how fast ``D²_xy c`` changes along ``y`` against its size: ``|D_y D²_xy c| / |D²_xy c|``.

    Third derivatives only (never the MTW tensor): where this is large the c-segments bend most,
    which is where short configurations are placed first.
    """
    d = ctx.derivs
    if d.dxyy is None:
        return np.zeros(d.value.shape[0])
    num = np.linalg.norm(d.dxyy.reshape(d.dxyy.shape[0], -1), axis=1)
    den = np.linalg.norm(d.dxy.reshape(d.dxy.shape[0], -1), axis=1)
    with np.errstate(all="ignore"):
        out = num / den
    return np.where(np.isfinite(out) & ctx.defined, out, -np.inf)


def local_rows(ctx, count: int, rng) -> np.ndarray:
    """Short levelled configurations at ``count`` sampled pairs, half where the cost bends most."""
    s = ctx.sample
    usable = np.flatnonzero(ctx.defined)
    if usable.size == 0 or count <= 0 or ctx.cost.n < 2:  # n = 1: no η ⊥ ξ, the bulge term is empty
        return np.empty((0, 4 * ctx.cost.n))
    b = bending(ctx)[usable]
    half = count // 2
    top = usable[np.argsort(-b)[:half]]
    rest = rng.choice(usable, size=min(count - top.size, usable.size), replace=True)
    idx = np.concatenate([top, rest])
    xi, eta = random_directions(ctx.cost.n, idx.size, rng)
    return construction(ctx, s.xs[idx], s.ys[idx], xi, eta, lengths=LENGTHS[:2], offsets=OFFSETS[:1], shifts=(0.0,))


def polish(ctx, starts: np.ndarray, evaluations: int) -> tuple[np.ndarray, int]:
    """Each start's configuration after a Nelder–Mead maximisation of ``J`` (SciPy), and the evaluations spent.

    The simplex starts at a fifth of the configuration's own size (|x' - x| for the x' block,
    |y1 - y0| for the rest), so short configurations are searched at their own scale.
    """
    from scipy.optimize import minimize

    n = ctx.cost.n
    out, spent = [], 0
    for z0 in np.atleast_2d(starts):
        x, xp, y0, y1 = split(z0[None], n)
        dx = max(float(np.linalg.norm(xp - x)), 1e-6)
        dy = max(float(np.linalg.norm(y1 - y0)), 1e-6)
        scale = np.concatenate([np.full(n, dx), np.full(n, dx), np.full(2 * n, dy)]) * 0.2
        simplex = np.vstack([z0, z0 + np.diag(scale)])

        def objective(z):
            J = profiles(ctx, z[None], steps=POLISH_STEPS, fallback=False).J[0]
            return -J if np.isfinite(J) else 1e300

        res = minimize(objective, z0, method="Nelder-Mead",
                       options={"initial_simplex": simplex, "maxfev": evaluations, "xatol": 1e-10, "fatol": 1e-12})
        spent += int(res.nfev)
        out.append(res.x if res.fun < objective(z0) else z0)
        spent += 1
    return (np.array(out) if out else np.empty((0, 4 * n))), spent


def mtw_failure(ctx):
    """MTW's failure point ``(x, y, ξ, η, where-from)``: its verdict's witness in this run, else computed here."""
    v = ctx.verdicts.get("mtw")
    if v is not None:
        w = v.witness
        if v.verdict != "fails" or w is None or "xi" not in w.vectors:
            return None
        return (np.asarray(w.x, float), np.asarray(w.y, float), np.asarray(w.vectors["xi"], float),
                np.asarray(w.vectors["eta"], float), f"the MTW check's witness ({v.evidence.kind})")
    from ...numerics.curvature.margins import a3w_margin
    from .curvature_search import TOLERANCE as MTW_TOLERANCE, search_minimum

    s = search_minimum(ctx, a3w_margin, orthogonal=True)
    if s is None or not s.best.rel < -MTW_TOLERANCE:
        return None
    b = s.best
    return (b.x, b.y, b.xi, b.eta, f"the minimiser of the MTW form computed here (scale-free margin {b.rel:.3g}, "
                                   "float64; MTW was not checked in this run)")
