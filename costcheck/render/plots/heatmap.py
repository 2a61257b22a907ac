"""Heat maps of the scale-free A3w margin over 2-D slices of ``(x, y)`` (``n = m = 2``).

One picture, two panels: ``x`` fixed (the MTW witness's ``x`` if there is one, else a central
point of ``X``) and ``y`` varying over ``Y``; then ``y`` fixed and ``x`` varying.  The margin is
:func:`costcheck.numerics.curvature.margins.a3w_margin` (the exact minimum over unit ``ξ ⊥ η`` for
``n = 2``), the same function the MTW check uses.  The colour scale diverges at 0 (red
negative, blue positive); for grey prints the zero level is a black contour and the negative
region is hatched.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ...numerics.curvature import margins
from ...numerics.geometry.region import Section
from . import Figure, pyplot
from .geometry import central_point, finish, names, section_grid

GRID = 81


def _witness_point(report):
    v = report.verdicts.get("mtw")
    if v is not None and v.witness is not None:
        return np.asarray(v.witness.x, float), np.asarray(v.witness.y, float), v
    return None, None, v


def mtw_margin_slices(report, directory: Path) -> list[Figure]:
    cost = report.cost
    if not (cost.n == cost.m == 2) or "mtw" not in report.verdicts or report.verdicts["mtw"].verdict in (
            "not-applicable",):
        return []
    from matplotlib.colors import TwoSlopeNorm
    plt = pyplot()
    wx, wy, verdict = _witness_point(report)
    x = central_point(cost, "x") if wx is None else wx
    y = central_point(cost, "y") if wy is None else wy
    ev = cost.derivatives(order=4)
    fig, axes = plt.subplots(1, 2, figsize=(12.5, 5.2))
    fig.subplots_adjust(wspace=0.28)
    panels = []
    for ax, moving, fixed in ((axes[0], "y", x), (axes[1], "x", y)):
        section = Section(cost.domain, moving)
        A, B, pts, inside = section_grid(section, fixed, GRID)
        rep = np.repeat(fixed[None], pts.shape[0], axis=0)
        xs, ys = (rep, pts) if moving == "y" else (pts, rep)
        m = margins.a3w_margin(ev(xs, ys))
        rel = np.where(inside.ravel() & m.valid & np.isfinite(m.rel), m.rel, np.nan).reshape(A.shape)
        panels.append((ax, moving, fixed, A, B, rel))
    finite = np.concatenate([p[-1][np.isfinite(p[-1])] for p in panels])
    if finite.size == 0:
        plt.close(fig)
        return []
    bound = float(np.max(np.abs(finite))) or 1.0
    norm = TwoSlopeNorm(vmin=-bound, vcenter=0.0, vmax=bound)
    image = None
    for ax, moving, fixed, A, B, rel in panels:
        image = ax.pcolormesh(A, B, rel, cmap="RdBu", norm=norm, shading="auto", rasterized=True)
        if np.isfinite(rel).any() and np.nanmin(rel) < 0 < np.nanmax(rel):
            ax.contour(A, B, rel, levels=[0.0], colors="black", linewidths=1.5)
        if np.isfinite(rel).any() and np.nanmin(rel) < 0:
            with plt.rc_context({"hatch.color": "#9a9a9a", "hatch.linewidth": 0.6}):
                ax.contourf(A, B, np.where(np.isfinite(rel), rel, 1.0), levels=[-np.inf, 0.0], colors="none",
                            hatches=["//"])
        # thin labelled level lines, so the variation reads even where the colour saturates
        lo_v, hi_v = np.nanmin(rel), np.nanmax(rel)
        constant = np.isfinite(lo_v) and hi_v - lo_v <= 1e-3 * max(abs(lo_v), abs(hi_v), 1e-300)
        if constant:
            ax.text(0.5, 0.5, f"margin constant on this slice:\n{lo_v:.4g} … {hi_v:.4g}", transform=ax.transAxes,
                    ha="center", va="center", fontsize=10, bbox={"facecolor": "white", "alpha": 0.85})
        elif np.isfinite(lo_v) and hi_v > lo_v:
            lines = ax.contour(A, B, rel, levels=np.linspace(lo_v, hi_v, 7)[1:-1], colors="#404040",
                               linewidths=0.6, linestyles="solid")
            ax.clabel(lines, fontsize=7, fmt="%.3g")
        mn = names(cost, moving)
        fixed_side = "x" if moving == "y" else "y"
        fn = names(cost, fixed_side)
        ax.set_xlabel(mn[0]), ax.set_ylabel(mn[1])
        ax.set_title(f"{fixed_side} fixed at ({', '.join(f'{a}={b:.3g}' for a, b in zip(fn, fixed))}), "
                     f"{moving} varies", fontsize=9)
        if wx is not None:
            point = wy if moving == "y" else wx
            ax.scatter(*point, s=140, marker="*", color="yellow", edgecolor="black", zorder=6, label="MTW witness")
            ax.legend(loc="lower right", fontsize=8, framealpha=0.9)
    cbar = fig.colorbar(image, ax=axes, shrink=0.9)
    cbar.set_label("scale-free A3w margin (min over unit ξ ⊥ η)")
    cbar.ax.axhline(0.0, color="black", linewidth=1.5)
    word = verdict.verdict if verdict is not None else "?"
    fig.suptitle(f"{cost.id}: MTW margin on two slices (MTW verdict: {word})")
    where = "the MTW witness (star)" if wx is not None else "a central point of each domain"
    caption = ("Scale-free A3w margin, min over unit ξ ⊥ η of S(ξ, η) / (scale · |M⁻¹|²) (the quantity the MTW check "
               f"minimises), with one point fixed at {where}: left, x fixed and y over Y; right, y fixed and x over "
               "X. Blue is positive (A3w holds there), red negative; the black line is the zero level and the "
               "hatched region is negative, so the sign reads in grey too; thin labelled lines are levels of the margin. Blank: outside the domain or undefined. "
               "Two slices through a 4-dimensional set of pairs: not the whole picture.")
    return [finish(fig, directory, "mtw-margin-slices", "mtw-margin-slices", caption)]
