"""Compiled 3 × 3 helpers for the ``n = 3`` kernels: vectors are 3-tuples, symmetric matrices
packed 6-tuples ``(s00, s11, s22, s01, s02, s12)``, general matrices tuples of rows.

Every helper is inlined into the kernel that calls it (:func:`costcheck.numerics.curvature.n3.compiled.inline`),
so the tuples live in registers.
"""

from __future__ import annotations

import math

from .compiled import inline


@inline
def sym_matvec(S, v):
    return (S[0] * v[0] + S[3] * v[1] + S[4] * v[2],
            S[3] * v[0] + S[1] * v[1] + S[5] * v[2],
            S[4] * v[0] + S[5] * v[1] + S[2] * v[2])


@inline
def sym_rows(S):
    return ((S[0], S[3], S[4]), (S[3], S[1], S[5]), (S[4], S[5], S[2]))


@inline
def dot(a, b):
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


@inline
def cross(a, b):
    return (a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0])


@inline
def _eigen_angle(S):
    """``(q, p, φ)`` with the eigenvalues of a packed symmetric 3 × 3 matrix ``q + 2p cos(φ + 2πk/3)``,
    ``k = 0, 1, 2`` (largest first, smallest at ``k = 1``; O. K. Smith, "Eigenvalues of a symmetric
    3 × 3 matrix", Commun. ACM 4 (1961) 168)."""
    q = (S[0] + S[1] + S[2]) / 3
    a, d, f = S[0] - q, S[1] - q, S[2] - q
    b, c, e = S[3], S[4], S[5]
    p = math.sqrt((a * a + d * d + f * f + 2 * (b * b + c * c + e * e)) / 6)
    if not p > 0:
        return q, 0.0, 0.0
    det = (a * (d * f - e * e) - b * (b * f - e * c) + c * (b * e - d * c)) / (p * p * p)
    return q, p, math.acos(min(max(det / 2, -1.0), 1.0)) / 3


@inline
def smallest_eigenvalue(S):
    """Smallest eigenvalue of a packed symmetric 3 × 3 matrix (Smith's closed form)."""
    q, p, phi = _eigen_angle(S)
    return q + 2 * p * math.cos(phi + 2 * math.pi / 3)


@inline
def largest_eigenvalue(S):
    """Largest eigenvalue of a packed symmetric 3 × 3 matrix (Smith's closed form; unlike the
    smallest, accurate relative to itself however ill-conditioned the matrix)."""
    q, p, phi = _eigen_angle(S)
    return q + 2 * p * math.cos(phi)


@inline
def exceeds(S, t):
    """``S − t I`` is positive definite: the pivots of its ``LDLᵀ`` factorisation are all positive."""
    d0 = S[0] - t
    if not d0 > 0:
        return False
    l10, l20 = S[3] / d0, S[4] / d0
    d1 = S[1] - t - l10 * S[3]
    if not d1 > 0:
        return False
    l21 = (S[5] - l20 * S[3]) / d1
    return S[2] - t - l20 * S[4] - l21 * l21 * d1 > 0


@inline
def solve(S, b):
    """``S⁻¹ b`` for a packed symmetric 3 × 3 ``S`` by the adjugate; 0 where ``det S = 0``."""
    s00, s11, s22, s01, s02, s12 = S
    c00 = s11 * s22 - s12 * s12
    c01 = s02 * s12 - s01 * s22
    c02 = s01 * s12 - s02 * s11
    c11 = s00 * s22 - s02 * s02
    c12 = s02 * s01 - s00 * s12
    c22 = s00 * s11 - s01 * s01
    det = s00 * c00 + s01 * c01 + s02 * c02
    inv_det = 1.0 / det if det != 0 else 0.0
    return ((c00 * b[0] + c01 * b[1] + c02 * b[2]) * inv_det,
            (c01 * b[0] + c11 * b[1] + c12 * b[2]) * inv_det,
            (c02 * b[0] + c12 * b[1] + c22 * b[2]) * inv_det)


@inline
def unit(v):
    r = 1.0 / math.sqrt(dot(v, v))
    return (v[0] * r, v[1] * r, v[2] * r)
