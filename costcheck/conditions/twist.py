"""Twist (A1): for every ``x``, the map ``y ↦ D_x c(x, y)`` is injective on ``Y``.

With an absolutely continuous source, twist makes every optimal plan a map (Gangbo 1995;
Gangbo–McCann, Acta Math. 177, 1996; Levin 1999); in economics it is the generalised
Spence–Mirrlees condition.  A failure has a concrete witness: ``x`` and ``y ≠ y'`` with
``D_x c(x, y) = D_x c(x, y')`` (a *collision*).

``n = m = 1``
------------
Here twist is exactly "``y ↦ c_x(x, y)`` injective on ``Y`` for every ``x``".  For up to 128
sampled ``x`` it is evaluated on a grid of up to 2048 points of ``Y``.  The grid splits into
runs: consecutive grid points inside the domain on which ``c_x`` is strictly monotone.  On
the grid, ``c_x(x, ·)`` is injective iff no two runs take a common value (two runs meeting
at an interior extremum of ``c_x`` always do: the sign change of ``c_xy`` there).  For a common
value ``v`` both equations ``c_x(x, ·) = v`` are solved by ``scipy.optimize.brentq`` on the
bracketing grid cells, the second root is refined by Newton's method in mpmath, and the
collision is confirmed at 50 and 80 digits — together with the opposite signs of
``c_x(x, ·) - c_x(x, y)`` at the ends of its grid cell (intermediate value theorem).
Sufficient condition (a): ``c_xy ≠ 0`` with one sign on every sample and ``Y`` an interval.

General ``n, m``
----------------
For a few hundred sampled ``x`` and a few hundred sampled ``y`` per ``x``, near-collisions
are looked up with a k-d tree (``scipy.spatial.cKDTree``) on the vectors ``D_x c(x, y)``:
the score of a pair is ``(|Δ D_x c| / s_p) / (|Δy| / diam Y)`` with ``s_p`` the RMS spread
of ``D_x c`` over the ``y`` samples, so small scores are pairs far apart in ``y`` and close
in ``D_x c``; random far-apart pairs are added so a curve-like image (``m < n``) is searched
too.  The best 16 pairs (at most two per ``x``) start a least-squares search over ``(x, y, y')``
(a batched Levenberg–Marquardt iteration, :func:`search.batched_least_squares`, all starts in
one derivative evaluation per step — about twenty times faster than calling
``scipy.optimize.least_squares`` start by start) of
``(D_x c(x, y) - D_x c(x, y')) / s_p``, with a penalty keeping ``|y - y'|`` at least half its
starting value.  A result is a witness only if ``|y - y'| ≥ 1e-3 diam Y``, both pairs lie in
the domain, and the residual — after Newton refinement of ``(x, y')`` in mpmath at 110
digits — is below its error estimate at 50/80 digits while ``|D_x c|`` is of order one
relative to it.  Before and after that refinement the point is also snapped to nearby simple
numbers and the collision checked exactly with sympy (then the witness is exact).  A float
collision (residual below ``1e-14``) that high precision can neither confirm nor refute
makes the verdict ``undecided``.  Without a collision the verdict says which sufficient condition holds on
the samples: (b) ``Y`` convex (box or ball with no ``where`` or ``pairs`` constraint) and
the symmetric part of ``Q · D²_{xy}c(x, ·)`` definite for one ``Q`` per ``x`` among ``I``,
``-I`` (``n = m``) and ``M(x, y_c)⁺`` (``y_c`` the centre of ``Y``) — by
``(y - y')ᵀ Q (D_x c(x, y) - D_x c(x, y')) = ∫₀¹ (y - y')ᵀ Q M(x, y_t)(y - y') dt > 0`` along the
segment ``y_t`` from ``y'`` to ``y`` (elementary: the fundamental theorem of calculus; the
condition is the one stated in docs/conditions.md#twist); otherwise "no collision found in
N x-samples × K y-samples and L local searches: evidence, not proof".
"""

from __future__ import annotations

import mpmath
import numpy as np
import sympy as sp
from scipy.optimize import brentq
from scipy.spatial import cKDTree

from ..model.domain import Ball
from ..model.verdict import Evidence, Verdict, Witness
from ..numerics import exact, precision, search
from ..numerics.sampling import sample_side
from .engines import admissible

CONDITION = "twist"
_SALT = 0x7715

#: a float collision residual (relative to the spread of D_x c) below this goes to confirmation
CANDIDATE_RESIDUAL = 1e-6
#: |y - y'| must exceed this fraction of diam Y for a witness
MIN_SEPARATION = 1e-3
LOCAL_STARTS = 16
CONFIRM_TRIES = 3
#: a float collision this close that is neither confirmed nor refuted in high precision makes the verdict undecided
UNRESOLVED = 1e-14

VALUE_MEANING_FAIL = ("|D_x c(x, y) - D_x c(x, y')| at the witness, evaluated in mpmath at the refined point, or 0 "
                      "when the collision was shown exactly with sympy (0 within its error bound: twist fails)")
VALUE_MEANING_HOLD_1D = ("smallest |c_xy| on the samples divided by the median |c_xy| (scale-free; > 0 means "
                         "c_x(x, ·) strictly monotone on every sampled grid)")
VALUE_MEANING_HOLD = ("smallest collision residual |D_x c(x, y) - D_x c(x, y')| / s_p reached by the local "
                      "searches with |y - y'| kept apart (s_p: spread of D_x c over y; 0 would be a collision)")


class _Setup:
    def __init__(self, ctx):
        self.ctx = ctx
        self.cost = ctx.cost
        self.domain = ctx.cost.domain
        self.n, self.m = ctx.cost.n, ctx.cost.m
        self.ev = ctx.evaluator(2)
        self.diam_y = search.region_diameter(self.domain.y) or 1.0
        lo_x, hi_x = self.domain.x.bounds()
        self.width_x = np.where(hi_x - lo_x > 0, hi_x - lo_x, 1.0)
        self._hp = None
        self._hp_reason = None
        self._grad_sym = None
        self.decimals = False

    def derivs(self, xs, ys):
        d = self.ev(xs, ys)
        return d, search.usable(self.domain, d, xs, ys)

    @property
    def hp(self):
        # first derivatives suffice here, and their mpmath form avoids the DiracDelta that a second
        # derivative of abs() brings
        if self._hp is None and self._hp_reason is None:
            sample = self.ctx.sample
            i = int(np.argmax(self.ctx.defined))
            self._hp, self._hp_reason = precision.usable_high_precision(self.cost, 1, sample.xs[i], sample.ys[i])
        return self._hp

    def hp_dx(self, x, y, dps):
        with mpmath.workdps(dps):
            return list(self.hp(x, y, dps)["dx"])

    def hp_residual(self, x, y, yp, dps):
        with mpmath.workdps(dps):
            a, b = self.hp_dx(x, y, dps), self.hp_dx(x, yp, dps)
            return [u - v for u, v in zip(a, b)]


# --------------------------------------------------------------------------- confirmation


def _exact_collision(st: _Setup, x, y, yp, extra: str = "") -> Witness | None:
    """Snap ``(x, y, y')`` to nearby simple numbers and check ``D_x c(x, y) = D_x c(x, y')`` exactly."""
    if st.cost.expr is None:
        return None
    n, m = st.n, st.m
    lo_y, hi_y = st.domain.y.bounds()
    widths = np.concatenate([st.width_x, hi_y - lo_y, hi_y - lo_y])
    xs_sym, ys_sym = st.cost.x_symbols, st.cost.y_symbols
    if st._grad_sym is None:
        expr, st.decimals = exact.exact_expression(st.cost.expr)
        st._grad_sym = [sp.diff(expr, v) for v in xs_sym]
    values = np.concatenate([x, y, yp])
    for point in exact.snap_candidates(values, widths):
        px, py, pyp = point[:n], point[n: n + m], point[n + m:]
        if py == pyp:
            continue
        fx = np.array([float(v) for v in px])
        fy, fyp = np.array([float(v) for v in py]), np.array([float(v) for v in pyp])
        if np.linalg.norm(fy - fyp) < MIN_SEPARATION * st.diam_y:
            continue
        if not st.domain.contains_pairs(np.array([fx, fx]), np.array([fy, fyp])).all():
            continue
        try:
            sub_a = dict(zip(list(xs_sym) + list(ys_sym), list(px) + list(py)))
            sub_b = dict(zip(list(xs_sym) + list(ys_sym), list(px) + list(pyp)))
            a = [g.xreplace(sub_a) for g in st._grad_sym]
            b = [g.xreplace(sub_b) for g in st._grad_sym]
            if any(v.has(sp.nan, sp.zoo, sp.oo, -sp.oo) for v in a + b):
                continue
            if not all(exact.exactly_zero(u - v) for u, v in zip(a, b)):
                continue
        except (TypeError, ValueError, ZeroDivisionError):
            continue
        fmt = lambda vals: "(" + ", ".join(str(v) for v in vals) + ")"  # noqa: E731
        text = (f"D_x c(x, y) = D_x c(x, y') = {fmt(a)} exactly (sympy, exact arithmetic) at the exact point "
                f"x = {fmt(px)}, y = {fmt(py)}, y' = {fmt(pyp)} (|y - y'| = {np.linalg.norm(fy - fyp):.3g}), "
                "obtained by snapping a refined float collision to simple numbers; both pairs are inside the "
                "domain." + ("  Decimal constants of the expression were read as the exact decimals written."
                             if st.decimals else "") + extra)
        return Witness(x=fx.tolist(), y=fy.tolist(), value=0.0, error_bound=0.0, confirmation=text,
                       vectors={"y_prime": fyp.tolist()}, vector_sides={"y_prime": "y"})
    return None


def _confirm_collision(st: _Setup, x, y, yp, scale: float, extra: str = "", bracket=None):
    """Refine ``(x, y')`` in mpmath (``y`` fixed) and confirm the collision.

    Returns ``(witness, "confirmed")`` or ``(None, status)`` with ``status`` one of
    ``"nonzero"`` (Newton settled on a clearly non-zero residual: no collision there),
    ``"boundary"`` (the refinement left the domain or closed in on an open boundary, or
    ``y'`` merged with ``y``) and ``"unresolved"``.
    """
    n = st.n
    x, y, yp = np.asarray(x, float), np.asarray(y, float), np.asarray(yp, float)
    exact = _exact_collision(st, x, y, yp, extra)
    if exact is not None:
        return exact, "confirmed"
    if st.hp is None:
        # no usable high precision (a Python-function cost, or a failing mpmath translation): float64 only
        d, ok = st.derivs(np.array([x, x]), np.array([y, yp]))
        if not ok.all() or admissible.near_open_boundary(st.ctx, np.array([x, x]), np.array([y, yp])):
            return None, "boundary"
        res = float(np.linalg.norm(d.dx[0] - d.dx[1]))
        size = float(max(np.linalg.norm(d.dx[0]), scale))
        if res > 1e-12 * size:
            return None, "unresolved"
        text = (f"|D_x c(x, y) - D_x c(x, y')| = {res:.3g} in float64 with |D_x c| ≈ {size:.3g} and "
                f"|y - y'| = {np.linalg.norm(y - yp):.3g}; not confirmed in high precision ({st._hp_reason})."
                + extra)
        return Witness(x=x.tolist(), y=y.tolist(), value=res, error_bound=1e-15 * size, confirmation=text,
                       vectors={"y_prime": yp.tolist()}, vector_sides={"y_prime": "y"}), "confirmed"
    y_mp = precision.mp_vector(y)

    def residual(u):
        return st.hp_residual(u[:n], y_mp, u[n:], precision.DPS_REFINE)

    project = precision.compose(precision.mp_project_box(st.domain.x, 0), precision.mp_project_box(st.domain.y, n))
    u, _, settled = precision.mp_newton_solve(residual, precision.mp_vector(np.concatenate([x, yp])), project=project)
    if u is None:
        return None, "unresolved"
    xf = np.array([float(v) for v in u[:n]])
    ypf = np.array([float(v) for v in u[n:]])
    if np.linalg.norm(ypf - y) < MIN_SEPARATION * st.diam_y:
        return None, "boundary"
    if admissible.near_open_boundary(st.ctx, np.array([xf, xf]), np.array([y, ypf])):
        return None, "boundary"
    if not st.domain.contains_pairs(np.array([xf, xf]), np.array([y, ypf])).all():
        return None, "unresolved"
    exact = _exact_collision(st, xf, y, ypf, extra)
    if exact is not None:
        return exact, "confirmed"
    val, err = precision.confirm_value(lambda dps: precision.mp_norm(st.hp_residual(u[:n], y_mp, u[n:], dps)))
    with mpmath.workdps(precision.DPS_HIGH):
        size = max(precision.mp_norm(st.hp_dx(u[:n], y_mp, precision.DPS_HIGH)), mpmath.mpf(scale))
    if not (val <= err and err <= size * mpmath.mpf(10) ** -30):
        return None, ("nonzero" if settled and val > err else "unresolved")
    ivt = ""
    if bracket is not None:
        lo, hi = bracket

        def h_at(t):
            return lambda dps: st.hp_residual(u[:n], [mpmath.mpf(float(t))], y_mp, dps)[0]

        va, ea = precision.confirm_value(h_at(lo))
        vb, eb = precision.confirm_value(h_at(hi))
        if abs(va) > ea and abs(vb) > eb and mpmath.sign(va) != mpmath.sign(vb):
            ivt = (f"  Independently of the refinement, c_x(x, t) - c_x(x, y) = {precision.fmt(va, 6)} ± "
                   f"{precision.fmt(ea, 2)} at t = {float(lo):.17g} and {precision.fmt(vb, 6)} ± {precision.fmt(eb, 2)} at "
                   f"t = {float(hi):.17g} (mpmath, 50/80 digits), so a collision partner of y lies between them "
                   "(intermediate value theorem).")
    text = (f"|D_x c(x, y) - D_x c(x, y')| = {precision.fmt(val, 3)} ± {precision.fmt(err, 3)} (mpmath at 50 and 80 digits) "
            f"while |D_x c(x, y)| ≈ {float(size):.3g} and |y - y'| = {np.linalg.norm(ypf - y):.3g}: a collision to "
            f"the working precision.  Exact point: x = {precision.fmt_vec(u[:n], 30)}, y = {precision.fmt_vec(y, 17)} "
            f"(the float itself), y' = {precision.fmt_vec(u[n:], 30)}; (x, y') were refined by Newton's method at "
            f"{precision.DPS_REFINE} digits from the float search, the float coordinates reported are their "
            "rounding." + extra + ivt)
    return Witness(x=xf.tolist(), y=y.tolist(), value=float(val), error_bound=float(err), confirmation=text,
                   vectors={"y_prime": ypf.tolist()}, vector_sides={"y_prime": "y"}), "confirmed"


def _failed(st: _Setup, witness: Witness, summary: str, count: int, details: dict) -> Verdict:
    exact = witness.value == 0.0 and witness.error_bound == 0.0 and "exact arithmetic" in witness.confirmation
    how = ("shown exactly (sympy)" if exact else "confirmed in high precision (mpmath)" if st.hp is not None
           else "seen in float64 only (no symbolic form)")
    summary = f"{summary}; the collision was {how}"
    details = {**details, "method": "exact" if exact else ("high precision" if st.hp is not None else "float64")}
    return Verdict(CONDITION, "fails",
                   Evidence("refuted", summary, samples=count, details=details),
                   value=witness.value, value_meaning=VALUE_MEANING_FAIL, witness=witness)


# --------------------------------------------------------------------------- n = m = 1


def _runs(P: np.ndarray, ok: np.ndarray) -> list[tuple[int, int]]:
    """Maximal index ranges [a, b] of usable grid points on which P is strictly monotone."""
    runs = []
    i, K = 0, P.shape[0]
    while i < K:
        if not ok[i]:
            i += 1
            continue
        j = i
        direction = 0
        while j + 1 < K and ok[j + 1]:
            step = np.sign(P[j + 1] - P[j])
            if step == 0 or (direction and step != direction):
                break
            direction = step
            j += 1
        runs.append((i, j))
        if j == i:
            i += 1
        else:
            i = j  # adjacent runs share the turning point
            if not (j + 1 < K and ok[j + 1]):
                i = j + 1
    return runs


def _solve_in_run(f, ys, P, a, b, v):
    """A root of ``c_x(x, ·) = v`` on the run [a, b] of the grid (brentq on one cell)."""
    g = P[a: b + 1] - v
    hit = np.flatnonzero(g == 0)
    if hit.size:
        t = ys[a + hit[0]]
        return t, (t, t)
    change = np.flatnonzero(np.sign(g[:-1]) != np.sign(g[1:]))
    if not change.size:
        return None
    k = a + change[0]
    lo, hi = ys[k], ys[k + 1]
    try:
        t = brentq(lambda s: f(s) - v, lo, hi, xtol=1e-15, rtol=1e-15, maxiter=200)
    except (ValueError, RuntimeError):
        return None
    return t, (lo, hi)


def _check_1d(st: _Setup) -> Verdict:
    ctx = st.ctx
    budget = ctx.budget
    nx = int(np.clip(budget // 32, 16, 128))
    K = int(np.clip(budget // 4, 256, 2048))
    xs = sample_side(st.domain, "x", 1, nx, ctx.seed + 1)
    lo, hi = st.domain.y.bounds()
    grid = np.linspace(lo[0], hi[0], K)
    X = np.repeat(xs, K, axis=0)
    Y = np.tile(grid, xs.shape[0])[:, None]
    d, ok = st.derivs(X, Y)
    P = d.dx[:, 0].reshape(-1, K)
    C = d.dxy[:, 0, 0].reshape(-1, K)
    ok = ok.reshape(-1, K)
    count = int(ok.sum())
    if count == 0:
        from ..model.verdict import undecided
        return undecided(CONDITION, "c_x is undefined on every sampled grid point")
    spread = float(np.sqrt(np.mean((P[ok] - np.mean(P[ok])) ** 2))) or 1.0
    attempts = 0
    unconfirmed: list[str] = []
    for i in range(xs.shape[0]):
        if attempts >= CONFIRM_TRIES:
            break
        x = xs[i]
        row, good = P[i], ok[i]

        def f(t, _x=x):
            dd, okk = st.derivs(_x[None], np.array([[t]]))
            return float(dd.dx[0, 0]) if okk[0] else np.nan

        # equal neighbouring values: a collision already in float
        flat = np.flatnonzero(good[:-1] & good[1:] & (row[:-1] == row[1:]))
        candidates = []
        if flat.size:
            j = k = flat[0]
            while k + 1 < K - 1 and good[k + 2] and row[k + 2] == row[j]:
                k += 1  # the whole stretch of equal values: report its two ends
            candidates.append((grid[j], grid[k + 1], None, "c_x(x, ·) is constant on a stretch of the grid"))
        else:
            runs = _runs(row, good)
            for ia in range(len(runs)):
                for ib in range(ia + 1, len(runs)):
                    (a1, b1), (a2, b2) = runs[ia], runs[ib]
                    lo_v = max(row[a1: b1 + 1].min(), row[a2: b2 + 1].min())
                    hi_v = min(row[a1: b1 + 1].max(), row[a2: b2 + 1].max())
                    if hi_v - lo_v <= 1e-9 * spread:
                        continue
                    v = 0.5 * (lo_v + hi_v)
                    r1 = _solve_in_run(f, grid, row, a1, b1, v)
                    r2 = _solve_in_run(f, grid, row, a2, b2, v)
                    if r1 is None or r2 is None:
                        continue
                    note = ("c_x(x, ·) is not monotone on Y (c_xy changes sign between the two runs)" if a2 == b1
                            else "c_x(x, ·) takes a common value on two separate monotone pieces of Y")
                    candidates.append((r1[0], r2[0], r2[1], note))
                    break
                if candidates:
                    break
        for y0, y1, bracket, note in candidates:
            attempts += 1
            w, status = _confirm_collision(st, x, [y0], [y1], spread, extra=f"  ({note}.)", bracket=bracket)
            if w is not None:
                return _failed(st, w, f"y ↦ c_x(x, y) is not injective on Y at x = {x[0]:.6g}: {note}", count,
                               {"x_samples": int(xs.shape[0]), "y_grid": K})
            unconfirmed.append(f"at x = {x[0]:.6g}, y = {y0:.6g} and y' = {y1:.6g} look like a collision in "
                               f"float64 but it was not confirmed ({status})")
            break
    # holds on the samples
    cxy = C[ok]
    sign_ok = bool(np.all(cxy > 0) or np.all(cxy < 0))
    median = float(np.median(np.abs(cxy))) or 1.0
    margin = float(np.min(np.abs(cxy)) / median)
    interval = search.region_is_convex(st.domain, "y")
    if sign_ok and interval:
        suff = "sufficient condition (a) holds on the samples: n = m = 1, Y an interval and c_xy ≠ 0 of one sign"
    elif sign_ok:
        suff = ("c_xy ≠ 0 of one sign on the samples, but Y is not a plain interval (constraints), so (a) does "
                "not apply; no two monotone pieces share a value")
    else:
        suff = "no sufficient condition applies"
    summary = (f"c_x(x, ·) injective on a grid of {K} points of Y at each of {xs.shape[0]} sampled x "
               f"({count} pairs); {suff}: evidence, not proof")
    return Verdict(CONDITION, "holds",
                   Evidence("sampled", summary, samples=count, resolution=float((hi[0] - lo[0]) / (K - 1)),
                            details={"x_samples": int(xs.shape[0]), "y_grid": K, "sufficient_condition": suff,
                                     "min_abs_cxy_over_median": margin}),
                   value=margin, value_meaning=VALUE_MEANING_HOLD_1D, notes=tuple(unconfirmed))


# --------------------------------------------------------------------------- general n, m


def _local_searches(st: _Setup, starts: np.ndarray, sp: float) -> tuple[np.ndarray, np.ndarray]:
    """Batched least squares over (x, y, y') from each start row; returns the results and residuals."""
    n, m = st.n, st.m
    q = n + 2 * m
    lo_x, hi_x = search.box_bounds(st.domain.x)
    lo_y, hi_y = search.box_bounds(st.domain.y)
    lower = np.concatenate([lo_x, lo_y, lo_y])
    upper = np.concatenate([hi_x, hi_y, hi_y])
    h = 1e-7 * st.width_x
    E = np.diag(h)
    sep0 = np.linalg.norm(starts[:, n: n + m] - starts[:, n + m:], axis=1)
    delta = np.maximum(0.5 * sep0, 2 * MIN_SEPARATION * st.diam_y)

    def model(U):
        S = U.shape[0]
        X, Y1, Y2 = U[:, :n], U[:, n: n + m], U[:, n + m:]
        Xs = np.concatenate([X[:, None], X[:, None] + E, X[:, None] - E], axis=1)  # (S, 2n+1, n)
        xs = np.concatenate([Xs, Xs], axis=1).reshape(-1, n)
        ys = np.concatenate([np.repeat(Y1[:, None], 2 * n + 1, axis=1),
                             np.repeat(Y2[:, None], 2 * n + 1, axis=1)], axis=1).reshape(-1, m)
        d, ok = st.derivs(xs, ys)
        k = 2 * n + 1
        DX = d.dx.reshape(S, 2, k, n)
        MX = d.dxy.reshape(S, 2, k, n, m)
        okr = ok.reshape(S, 2, k)
        diff = (DX[:, 0] - DX[:, 1]) / sp  # (S, k, n)
        sep = np.linalg.norm(Y1 - Y2, axis=1)
        pen = np.maximum(delta - sep, 0.0) / delta
        bx, gx = search.ball_penalty(st.domain.x, X)
        b1, g1 = search.ball_penalty(st.domain.y, Y1)
        b2, g2 = search.ball_penalty(st.domain.y, Y2)
        r = np.concatenate([diff[:, 0], pen[:, None], bx[:, None], b1[:, None], b2[:, None]], axis=1)
        J = np.zeros((S, n + 4, q))
        both = okr[:, :, 1: n + 1] & okr[:, :, n + 1:]
        jx = (diff[:, 1: n + 1] - diff[:, n + 1:]) / (2 * h[None, :, None])  # (S, i, n)
        J[:, :n, :n] = np.transpose(np.where(np.all(both, axis=1)[:, :, None], jx, 0.0), (0, 2, 1))
        J[:, :n, n: n + m] = MX[:, 0, 0] / sp
        J[:, :n, n + m:] = -MX[:, 1, 0] / sp
        with np.errstate(all="ignore"):
            u = np.where(sep[:, None] > 0, (Y1 - Y2) / sep[:, None], 0.0)
        active = (pen > 0)[:, None]
        J[:, n, n: n + m] = np.where(active, -u / delta[:, None], 0.0)
        J[:, n, n + m:] = np.where(active, u / delta[:, None], 0.0)
        J[:, n + 1, :n] = gx
        J[:, n + 2, n: n + m] = g1
        J[:, n + 3, n + m:] = g2
        okk = okr[:, 0, 0] & okr[:, 1, 0] & np.all(np.isfinite(r), axis=1) & np.all(np.isfinite(J), axis=(1, 2))
        return np.where(np.isfinite(r), r, 0.0), np.where(np.isfinite(J), J, 0.0), okk

    U, cost = search.batched_least_squares(model, starts, lower, upper, iterations=60)
    for i in range(U.shape[0]):
        U[i, :n] = search.clip_into(st.domain.x, U[i, :n])
        U[i, n: n + m] = search.clip_into(st.domain.y, U[i, n: n + m])
        U[i, n + m:] = search.clip_into(st.domain.y, U[i, n + m:])
    return U, cost


def _sufficient_b(st: _Setup, xs, Ys, M, ok) -> tuple[str | None, float]:
    """Sufficient condition (b) on the samples; returns (description or None, best scale-free margin)."""
    if not search.region_is_convex(st.domain, "y"):
        return None, float("nan")
    n, m = st.n, st.m
    nx = xs.shape[0]
    yc = np.asarray(st.domain.y.center if isinstance(st.domain.y, Ball)
                    else 0.5 * (np.asarray(st.domain.y.lower) + np.asarray(st.domain.y.upper)), float)
    dc, okc = st.derivs(xs, np.repeat(yc[None], nx, axis=0))
    Qs = {}
    if n == m:
        Qs["Q = I"] = np.broadcast_to(np.eye(n), (nx, n, n))
        Qs["Q = -I"] = np.broadcast_to(-np.eye(n), (nx, n, n))
    if okc.all():
        with np.errstate(all="ignore"):
            try:
                Qs["Q = M(x, y_c)⁺ (y_c the centre of Y, one Q per x)"] = np.linalg.pinv(dc.dxy)
            except np.linalg.LinAlgError:
                pass
    best_name, best_margin = None, -np.inf
    for name, Q in Qs.items():
        QM = np.einsum("xmn,xknl->xkml", Q, M)  # (nx, K, m, m)
        sym = 0.5 * (QM + np.swapaxes(QM, -1, -2))
        valid = ok & np.all(np.isfinite(sym), axis=(-1, -2))
        if not valid.any():
            continue
        lam = np.linalg.eigvalsh(np.where(valid[..., None, None], sym, 0.0))
        norm = np.sqrt(np.sum(np.where(valid[..., None, None], QM, 0.0) ** 2, axis=(-2, -1)))
        with np.errstate(all="ignore"):
            margin = np.where(valid & (norm > 0), lam[..., 0] / norm, np.inf)
        value = float(np.min(margin))
        if value > best_margin:
            best_name, best_margin = name, value
    if best_name is not None and best_margin > 0:
        return best_name, best_margin
    return None, best_margin


def _check_general(st: _Setup) -> Verdict:
    ctx = st.ctx
    n, m = st.n, st.m
    budget = ctx.budget
    nx = int(np.clip(budget // 16, 32, 256))
    K = int(np.clip(budget // 16, 64, 256))
    xs = sample_side(st.domain, "x", n, nx, ctx.seed + 1)
    ypool = sample_side(st.domain, "y", m, K, ctx.seed + 2)
    nx, K = xs.shape[0], ypool.shape[0]
    X = np.repeat(xs, K, axis=0)
    Y = np.tile(ypool, (nx, 1))
    d, ok = st.derivs(X, Y)
    P = d.dx.reshape(nx, K, n)
    M = d.dxy.reshape(nx, K, n, m)
    ok = ok.reshape(nx, K)
    count = int(ok.sum())
    if count == 0:
        from ..model.verdict import undecided
        return undecided(CONDITION, "D_x c is undefined on every sampled pair")
    Pz = np.where(ok[..., None], P, 0.0)
    means = Pz.sum(axis=1) / np.maximum(ok.sum(axis=1), 1)[:, None]
    dev = np.where(ok[..., None], P - means[:, None], 0.0)
    sp = float(np.sqrt(np.sum(dev**2) / count))
    size = float(np.sqrt(np.mean(np.sum(P[ok] ** 2, axis=1))))
    if sp <= 1e-14 * max(size, 1e-300):
        sp = max(size, 1.0)  # D_x c does not depend on y at all: any two y collide
    min_sep = 0.05 * st.diam_y

    # near-collisions: k nearest neighbours in D_x c space among the y samples of the same x.  One
    # k-d tree serves every x: each x's points are shifted along an extra axis far beyond the spread.
    cands = []  # (score, i, j, j2)
    rows_i, rows_j = np.nonzero(ok)
    Pn = P[rows_i, rows_j] / sp
    extent = float(np.max(np.abs(Pn))) if Pn.size else 1.0
    kq = min(8, K)
    if Pn.shape[0] >= 2:
        tree = cKDTree(np.concatenate([Pn, (rows_i * (4 * extent + 10.0))[:, None]], axis=1))
        dist, nb = tree.query(np.concatenate([Pn, (rows_i * (4 * extent + 10.0))[:, None]], axis=1),
                              k=min(kq, Pn.shape[0]))
        nb = np.minimum(nb, Pn.shape[0] - 1)
        same = rows_i[nb] == rows_i[:, None]
        dy = np.linalg.norm(ypool[rows_j][:, None, :] - ypool[rows_j[nb]], axis=-1)
        with np.errstate(all="ignore"):
            score = np.where(same & (dy >= min_sep), dist / (dy / st.diam_y), np.inf)
        best = np.argmin(score, axis=1)
        sbest = score[np.arange(score.shape[0]), best]
        for t in np.argsort(sbest, kind="stable")[: 4 * LOCAL_STARTS]:
            if np.isfinite(sbest[t]):
                cands.append((float(sbest[t]), int(rows_i[t]), int(rows_j[t]), int(rows_j[nb[t, best[t]]])))
    # random far-apart pairs too, so that a curve-like image (m < n) still gets local searches
    rng = ctx.rng(_SALT)
    ja, jb = rng.integers(0, K, size=(2, nx, 4))
    ii = np.repeat(np.arange(nx), 4)
    ja, jb = ja.ravel(), jb.ravel()
    dyab = np.linalg.norm(ypool[ja] - ypool[jb], axis=1)
    keep = ok[ii, ja] & ok[ii, jb] & (dyab >= min_sep)
    with np.errstate(all="ignore"):
        rscore = np.linalg.norm(P[ii, ja] - P[ii, jb], axis=1) / sp / (dyab / st.diam_y)
    for t in np.flatnonzero(keep & np.isfinite(rscore)):
        cands.append((float(rscore[t]), int(ii[t]), int(ja[t]), int(jb[t])))
    cands.sort(key=lambda c: c[0])
    chosen, per_x = [], {}
    for c in cands:  # at most two starts per x, so the searches are spread out
        if len(chosen) >= LOCAL_STARTS:
            break
        if per_x.get(c[1], 0) < 2:
            per_x[c[1]] = per_x.get(c[1], 0) + 1
            chosen.append(c)
    searches = len(chosen)
    best_res = float("nan")
    unresolved = None
    if chosen:
        starts = np.array([np.concatenate([xs[i], ypool[j], ypool[j2]]) for _, i, j, j2 in chosen])
        U, _ = _local_searches(st, starts, sp)
        Xr, Y1, Y2 = U[:, :n], U[:, n: n + m], U[:, n + m:]
        dd, okd = st.derivs(np.concatenate([Xr, Xr]), np.concatenate([Y1, Y2]))
        S = U.shape[0]
        res = np.linalg.norm(dd.dx[:S] - dd.dx[S:], axis=1) / sp
        sep = np.linalg.norm(Y1 - Y2, axis=1)
        valid = okd[:S] & okd[S:]
        res = np.where(valid, res, np.inf)
        apart = sep >= MIN_SEPARATION * st.diam_y
        finite = res[apart & valid]
        best_res = float(np.min(finite)) if finite.size else float("nan")
        order = np.argsort(np.where(apart, res, np.inf), kind="stable")
        tries = 0
        for s in order:
            if tries >= CONFIRM_TRIES or not (apart[s] and res[s] < CANDIDATE_RESIDUAL):
                break
            tries += 1
            w, status = _confirm_collision(st, Xr[s], Y1[s], Y2[s], sp)
            if w is not None:
                return _failed(st, w, "y ↦ D_x c(x, y) is not injective: two distinct y with the same D_x c, "
                                      "found by a local search", count,
                               {"x_samples": nx, "y_samples": K, "local_searches": searches})
            if status == "unresolved" and res[s] < UNRESOLVED:
                unresolved = (float(res[s]), Xr[s], Y1[s], Y2[s])
        if unresolved is not None:
            r0, xu, yu, ypu = unresolved
            where = {"x": xu.tolist(), "y": yu.tolist(), "y_prime": ypu.tolist()}
            return Verdict(CONDITION, "undecided",
                           Evidence("undecided", f"a collision to float precision (residual {r0:.3g} relative to the "
                                    f"spread of D_x c) at {where} could be neither confirmed in high precision nor "
                                    "shown to be a non-zero minimum", samples=count,
                                    details={"x_samples": nx, "y_samples": K, "local_searches": searches,
                                             "where": where}),
                           value=r0, value_meaning=VALUE_MEANING_HOLD)

    name, margin = _sufficient_b(st, xs, ypool, M, ok)
    if name is not None:
        suff = (f"sufficient condition (b) holds on the samples: Y convex and the symmetric part of Q·D²_xy c(x, ·) "
                f"positive definite with {name} (smallest λ_min(sym QM)/|QM|_F {margin:.3g})")
    else:
        suff = "no sufficient condition applies" if not search.region_is_convex(st.domain, "y") else \
            "sufficient condition (b) was tried (Q = ±I, Q = M(x, y_c)⁺) and is not met on the samples"
    summary = (f"no collision found in {nx} x-samples × {K} y-samples and {searches} local searches; {suff}: "
               "evidence, not proof")
    lo_y, hi_y = st.domain.y.bounds()
    resolution = float((np.prod(hi_y - lo_y) / max(K, 1)) ** (1.0 / m))
    return Verdict(CONDITION, "holds",
                   Evidence("sampled", summary, samples=count, resolution=resolution, details={
                       "x_samples": nx, "y_samples": K, "local_searches": searches, "sufficient_condition": suff,
                       "min_collision_residual": best_res}),
                   value=best_res if np.isfinite(best_res) else None, value_meaning=VALUE_MEANING_HOLD)


def check(ctx) -> Verdict:
    st = _Setup(ctx)
    if st.n == 1 and st.m == 1:
        return _check_1d(st)
    return _check_general(st)
