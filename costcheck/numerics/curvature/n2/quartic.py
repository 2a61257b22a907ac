"""The exact minimum over the circle of a binary quartic form, without eigenvalues.

For ``n = 2`` the A3w margin at a pair is ``min_θ S(θ)`` with

    S(θ) = sum_q p_q cos^{4-q}θ sin^qθ                               (p: N × 5)

(see :mod:`costcheck.numerics.curvature.margins`).  ``S(θ + π) = S(θ)``, so one period ``[-π/4, 3π/4)`` is
covered by two charts, each an angle ``α ∈ [-π/4, π/4]`` with ``u = tan α ∈ [-1, 1]``:

* chart A, ``α = θ``:        ``S = P(u) / (1 + u²)²``,  ``P(u) = sum_q p_q u^q``;
* chart B, ``α = π/2 - θ``:  the same with the coefficients reversed (cos and sin swap).

In a chart ``dS/dα = R(u) / (1 + u²)²`` with ``R(u) = (1 + u²) P'(u) - 4 u P(u)``, a polynomial of
degree at most 4 (the ``u⁵`` terms cancel).  A local minimum of ``S`` is a root where ``R``
changes sign from − to + (the orientation of a chart does not change what a minimum is).

Roots are bracketed on a uniform grid of ``K`` cells of half-width ``w`` in ``u`` and *certified*
by the exact Taylor expansion of the quartic ``R`` about each cell's midpoint ``m``:

* ``|R(m)| > |R'(m)| w + |R''(m)| w²/2 + |R'''(m)| w³/6 + |R''''| w⁴/24`` means the cell holds no
  root of ``R``;
* ``|R'(m)| > |R''(m)| w + |R'''(m)| w²/2 + |R''''| w³/6`` means ``R`` is strictly monotone there:
  at most one root, found by a sign change and polished by Newton's method clipped to the cell.

A pair whose cells are all certified gets the exact minimum (to rounding): the smaller of the
polished local minima (a periodic function's minimum is a critical point) and ``S(−π/4)``.
A pair with an uncertified cell (a double root of ``R``, or ``R`` lost in rounding) is marked, and the caller solves it by the eigenvalue route
(:func:`minimum_by_eigenvalues`, the roots of ``R`` in ``tan θ`` as companion-matrix eigenvalues).
Either way the value returned is ``S`` at a real angle, never below the true minimum.

Everything is written against an array module ``xp`` (``numpy`` or ``jax.numpy``): fixed
shapes and iteration counts, no in-place updates, so the same code runs in a jitted kernel.
This is our own construction from the two elementary bounds above; bracketing a root and
polishing it by Newton's method is textbook (Press et al., *Numerical Recipes*, 3rd ed. 2007, §9.4).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

#: cells per chart (two charts cover one period); more cells certify closer root pairs
CELLS = 16

#: Newton steps per bracketed minimum (quadratic convergence from a regula-falsi start)
NEWTON_STEPS = 4

#: a bound must beat the grid test by this factor, so rounding cannot fake a certificate
_SAFETY = 1.0 + 1e-6


class QuarticMinimum(NamedTuple):
    """Per row: the minimum value, the unit vector ``(cos θ, sin θ)`` where it is attained, and
    whether the value is certified exact (False: the caller must use the eigenvalue route)."""

    value: object
    cos: object
    sin: object
    certified: object


def critical_polynomial(p, xp=np):
    """Ascending coefficients ``r (..., 5)`` of ``R(u) = (1 + u²) P'(u) - 4 u P(u)`` for ``P`` with coefficients ``p``."""
    return xp.stack(_critical([p[..., k] for k in range(5)]), axis=-1)


def _critical(c):
    """The coefficients of ``R`` (a list of 5 arrays) for ``P`` given as a list of 5 arrays."""
    p0, p1, p2, p3, p4 = c
    return [p1, 2 * p2 - 4 * p0, 3 * p3 - 3 * p1, 4 * p4 - 2 * p2, -p3]


def _horner(c, u):
    """``(R(u), R'(u))`` for ascending coefficients ``c`` (a list of 5 arrays) at ``u``."""
    value, slope = c[4], 0.0
    for k in (3, 2, 1, 0):
        slope = slope * u + value
        value = value * u + c[k]
    return value, slope


def _taylor(r, m: float):
    """``R(m), R'(m), R''(m), R'''(m)`` at a number ``m`` (the cell midpoints are constants)."""
    r0, r1, r2, r3, r4 = r
    return (r0 + m * (r1 + m * (r2 + m * (r3 + m * r4))),
            r1 + m * (2 * r2 + m * (3 * r3 + m * 4 * r4)),
            2 * r2 + m * (6 * r3 + m * 12 * r4),
            6 * r3 + m * 24 * r4)


def _newton(r, a, b, xp):
    """The root of ``R`` in ``[a, b]`` with ``R(a) < 0 <= R(b)``, ``R`` monotone there: a
    regula-falsi start, then Newton's method clipped to the cell."""
    ra, rb = _horner(r, a)[0], _horner(r, b)[0]
    u = xp.clip(a - ra * (b - a) / xp.where(rb != ra, rb - ra, 1.0), a, b)
    for _ in range(NEWTON_STEPS):
        value, slope = _horner(r, u)
        u = xp.clip(u - value / xp.where(slope != 0, slope, 1.0), a, b)
    return u


def _settled(r, u, width, xp):
    """Newton's next step from ``u`` is at most ``1e-7`` of the cell.

    Newton's error after a step of size ``δ`` is of order ``δ²`` (quadratic convergence), so the
    root is then good to about ``1e-14`` of the cell, and ``S``, stationary there, to the square
    of that; a pair where Newton did not settle is sent to the eigenvalue route instead.
    """
    value, slope = _horner(r, u)
    return (slope != 0) & (xp.abs(value) <= 1e-7 * width * xp.abs(slope))


def _cells(p, packed, xp):
    """For the first and last cell holding a local minimum: ``(in chart B, left end, P, R)``."""
    columns = [p[:, k] for k in range(5)]
    first, last, count, _ = unpack(packed, xp)
    w = 1.0 / CELLS
    out = []
    for cell in (xp.where(count > 0, first, 0.0), xp.where(count > 0, last, 0.0)):
        in_b = cell >= CELLS
        a = -1.0 + 2.0 * w * (cell - xp.where(in_b, float(CELLS), 0.0))
        P = [xp.where(in_b, q, o) for q, o in zip(columns[::-1], columns)]
        out.append((in_b, a, P, _critical(P)))
    return out


def _chain(combine, items):
    out = items[0]
    for item in items[1:]:
        out = combine(out, item)
    return out


#: the grid stage's four small integers per row travel packed in one float (exact below 2⁵³):
#: ``first + B (last + 1) + B² count + B³ certified`` with ``B = 2K + 1``
_BASE = 2 * CELLS + 1


def unpack(packed, xp=np):
    """``(first, last, count, certified)`` from :func:`bracket`'s packed column.

    ``first`` and ``last`` are the first and last cell holding a local minimum (the cells of
    chart A are 0..K-1, those of chart B K..2K-1), ``count`` how many cells hold one, and
    ``certified`` whether every cell was certified.
    """
    rest, first = xp.divmod(packed, float(_BASE))
    rest, last = xp.divmod(rest, float(_BASE))
    certified, count = xp.divmod(rest, float(_BASE))
    return first, last - 1.0, count, certified > 0.5


def minimum(p, xp=np) -> QuarticMinimum:
    """Exact ``min_θ S(θ)`` for coefficient rows ``p (N, 5)`` (see the module docstring).

    Three stages, :func:`bracket`, :func:`roots` and :func:`choose`; a jitted kernel should
    compile them as separate programs: XLA fuses a producer into each of its consumers, so in
    one program the grid stage and the Newton steps would be recomputed for every output (its
    CPU compiler drops optimisation barriers).
    """
    packed = bracket(p, xp)
    return choose(p, packed, roots(p, packed, xp), xp)


def bracket(p, xp=np):
    """The grid stage: certificates and the cells holding local minima, packed in one column
    (:func:`unpack`).

    Written on whole columns with elementwise operations only (no gathers, no argmin) and with
    a single output, so that a jitted kernel fuses it into one loop (with several outputs XLA
    would recompute the shared cells for each) and numpy works on one short column at a time.
    """
    columns = [p[:, k] for k in range(5)]
    finite = xp.all(xp.isfinite(p), axis=-1)
    w = 1.0 / CELLS

    def node(j):
        return -1.0 + 2.0 * w * j

    covered, downhill, ends = finite, [], None
    for P in (columns, columns[::-1]):            # chart A, then chart B
        r = _critical(P)
        bound4 = xp.abs(24.0 * r[4])
        R = [_horner(r, node(j))[0] for j in range(CELLS + 1)]
        # the charts meet at u = ±1 (θ = ±π/4), where dS/dθ is R_A(u) and −R_B(u) times the same
        # positive factor: chart B takes −R_A there, so rounding cannot give the meeting points
        # two contradictory signs (a minimum there is then caught exactly once)
        if ends is None:
            ends = (R[0], R[CELLS])
        else:
            R[0], R[CELLS] = -ends[0], -ends[1]
        for j in range(CELLS):
            R0, R1, R2, R3 = (xp.abs(v) for v in _taylor(r, node(j + 0.5)))
            rootless = R0 > _SAFETY * (R1 * w + R2 * (w * w / 2) + R3 * (w**3 / 6) + bound4 * (w**4 / 24))
            monotone = R1 > _SAFETY * (R2 * w + R3 * (w * w / 2) + bound4 * (w**3 / 6))
            covered = covered & (rootless | monotone)
            # one local minimum in (a, b]; the closed end catches a minimum on a node or a chart's end
            downhill.append(monotone & (R[j] < 0) & (R[j + 1] >= 0))
    # reductions as chains of elementwise minima, and every index a float: a jitted kernel then
    # fuses the whole function into one vectorised loop (an argmin, or integer division, breaks it)
    count = sum(xp.where(d, 1.0, 0.0) for d in downhill)
    first = _chain(xp.minimum, [xp.where(d, float(k), 2.0 * CELLS) for k, d in enumerate(downhill)])
    last = _chain(xp.maximum, [xp.where(d, float(k), -1.0) for k, d in enumerate(downhill)])
    constant = finite                              # R ≡ 0: S is the same at every angle
    for c in _critical(columns):
        constant = constant & (c == 0)
    # a degree-2 trigonometric polynomial in 2θ has at most two local minima per period (a
    # minimum exactly on a shared chart end counts twice: then the eigenvalue route decides)
    certified = (constant | (covered & (count <= 2))) & finite
    B = float(_BASE)
    return first + B * (last + 1.0) + B * B * count + B**3 * xp.where(certified, 1.0, 0.0)


def roots(p, packed, xp=np):
    """The polishing stage: the roots of ``R`` in the first and last cell holding a local minimum
    (two outputs, each its own chain of Newton steps)."""
    w = 1.0 / CELLS
    return tuple(_newton(r, a, a + 2 * w, xp) for _, a, _, r in _cells(p, packed, xp))


def choose(p, packed, found, xp=np) -> QuarticMinimum:
    """The minimum among ``S(−π/4)`` and ``S`` at the polished roots ``found``."""
    _, _, count, certified = unpack(packed, xp)
    # θ = −π/4 (u = −1 in chart A; the same point as u = −1 in chart B) is the first candidate:
    # it is the one node no cell's closed right end reaches, and the answer when S is constant
    p0, p1, p2, p3, p4 = (p[:, k] for k in range(5))
    value, u, chart = 0.25 * (p0 - p1 + p2 - p3 + p4), xp.zeros_like(p0) - 1.0, xp.zeros_like(p0)
    for (in_b, _, P, r), root in zip(_cells(p, packed, xp), found):
        certified = certified & (_settled(r, root, 2.0 / CELLS, xp) | (count == 0))
        S = xp.where(count > 0, _horner(P, root)[0] / (1 + root * root) ** 2, xp.inf)
        better = S < value
        value, u = xp.where(better, S, value), xp.where(better, root, u)
        chart = xp.where(better, xp.where(in_b, 1.0, 0.0), chart)
    norm = xp.sqrt(1 + u * u)
    # chart A: (cos θ, sin θ) = (1, u)/√(1+u²); chart B (θ = π/2 − α): (u, 1)/√(1+u²)
    cos = xp.where(chart == 0, 1.0, u) / norm
    sin = xp.where(chart == 0, u, 1.0) / norm
    return QuarticMinimum(value, cos, sin, certified)


# --------------------------------------------------------------------------- the eigenvalue route

#: companion matrix of t^4 - 1 (roots ±1, ±i): harmless candidates where the polynomial is unusable
_FALLBACK_COMPANION = np.diag([1.0, 1.0, 1.0], -1)
_FALLBACK_COMPANION[0, 3] = 1.0


def _value(p: np.ndarray, theta: np.ndarray) -> np.ndarray:
    """``S(θ)`` for p (N, 5) and θ (N, K)."""
    c, s = np.cos(theta), np.sin(theta)
    return sum(p[:, q, None] * c ** (4 - q) * s**q for q in range(5))


def minimum_by_eigenvalues(p: np.ndarray) -> QuarticMinimum:
    """``min_θ S(θ)`` (numpy only) from all critical points: the roots of ``R`` in ``t = tan θ`` as
    batched companion-matrix eigenvalues, plus ``θ = π/2`` (``t = ∞``) and ``θ = 0``.

    Slower than :func:`minimum` (a LAPACK call per row), and used where its certificate fails.
    """
    q = critical_polynomial(p)
    N = p.shape[0]
    qmax = np.max(np.abs(q), axis=1)
    lead = q[:, 4].copy()
    # a vanishing leading coefficient sends a root to t = ∞ (θ = π/2, a candidate anyway); a tiny
    # stand-in keeps the companion matrix finite and moves the other roots by O(1e-13) only
    tiny = np.abs(lead) < 1e-13 * qmax
    lead = np.where(tiny, np.where(lead < 0, -1.0, 1.0) * 1e-13 * qmax, lead)
    constant = qmax == 0  # S is constant in θ: any angle is a minimiser
    lead = np.where(constant, 1.0, lead)
    monic = np.where(constant[:, None], np.array([-1.0, 0, 0, 0]), q[:, :4] / lead[:, None])
    comp = np.zeros((N, 4, 4))
    comp[:, 1:, :3] = np.eye(3)
    comp[:, :, 3] = -monic
    ok = np.all(np.isfinite(comp.reshape(N, -1)), axis=1)
    comp[~ok] = _FALLBACK_COMPANION
    roots = np.linalg.eigvals(comp)
    theta = np.concatenate([np.arctan(roots.real), np.full((N, 1), np.pi / 2), np.zeros((N, 1))], axis=1)
    values = _value(p, theta)
    values = np.where(np.isfinite(values), values, np.inf)
    best = np.argmin(values, axis=1)
    rows = np.arange(N)
    t = theta[rows, best]
    return QuarticMinimum(values[rows, best], np.cos(t), np.sin(t), np.ones(N, dtype=bool))


def exact_minimum(p: np.ndarray) -> QuarticMinimum:
    """numpy: :func:`minimum`, with the rows it could not certify redone by :func:`minimum_by_eigenvalues`."""
    p = np.asarray(p, dtype=float)
    with np.errstate(all="ignore"):
        fast = minimum(p)
        return patch_uncertified(p, fast)


def patch_uncertified(p: np.ndarray, fast: QuarticMinimum) -> QuarticMinimum:
    """Replace the uncertified rows of ``fast`` by the eigenvalue route (numpy arrays in and out)."""
    fast = QuarticMinimum(*(np.asarray(a) for a in fast))
    redo = np.flatnonzero(~fast.certified)
    if redo.size == 0:
        return fast
    slow = minimum_by_eigenvalues(p[redo])
    value, cos, sin = fast.value.copy(), fast.cos.copy(), fast.sin.copy()
    # the eigenvalue route and the grid both give S at real angles: keep the smaller
    better = ~(fast.value[redo] <= slow.value)
    take = redo[better]
    value[take], cos[take], sin[take] = slow.value[better], slow.cos[better], slow.sin[better]
    return QuarticMinimum(value, cos, sin, fast.certified)
