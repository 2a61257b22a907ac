"""Telling a quantity that is zero up to float rounding from one that has a sign, for pictures.

A map of a quantity that vanishes identically (the MTW tensor of ``|x - y|²``, the determinant
of ``D²_xy c`` for ``|x - y|``) evaluates to exact zeros or to rounding noise of size ``1e-16``;
drawn as a colour map that noise reads as a pattern of signs with zero contours everywhere.
Each map therefore compares its values, point by point, with the rounding level of the
arithmetic that produced them, ``ROUNDING_MULTIPLE · eps · scale``, where ``scale`` is the size
of the terms that cancel to give the value (the maker says which).  Values within that level
are drawn as 0; a panel whose values are all within it is drawn flat, with the bound written
on it, and no colour map.
"""

from __future__ import annotations

import numpy as np

#: how many units of rounding (eps times the size of the cancelling terms) a value may carry and
#: still count as zero.  A 2 × 2 or 3 × 3 determinant by LU, or the MTW form's sum of 16 to 81
#: products of three factors, accumulates a few tens of roundings each of relative size eps
#: (the usual error analysis of sums, products and LU, e.g. Higham, Accuracy and Stability of
#: Numerical Algorithms, 2nd ed. 2002, chapters 3 and 9, recalled from memory; the factor 64 is
#: common practice).  Measured here: the noise on |x - y| (determinant) and on a reparametrised
#: x·y (MTW margin) is below 2·eps, so 64 leaves room without hiding a genuine value, which on
#: the catalog's costs is 1e-3 of its scale or more.
ROUNDING_MULTIPLE = 64
EPS = float(np.finfo(float).eps)


def rounding_level(scale) -> np.ndarray:
    """``ROUNDING_MULTIPLE · eps · scale``, elementwise (``scale``: the size of the cancelling terms)."""
    return ROUNDING_MULTIPLE * EPS * np.asarray(scale, float)


def snap_to_zero(values: np.ndarray, level) -> np.ndarray:
    """``values`` with every entry within ``level`` (from :func:`rounding_level`) set to exactly 0."""
    out = np.array(values, float)
    out[np.abs(out) <= np.broadcast_to(level, out.shape)] = 0.0
    return out


def identically_zero(values: np.ndarray) -> bool:
    """True when every finite entry (there is at least one) is exactly 0 (after :func:`snap_to_zero`)."""
    finite = values[np.isfinite(values)]
    return finite.size > 0 and bool(np.all(finite == 0))


def flat_zero_panel(ax, inside: np.ndarray, extent, what: str, bound: float) -> None:
    """A panel with no colour map: the domain in one flat grey and the statement that ``what`` is 0 there.

    ``inside`` is the (rows, columns) mask of the domain on the grid spanning ``extent``
    (left, right, bottom, top); ``bound`` is the largest rounding level used on the panel.
    """
    ax.set_facecolor("0.8")
    ax.imshow(np.where(inside, 1.0, np.nan), cmap="Greys", vmin=0.0, vmax=10.0, origin="lower",
              interpolation="nearest", aspect="auto", extent=extent)
    ax.text(0.5, 0.5, f"{what} identically zero on this slice\n(|{what}| ≤ {bound:.2g}: float rounding)",
            ha="center", va="center", transform=ax.transAxes, fontsize=10,
            bbox={"facecolor": "white", "edgecolor": "black"})
