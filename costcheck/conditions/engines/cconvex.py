"""Shared engine of the two c-convexity checks (:mod:`.target_c_convex`, :mod:`.source_c_convex`).

``Y`` is c-convex with respect to ``X`` when ``-D_x c(x, Y_x)`` is convex for every ``x``
(Ma, Trudinger & Wang, ARMA 177, 2005, §2; Villani, *Optimal Transport: Old and New*, 2009,
Def. 12.27 — numbering from memory): every c-segment (see :mod:`costcheck.numerics.geometry.csegment`)
between two points of ``Y_x`` stays in ``Y_x``.  Here ``Y_x`` is ``Y`` cut by the file's
``pairs`` constraints at that ``x`` (a pair constraint that removes ``|x - y| < 0.2`` makes
``Y_x`` a set with a hole, and the question is asked of that set).  Symmetrically for ``X``.

Procedure (the same for both sides; ``moving`` names the side whose segments are drawn):

1. fixed points: a random subset of the shared sample's points of the other side;
2. for each, segment ends in its section: boundary-focused (box corners, and boundary points
   found by bisection between inside and outside points — faces, ball spheres and the zero
   sets of ``where`` / ``pairs`` constraints alike) mixed with interior points;
3. every c-segment on a grid of :data:`STEPS` steps (Newton at all grid values at once, with
   Newton continuation where that does not converge or strays from the tangent; a continuation
   stops as soon as it is outside, and a row that stops early — cost undefined, singular
   Jacobian — still contributes the furthest point it reached); a point whose estimated
   distance outside the section exceeds :data:`LEAVE_TOL` × the region's diameter counts as
   leaving (rounding on a flat face is ~1e-16 of it), and the first exit time is bisected;
   a continuation that arrives at ``t = 1`` away from ``y1`` (twist fails on its way) is not
   counted as an exit but as a segment that could not be followed;
4. the segment with the deepest excursion is re-solved at its first point at least half as deep
   with mpmath (Newton at 110 digits on
   ``-D c = (1 - t) p0 + t p1`` from the exact binary values of the ends) and the violated
   part (box face, ball, or constraint ``g``) re-evaluated at 50 and 80 digits: only a
   violation larger than its error estimate is a **refuted** witness.

Costs whose ``det D²_xy c`` takes both signs on the shared sample get ``not-applicable``: the
gradient map folds and c-segments are not defined (:func:`fold_reason`).  An exit seen in
float64 but not confirmed makes the verdict ``undecided``; fewer than :data:`MIN_FOLLOWED` of
the segments followed, too.  The segments are assumed to be the c-segments, i.e. twist holds
on the region they pass through (the arrival check at ``t = 1`` is the test of that).

No exit among the followed segments is ``holds`` with ``sampled`` evidence: it says how many
segments, at which spatial resolution (the largest step between consecutive grid points), and
that excursions shorter than a grid step or shallower than the tolerance are not seen.
"""

from __future__ import annotations

from dataclasses import dataclass

import mpmath
import numpy as np

from ...model.verdict import Evidence, Verdict, Witness, not_applicable, undecided
from ...numerics import precision
from ...numerics.geometry.csegment import (
    SOLVED,
    STATUS_TEXT,
    STOPPED,
    WRONG_END,
    GradientMap,
    Segments,
    solve_at,
    solve_direct,
)
from ...numerics.geometry.region import Section
from ...model.display import with_error

#: a grid point further outside than LEAVE_TOL × diameter counts as leaving the section
LEAVE_TOL = 1e-6
#: continuation grid of every c-segment
STEPS = 16
#: candidate exits re-solved in high precision before giving up
CONFIRM_TRIES = 3
#: below this fraction of followed segments the verdict is undecided
MIN_FOLLOWED = 0.5


@dataclass(frozen=True)
class SideSpec:
    condition: str
    moving: str  # the side the segments move in
    salt: int

    @property
    def fixed(self) -> str:
        return "x" if self.moving == "y" else "y"

    @property
    def names(self) -> str:
        return "Y with respect to X" if self.moving == "y" else "X with respect to Y"


def fold_reason(ctx) -> str | None:
    """Why c-segments are not defined for this cost, if the shared sample already shows it.

    ``det D²_xy c`` of both signs on the sampled pairs means the gradient map folds (on a
    connected domain it vanishes in between: non-degeneracy fails), so the curve
    ``-D_x c(x, y_t) = p_t`` may stop at a fold or switch branches, and "the" c-segment between
    two points does not exist (Ma, Trudinger & Wang 2005 assume A1 and A2 before defining them).
    """
    d = ctx.derivs
    if d.dxy is None or d.dxy.shape[1] != d.dxy.shape[2]:
        return None
    ok = ctx.defined
    if not ok.any():
        return None
    det = np.linalg.det(d.dxy[ok])
    if (det > 0).any() and (det < 0).any():
        return (f"det D²_xy c takes both signs on the sampled pairs ({int((det > 0).sum())} positive, "
                f"{int((det < 0).sum())} negative): the gradient map folds (non-degeneracy fails), so c-segments "
                "are not defined between every two points")
    return None


def segment_budget(budget: int) -> tuple[int, int]:
    """``(segments, fixed points)`` at a context budget (4096 → 256 segments from 16 points)."""
    segments = int(np.clip(budget // 16, 48, 1024))
    return segments, int(np.clip(segments // 16, 4, 32))


def fixed_points(ctx, side: str, count: int, rng) -> np.ndarray:
    """``count`` points of ``side`` drawn from the shared sample (each has a partner in the domain)."""
    pts = ctx.sample.xs if side == "x" else ctx.sample.ys
    pts = pts[ctx.defined] if ctx.defined.any() else pts
    idx = rng.choice(pts.shape[0], size=min(count, pts.shape[0]), replace=False)
    return pts[idx]


def segment_ends(section: Section, partners: np.ndarray, per: int, rng):
    """``(fixed, z0, z1)``: ``per`` pairs of ends in each partner's section, mostly on its boundary."""
    bnd, bown = section.boundary_samples(partners, per, rng)
    inn, iown = section.interior_samples(partners, per, rng)
    rows_f, rows_a, rows_b = [], [], []
    for k in range(partners.shape[0]):
        B, I = bnd[bown == k], inn[iown == k]
        pool_mix = [(B, B, 0.6), (B, I, 0.2), (I, I, 0.2)]
        for P, Q, share in pool_mix:
            cnt = int(round(share * per))
            if P.shape[0] == 0 or Q.shape[0] == 0 or cnt == 0:
                continue
            a = P[rng.integers(0, P.shape[0], cnt)]
            b = Q[rng.integers(0, Q.shape[0], cnt)]
            rows_f.append(np.repeat(partners[k][None], cnt, axis=0))
            rows_a.append(a)
            rows_b.append(b)
    if not rows_f:
        d = partners.shape[1]
        return np.empty((0, d)), np.empty((0, d)), np.empty((0, d))
    return np.concatenate(rows_f), np.concatenate(rows_a), np.concatenate(rows_b)


@dataclass(frozen=True)
class Exit:
    row: int
    t_exit: float
    z_exit: np.ndarray
    t_out: float
    z_out: np.ndarray
    depth: float
    part: str


def extended_grid(seg: Segments) -> tuple[np.ndarray, np.ndarray]:
    """``(times (K, T+1), points (K, T+1, d))``: the grid, plus the furthest point reached by a stopped row."""
    K, T, d = seg.points.shape
    times = np.concatenate([np.repeat(seg.ts[None], K, axis=0), np.full((K, 1), np.nan)], axis=1)
    points = np.concatenate([seg.points, np.full((K, 1, d), np.nan)], axis=1)
    stopped = (seg.status != SOLVED) & (seg.failed_at >= 1) & (seg.reached_t > 0)
    times[stopped, T] = seg.reached_t[stopped]
    points[stopped, T] = seg.reached[stopped]
    return times, points


def outside_grid(section: Section, points: np.ndarray, fixed: np.ndarray) -> np.ndarray:
    """``(K, T')`` distance outside the section at every solved point (NaN where unsolved)."""
    K, T, d = points.shape
    pts = points.reshape(-1, d)
    partners = np.repeat(fixed, T, axis=0)
    have = np.isfinite(pts).all(axis=1)
    out = np.full(K * T, np.nan)
    if have.any():
        out[have] = section.outside_distance(pts[have], partners[have])
    return out.reshape(K, T)


def find_exits(gmap, section: Section, seg: Segments, fixed, times, points, out, tol: float,
               eligible: np.ndarray, keep: int) -> tuple[list[Exit], int]:
    """The ``keep`` eligible leaving rows with the deepest excursions, and the number of leaving rows.

    For each kept row the first exit time is bisected to ~1e-10 between its last point inside
    and its first point outside.
    """
    leaving = (np.nan_to_num(out, nan=-np.inf) > tol) & eligible[:, None]
    found = []
    for k in np.flatnonzero(leaving.any(axis=1)):
        first = int(np.argmax(leaving[k]))
        before = [i for i in range(first) if np.isfinite(times[k, i]) and np.isfinite(out[k, i])]
        if not before:  # (the ends themselves are inside by construction)
            continue
        deepest = float(np.nanmax(out[k]))
        # the witness point: the first one at least half as deep as the deepest (readable, not a runaway)
        j = int(np.argmax(np.nan_to_num(out[k], nan=-np.inf) >= 0.5 * deepest))
        found.append((deepest, int(k), before[-1], first, j))
    found.sort(key=lambda item: -item[0])
    chosen = found[:keep]
    if not chosen:
        return [], len(found)
    rows = np.array([c[1] for c in chosen])
    lo_t = np.array([times[c[1], c[2]] for c in chosen])
    hi_t = np.array([times[c[1], c[3]] for c in chosen])
    lo_z = np.array([points[c[1], c[2]] for c in chosen])
    hi_z = np.array([points[c[1], c[3]] for c in chosen])
    for _ in range(34):
        mid = 0.5 * (lo_t + hi_t)
        z, st, _ = solve_at(gmap, fixed[rows], lo_z, lo_t, mid, seg.p0[rows], seg.p1[rows])
        ok = st == SOLVED
        outside = np.full(rows.size, True)
        if ok.any():
            outside[ok] = section.outside_distance(z[ok], fixed[rows][ok]) > 0
        up = ok & outside
        hi_t, hi_z = np.where(up, mid, hi_t), np.where(up[:, None], z, hi_z)
        down = ok & ~outside
        lo_t, lo_z = np.where(down, mid, lo_t), np.where(down[:, None], z, lo_z)
    exits = []
    for n_, (_, k, _, _, j) in enumerate(chosen):
        z_out = points[k, j]
        viol = section.violations(z_out[None], fixed[k][None])[0]
        exits.append(Exit(k, float(hi_t[n_]), hi_z[n_], float(times[k, j]), z_out, float(out[k, j]),
                          section.parts()[int(np.argmax(viol))][0]))
    return exits, len(found)


def confirm_exit(ctx, spec: SideSpec, section: Section, seg: Segments, fixed, e: Exit):
    """Re-solve the deepest point in mpmath and re-evaluate the violated part: ``(ok, value, error, text)``."""
    cost = ctx.cost
    x0 = fixed[e.row] if spec.moving == "y" else e.z_out
    y0 = e.z_out if spec.moving == "y" else fixed[e.row]
    hp, reason = precision.usable_high_precision(cost, 1, x0, y0)
    if hp is None:
        return False, float(e.depth), None, f"not confirmed in high precision: {reason}"
    field = "dx" if spec.moving == "y" else "dy"
    f_mp = precision.mp_vector(fixed[e.row])
    z0_mp, z1_mp = precision.mp_vector(seg.z0[e.row]), precision.mp_vector(seg.z1[e.row])

    def g(z, dps):
        with mpmath.workdps(dps):
            xs, ys = (f_mp, z) if spec.moving == "y" else (z, f_mp)
            return [-v for v in hp(xs, ys, dps)[field]]

    dps = precision.DPS_REFINE
    with mpmath.workdps(dps):
        try:
            p0, p1 = g(z0_mp, dps), g(z1_mp, dps)
        except precision.HP_ERRORS as exc:
            return False, float(e.depth), None, f"the high-precision evaluation failed ({exc})"
        t = mpmath.mpf(float(e.t_out))
        target = [(1 - t) * a + t * b for a, b in zip(p0, p1)]

        def residual(u):
            return [a - b for a, b in zip(g(u, dps), target)]

        u, norm, _ = precision.mp_newton_solve(residual, precision.mp_vector(e.z_out))
        scale = precision.mp_norm(p0) + precision.mp_norm([b - a for a, b in zip(p0, p1)]) + mpmath.mpf(10) ** -300
        if u is None or not norm <= scale * mpmath.mpf(10) ** (-(dps - 20)):
            return False, float(e.depth), None, "the high-precision Newton solve of the c-segment did not converge"
    val, err = precision.confirm_value(lambda d: section.mp_violation(e.part, u, fixed[e.row], d))
    point = precision.fmt_vec(u, 20)
    if not (mpmath.isfinite(val) and val > err):
        return False, float(e.depth), None, (f"the high-precision point {point} is not outside '{e.part}' beyond "
                                              f"its error ({with_error(val, err, 4)})")
    what = "the region's bounds" if e.part == "region" else f"the constraint '{e.part}'"
    text = (f"the c-segment point at t = {float(e.t_out):.6g} was re-solved with mpmath (Newton at {dps} digits on "
            f"-D c = (1 - t) p0 + t p1, from the exact binary values of the ends and the fixed point, residual "
            f"{precision.fmt(norm, 3)}): {point}; it violates {what} by {with_error(val, err, 8)} "
            f"(evaluated at {precision.DPS_LOW} and {precision.DPS_HIGH} digits; for a constraint g >= 0 the value is -g)")
    return True, float(val), float(err), text


def check_side(ctx, spec: SideSpec) -> Verdict:
    cost = ctx.cost
    n, m = cost.n, cost.m
    if n != m:
        return not_applicable(spec.condition, f"c-segments need n = m (here n = {n}, m = {m}): -D c(x, ·) maps "
                                              "an m-dimensional set into R^n, and its image is not a domain")
    fold = fold_reason(ctx)
    if fold:
        return not_applicable(spec.condition, fold)
    rng = ctx.rng(spec.salt)
    segments, points = segment_budget(ctx.budget)
    section = Section(cost.domain, spec.moving)
    fixed_pts = fixed_points(ctx, spec.fixed, points, rng)
    fixed, z0, z1 = segment_ends(section, fixed_pts, max(2, segments // max(1, fixed_pts.shape[0])), rng)
    if fixed.shape[0] == 0:
        return undecided(spec.condition, f"no pair of points of the {spec.moving}-side sections could be sampled")
    gmap = GradientMap(ctx.evaluator(2), spec.moving)
    diam = section.diameter()
    tol = LEAVE_TOL * diam
    # a continuation may stop once it is clearly outside: the rest of the segment is not needed
    seg = solve_direct(gmap, fixed, z0, z1, np.linspace(0.0, 1.0, STEPS + 1),
                       stop=lambda f, z: section.outside_distance(z, f) > tol)
    times, points_ext = extended_grid(seg)
    out = outside_grid(section, points_ext, fixed)
    exits, leaving = find_exits(gmap, section, seg, fixed, times, points_ext, out, tol,
                                eligible=seg.status != WRONG_END, keep=CONFIRM_TRIES)
    total = fixed.shape[0]
    left = ((np.nan_to_num(out, nan=-np.inf) > tol).any(axis=1)) & (seg.status != WRONG_END)
    followed = seg.solved | left | (seg.status == STOPPED)
    reasons = {STATUS_TEXT[s]: int(np.sum((seg.status == s) & ~left)) for s in np.unique(seg.status)
               if s not in (SOLVED, STOPPED)}
    reasons = {k: v for k, v in reasons.items() if v}
    steps = np.linalg.norm(np.diff(seg.points[seg.solved], axis=1), axis=2)
    resolution = float(np.nanmax(steps)) if steps.size else float("nan")
    details = {"segments": total, "followed": int(followed.sum()), "fixed_points": int(fixed_pts.shape[0]),
               "grid_steps": STEPS, "leave_tolerance": tol, "unfollowed": reasons}
    notes = [f"{v} of {total} c-segments could not be followed: {k}" for k, v in reasons.items()]
    tried = []
    for e in exits:
        ok, value, error, text = confirm_exit(ctx, spec, section, seg, fixed, e)
        if ok:
            return _failed(ctx, spec, seg, fixed, e, value, error, text, details, notes, leaving)
        tried.append(text)
    if exits:
        notes.append(f"{leaving} c-segments left the section in float64, but the deepest "
                     f"{len(exits)} were not confirmed in high precision: " + "; ".join(tried))
        return Verdict(spec.condition, "undecided",
                       Evidence("undecided", "float64 c-segments leave the domain, but no exit was confirmed in high "
                                "precision, so neither verdict is established", samples=total, details=details),
                       value=exits[0].depth / diam, value_meaning=_MEANING, notes=tuple(notes))
    if followed.sum() < MIN_FOLLOWED * total:
        return undecided(spec.condition, f"only {int(followed.sum())} of {total} c-segments could be followed ("
                         + "; ".join(f"{v}: {k}" for k, v in reasons.items()) + "), so c-convexity is not decided",
                         **details)
    worst = float(np.nanmax(out[followed])) if np.isfinite(out[followed]).any() else float("nan")
    summary = (f"all {int(followed.sum())} followed c-segments (from {fixed_pts.shape[0]} fixed {spec.fixed}-points, "
               f"ends mostly on the boundary) stay in the domain at every one of their {STEPS + 1} grid points "
               f"(resolution {resolution:.3g}: largest step between grid points; tolerance {tol:.2g}); excursions "
               "between grid points or shallower than the tolerance are not seen: evidence, not proof")
    return Verdict(spec.condition, "holds",
                   Evidence("sampled", summary, samples=int(followed.sum()), resolution=resolution, details=details),
                   value=worst / diam, value_meaning=_MEANING, notes=tuple(notes))


_MEANING = ("largest estimated distance of a c-segment grid point outside the domain section, divided by the "
            "region's diameter (<= 0: every point inside; the distance to a constraint g >= 0 is -g/|∇g|)")


def _failed(ctx, spec, seg, fixed, e: Exit, value, error, text, details, notes, leaving: int) -> Verdict:
    k = e.row
    z0, z1 = seg.z0[k], seg.z1[k]
    s = spec.moving
    vectors = {f"{s}0": z0.tolist(), f"{s}1": z1.tolist(), f"{s}_exit": np.asarray(e.z_exit).tolist()}
    x = fixed[k] if s == "y" else e.z_out
    y = e.z_out if s == "y" else fixed[k]
    witness = Witness(x=[float(v) for v in x], y=[float(v) for v in y], value=value, error_bound=error,
                      confirmation=text, vectors=vectors, vector_sides={name: s for name in vectors})
    other = spec.fixed
    fmt = lambda v: "(" + ", ".join(f"{float(c):.6g}" for c in v) + ")"  # noqa: E731
    where = "its bounds" if e.part == "region" else f"'{e.part}'"
    summary = (f"{spec.names} is not c-convex: the c-segment w.r.t. {other} = {fmt(fixed[k])} from {s}0 = {fmt(z0)} "
               f"to {s}1 = {fmt(z1)} leaves the domain at t = {e.t_exit:.6g} ({s}_exit = {fmt(e.z_exit)}) and at "
               f"t = {e.t_out:.4g} is at {fmt(e.z_out)}, outside {where}; confirmed in high precision "
               f"({leaving} of {details['segments']} sampled c-segments leave)")
    details = {**details, "t_exit": e.t_exit, "t_outside": e.t_out, "violated": e.part,
               "depth": e.depth, "leaving_segments": leaving}
    return Verdict(spec.condition, "fails", Evidence("refuted", summary, samples=details["segments"], details=details),
                   value=e.depth / Section(ctx.cost.domain, s).diameter(), value_meaning=_MEANING, witness=witness,
                   notes=tuple(notes))
