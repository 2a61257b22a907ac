"""Where the curvature and c-segment conditions are defined: the non-degenerate part of the domain.

The MTW tensor, the cross-curvature and c-segments all use ``M⁻¹`` (``M = D²_xy c``), so
they are stated where ``M`` is invertible (Ma, Trudinger & Wang, Arch. Ration. Mech. Anal.
177 (2005) 151–183, conditions A1–A3; Kim & McCann, J. Eur. Math. Soc. 12 (2010)
1009–1040).  A pair counts as *on the non-degenerate part* when the scale-free determinant

    ρ(x, y) = |det M| / max(|M|_F, S)^n,      S = median of |M|_F over the defined samples,

is at least :data:`DEFINED_RATIO`.  For ``n ≥ 2``, ``|det M| = Π σ_i ≤ σ_min σ_max^(n−1)`` and
``σ_max ≤ |M|_F`` give ``σ_min/σ_max ≥ ρ``: the condition number of ``M`` is at most ``1/ρ``.
For ``n = 1`` (where ``σ_min/σ_max`` is always 1) ``ρ = |c_xy| / max(|c_xy|, S)`` sees ``c_xy``
becoming small against its typical size.  ``S`` makes ``ρ`` unchanged by ``c → λc``.

Why ``1e-3``: a violation found where ``M`` is a thousandth of the way from singular is still
a statement about an invertible matrix, with ``M⁻¹`` known to 13 digits in float64; next to
the singular set the margins of :mod:`.margins` blow up with ``1/ρ`` (the raw ``S(ξ, η)`` of
``exp(q|x − y|²)/q`` reached 6·10²³ at ``ρ ≈ 2·10⁻⁷``), and a "witness" there says more about
the singular set than about the condition.  Arrays in, arrays out.
"""

from __future__ import annotations

import numpy as np

#: pairs with ρ below this are not used to decide MTW, NNCC or c-segment conditions
DEFINED_RATIO = 1e-3

#: searches keep ρ at least DEFINED_RATIO · SEARCH_SAFETY, so that the float value of ρ at a
#: witness (rounding ~1e-13 relative) cannot sit below the margin its certificate must show
SEARCH_SAFETY = 1.0 + 1e-6


def frobenius(dxy) -> np.ndarray:
    dxy = np.asarray(dxy, dtype=float)
    return np.sqrt(np.sum(dxy.reshape(dxy.shape[0], -1) ** 2, axis=1))


def scale(dxy, defined=None) -> float:
    """``S``: the median ``|M|_F`` over the rows that are defined and finite (1.0 if there are none)."""
    f = frobenius(dxy)
    ok = np.isfinite(f) & (f > 0)
    if defined is not None:
        ok &= np.asarray(defined, bool)
    return float(np.median(f[ok])) if ok.any() else 1.0


def relative_det(dxy, S: float) -> tuple[np.ndarray, np.ndarray]:
    """``(ρ, sign of det M)`` per row; ``ρ`` is NaN where ``M`` is not finite."""
    dxy = np.asarray(dxy, dtype=float)
    N, n = dxy.shape[0], dxy.shape[1]
    finite = np.all(np.isfinite(dxy.reshape(N, -1)), axis=1)
    safe = np.where(finite[:, None, None], dxy, np.eye(n))
    det = np.linalg.det(safe)
    denominator = np.maximum(frobenius(safe), S) ** n
    with np.errstate(all="ignore"):
        rho = np.where(finite & (denominator > 0), np.abs(det) / np.where(denominator > 0, denominator, 1.0), np.nan)
    return rho, np.where(finite, np.sign(det), 0.0)


def on_part(dxy, S: float, *, search: bool = False) -> np.ndarray:
    """Rows on the non-degenerate part (``search=True``: with the search's safety factor)."""
    rho, _ = relative_det(dxy, S)
    threshold = DEFINED_RATIO * (SEARCH_SAFETY if search else 1.0)
    return np.nan_to_num(rho, nan=-1.0) >= threshold


def describe() -> str:
    """The part in words, for evidence sentences."""
    return (f"the non-degenerate part, where ρ = |det D²_xy c| / max(|D²_xy c|_F, S)^n ≥ {DEFINED_RATIO:g} "
            "(S the median |D²_xy c|_F over the samples; for n ≥ 2 this bounds σ_min/σ_max below by ρ)")
