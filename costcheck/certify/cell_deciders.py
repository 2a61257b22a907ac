"""Vectorised cell decisions for :func:`.batch_bound.batched_branch_and_bound`.

Each ``decide_cells(lo, hi)`` encloses a condition's quantity over a batch of cells with
:class:`.cell_enclosures.CellFieldEnclosures` (the derivative fields as interval duals), runs the
conditions' algebra of :mod:`.quantities` unchanged on them, applies the mean-value form once
more at the quantity's level (:func:`.interval_dual.tighten`), and returns a certified lower
bound per cell, or nan where the cell is not decided:

- :func:`nonzero_determinant`: ``|det D²_xy c|`` (the Gram determinant when ``n ≠ m``) enclosed
  away from 0 (non-degeneracy, A2);
- :func:`mtw_strong_plane`: for ``n = m = 2``, the quartic ``S(cos θ, sin θ)`` on orthogonal pairs
  bounded below by its Fourier form ``a_0 − Σ_k |(c_k, s_k)|`` (the global bound of
  :func:`.quantities.circle_lower_bound`, without its θ-subdivision: a cell it does not decide is
  split in space instead).  Formulas: Ma, Trudinger and Wang, ARMA 177 (2005).
"""

from __future__ import annotations

from typing import Callable

import ival
import numpy as np

from . import intervals as iv
from . import quantities
from .cell_enclosures import CellFieldEnclosures
from .interval_dual import IntervalDual, tighten


def _tightened(enclosures: CellFieldEnclosures, lo, hi, quantity: Callable[[dict], list]):
    """The quantity's numbers over the cells (natural ∩ mean-value form) and the cells where all are enclosed."""
    over, mid, offsets = enclosures.duals_on_cells(lo, hi)
    with np.errstate(invalid="ignore"):
        numbers = [tighten(q, m, offsets) for q, m in zip(quantity(over.fields), quantity(mid.fields))]
    ok = over.enclosed.copy()
    for q in numbers:
        ok &= iv.finite(q)
    return numbers, ok


def nonzero_determinant(enclosures: CellFieldEnclosures) -> Callable[[np.ndarray, np.ndarray], np.ndarray]:
    """``decide_cells`` proving ``det ≠ 0``; the bound is a float ``≤ |det|`` on the cell."""
    def decide_cells(lo, hi):
        (d,), ok = _tightened(enclosures, lo, hi, lambda f: [quantities.rank_determinant(f["dxy"])])
        magnitude = np.where(d.lo > 0, d.lo, -d.hi)
        return np.where(ok & iv.excludes_zero(d), magnitude, np.nan)
    return decide_cells


def _divide(a, d):
    if isinstance(a, IntervalDual) or isinstance(d, IntervalDual):
        return IntervalDual.lift(a) / d
    # a divisor that may vanish leaves no enclosure (set-based 0 × [−∞, ∞] = 0 would hide it)
    return a * iv.bounded_only(ival.recip(d))


def _inverse2(M):
    det = M[0][0] * M[1][1] - M[0][1] * M[1][0]
    return [[_divide(M[1][1], det), _divide(-M[0][1], det)], [_divide(-M[1][0], det), _divide(M[0][0], det)]]


def _orthogonal_quartic(fields):
    inv = _inverse2(fields["dxy"])
    return quantities.orthogonal_quartic(quantities.mtw_tensor(fields, inv), inv)


def mtw_strong_plane(enclosures: CellFieldEnclosures) -> Callable[[np.ndarray, np.ndarray], np.ndarray]:
    """``decide_cells`` proving ``S(ξ, η) > 0`` on orthogonal unit pairs (n = 2); the bound is ``≤ min S``.

    ``enclosures`` must hold :data:`.enclosures.TENSOR_FIELDS`."""
    def decide_cells(lo, hi):
        form, ok = _tightened(enclosures, lo, hi, _orthogonal_quartic)
        a0, harmonics = quantities.fourier(form)
        bound = a0
        for c, s in harmonics:
            bound = bound - ival.sqrt(ival.sqr(c) + ival.sqr(s))
        ok &= iv.finite(bound)
        return np.where(ok & iv.positive(bound), bound.lo, np.nan)
    return decide_cells
