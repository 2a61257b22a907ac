"""Determinant maps: where the mixed Hessian ``M = D²_xy c`` is close to singular.

Non-degeneracy (Ma–Trudinger–Wang, ARMA 177, 2005, condition A2) asks ``det M ≠ 0`` on the
whole domain.  A map of the *scale-free* determinant ``det M / S^n``, ``S`` the check's
typical size of ``M`` (the median of ``σ_max(M)`` on its samples; unchanged by ``c -> λ c``),
shows where it vanishes: the zero contour is drawn, negative values are hatched, and the
point the check reported (its witness, or where the scale-free σ_min was smallest) is marked.

- ``n = m = 2``: two slices through that point: ``x`` fixed, ``y`` varying over its region,
  and ``y`` fixed, ``x`` varying;
- ``n = m = 1``: ``c_xy`` scaled the same way, over the ``(x, y)`` rectangle itself;
- other dimensions: no picture (a slice of a higher-dimensional domain would suggest more
  than it shows).

A map is drawn on a grid: a zero between grid points can be missed, and the absence of a zero
contour is no proof of non-degeneracy (the caption says so).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from . import Figure, pyplot, rounding, save_figure

GRID = 121


def _marked_point(report):
    """The point to mark, and what it is: the witness, else the check's closest approach."""
    cost = report.cost
    verdict = report.verdicts.get("nondegenerate")
    if verdict is not None and verdict.witness is not None:
        return np.asarray(verdict.witness.x, float), np.asarray(verdict.witness.y, float), "witness: det M = 0"
    where = verdict.evidence.details.get("where") if verdict is not None else None
    if isinstance(where, dict) and set(where) == {"x", "y"}:
        return (np.array([where["x"][n] for n in cost.x_names], float),
                np.array([where["y"][n] for n in cost.y_names], float), "smallest σ_min(M)/S found")
    lo_x, hi_x = cost.domain.x.bounds()
    lo_y, hi_y = cost.domain.y.bounds()
    return (lo_x + hi_x) / 2, (lo_y + hi_y) / 2, "centre of the domain"


def scaled_determinant(cost, xs, ys, scale):
    """``det M / S^n`` at each pair, NaN outside the domain or where ``M`` is not finite."""
    return determinant_with_rounding(cost, xs, ys, scale)[0]


def determinant_with_rounding(cost, xs, ys, scale):
    """:func:`scaled_determinant` and the largest rounding level among its finite values."""
    d = cost.derivatives(backend="sympy", order=2)(xs, ys)
    with np.errstate(all="ignore"):
        det = np.linalg.det(np.nan_to_num(d.dxy, nan=0.0, posinf=0.0, neginf=0.0))
        bad = ~np.all(np.isfinite(d.dxy.reshape(len(xs), -1)), axis=1) | ~cost.domain.contains_pairs(xs, ys)
        if scale is None or not scale > 0:
            sigma = np.linalg.norm(np.nan_to_num(d.dxy), ord=2, axis=(1, 2))
            scale = float(np.median(sigma[~bad])) if np.any(~bad) else 1.0
        out = det / scale**cost.n
        # det M by LU is exact for M + E with |E| of order eps · |M|, so its rounding is of order
        # eps · σ_max(M)^n at that pair (a cost whose det M vanishes identically, such as |x - y|,
        # shows noise of that size): scaled by S^n like the value
        level = rounding.rounding_level((np.linalg.norm(np.nan_to_num(d.dxy), ord=2, axis=(1, 2)) / scale)**cost.n)
    out = rounding.snap_to_zero(out, level)
    out[bad] = np.nan
    used = level[np.isfinite(out)]
    return out, float(used.max()) if used.size else 0.0


def _norm(*arrays):
    """One diverging scale centred at 0 for all panels, symmetric so equal |det| reads equally.

    Linear when the values are of one size.  Near an excluded singular set (``x = y`` for a
    distance) the determinant grows by orders of magnitude, and a linear scale would wash the
    rest of the map out: then the scale is linear up to the median |value| and logarithmic
    beyond (matplotlib's ``SymLogNorm``), which the caption states.  Returns the norm and a
    phrase for the caption ("" when linear).
    """
    from matplotlib.colors import SymLogNorm, TwoSlopeNorm

    finite = np.abs(np.concatenate([a[np.isfinite(a)] for a in arrays]))
    nonzero = finite[finite > 0]
    span = float(finite.max()) if nonzero.size else 1.0
    typical = float(np.median(nonzero)) if nonzero.size else 1.0
    if span > 20 * typical:
        return (SymLogNorm(linthresh=typical, vmin=-span, vmax=span, base=10),
                f"The colour scale is linear up to |value| = {typical:.3g} and logarithmic beyond. ")
    return TwoSlopeNorm(vmin=-span, vcenter=0.0, vmax=span), ""


def _panel(ax, grid_u, grid_v, values, names, mark, mark_label, norm, level, what="det"):
    if not np.any(np.isfinite(values)):
        ax.text(0.5, 0.5, "M not finite on this slice", ha="center", va="center", transform=ax.transAxes)
        return None
    if rounding.identically_zero(values):
        rounding.flat_zero_panel(ax, np.isfinite(values), (grid_u[0, 0], grid_u[0, -1], grid_v[0, 0], grid_v[-1, 0]),
                                 what, level)
        _mark(ax, names, mark, mark_label)
        return None
    ax.set_facecolor("0.8")  # cells outside the domain are NaN, transparent: they show this grey
    # an image, not a mesh of 14 641 quads: fast to draw and a single raster inside the SVG
    image = ax.imshow(values, cmap="RdBu", norm=norm, origin="lower", interpolation="nearest", aspect="auto",
                      extent=(grid_u[0, 0], grid_u[0, -1], grid_v[0, 0], grid_v[-1, 0]))
    if np.nanmin(values) < 0:  # the sign is also in the hatching, so a grey print keeps it
        ax.contourf(grid_u, grid_v, np.where(np.isfinite(values), values, np.nan), levels=[-np.inf, 0.0],
                    colors="none", hatches=["\\\\"])
    if np.nanmin(values) < 0 < np.nanmax(values):
        ax.contour(grid_u, grid_v, values, levels=[0.0], colors="black", linewidths=1.6)
    _mark(ax, names, mark, mark_label)
    return image


def _mark(ax, names, mark, mark_label):
    ax.plot([mark[0]], [mark[1]], marker="o", markersize=9, markerfacecolor="white", markeredgecolor="black",
            markeredgewidth=1.8, linestyle="none", label=mark_label, clip_on=False, zorder=5)
    ax.set_xlabel(names[0])
    ax.set_ylabel(names[1])
    ax.legend(loc="best", fontsize=8, framealpha=0.9)  # "best" keeps clear of the marked point


def _grid(lo, hi):
    u = np.linspace(lo[0], hi[0], GRID)
    v = np.linspace(lo[1], hi[1], GRID)
    return np.meshgrid(u, v)


def determinant_maps(report, directory: Path) -> list[Figure]:
    cost = report.cost
    if cost.n != cost.m or cost.n not in (1, 2) or getattr(cost, "expr", None) is None:
        return []
    plt = pyplot()
    # thin grey hatching: it marks the sign without hiding the colours under it
    with plt.rc_context({"hatch.linewidth": 0.5, "hatch.color": "0.3"}):
        return _draw(report, Path(directory), plt)


def _draw(report, directory: Path, plt) -> list[Figure]:
    cost = report.cost
    verdict = report.verdicts.get("nondegenerate")
    scale = verdict.evidence.details.get("scale_S") if verdict is not None else None
    x0, y0, mark_label = _marked_point(report)
    note = ("Blue: det > 0, red and hatched: det < 0, black line: det = 0; plain grey: outside the domain. "
            f"Values with |det M| ≤ {rounding.ROUNDING_MULTIPLE}·eps·σ_max(M)^n, the rounding level of det M at "
            "that pair, are drawn as 0 (float rounding cannot be told from 0 there); a panel where every value is "
            "within it is drawn flat, with no colour map. "
            "Drawn on a grid: a zero between grid points can be missed, so no contour is no proof.")
    if cost.n == 1:
        gx, gy = _grid(np.r_[cost.domain.x.bounds()[0], cost.domain.y.bounds()[0]],
                       np.r_[cost.domain.x.bounds()[1], cost.domain.y.bounds()[1]])
        values, level = determinant_with_rounding(cost, gx.reshape(-1, 1), gy.reshape(-1, 1), scale)
        values = values.reshape(gx.shape)
        fig, ax = plt.subplots(figsize=(5.4, 4.4))
        norm, scale_note = _norm(values)
        image = _panel(ax, gx, gy, values, (cost.x_names[0], cost.y_names[0]), (x0[0], y0[0]), mark_label, norm,
                       level, "c_xy")
        if image is not None:
            fig.colorbar(image, ax=ax, label="c_xy / S")
        ax.set_title(f"{cost.id}: mixed derivative c_xy over (x, y)", fontsize=10)
        caption = (f"Scale-free mixed derivative c_xy / S of {cost.id} over the (x, y) rectangle "
                   f"(S = typical |c_xy|). {scale_note}{note}")
    else:
        fig, axes = plt.subplots(1, 2, figsize=(10.4, 4.4), constrained_layout=True)
        slices = []
        gy1, gy2 = _grid(*cost.domain.y.bounds())
        ys = np.column_stack([gy1.ravel(), gy2.ravel()])
        slices.append((axes[0], gy1, gy2, np.tile(x0, (len(ys), 1)), ys, cost.y_names, y0,
                       "x fixed at (" + ", ".join(f"{n}={v:.3g}" for n, v in zip(cost.x_names, x0)) + ")"))
        gx1, gx2 = _grid(*cost.domain.x.bounds())
        xs = np.column_stack([gx1.ravel(), gx2.ravel()])
        slices.append((axes[1], gx1, gx2, xs, np.tile(y0, (len(xs), 1)), cost.x_names, x0,
                       "y fixed at (" + ", ".join(f"{n}={v:.3g}" for n, v in zip(cost.y_names, y0)) + ")"))
        results = [determinant_with_rounding(cost, px, py, scale) for _, gu, _, px, py, *_ in slices]
        values = [v.reshape(s[1].shape) for (v, _), s in zip(results, slices)]
        norm, scale_note = _norm(*values)
        image = None
        for (ax, gu, gv, _, _, names, mark, title), vals, (_, level) in zip(slices, values, results):
            image = _panel(ax, gu, gv, vals, names, mark, mark_label, norm, level) or image
            ax.set_title(title, fontsize=10)
        if image is not None:
            fig.colorbar(image, ax=list(axes), label="det D²_xy c / S²")
        fig.suptitle(f"{cost.id}: scale-free det D²_xy c on two slices", fontsize=11)
        caption = (f"Scale-free determinant det D²_xy c / S² of {cost.id} (S = the check's typical size of "
                   f"D²_xy c), left with x fixed and y varying, right with y fixed and x varying, through "
                   f"the marked point ({mark_label}); one colour scale, centred at 0, for both panels. {scale_note}{note}")
    png, svg = save_figure(fig, directory, f"{cost.id}-determinant")
    return [Figure("determinant", caption, png, svg)]
