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
1. the independent search: configurations ``(x, x', y0, y1)`` of two kinds — far ones (``x``
   and the ends from the shared sample, ``x'`` half far, half near ``x``) and short, levelled
   ones at sampled pairs with random directions, half of them where ``D²_xy c`` changes fastest
   (:func:`~costcheck.conditions.engines.loeper_search.local_rows`: Loeper's construction, which
   needs no fourth derivatives); each c-segment by Newton (:mod:`costcheck.numerics.geometry.csegment`);
2. the scale-free gap ``J = max_{0<t<1} [f(t) - max(f(0), f(1))] / (|x - x'| |p1 - p0|)``
   (to first order in ``x' - x``, ``f(t) ≈ const + (x - x')·p_t`` is affine in ``t`` with a total
   change of at most ``|x - x'| |p1 - p0|``, so ``J`` compares the bump with that size and is
   invariant under ``c -> λc`` and under a common scaling of the coordinates); ``J <= 0`` means
   no violation at the grid points;
3. the :data:`STARTS` best re-done on :data:`FINE_STEPS` steps; unless one of them is already a
   confirmed violation, each is maximised (Nelder–Mead on ``J``, SciPy) and re-done; the
   violation is reported scale-free as ``v = [max_t f - max(f(0), f(1))] / (|x - x'| |p1 - p0|)``;
4. the consistency step: where MTW failed (its witness ``(x, y, ξ, η)``, or, without an MTW
   verdict in this run, the minimiser of the MTW form computed here), Loeper's construction
   at that point (:func:`~costcheck.conditions.engines.loeper_search.construction`, then
   maximised) must show the violation; if it does not, the disagreement is reported as a
   defect and the verdict is ``undecided``.  A violation found only this way is reported as
   such: the independent search did not find it.

Only where ``D²_xy c`` is invertible (``σ_min/σ_max >`` ``RCOND``, 1e-6, at every grid point of
both profiles); configurations through nearly singular points are discarded and counted.
"""

from __future__ import annotations

import mpmath
import numpy as np

from ..model.verdict import Evidence, Verdict, Witness, not_applicable, undecided
from ..numerics import precision
from .engines import loeper_search as ls
from .engines.cconvex import fold_reason
from ..model.display import with_error

CONDITION = "loeper"
_SALT = 0x1E8

#: scale-free violations v at or below this count as zero
TOLERANCE = 1e-6
#: grid steps of each c-segment in the search (the best ones are re-done on FINE_STEPS)
STEPS = 6
FINE_STEPS = 64
#: SciPy maximisations started from the best configurations
STARTS = 2
#: raw gaps below ROUNDING · eps · max|c| are float64 rounding
ROUNDING = 1000.0


def _violations(ctx, z):
    """The configurations re-done on FINE_STEPS steps and which of them count as violations."""
    fine = ls.profiles(ctx, z, steps=FINE_STEPS)
    eps = np.finfo(float).eps
    return fine, fine.admissible & (fine.v > TOLERANCE) & (fine.gap > ROUNDING * eps * fine.size)


def _first_confirmed(ctx, fine, counted, notes):
    for k in np.argsort(-np.where(counted, fine.v, -np.inf))[:3]:
        if not counted[k]:
            break
        ok, value, error, text = _confirm(ctx, fine, int(k))
        if ok:
            return int(k), value, error, text
        notes.append(f"a float64 violation v = {fine.v[k]:.3g} did not survive high-precision re-evaluation ({text}); "
                     "treated as rounding")
    return None


def consistency(ctx, notes) -> dict | None:
    """Loeper's construction at MTW's failure point: the violation it shows, or why none."""
    found = ls.mtw_failure(ctx) if ctx.cost.n > 1 else None
    if found is None:
        return None
    x, y, xi, eta, origin = found
    out = {"origin": origin, "x": x.tolist(), "y": y.tolist(), "xi": xi.tolist(), "eta": eta.tolist()}
    r = float(ls.rcond(ctx.evaluator(2)(x[None], y[None]).dxy)[0])
    if not r > ls.RCOND:
        out.update(shown=False, singular=True, reason=f"σ_min/σ_max of D²_xy c is {r:.2g} there (at most "
                   f"{ls.RCOND:g}): Loeper's principle is not evaluated where the mixed Hessian is nearly singular")
        return out
    z = ls.near_point(ctx, x, y, xi, eta)
    fine, counted = _violations(ctx, z)
    if not fine.admissible.any():
        out.update(shown=False, singular=False, reason=f"none of {z.shape[0]} constructions at this point (and at "
                   "points moved towards the domain's centre) stays inside the domain with an invertible mixed Hessian")
        return out
    hit, spent = _first_confirmed(ctx, fine, counted, notes), 0
    if hit is None:  # not shown by the construction itself: maximise the violation from its best rows
        best = fine.z[np.argsort(-fine.J)[:3]]
        polished, spent = ls.polish(ctx, best[:1], ls.evaluations(ctx.budget))
        fine, counted = _violations(ctx, np.concatenate([polished, best]))
        hit = _first_confirmed(ctx, fine, counted, notes)
    out.update(constructions=int(z.shape[0]), evaluations=spent,
               largest_violation=float(np.nanmax(fine.v)) if np.isfinite(fine.v).any() else 0.0)
    if hit is None:
        out.update(shown=False, singular=False, reason=f"the largest scale-free violation of {z.shape[0]} "
                   f"constructions and a maximisation there is {out['largest_violation']:.3g}, not a confirmed one")
        return out
    out.update(shown=True, hit=(fine, *hit))
    return out


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
    z = np.concatenate([ls.far_rows(ctx, count, rng), ls.local_rows(ctx, max(count // 4, 16), rng)])
    prof = ls.profiles(ctx, z, steps=STEPS)
    usable, singular, total = int(prof.admissible.sum()), int(prof.singular.sum()), z.shape[0]
    if usable == 0:
        return undecided(CONDITION, "no sampled c-segment could be followed inside the domain for both x and x' "
                                    "with an invertible mixed Hessian (twist or non-degeneracy may fail, or the "
                                    "domain is too thin)", configurations=total, singular_excluded=singular)
    order = np.argsort(-prof.J)
    starts = order[np.isfinite(prof.J[order])][:STARTS]
    notes = []
    fine, counted = _violations(ctx, z[starts])
    hit = _first_confirmed(ctx, fine, counted, notes) if cost.expr is not None else None
    maximised, evaluations = 0, 0
    if hit is None:  # nothing confirmed yet: maximise the violation from the best configurations
        polished, evaluations = ls.polish(ctx, z[starts], ls.evaluations(ctx.budget))
        fine, counted = _violations(ctx, np.concatenate([polished, z[starts]]))
        maximised, hit = starts.size, _first_confirmed(ctx, fine, counted, notes) if cost.expr is not None else None
    details = {"configurations": total, "admissible": usable, "discarded": total - usable,
               "singular_excluded": singular, "rcond_threshold": ls.RCOND, "local_searches": int(maximised),
               "evaluations": int(evaluations), "tolerance": TOLERANCE, "grid_steps": STEPS, "fine_steps": FINE_STEPS}
    if total - usable:
        notes.append(f"{total - usable} of {total} configurations were discarded: their c-segment leaves "
                     "Y_x ∩ Y_x' or the cost is undefined on it (the principle is stated for segments inside the "
                     f"domain), or D²_xy c is nearly singular on it ({singular} of them; σ_min/σ_max <= {ls.RCOND:g})")
    best = int(np.argmax(np.where(fine.admissible, fine.J, -np.inf)))
    details["worst"] = _configuration(fine, best, n)
    if counted.any() and ctx.cost.expr is None:
        k = int(np.argmax(np.where(counted, fine.v, -np.inf)))
        return Verdict(CONDITION, "undecided",
                       Evidence("undecided", f"a float64 violation v = {fine.v[k]:.3g} was found, but a Python-function "
                                "cost has no high-precision evaluator to confirm it", samples=usable,
                                details={**details, "worst": _configuration(fine, k, n)}),
                       value=float(fine.v[k]), value_meaning=_MEANING, notes=tuple(notes))
    cons = consistency(ctx, notes)
    if cons is not None:
        details["at_mtw_failure"] = {k: v for k, v in cons.items() if k != "hit"}
    if hit is not None:
        if cons is not None and not cons["shown"] and not cons.get("singular"):
            notes.append("DEFECT: MTW fails at " + _where(cons) + " but Loeper's construction there showed no "
                         f"violation ({cons['reason']}); the violation reported was found elsewhere")
        return _failed(ctx, fine, *hit, details, notes, "found by the independent search")
    if cons is not None and cons["shown"]:
        cfine, k, value, error, text = cons["hit"]
        return _failed(ctx, cfine, k, value, error, text, details, notes,
                       f"found by Loeper's construction at {cons['origin']}; the independent search "
                       f"({usable} configurations, {maximised} maximisations) did not find it")
    largest = float(np.nanmax(fine.v)) if np.isfinite(fine.v).any() else 0.0
    details["largest_signed_gap"] = float(np.max(np.where(fine.admissible, fine.J, -np.inf)))
    searched = (f"{usable} c-segment configurations ({STEPS} steps; {singular} more excluded as nearly singular) and "
                f"{maximised} SciPy maximisations of the gap ({evaluations} further configurations, best ones "
                f"re-done on {FINE_STEPS} steps); largest scale-free violation {largest:.3g} (tolerance {TOLERANCE:g})")
    if cons is not None and not cons.get("singular"):
        summary = (f"DEFECT: MTW fails at {_where(cons)} ({cons['origin']}), but Loeper's construction there shows no "
                   f"violation ({cons['reason']}), nor did {searched}; the two checks disagree, so neither verdict "
                   "is settled")
        return Verdict(CONDITION, "undecided", Evidence("undecided", summary, samples=usable, details=details),
                       value=largest, value_meaning=_MEANING, notes=tuple(notes))
    if cons is not None:
        notes.append(f"MTW fails at {_where(cons)} ({cons['origin']}), but {cons['reason']}")
    summary = f"f(t) <= max(f(0), f(1)) at every grid point of {searched}: evidence, not proof"
    evidence = Evidence("sampled", summary, samples=usable, resolution=1.0 / FINE_STEPS, details=details)
    return Verdict(CONDITION, "holds", evidence, value=largest, value_meaning=_MEANING, notes=tuple(notes))


def _fmt(v) -> str:
    return "(" + ", ".join(f"{float(c):.6g}" for c in v) + ")"


def _where(cons) -> str:
    return f"x = {_fmt(cons['x'])}, y = {_fmt(cons['y'])}, ξ = {_fmt(cons['xi'])}, η = {_fmt(cons['eta'])}"


_MEANING = ("largest scale-free violation v = [max_t f(t) - max(f(0), f(1))] / (|x - x'| |p1 - p0|) of "
            "f(t) = c(x, y_t) - c(x', y_t) along a c-segment w.r.t. x, p_i = -D_x c(x, y_i) (0: no violation)")


def _configuration(p, k: int, n: int) -> dict:
    x, xp, y0, y1 = (a[k] for a in ls.split(p.z, n))
    i = int(np.nanargmax(p.f[k]))
    return {"x": x.tolist(), "x_prime": xp.tolist(), "y0": y0.tolist(), "y1": y1.tolist(),
            "t": float(p.ts[i]), "y_t": p.ys[k, i].tolist(), "v": float(p.v[k]), "gap": float(p.gap[k])}


def _confirm(ctx, p, k: int):
    n = ctx.cost.n
    x, xp, y0, y1 = (a[k] for a in ls.split(p.z, n))
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
        return False, float(p.gap[k]), None, f"high-precision gap {with_error(val, err, 4)}"
    text = (f"y_t at t = {float(t):.6g} re-solved with mpmath (Newton at {dps} digits on -D_x c(x, y_t) = "
            f"(1 - t) p0 + t p1 from the exact binary values of x, y0, y1; residual {precision.fmt(norm, 3)}); "
            f"f(t) - max(f(0), f(1)) = {with_error(val, err, 8)} at {precision.DPS_LOW} and "
            f"{precision.DPS_HIGH} digits; scale-free violation v = {float(p.v[k]):.4g} (float64, {FINE_STEPS} steps)")
    return True, float(val), float(err), text


def _failed(ctx, p, k: int, value, error, text, details, notes, how: str) -> Verdict:
    n = ctx.cost.n
    cfg = _configuration(p, k, n)
    details = {**details, "worst": cfg, "scale_free_violation": cfg["v"]}
    fmt = _fmt
    summary = (f"Loeper's maximum principle fails: along the c-segment w.r.t. x = {fmt(cfg['x'])} from "
               f"y0 = {fmt(cfg['y0'])} to y1 = {fmt(cfg['y1'])}, f(t) = c(x, y_t) - c(x', y_t) with "
               f"x' = {fmt(cfg['x_prime'])} rises above max(f(0), f(1)) by {value:.6g} ± {error:.2g} at "
               f"t = {cfg['t']:.4g} (scale-free {cfg['v']:.4g}), confirmed in high precision ({how}); on c-convex "
               "domains this refutes A3w (Loeper 2009), on others it shows that the principle fails on this domain "
               "(compare target_c_convex and source_c_convex)")
    w = Witness(x=cfg["x"], y=cfg["y_t"], value=value, error_bound=error, confirmation=text,
                vectors={"x_prime": cfg["x_prime"], "y0": cfg["y0"], "y1": cfg["y1"]},
                vector_sides={"x_prime": "x", "y0": "y", "y1": "y"})
    return Verdict(CONDITION, "fails", Evidence("refuted", summary, samples=details["admissible"], details=details),
                   value=cfg["v"], value_meaning=_MEANING, witness=w, notes=tuple(notes))
