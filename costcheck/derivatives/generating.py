"""The derivative fields of a generating function ``G(x, y, z)``, in the layout of an ordinary cost.

At a point ``(x₀, y₀, z₀)`` let ``ζ(y)`` solve ``G(x₀, y, ζ(y)) = G(x₀, y₀, z₀)`` near ``y₀`` (it
exists where ``G_z ≠ 0``, and ``ζ_y = −G_y / G_z``).  The *effective cost*

    c̃(x, y) = −G(x, y, ζ(y))

has, at ``(x₀, y₀)``, x-derivatives ``−D^α_x G`` and y-derivatives given by the total derivative
along the level set, the operator ``D_k F = ∂_{y_k} F − (G_{y_k} / G_z) ∂_z F`` (``D_k`` and ``D_l``
commute: they are partial derivatives of ``F(x₀, y, ζ(y))``).  So the fields are

    dx   = −G_x                   dy  = G_y / G_z          value = −G
    dxy  = −D_y G_x  (= −E, E the extended mixed Hessian G_xy − G_xz ⊗ G_y / G_z)
    dxxy = −D_y G_xx              dxyy = −D_y D_y G_x      dxxyy = −D_y D_y G_xx

Trudinger's matrix ``A(x, u, p) = G_xx(x, Y, Z)``, with ``(Y, Z)`` solving ``G_x = p``, ``G = u``,
is at fixed ``(x, u)`` the matrix ``−c̃_xx(x, Y)`` with ``−c̃_x(x, Y) = p``: the matrix of the
ordinary MTW condition for ``c̃``.  Hence ``D²_pp A(ξ, ξ, η, η)`` — the G3 form (Trudinger, DCDS-A
34, 2014, cited from memory) — is the ordinary MTW form computed from these fields, and every
formula of :mod:`costcheck.numerics.curvature` and :mod:`costcheck.certify` applies unchanged.

For an ordinary cost, ``G = −c(x, y) − z``: ``G_z = −1``, ``D_k = ∂_{y_k}`` on every x-derivative
(they do not depend on ``z``), and the fields ``dx … dxxyy`` are exactly ``c``'s (``value`` is
``c + z``).  ``tests/test_generating.py`` checks it symbolically for the catalog's costs.

The symbols: ``xs`` the x-coordinates, ``ys`` the y-coordinates followed by ``z`` (the pipeline's
target side is ``(y, z)``).
"""

from __future__ import annotations

import itertools
from functools import lru_cache

import sympy as sp

from .differentiate import diff


def _total(F, G_ratio, ys, z):
    """``D_k F`` for each ``k``: the derivative along the level set of ``G`` at fixed ``x``."""
    Fz = diff(F, z)
    return [diff(F, y) - r * Fz for y, r in zip(ys, G_ratio)]


@lru_cache(maxsize=64)
def effective_derivatives(G: sp.Expr, xs: tuple, ys_and_z: tuple, order: int) -> dict:
    """The fields of :func:`~costcheck.derivatives.sympy_backend.symbolic_derivatives` for ``c̃``."""
    ys, z = ys_and_z[:-1], ys_and_z[-1]
    n, m = len(xs), len(ys)
    Gz = diff(G, z)
    ratio = [diff(G, y) / Gz for y in ys]
    out = {"value": -G}
    if order >= 1:
        out["dx"] = [-diff(G, x) for x in xs]
        out["dy"] = ratio
    if order < 2:
        return out
    Gx = [diff(G, x) for x in xs]
    DGx = [_total(g, ratio, ys, z) for g in Gx]
    out["dxy"] = [[-DGx[i][k] for k in range(m)] for i in range(n)]
    if order < 3:
        return out
    Gxx = {(i, j): diff(Gx[i], xs[j]) for i, j in itertools.combinations_with_replacement(range(n), 2)}
    DGxx = {key: _total(g, ratio, ys, z) for key, g in Gxx.items()}
    dxxy = [[[-DGxx[min(i, j), max(i, j)][k] for k in range(m)] for j in range(n)] for i in range(n)]
    dxyy = [[[None] * m for _ in range(m)] for _ in range(n)]
    for i in range(n):
        for k, l in itertools.combinations_with_replacement(range(m), 2):
            dxyy[i][k][l] = dxyy[i][l][k] = -_total(DGx[i][k], ratio, ys, z)[l]
    out["dxxy"], out["dxyy"] = dxxy, dxyy
    if order < 4:
        return out
    dxxyy = [[[[None] * m for _ in range(m)] for _ in range(n)] for _ in range(n)]
    for i, j in itertools.combinations_with_replacement(range(n), 2):
        for k, l in itertools.combinations_with_replacement(range(m), 2):
            d = -_total(DGxx[i, j][k], ratio, ys, z)[l]
            for a, b in ((i, j), (j, i)):
                dxxyy[a][b][k][l] = dxxyy[a][b][l][k] = d
    out["dxxyy"] = dxxyy
    return out


def z_derivative(G: sp.Expr, z: sp.Symbol) -> sp.Expr:
    """``G_z``, whose sign the monotonicity condition fixes."""
    return diff(G, z)


def joint_map(G: sp.Expr, xs: tuple, ys_and_z: tuple) -> list:
    """The twist map's components at fixed ``x``: ``(G_x, G)`` as functions of ``(y, z)``."""
    return [diff(G, x) for x in xs] + [G]


def dual_map(G: sp.Expr, ys_and_z: tuple) -> list:
    """The dual twist map's components at fixed ``(y, z)``: ``G_y / G_z`` as functions of ``x``."""
    z = ys_and_z[-1]
    Gz = diff(G, z)
    return [diff(G, y) / Gz for y in ys_and_z[:-1]]
