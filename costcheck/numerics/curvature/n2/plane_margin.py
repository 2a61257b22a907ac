"""The n = 2 A3w margin, written on columns: one pure function for numpy and for a jitted kernel.

The mathematics is that of :mod:`costcheck.numerics.curvature.margins` (Ma, Trudinger & Wang, Arch. Ration.
Mech. Anal. 177 (2005) 151–183), specialised to the plane, where every sum is short enough to
write out:

* ``M⁻¹`` in closed form, ``[[m11, -m01], [-m10, m00]] / det M``; ``M`` counts as singular when
  ``σ_min / σ_max <= SINGULAR_RCOND``, with ``σ_max² = (F + √(F² − 4 det²)) / 2``, ``F = |M|_F²``
  and ``σ_min² = det² / σ_max²`` (the singular values of a 2 × 2 matrix);
* ``T_{ijkl} = c_{ij,r} c^{r,s} c_{s,kl} − c_{ij,kl}`` for the three ``(i, j)`` and three
  ``(k, l)`` that differ (both pairs are symmetric);
* with ``ξ = (cos θ, sin θ)`` and ``η = (−sin θ, cos θ)``, ``η' = M⁻¹η = B ξ`` for ``B = M⁻¹J``,
  and ``S(θ) = Σ_q p_q cos^{4−q}θ sin^qθ`` with ``p_q`` the sum of ``U_{ijab} = (BᵀT_{ij··}B)_{ab}``
  over the index tuples with ``q`` ones;
* the exact minimum over θ (:mod:`costcheck.numerics.curvature.n2.quartic`), and the normaliser
  ``scale · |M⁻¹η|²`` at the minimiser.

Working on ``N``-long columns (no small matrices, no LAPACK) keeps numpy's passes short and lets
XLA fuse the whole computation into one loop.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from . import quartic

#: pairs whose mixed Hessian has ``σ_min / σ_max`` below this are treated as singular (A2 fails there)
SINGULAR_RCOND = 1e-12

#: the index pairs (i, j) with i <= j, and how often each stands for an entry of a symmetric pair
_PAIRS = ((0, 0), (0, 1), (1, 1))
_MULTIPLICITY = {(0, 0): 1.0, (0, 1): 2.0, (1, 1): 1.0}


class Prepared(NamedTuple):
    """Columns the minimisation and the normaliser need (all of length N)."""

    T: tuple           # T_{ij,kl} for (ij, kl) in _PAIRS × _PAIRS, row-major: 9 columns
    inv: tuple         # M⁻¹ entries (i00, i01, i10, i11); the identity where not valid
    scale: object      # |c_{ij,r} c^{r,s} c_{s,kl}|_F + |c_{ij,kl}|_F
    valid: object      # finite derivatives, invertible M, finite scale


def prepare(column, xp=np) -> Prepared:
    """From the derivative fields to ``T`` and ``M⁻¹``.

    ``column(name, *index)`` returns one entry of a field of
    :class:`~costcheck.derivatives.Derivatives` as an ``N``-long column, e.g.
    ``column("dxxy", 0, 1, 1)`` is ``c_{01,1}`` (:func:`field_columns` makes one from arrays).
    """
    m00, m01, m10, m11 = (column("dxy", i, k) for i in range(2) for k in range(2))
    det = m00 * m11 - m01 * m10
    frob = m00 * m00 + m01 * m01 + m10 * m10 + m11 * m11
    smax2 = 0.5 * (frob + xp.sqrt(xp.maximum(frob * frob - 4 * det * det, 0.0)))
    smin2 = det * det / xp.where(smax2 > 0, smax2, 1.0)
    valid = xp.isfinite(frob) & (smax2 > 0) & (smin2 > SINGULAR_RCOND**2 * smax2)
    one = xp.where(valid, det, 1.0)
    inv = (xp.where(valid, m11 / one, 1.0), xp.where(valid, -m01 / one, 0.0),
           xp.where(valid, -m10 / one, 0.0), xp.where(valid, m00 / one, 1.0))
    I = ((inv[0], inv[1]), (inv[2], inv[3]))

    def entry(name, *index):
        return xp.where(valid, column(name, *index), 0.0)

    # c_{ij,r} c^{r,s}: the row vectors w_{ij} = c_{ij,·} M⁻¹
    w = {ij: [sum(entry("dxxy", *ij, r) * I[r][s] for r in range(2)) for s in range(2)] for ij in _PAIRS}
    T, first_sq, fourth_sq = [], 0.0, 0.0
    for ij in _PAIRS:
        for kl in _PAIRS:
            first = sum(w[ij][s] * entry("dxyy", s, *kl) for s in range(2))
            fourth = entry("dxxyy", *ij, *kl)
            weight = _MULTIPLICITY[ij] * _MULTIPLICITY[kl]
            first_sq = first_sq + weight * first * first
            fourth_sq = fourth_sq + weight * fourth * fourth
            T.append(first - fourth)
    scale = xp.sqrt(first_sq) + xp.sqrt(fourth_sq)
    valid = valid & xp.isfinite(scale)
    return Prepared(tuple(xp.where(valid, t, 0.0) for t in T), inv, xp.where(valid, scale, xp.nan), valid)


def field_columns(fields: dict):
    """A ``column`` function for :func:`prepare` over arrays ``{"dxy": (N,2,2), ...}``."""
    return lambda name, *index: fields[name][(slice(None),) + index]


def coefficients(prepared: Prepared, xp=np):
    """``p (N, 5)``: ``S(θ) = Σ_q p_q cos^{4−q}θ sin^qθ`` (cheap; recomputed by each stage that needs it)."""
    i00, i01, i10, i11 = prepared.inv
    # B = M⁻¹ J with J = [[0, -1], [1, 0]]: B[k][0] = c^{k,1}, B[k][1] = -c^{k,0}
    B = ((i01, -i00), (i11, -i10))
    T = dict(zip([(ij, kl) for ij in _PAIRS for kl in _PAIRS], prepared.T))
    U = {}
    for ij in _PAIRS:
        t = {(k, l): T[ij, tuple(sorted((k, l)))] for k in range(2) for l in range(2)}
        for a, b in _PAIRS:
            U[ij, (a, b)] = sum(t[k, l] * B[k][a] * B[l][b] for k in range(2) for l in range(2))
    return xp.stack([U[(0, 0), (0, 0)],
                     2 * U[(0, 1), (0, 0)] + 2 * U[(0, 0), (0, 1)],
                     U[(1, 1), (0, 0)] + 4 * U[(0, 1), (0, 1)] + U[(0, 0), (1, 1)],
                     2 * U[(1, 1), (0, 1)] + 2 * U[(0, 1), (1, 1)],
                     U[(1, 1), (1, 1)]], axis=-1)


class PlaneMargins(NamedTuple):
    raw: object
    rel: object
    xi: object           # (N, 2)
    eta: object          # (N, 2)
    normaliser: object
    valid: object
    certified: object    # the quartic minimum is exact (else the eigenvalue route must redo it)


def finish(prepared: Prepared, minimum: quartic.QuarticMinimum, xp=np) -> PlaneMargins:
    """Margins from the prepared columns and the minimum over θ; NaN where not valid."""
    valid = prepared.valid
    c, s = minimum.cos, minimum.sin
    i00, i01, i10, i11 = prepared.inv
    e0, e1 = i00 * (-s) + i01 * c, i10 * (-s) + i11 * c      # η' = M⁻¹η, η = (−sin θ, cos θ)
    normaliser = xp.where(valid, prepared.scale * (e0 * e0 + e1 * e1), xp.nan)
    raw = xp.where(valid, minimum.value, xp.nan)
    positive = normaliser > 0
    rel = xp.where(positive, raw / xp.where(positive, normaliser, 1.0), 0.0)
    rel = xp.where(xp.isfinite(normaliser), rel, xp.nan)
    nan = xp.where(valid, 0.0, xp.nan)
    xi = xp.stack([c + nan, s + nan], axis=-1)
    eta = xp.stack([-s + nan, c + nan], axis=-1)
    return PlaneMargins(raw, rel, xi, eta, normaliser, valid, minimum.certified | ~valid)


#: rows per numpy pass: the columns of a chunk stay in cache
CHUNK = 8192


def a3w_margin(derivs) -> PlaneMargins:
    """numpy: the exact n = 2 A3w margins of :class:`~costcheck.derivatives.Derivatives` ``derivs``.

    Rows the quartic certificate leaves open are redone by the eigenvalue route, so every
    returned minimum is exact; ``certified`` says which rows needed no redoing.
    """
    fields = {name: np.asarray(getattr(derivs, name), dtype=float) for name in ("dxy", "dxxy", "dxyy", "dxxyy")}
    N = fields["dxy"].shape[0]
    parts = []
    with np.errstate(all="ignore"):
        for begin in range(0, max(N, 1), CHUNK):
            prepared = prepare(field_columns({k: v[begin:begin + CHUNK] for k, v in fields.items()}))
            found = quartic.exact_minimum(coefficients(prepared))
            parts.append(finish(prepared, found))
    return PlaneMargins(*(np.concatenate([getattr(part, name) for part in parts]) for name in PlaneMargins._fields))
