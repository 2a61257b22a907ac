"""The n = 3 tensor algebra written on columns: one pure function for numpy and for a jitted kernel.

The same mathematics, in the same order, as the per-pair kernel
:func:`costcheck.numerics.curvature.n3.space_margin.prepare_rows` (Ma, Trudinger & Wang, Arch.
Ration. Mech. Anal. 177 (2005) 151–183; ``docs/conditions.md``, section ``mtw``), but every
quantity is an ``N``-long column and every sum is written out, so that XLA fuses it into one
loop over the pairs (no 3 × 3 arrays, no LAPACK, no gathers):

* ``M = D²_xy c`` divided by its largest entry; singular when ``|det M| <= SINGULAR_RCOND ·
  σ_max · ‖adj M‖₂``, both norms square roots of largest eigenvalues (Smith's closed form, O. K.
  Smith, Commun. ACM 4 (1961) 168); ``M⁻¹ = adj M / det M``;
* ``T_{ij,kl} = c_{ij,r} c^{r,s} c_{s,kl} − c_{ij,kl}`` for the six ``i <= j`` and six ``k <= l``,
  and ``scale = ‖c_{ij,r}c^{r,s}c_{s,kl}‖_F + ‖c_{ij,kl}‖_F`` over all 81 entries;
* ``G_{ij,ab} = Σ_kl T_{ij,kl} c^{k,a} c^{l,b}``, packed as
  :func:`costcheck.numerics.curvature.n3.biquadratic.pack` packs it (``6 p + q``), so that
  ``S(ξ, η) = G(ξ, ξ, η, η)``.

Rows that are not valid get ``M⁻¹ = I`` and ``G = 0`` (finite, so the later programs run on
them harmlessly); the caller marks them NaN.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from ..n2.plane_margin import SINGULAR_RCOND
from .biquadratic import PACKED_PAIRS, UNPACK

#: how many of the 81 entries each packed index pair of a symmetric pair stands for
_WEIGHT = (1.0, 1.0, 1.0, 2.0, 2.0, 2.0)


class SpacePrepared(NamedTuple):
    """Columns the minimum and the normaliser need (all of length N)."""

    g: tuple        # packed G, 36 columns (row p, column q at 6 p + q)
    inv: tuple      # M⁻¹ entries, row-major: 9 columns; the identity where not valid
    scale: object   # ‖c_{ij,r} c^{r,s} c_{s,kl}‖_F + ‖c_{ij,kl}‖_F
    valid: object   # finite derivatives, invertible M, finite scale


def largest_eigenvalue(S, xp=np):
    """Largest eigenvalue of packed symmetric 3 × 3 columns ``(s00, s11, s22, s01, s02, s12)``
    (Smith's closed form, as :func:`costcheck.numerics.curvature.n3.small3.largest_eigenvalue`)."""
    q = (S[0] + S[1] + S[2]) / 3
    a, d, f = S[0] - q, S[1] - q, S[2] - q
    b, c, e = S[3], S[4], S[5]
    p = xp.sqrt((a * a + d * d + f * f + 2 * (b * b + c * c + e * e)) / 6)
    safe = xp.where(p > 0, p, 1.0)
    det = (a * (d * f - e * e) - b * (b * f - e * c) + c * (b * e - d * c)) / (safe * safe * safe)
    phi = xp.arccos(xp.clip(det / 2, -1.0, 1.0)) / 3
    return q + xp.where(p > 0, 2 * p * xp.cos(phi), 0.0)


def _inverse(column, xp):
    """``(inv (9 columns), det·big, valid)`` from the mixed Hessian's columns."""
    m = [column("dxy", i, k) for i in range(3) for k in range(3)]
    big = m[0] * 0.0
    finite = xp.isfinite(big)
    for v in m:
        big = xp.maximum(big, xp.abs(v))
        finite = finite & xp.isfinite(v)
    ok = finite & (big > 0)
    scale = xp.where(ok, big, 1.0)
    m00, m01, m02, m10, m11, m12, m20, m21, m22 = (xp.where(ok, v / scale, 0.0) for v in m)
    c00, c01, c02 = m11 * m22 - m12 * m21, m12 * m20 - m10 * m22, m10 * m21 - m11 * m20
    c10, c11, c12 = m02 * m21 - m01 * m22, m00 * m22 - m02 * m20, m01 * m20 - m00 * m21
    c20, c21, c22 = m01 * m12 - m02 * m11, m02 * m10 - m00 * m12, m00 * m11 - m01 * m10
    det = m00 * c00 + m01 * c01 + m02 * c02
    gram = (m00 * m00 + m10 * m10 + m20 * m20, m01 * m01 + m11 * m11 + m21 * m21,
            m02 * m02 + m12 * m12 + m22 * m22, m00 * m01 + m10 * m11 + m20 * m21,
            m00 * m02 + m10 * m12 + m20 * m22, m01 * m02 + m11 * m12 + m21 * m22)  # MᵀM
    cogram = (c00 * c00 + c01 * c01 + c02 * c02, c10 * c10 + c11 * c11 + c12 * c12,
              c20 * c20 + c21 * c21 + c22 * c22, c00 * c10 + c01 * c11 + c02 * c12,
              c00 * c20 + c01 * c21 + c02 * c22, c10 * c20 + c11 * c21 + c12 * c22)  # C Cᵀ
    norms = xp.sqrt(xp.maximum(largest_eigenvalue(gram, xp), 0.0) * xp.maximum(largest_eigenvalue(cogram, xp), 0.0))
    ok = ok & (xp.abs(det) > SINGULAR_RCOND * norms)
    d = xp.where(ok, det * scale, 1.0)
    adjugate = (c00, c10, c20, c01, c11, c21, c02, c12, c22)
    identity = (1.0, 0.0, 0.0, 0.0, 1.0, 0.0, 0.0, 0.0, 1.0)
    inv = tuple(xp.where(ok, a / d, one) for a, one in zip(adjugate, identity))
    return inv, ok


def prepare(column, xp=np) -> SpacePrepared:
    """From the derivative fields to the packed ``G``, ``M⁻¹`` and the scale.

    ``column(name, *index)`` returns one entry of a field of
    :class:`~costcheck.derivatives.Derivatives` as an ``N``-long column, e.g.
    ``column("dxxy", 0, 1, 2)`` is ``c_{01,2}``.
    """
    inv, valid = _inverse(column, xp)
    first_sq = fourth_sq = 0.0
    T = []
    for p, (i, j) in enumerate(PACKED_PAIRS):
        # w_{ij,s} = c_{ij,r} c^{r,s}
        w = [sum(column("dxxy", i, j, r) * inv[3 * r + s] for r in range(3)) for s in range(3)]
        for q, (k, l) in enumerate(PACKED_PAIRS):
            first = sum(w[s] * column("dxyy", s, k, l) for s in range(3))
            fourth = column("dxxyy", i, j, k, l)
            weight = _WEIGHT[p] * _WEIGHT[q]
            first_sq = first_sq + weight * first * first
            fourth_sq = fourth_sq + weight * fourth * fourth
            T.append(first - fourth)
    scale = xp.sqrt(first_sq) + xp.sqrt(fourth_sq)
    valid = valid & xp.isfinite(scale)
    g = []
    for p in range(6):
        # G_{ij,ab} = (M⁻ᵀ T_{ij··} M⁻¹)_{ab}: U = T_{ij··} M⁻¹, then M⁻ᵀ U
        U = [[sum(T[6 * p + UNPACK[k, l]] * inv[3 * l + b] for l in range(3)) for b in range(3)] for k in range(3)]
        for a, b in PACKED_PAIRS:
            g.append(xp.where(valid, sum(inv[3 * k + a] * U[k][b] for k in range(3)), 0.0))
    return SpacePrepared(tuple(g), inv, xp.where(valid, scale, np.nan), valid)
