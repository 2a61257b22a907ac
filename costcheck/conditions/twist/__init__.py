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

Modules
-------
:mod:`.setup` (constants, :class:`~.setup.Setup`), :mod:`.confirm` (exact and high-precision
confirmation of a collision), :mod:`.one_dimensional`, :mod:`.general` (its steps),
:mod:`.local_search` and :mod:`.sufficient` (condition (b)).
"""

from __future__ import annotations

from ...model.verdict import Verdict
from .general import check_general
from .one_dimensional import check_one_dimensional
from .setup import CONDITION, Setup

__all__ = ["CONDITION", "check"]


def check(ctx) -> Verdict:
    st = Setup(ctx)
    if st.n == 1 and st.m == 1:
        return check_one_dimensional(st)
    return check_general(st)
