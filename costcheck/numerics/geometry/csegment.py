"""c-segments: the curves along which ``-D_x c(x, ·)`` moves on a straight line.

For a cost ``c`` (minimised) and a fixed source point ``x``, the **c-segment** from ``y0`` to
``y1`` with respect to ``x`` is ``t ↦ y_t``, ``t ∈ [0, 1]``, with

    -D_x c(x, y_t) = (1 - t) p0 + t p1,      p_i = -D_x c(x, y_i)

(Ma, Trudinger & Wang, ARMA 177, 2005, §2; Loeper, Acta Math. 202, 2009, Def. 2.6; twist
makes ``y_t`` unique and non-degeneracy makes it a smooth curve).  The **dual** segment in
``x`` for a fixed ``y`` solves ``-D_y c(x_s, y) = (1 - s) q0 + s q1``.

Both are solved here by Newton's method on ``r(z) = g(z) - p_t`` (``g`` the gradient map,
``J = Dg`` the mixed Hessian up to sign and transpose) with **continuation in t**: the
solution at one grid value is carried to the next by the tangent predictor
``z + Δt J⁻¹ (p1 - p0)`` and corrected by damped Newton steps; a step that does not
converge is retried in halves (down to :data:`MIN_STEP`).  Everything is batched over many
``(fixed, z0, z1)`` rows with numpy: one derivative evaluation per Newton iteration for all
rows.

A row that cannot be followed stops with a status saying why (:data:`STATUS_TEXT`):
the cost or a derivative is not finite (the curve left the cost's domain of definition),
the Jacobian is singular (non-degeneracy fails, so the segment is not a smooth curve), or
Newton did not converge even with small steps (typically because twist fails: ``g`` is
not injective and the straight line in ``p`` leaves ``g``'s image or folds back).  The
caller decides about the *domain* (a solved point may well lie outside ``Y``: that is
exactly what a c-convexity check looks for).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ...errors import UsageError

SOLVED, UNDEFINED, SINGULAR, NO_CONVERGENCE, WRONG_END, STOPPED = 0, 1, 2, 3, 4, 5

STATUS_TEXT = {
    SOLVED: "solved",
    UNDEFINED: "the cost or its derivatives are not finite on the way (the c-segment leaves the cost's "
               "domain of definition)",
    SINGULAR: "the mixed Hessian is singular on the way (non-degeneracy fails there)",
    NO_CONVERGENCE: "Newton's method did not converge even with small continuation steps (twist may fail: "
                    "the straight line in -D c leaves the image of the gradient map or folds back)",
    WRONG_END: "the continuation from the first end arrives at another point with the same gradient as the "
               "second end (twist fails: the c-segment between them is not defined)",
    STOPPED: "stopped at the caller's request (e.g. once it has left the domain)",
}

#: Newton stops when |g(z) - p_t| <= RESIDUAL_TOL * (|p0| + |p1 - p0| + tiny)
RESIDUAL_TOL = 1e-12
#: |det J| / ‖J‖_F^d below this is singular (see :func:`_solve_linear`)
SINGULAR_RCOND = 1e-12
#: smallest continuation step before a row is given up
MIN_STEP = 1.0 / 1024
NEWTON_ITERATIONS = 12
#: a row gives up a grid interval after this many halvings of its step
MAX_FAILURES = 6
#: the continuation must end within ARRIVAL_TOL · (1 + |z1|) of z1
ARRIVAL_TOL = 1e-7


@dataclass(frozen=True)
class GradientMap:
    """``z ↦ g(z) = -D_{fixed side} c`` with its Jacobian, for one moving side.

    ``moving="y"``: c-segments in ``Y`` w.r.t. a fixed ``x`` (``g = -D_x c``, ``J = -D²_xy c``);
    ``moving="x"``: dual segments in ``X`` w.r.t. a fixed ``y`` (``g = -D_y c``, ``J = -(D²_xy c)ᵀ``).
    ``evaluator`` is a :class:`~costcheck.derivatives.Evaluator` of order ≥ 2.
    """

    evaluator: object
    moving: str

    def __post_init__(self):
        if self.moving not in ("x", "y"):
            raise UsageError(f"the moving side of a c-segment is 'x' or 'y', not {self.moving!r}")
        if getattr(self.evaluator, "order", 2) < 2:
            raise UsageError("c-segments need second derivatives: use an evaluator of order >= 2")
        if self.evaluator.n != self.evaluator.m:
            raise UsageError(f"c-segments need n = m (here n = {self.evaluator.n}, m = {self.evaluator.m})")

    def pair(self, fixed: np.ndarray, moving: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The ``(xs, ys)`` arrays for the evaluator."""
        return (fixed, moving) if self.moving == "y" else (moving, fixed)

    def __call__(self, fixed: np.ndarray, moving: np.ndarray):
        """``(g (K, d), J (K, d, d), value (K,), finite (K,))`` at the rows."""
        d = self.evaluator(*self.pair(fixed, moving))
        if self.moving == "y":
            g, J = -d.dx, -d.dxy
        else:
            g, J = -d.dy, -np.transpose(d.dxy, (0, 2, 1))
        finite = (np.isfinite(g).all(axis=1) & np.isfinite(J).reshape(J.shape[0], -1).all(axis=1)
                  & np.isfinite(d.value))
        return g, J, d.value, finite


@dataclass(frozen=True)
class Segments:
    """Solved c-segments: ``points[k, i]`` is ``z_t`` at ``ts[i]`` for row ``k`` (NaN after a failure)."""

    ts: np.ndarray
    points: np.ndarray
    #: per row: SOLVED or the reason it stopped
    status: np.ndarray
    #: per row: index of the first grid value that could not be reached (-1 when solved)
    failed_at: np.ndarray
    #: the straight line in gradient space: g at the two ends, (K, d) each
    p0: np.ndarray
    p1: np.ndarray
    #: the requested ends (the solved ``points[:, -1]`` equals ``z1`` only up to Newton's tolerance)
    z0: np.ndarray
    z1: np.ndarray
    #: the furthest t each row reached and the point there (t = 1 and the end for solved rows)
    reached_t: np.ndarray
    reached: np.ndarray

    @property
    def solved(self) -> np.ndarray:
        return self.status == SOLVED


def _solve_linear(J: np.ndarray, r: np.ndarray, ok: np.ndarray):
    """``J⁻¹ r`` per row, and a mask of rows whose ``J`` is numerically invertible.

    Invertible means ``|det J| > SINGULAR_RCOND · ‖J‖_F^d`` (for d = 1, 2, 3 a cheap stand-in
    for ``σ_min / σ_max``, within a factor ``d^(d/2)``).
    """
    d = J.shape[1]
    safe = np.where(ok[:, None, None], J, np.eye(d))
    det = np.linalg.det(safe)
    size = np.sqrt(np.einsum("kij,kij->k", safe, safe))
    regular = ok & np.isfinite(det) & (np.abs(det) > SINGULAR_RCOND * size ** d) & (size > 0)
    safe = np.where(regular[:, None, None], safe, np.eye(d))
    return np.linalg.solve(safe, r[:, :, None])[:, :, 0], regular


def newton(gmap: GradientMap, fixed, z, target, scale, *, iterations: int = NEWTON_ITERATIONS):
    """Damped Newton for ``g(fixed, z) = target`` on every row at once.

    Returns ``(z, status, J)`` (``J`` the Jacobian at the returned ``z``); ``status`` is SOLVED, UNDEFINED (non-finite along the way, also
    at the start), SINGULAR or NO_CONVERGENCE per row.  Each step is halved up to four times
    until the residual decreases (a backtracking line search on ``|r|``).
    """
    z = np.array(z, dtype=float)
    K = z.shape[0]
    status = np.full(K, NO_CONVERGENCE)
    tol = RESIDUAL_TOL * scale
    g, J, _, finite = gmap(fixed, z)
    status[~finite] = UNDEFINED
    r = g - target
    norm = np.where(finite, np.linalg.norm(r, axis=1), np.inf)
    active = finite.copy()
    done = active & (norm <= tol)
    status[done] = SOLVED
    active &= ~done
    for _ in range(iterations):
        if not active.any():
            break
        rows = np.flatnonzero(active)
        step, regular = _solve_linear(J[rows], r[rows], np.ones(rows.size, bool))
        status[rows[~regular]] = SINGULAR
        active[rows[~regular]] = False
        rows, step = rows[regular], step[regular]
        lam = np.ones(rows.size)
        pending = np.ones(rows.size, bool)
        for _ in range(5):
            if not pending.any():
                break
            idx = np.flatnonzero(pending)
            trial = z[rows[idx]] - lam[idx, None] * step[idx]
            g2, J2, _, fin2 = gmap(fixed[rows[idx]], trial)
            r2 = g2 - target[rows[idx]]
            n2 = np.where(fin2, np.linalg.norm(r2, axis=1), np.inf)
            good = n2 < norm[rows[idx]]
            take = rows[idx[good]]
            z[take], r[take], J[take], norm[take] = trial[good], r2[good], J2[good], n2[good]
            pending[idx[good]] = False
            lam[idx[~good]] *= 0.5
        stuck = rows[pending]
        active[stuck] = False  # no decrease even with a 1/16 step: not converging from here
        converged = active & (norm <= tol)
        status[converged] = SOLVED
        active &= ~converged
    return z, status, J


def _advance(gmap, fixed, z, t_from, t_to, p0, p1, J_dir, scale):
    """Carry rows from ``t_from`` to ``t_to`` (arrays per row): tangent predictor, Newton corrector."""
    dt = (t_to - t_from)[:, None]
    guess = z + dt * J_dir
    target = (1 - t_to)[:, None] * p0 + t_to[:, None] * p1
    return newton(gmap, fixed, guess, target, scale)


def solve_segments(gmap: GradientMap, fixed, z0, z1, ts=None, *, steps: int = 16, stop=None) -> Segments:
    """c-segments from ``z0`` to ``z1`` (rows of shape ``(K, d)``) w.r.t. ``fixed`` ``(K, d)``.

    ``ts`` is an increasing grid from 0 to 1 (default ``steps + 1`` equal steps).  Rows whose
    ends are undefined fail at index 0.  A row whose continuation arrives at ``t = 1`` somewhere
    else than ``z1`` has status WRONG_END: two points share the same gradient, so twist fails.
    For a row that stops, ``reached_t`` / ``reached`` give the furthest point it did reach.
    ``stop(fixed_rows, points) -> mask`` (optional) ends rows early once a grid point is
    reached where the caller has seen enough (status STOPPED, the points so far are kept).
    """
    fixed, z0, z1 = (np.atleast_2d(np.asarray(a, dtype=float)) for a in (fixed, z0, z1))
    if not (fixed.shape == z0.shape == z1.shape):
        raise UsageError(f"c-segment rows must have equal shapes; got {fixed.shape}, {z0.shape}, {z1.shape}")
    ts = np.linspace(0.0, 1.0, steps + 1) if ts is None else np.asarray(ts, dtype=float)
    if ts.ndim != 1 or ts.size < 2 or ts[0] != 0.0 or ts[-1] != 1.0 or np.any(np.diff(ts) <= 0):
        raise UsageError("the t grid of a c-segment must increase from 0 to 1")
    K, d = z0.shape
    T = ts.size
    points = np.full((K, T, d), np.nan)
    status = np.full(K, SOLVED)
    failed_at = np.full(K, -1)
    p0, J0, _, ok0 = gmap(fixed, z0)
    p1, _, _, ok1 = gmap(fixed, z1)
    bad = ~(ok0 & ok1)
    status[bad], failed_at[bad] = UNDEFINED, 0
    p0 = np.where(bad[:, None], 0.0, p0)
    p1 = np.where(bad[:, None], 0.0, p1)
    scale = np.linalg.norm(p0, axis=1) + np.linalg.norm(p1 - p0, axis=1) + 1e-300
    points[:, 0] = z0
    z = z0.copy()
    J = J0
    reached_t = np.zeros(K)
    alive = ~bad
    for i in range(1, T):
        rows = np.flatnonzero(alive)
        if rows.size == 0:
            break
        width = ts[i] - ts[i - 1]
        t_now = np.full(rows.size, ts[i - 1])
        zr, Jr = z[rows].copy(), J[rows]
        reason = np.full(rows.size, SOLVED)
        # each row walks from ts[i-1] to ts[i], halving its step on failure (at most MAX_FAILURES times)
        h = np.full(rows.size, width)
        failures = np.zeros(rows.size, int)
        walking = np.ones(rows.size, bool)
        while walking.any():
            idx = np.flatnonzero(walking)
            direction, regular = _solve_linear(Jr[idx], (p1 - p0)[rows[idx]], np.ones(idx.size, bool))
            t_to = np.minimum(t_now[idx] + h[idx], ts[i])
            znew, st, Jnew = _advance(gmap, fixed[rows[idx]], zr[idx], t_now[idx], t_to,
                                      p0[rows[idx]], p1[rows[idx]], np.where(regular[:, None], direction, 0.0),
                                      scale[rows[idx]])
            ok = st == SOLVED
            good = idx[ok]
            zr[good], t_now[good], Jr[good] = znew[ok], t_to[ok], Jnew[ok]
            h[good] = np.minimum(2 * h[good], width)
            failed = idx[~ok]
            h[failed] *= 0.5
            failures[failed] += 1
            give_up = (h[failed] < MIN_STEP) | (failures[failed] >= MAX_FAILURES)
            reason[failed[give_up]] = st[~ok][give_up]
            walking[failed[give_up]] = False
            walking[good[t_now[good] >= ts[i]]] = False
        done = reason == SOLVED
        z[rows], J[rows], reached_t[rows] = zr, Jr, t_now
        points[rows[done], i] = zr[done]
        lost = rows[~done]
        status[lost], failed_at[lost] = reason[~done], i
        alive[lost] = False
        if stop is not None and done.any():
            ended = rows[done][np.asarray(stop(fixed[rows[done]], zr[done]), bool)]
            if i < T - 1:
                status[ended], alive[ended] = STOPPED, False
    arrived = status == SOLVED
    miss = np.linalg.norm(points[:, -1] - z1, axis=1) > ARRIVAL_TOL * (1 + np.linalg.norm(z1, axis=1))
    status[arrived & miss] = WRONG_END
    return Segments(ts, points, status, failed_at, p0, p1, z0, z1, reached_t, z)


def solve_at(gmap: GradientMap, fixed, start, t_start, t_target, p0, p1):
    """``z_t`` at ``t_target`` (per row) by one continuation step from a solved ``start`` at ``t_start``.

    Used to bisect exit times: the start is a nearby solved point, so one predictor-corrector
    step suffices.  Returns ``(z, status, J)``.
    """
    fixed, start, p0, p1 = (np.atleast_2d(np.asarray(a, float)) for a in (fixed, start, p0, p1))
    t_start, t_target = np.asarray(t_start, float), np.asarray(t_target, float)
    _, J, _, ok = gmap(fixed, start)
    direction, regular = _solve_linear(J, p1 - p0, ok)
    scale = np.linalg.norm(p0, axis=1) + np.linalg.norm(p1 - p0, axis=1) + 1e-300
    return _advance(gmap, fixed, start, t_start, t_target, p0, p1,
                    np.where(regular[:, None], direction, 0.0), scale)


def solve_direct(gmap: GradientMap, fixed, z0, z1, ts, *, stop=None, fallback: bool = True) -> Segments:
    """The same c-segments as :func:`solve_segments`, solved at every grid value at once.

    Each ``z_t`` is found by Newton from the blend of the two ends' linear predictions,
    ``(1 - t)(z0 + J0⁻¹(p_t - p0)) + t (z1 + J1⁻¹(p_t - p1))``: a few batched evaluations for
    the whole grid instead of a sweep along it.  Where twist holds along the segment the
    solution is unique, so a converged point is the continuation's point; rows where any grid
    value does not converge, or whose steps stray from the tangent prediction, are re-done by
    continuation (:func:`solve_segments`, with ``stop``) unless ``fallback`` is false (then they
    are left with status NO_CONVERGENCE: cheaper, for searches that may simply skip them).
    """
    fixed, z0, z1 = (np.atleast_2d(np.asarray(a, dtype=float)) for a in (fixed, z0, z1))
    ts = np.asarray(ts, dtype=float)
    K, d = z0.shape
    T = ts.size
    p0, J0, _, ok0 = gmap(fixed, z0)
    p1, J1, _, ok1 = gmap(fixed, z1)
    ends = ok0 & ok1
    p0 = np.where(ends[:, None], p0, 0.0)
    p1 = np.where(ends[:, None], p1, 0.0)
    tt = ts[None, :, None]
    pt = (1 - tt) * p0[:, None] + tt * p1[:, None]  # (K, T, d)
    s0, r0 = _solve_linear(np.repeat(J0, T, axis=0), (pt - p0[:, None]).reshape(-1, d), np.repeat(ends, T))
    s1, r1 = _solve_linear(np.repeat(J1, T, axis=0), (pt - p1[:, None]).reshape(-1, d), np.repeat(ends, T))
    w = np.repeat(ts[None, :], K, axis=0).reshape(-1, 1)
    guess = (1 - w) * (np.repeat(z0, T, axis=0) + s0) + w * (np.repeat(z1, T, axis=0) + s1)
    scale = np.repeat(np.linalg.norm(p0, axis=1) + np.linalg.norm(p1 - p0, axis=1) + 1e-300, T)
    rows = np.repeat(ends, T) & r0 & r1
    z = np.full((K * T, d), np.nan)
    st = np.full(K * T, NO_CONVERGENCE)
    Jt = np.full((K * T, d, d), np.nan)
    if rows.any():
        z[rows], st[rows], Jt[rows] = newton(gmap, np.repeat(fixed, T, axis=0)[rows], guess[rows],
                                             pt.reshape(-1, d)[rows], scale[rows])
    points = z.reshape(K, T, d)
    points[:, 0], points[:, -1] = z0, z1
    solved = (st.reshape(K, T) == SOLVED)[:, 1:-1].all(axis=1) & ends
    # continuity: each step must be close to the tangent prediction J⁻¹ (p1 - p0) Δt at its start,
    # so that no grid value was solved on another branch of a non-injective gradient map
    Jt = Jt.reshape(K, T, d, d)
    Jt[:, 0] = J0
    tangent, _ = _solve_linear(np.where(solved[:, None, None, None], Jt[:, :-1], np.eye(d)).reshape(-1, d, d),
                               np.repeat(p1 - p0, T - 1, axis=0), np.repeat(solved, T - 1))
    predicted = tangent.reshape(K, T - 1, d) * np.diff(ts)[None, :, None]
    actual = np.diff(points, axis=1)
    off = np.linalg.norm(actual - predicted, axis=2) > 0.5 * np.linalg.norm(predicted, axis=2) + 1e-12
    solved &= ~np.where(np.isfinite(off), off, True).any(axis=1)
    reached_t = np.where(solved, 1.0, 0.0)
    out = Segments(ts, points, np.where(solved, SOLVED, NO_CONVERGENCE), np.where(solved, -1, 0), p0, p1, z0, z1,
                   reached_t, np.where(solved[:, None], z1, z0))
    redo = np.flatnonzero(~solved)
    if redo.size == 0 or not fallback:
        return out
    again = solve_segments(gmap, fixed[redo], z0[redo], z1[redo], ts, stop=stop)
    points[redo] = again.points
    status, failed_at = out.status.copy(), out.failed_at.copy()
    status[redo], failed_at[redo] = again.status, again.failed_at
    reached, reached_t = out.reached.copy(), out.reached_t.copy()
    reached[redo], reached_t[redo] = again.reached, again.reached_t
    return Segments(ts, points, status, failed_at, p0, p1, z0, z1, reached_t, reached)
