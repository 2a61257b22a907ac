"""Twist for ``n = m = 1``: ``y ↦ c_x(x, y)`` injective on ``Y`` for every sampled ``x``.

On a grid of ``Y`` the values ``c_x(x, ·)`` split into strictly monotone runs; two runs with
a common value give a candidate collision (found by ``scipy.optimize.brentq`` in each run),
which :func:`.confirm.confirm_collision` confirms or rejects.  Without a confirmed
collision, sufficient condition (a) is checked on the samples: ``c_xy`` of one sign and
``Y`` an interval.
"""

from __future__ import annotations

import numpy as np

from ...model.verdict import Evidence, Verdict, undecided
from ...numerics import search
from ...numerics.sampling import sample_side
from .confirm import confirm_collision, failed
from .setup import CONDITION, CONFIRM_TRIES, VALUE_MEANING_HOLD_1D, Setup


def monotone_runs(P: np.ndarray, ok: np.ndarray) -> list[tuple[int, int]]:
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


def solve_in_run(f, ys, P, a, b, v):
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
    from scipy.optimize import brentq  # SciPy's optimize package only for one-dimensional costs

    try:
        t = brentq(lambda s: f(s) - v, lo, hi, xtol=1e-15, rtol=1e-15, maxiter=200)
    except (ValueError, RuntimeError):
        return None
    return t, (lo, hi)

def _candidates(st: Setup, x, row, good, grid, spread: float) -> list[tuple]:
    """Candidate collisions ``(y, y', bracket of y', note)`` at one ``x`` from its grid row."""
    K = grid.shape[0]

    def f(t, _x=x):
        dd, okk = st.derivs(_x[None], np.array([[t]]))
        return float(dd.dx[0, 0]) if okk[0] else np.nan

    # equal neighbouring values: a collision already in float
    flat = np.flatnonzero(good[:-1] & good[1:] & (row[:-1] == row[1:]))
    if flat.size:
        j = k = flat[0]
        while k + 1 < K - 1 and good[k + 2] and row[k + 2] == row[j]:
            k += 1  # the whole stretch of equal values: report its two ends
        return [(grid[j], grid[k + 1], None, "c_x(x, ·) is constant on a stretch of the grid")]
    runs = monotone_runs(row, good)
    for ia in range(len(runs)):
        for ib in range(ia + 1, len(runs)):
            (a1, b1), (a2, b2) = runs[ia], runs[ib]
            lo_v = max(row[a1: b1 + 1].min(), row[a2: b2 + 1].min())
            hi_v = min(row[a1: b1 + 1].max(), row[a2: b2 + 1].max())
            if hi_v - lo_v <= 1e-9 * spread:
                continue
            v = 0.5 * (lo_v + hi_v)
            r1 = solve_in_run(f, grid, row, a1, b1, v)
            r2 = solve_in_run(f, grid, row, a2, b2, v)
            if r1 is None or r2 is None:
                continue
            note = ("c_x(x, ·) is not monotone on Y (c_xy changes sign between the two runs)" if a2 == b1
                    else "c_x(x, ·) takes a common value on two separate monotone pieces of Y")
            return [(r1[0], r2[0], r2[1], note)]
    return []


def _holds(st: Setup, C, ok, K: int, nx: int, count: int, step: float, unconfirmed: list[str]) -> Verdict:
    """No collision confirmed: which sufficient condition the samples support, as sampled evidence."""
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
    summary = (f"c_x(x, ·) injective on a grid of {K} points of Y at each of {nx} sampled x "
               f"({count} pairs); {suff}: evidence, not proof")
    return Verdict(CONDITION, "holds",
                   Evidence("sampled", summary, samples=count, resolution=step,
                            details={"x_samples": nx, "y_grid": K, "sufficient_condition": suff,
                                     "min_abs_cxy_over_median": margin}),
                   value=margin, value_meaning=VALUE_MEANING_HOLD_1D, notes=tuple(unconfirmed))


def check_one_dimensional(st: Setup) -> Verdict:
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
        return undecided(CONDITION, "c_x is undefined on every sampled grid point")
    spread = float(np.sqrt(np.mean((P[ok] - np.mean(P[ok])) ** 2))) or 1.0
    attempts = 0
    unconfirmed: list[str] = []
    for i in range(xs.shape[0]):
        if attempts >= CONFIRM_TRIES:
            break
        x = xs[i]
        for y0, y1, bracket, note in _candidates(st, x, P[i], ok[i], grid, spread):
            attempts += 1
            w, status = confirm_collision(st, x, [y0], [y1], spread, extra=f"  ({note}.)", bracket=bracket)
            if w is not None:
                return failed(st, w, f"y ↦ c_x(x, y) is not injective on Y at x = {x[0]:.6g}: {note}", count,
                              {"x_samples": int(xs.shape[0]), "y_grid": K})
            unconfirmed.append(f"at x = {x[0]:.6g}, y = {y0:.6g} and y' = {y1:.6g} look like a collision in "
                               f"float64 but it was not confirmed ({status})")
            break
    return _holds(st, C, ok, K, int(xs.shape[0]), count, float((hi[0] - lo[0]) / (K - 1)), unconfirmed)
