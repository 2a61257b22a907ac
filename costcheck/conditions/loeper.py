"""Loeper's maximum principle: a derivative-light, independent check of the weak MTW condition.

Statement (Loeper, "On the regularity of solutions of optimal transportation problems",
Acta Math. 202 (2009) 241–283, Prop. 4.4 and Thm 3.2 — numbering from memory; Kim & McCann,
J. Eur. Math. Soc. 12 (2010) 1009–1040, Thm 3.2; Villani, *Optimal Transport: Old and New*,
2009, Thm 12.36, "double mountain above sliding mountain"; cost minimised, as everywhere
here).  Let ``c`` be twisted and non-degenerate on ``X × Y`` with both domains c-convex.
Then A3w (``S(ξ, η) >= 0`` for ``ξ · η = 0``) holds **iff** for all ``x, x' ∈ X`` and every
c-segment ``t ↦ y_t`` with respect to ``x`` (``-D_x c(x, y_t) = (1 - t) p0 + t p1``)

    f(t) := c(x, y_t) - c(x', y_t)   satisfies   f(t) <= max(f(0), f(1))   on [0, 1].

(``-f`` is the "sliding mountain" ``y ↦ -c(x', y) + c(x, y)`` of Villani's picture read along
the segment; the sign of docs/conditions.md#loeper: ``f(t) = c(x, y_t) - c(x', y_t)``.)  Only the cost
and its first and second derivatives (for Newton) enter, never the fourth derivatives of the
tensor, so this is an independent cross-check of :mod:`.mtw`.  The direction "A3w fails ⇒ a
violation exists" is local and needs no convexity of the domains (Loeper 2009, §4): a
violation is found near any point where ``S < 0``.  The converse needs c-convex domains; on a
domain that is not c-convex a violation does not by itself refute A3w, and the verdict's
notes say so (see the c-convexity checks).

Segments that leave the domain: the principle is stated for c-segments inside ``Y``.  A
configuration counts only if every grid point ``y_t`` lies in ``Y_x ∩ Y_{x'}`` (both pairs
``(x, y_t)`` and ``(x', y_t)`` in the domain, the cost finite there); the others are
discarded and counted in the evidence.

Hypotheses: ``n = m`` (else ``not-applicable``), and twist and non-degeneracy, without which
c-segments are not defined; a cost whose ``det D²_xy c`` takes both signs on the shared sample
is ``not-applicable`` (see :func:`costcheck.conditions.engines.cconvex.fold_reason`).  ``n = m = 1`` is
allowed: the segments are intervals (and the principle then follows from twist alone).

Procedure
---------
1. configurations ``(x, x', y0, y1)``: ``x`` and the ends from the shared sample, ``x'`` half
   far (another sample point) and half near ``x``; each c-segment by Newton continuation
   (:mod:`costcheck.numerics.geometry.csegment`) on :data:`STEPS` steps;
2. the scale-free gap ``J = max_{0<t<1} [f(t) - max(f(0), f(1))] / (|x - x'| |p1 - p0|)``
   (to first order in ``x' - x``, ``f(t) ≈ const + (x - x')·p_t`` is affine in ``t`` with a total
   change of at most ``|x - x'| |p1 - p0|``, so ``J`` compares the bump with that size and is
   invariant under ``c -> λc`` and under a common scaling of the coordinates); ``J <= 0`` means
   no violation at the grid points;
3. a local maximisation of ``J`` over ``(x, x', y0, y1)`` (the batched finite-difference
   descent of :func:`costcheck.numerics.search.batched_descent`) from the :data:`STARTS` best
   configurations of step 1 — never from the MTW witness, to keep the two checks
   independent;
4. the best configurations are re-done on :data:`FINE_STEPS` steps and the violation is
   reported scale-free as ``v = [max_t f - max(f(0), f(1))] / (|x - x'| |p1 - p0|) >= 0``.

Tolerance: a violation counts when ``v >`` :data:`TOLERANCE` (``1e-6``) **and** the raw gap
exceeds ``1000 · eps · max |c|`` along the segment (float64 rounding of the two cost values
that ``f`` subtracts).  For a cost with ``S ≡ 0`` (``-x·y``, ``|x - y|²/2``) ``f`` is exactly
affine and the float gap is rounding, ~``1e-16 |c|``, far below both.  A counted violation is
re-solved and re-evaluated with mpmath (``y_t`` by Newton at 110 digits, ``f`` at 50 and 80
digits): confirmed → ``fails`` (``refuted``); not confirmed → ``holds`` with a note (the float
gap was rounding).  No violation → ``holds``, ``sampled``: evidence, not proof.
"""

from __future__ import annotations

from dataclasses import dataclass

import mpmath
import numpy as np

from ..model.verdict import Evidence, Verdict, Witness, not_applicable, undecided
from ..numerics import precision, search
from ..numerics.geometry.csegment import SOLVED, GradientMap, solve_direct
from .engines.cconvex import fold_reason

CONDITION = "loeper"
_SALT = 0x1E8

#: scale-free violations v at or below this count as zero
TOLERANCE = 1e-6
#: continuation steps of each c-segment in the search (the best one is re-done on FINE_STEPS)
STEPS = 6
FINE_STEPS = 64
#: local maximisations started from the best sampled configurations
STARTS = 4
ITERATIONS = 8
#: raw gaps below ROUNDING · eps · max|c| are float64 rounding
ROUNDING = 1000.0


@dataclass(frozen=True)
class Profiles:
    """``f`` on the t grid for ``K`` configurations ``z = (x, x', y0, y1)``."""

    z: np.ndarray
    ts: np.ndarray
    ys: np.ndarray  # (K, T, n)
    f: np.ndarray  # (K, T), NaN where not admissible
    size: np.ndarray  # (K,) max |c(x, y_t)| + |c(x', y_t)|
    admissible: np.ndarray  # (K,)
    gap: np.ndarray  # (K,) max_t f - max(f(0), f(1)) (>= 0)
    J: np.ndarray  # (K,) signed interior gap / (|x - x'| |p1 - p0|); -inf where not admissible
    v: np.ndarray  # (K,) gap / (|x - x'| |p1 - p0|) >= 0: the scale-free violation; NaN where not admissible


def split(z: np.ndarray, n: int):
    return z[:, :n], z[:, n:2 * n], z[:, 2 * n:3 * n], z[:, 3 * n:]


def profiles(ctx, z: np.ndarray, steps: int = STEPS, fallback: bool = True) -> Profiles:
    """``f(t) = c(x, y_t) - c(x', y_t)`` along the c-segment w.r.t. ``x`` of every configuration row."""
    cost = ctx.cost
    n = cost.n
    ev = ctx.evaluator(2)
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
    c1, c2 = ev(X, safe).value, ev(XP, safe).value
    inside = have & dom.contains_pairs(X, safe) & dom.contains_pairs(XP, safe) & np.isfinite(c1) & np.isfinite(c2)
    inside = inside.reshape(K, T).all(axis=1) & (seg.status == SOLVED) & ends_ok
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
    return Profiles(z, seg.ts, seg.points, f, size, inside, gap, J, np.where(inside, v, np.nan))


def configurations(ctx, count: int, rng) -> np.ndarray:
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


def check(ctx) -> Verdict:
    cost = ctx.cost
    n, m = cost.n, cost.m
    if n != m:
        return not_applicable(CONDITION, f"c-segments need n = m (here n = {n}, m = {m})")
    fold = fold_reason(ctx)
    if fold:
        return not_applicable(CONDITION, fold + "; the maximum principle presupposes twist and non-degeneracy")
    rng = ctx.rng(_SALT)
    count = int(np.clip(ctx.budget // 16, 64, 2048))
    z = configurations(ctx, count, rng)
    prof = profiles(ctx, z)
    usable = int(prof.admissible.sum())
    if usable == 0:
        return undecided(CONDITION, "no sampled c-segment could be followed inside the domain for both x and x' "
                                    "(twist or non-degeneracy may fail, or the domain is too thin)",
                         configurations=count)
    # local maximisation of J from the best separated configurations
    order = np.argsort(-prof.J)
    order = order[np.isfinite(prof.J[order])]
    starts = order[:STARTS]
    lx, ux = cost.domain.x.bounds()
    ly, uy = cost.domain.y.bounds()
    lower, upper = np.concatenate([lx, lx, ly, ly]), np.concatenate([ux, ux, uy, uy])

    def objective(Z):
        return -profiles(ctx, Z, fallback=False).J

    zb, fb, evaluations = search.batched_descent(objective, z[starts], lower, upper, step=0.05,
                                                 iterations=ITERATIONS)
    candidates = np.concatenate([zb, z[order[:STARTS]]])
    fine = profiles(ctx, candidates, steps=FINE_STEPS)
    eps = np.finfo(float).eps
    counted = fine.admissible & (fine.v > TOLERANCE) & (fine.gap > ROUNDING * eps * fine.size)
    details = {"configurations": count, "admissible": usable, "discarded_leaving_domain": count - usable,
               "local_searches": int(starts.size), "evaluations": int(evaluations), "tolerance": TOLERANCE,
               "grid_steps": STEPS, "fine_steps": FINE_STEPS}
    notes = []
    if count - usable:
        notes.append(f"{count - usable} of {count} sampled configurations were discarded: their c-segment leaves "
                     "Y_x ∩ Y_x' (or the cost is undefined on it); the principle is stated for segments inside "
                     "the domain")
    best = int(np.argmax(np.where(fine.admissible, fine.J, -np.inf)))
    details["worst"] = _configuration(fine, best, n)
    if counted.any() and ctx.cost.expr is None:
        k = int(np.argmax(np.where(counted, fine.v, -np.inf)))
        return Verdict(CONDITION, "undecided",
                       Evidence("undecided", f"a float64 violation v = {fine.v[k]:.3g} was found, but a Python-function "
                                "cost has no high-precision evaluator to confirm it", samples=usable,
                                details={**details, "worst": _configuration(fine, k, n)}),
                       value=float(fine.v[k]), value_meaning=_MEANING, notes=tuple(notes))
    for k in np.argsort(-np.where(counted, fine.v, -np.inf))[:3]:
        if not counted[k]:
            break
        ok, value, error, text = _confirm(ctx, fine, int(k))
        if ok:
            return _failed(ctx, fine, int(k), value, error, text, details, notes)
        notes.append(f"a float64 violation v = {fine.v[k]:.3g} did not survive high-precision re-evaluation ({text}); "
                     "treated as rounding")
    res = 1.0 / FINE_STEPS
    largest = float(np.nanmax(fine.v)) if np.isfinite(fine.v).any() else 0.0
    details["largest_signed_gap"] = float(np.max(np.where(fine.admissible, fine.J, -np.inf)))
    summary = (f"f(t) <= max(f(0), f(1)) at every grid point of {usable} sampled c-segment configurations "
               f"({STEPS} steps) and of {starts.size} local maximisations of the gap ({evaluations} further "
               f"configurations, best ones re-done on {FINE_STEPS} steps); largest scale-free violation "
               f"{largest:.3g} (tolerance {TOLERANCE:g}): evidence, not proof")
    return Verdict(CONDITION, "holds", Evidence("sampled", summary, samples=usable, resolution=res, details=details),
                   value=largest, value_meaning=_MEANING, notes=tuple(notes))


_MEANING = ("largest scale-free violation v = [max_t f(t) - max(f(0), f(1))] / (|x - x'| |p1 - p0|) of "
            "f(t) = c(x, y_t) - c(x', y_t) along a c-segment w.r.t. x, p_i = -D_x c(x, y_i) (0: no violation)")


def _configuration(p: Profiles, k: int, n: int) -> dict:
    x, xp, y0, y1 = (a[k] for a in split(p.z, n))
    i = int(np.nanargmax(p.f[k]))
    return {"x": x.tolist(), "x_prime": xp.tolist(), "y0": y0.tolist(), "y1": y1.tolist(),
            "t": float(p.ts[i]), "y_t": p.ys[k, i].tolist(), "v": float(p.v[k]), "gap": float(p.gap[k])}


def _confirm(ctx, p: Profiles, k: int):
    n = ctx.cost.n
    x, xp, y0, y1 = (a[k] for a in split(p.z, n))
    i = int(np.nanargmax(p.f[k]))
    hp, reason = precision.usable_high_precision(ctx.cost, 1, x, y0)
    if hp is None:
        return False, float(p.gap[k]), None, f"no high-precision evaluator: {reason}"
    X, XP, Y0, Y1 = (precision.mp_vector(a) for a in (x, xp, y0, y1))
    dps = precision.DPS_REFINE
    try:
        with mpmath.workdps(dps):
            p0 = [-v for v in hp(X, Y0, dps)["dx"]]
            p1 = [-v for v in hp(X, Y1, dps)["dx"]]
            t = mpmath.mpf(float(p.ts[i]))
            target = [(1 - t) * a + t * b for a, b in zip(p0, p1)]
            u, norm, _ = precision.mp_newton_solve(lambda u: [-a - b for a, b in zip(hp(X, u, dps)["dx"], target)],
                                                precision.mp_vector(p.ys[k, i]))
            scale = precision.mp_norm(p0) + precision.mp_norm([b - a for a, b in zip(p0, p1)])
            if u is None or not norm <= scale * mpmath.mpf(10) ** (-(dps - 20)):
                return False, float(p.gap[k]), None, "the high-precision c-segment solve did not converge"
    except precision.HP_ERRORS as exc:
        return False, float(p.gap[k]), None, f"the high-precision evaluation failed ({exc})"

    def f_at(yv, d):
        return hp(X, yv, d)["value"] - hp(XP, yv, d)["value"]

    def gap(d):
        with mpmath.workdps(d):
            return f_at(u, d) - max(f_at(Y0, d), f_at(Y1, d))

    val, err = precision.confirm_value(gap)
    if not (mpmath.isfinite(val) and val > err):
        return False, float(p.gap[k]), None, f"high-precision gap {precision.fmt(val, 4)} ± {precision.fmt(err, 2)}"
    text = (f"y_t at t = {float(t):.6g} re-solved with mpmath (Newton at {dps} digits on -D_x c(x, y_t) = "
            f"(1 - t) p0 + t p1 from the exact binary values of x, y0, y1; residual {precision.fmt(norm, 3)}); "
            f"f(t) - max(f(0), f(1)) = {precision.fmt(val, 8)} ± {precision.fmt(err, 2)} at {precision.DPS_LOW} and "
            f"{precision.DPS_HIGH} digits; scale-free violation v = {float(p.v[k]):.4g} (float64, {FINE_STEPS} steps)")
    return True, float(val), float(err), text


def _failed(ctx, p: Profiles, k: int, value, error, text, details, notes) -> Verdict:
    n = ctx.cost.n
    cfg = _configuration(p, k, n)
    details = {**details, "worst": cfg, "scale_free_violation": cfg["v"]}
    fmt = lambda v: "(" + ", ".join(f"{float(c):.6g}" for c in v) + ")"  # noqa: E731
    summary = (f"Loeper's maximum principle fails: along the c-segment w.r.t. x = {fmt(cfg['x'])} from "
               f"y0 = {fmt(cfg['y0'])} to y1 = {fmt(cfg['y1'])}, f(t) = c(x, y_t) - c(x', y_t) with "
               f"x' = {fmt(cfg['x_prime'])} rises above max(f(0), f(1)) by {value:.6g} ± {error:.2g} at "
               f"t = {cfg['t']:.4g} (scale-free {cfg['v']:.4g}), confirmed in high precision; on c-convex "
               "domains this refutes A3w (Loeper 2009), on others it shows that the principle fails on this domain "
               "(compare target_c_convex and source_c_convex)")
    w = Witness(x=cfg["x"], y=cfg["y_t"], value=value, error_bound=error, confirmation=text,
                vectors={"x_prime": cfg["x_prime"], "y0": cfg["y0"], "y1": cfg["y1"]},
                vector_sides={"x_prime": "x", "y0": "y", "y1": "y"})
    return Verdict(CONDITION, "fails", Evidence("refuted", summary, samples=details["admissible"], details=details),
                   value=cfg["v"], value_meaning=_MEANING, witness=w, notes=tuple(notes))
