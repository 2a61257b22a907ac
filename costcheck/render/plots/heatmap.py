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
from . import Figure, pyplot, rounding
from .geometry import central_point, finish, names, section_grid

GRID = 81


def _witness_point(report):
    v = report.verdicts.get("mtw")
    if v is not None and v.witness is not None:
        return np.asarray(v.witness.x, float), np.asarray(v.witness.y, float), v
    return None, None, v


def margin_slices(cost, x, y):
    """Per panel: (moving side, fixed point, grid A, grid B, inside mask, margin, rounding level)."""
    ev = cost.derivatives(order=4)
    panels = []
    for moving, fixed in (("y", x), ("x", y)):
        section = Section(cost.domain, moving)
        A, B, pts, inside = section_grid(section, fixed, GRID)
        rep = np.repeat(fixed[None], pts.shape[0], axis=0)
        xs, ys = (rep, pts) if moving == "y" else (pts, rep)
        derivs = ev(xs, ys)
        m = margins.a3w_margin(derivs)
        rel = np.where(inside.ravel() & m.valid & np.isfinite(m.rel), m.rel, np.nan)
        # the scale-free margin is already divided by the size of the terms that cancel to make it
        # (see margins), so what is left of rounding is eps amplified by the inversion of M: its
        # level is eps · cond(M) (at least eps), point by point
        with np.errstate(all="ignore"):
            cond = np.linalg.cond(np.nan_to_num(derivs.dxy, nan=0.0, posinf=0.0, neginf=0.0))
        level = rounding.rounding_level(np.where(np.isfinite(cond), np.maximum(cond, 1.0), np.nan))
        rel = rounding.snap_to_zero(rel, level).reshape(A.shape)
        used = level.reshape(A.shape)[np.isfinite(rel)]
        panels.append((moving, fixed, A, B, inside, rel, float(used.max()) if used.size else 0.0))
    return panels


def _colour_panel(ax, plt, A, B, rel, norm):
    """The margin as a colour map, its zero level, hatching where negative and labelled levels."""
    image = ax.pcolormesh(A, B, rel, cmap="RdBu", norm=norm, shading="auto", rasterized=True)
    if np.nanmin(rel) < 0 < np.nanmax(rel):
        ax.contour(A, B, rel, levels=[0.0], colors="black", linewidths=1.5)
    if np.nanmin(rel) < 0:
        with plt.rc_context({"hatch.color": "#9a9a9a", "hatch.linewidth": 0.6}):
            ax.contourf(A, B, np.where(np.isfinite(rel), rel, 1.0), levels=[-np.inf, 0.0], colors="none",
                        hatches=["//"])
    # thin labelled level lines, so the variation reads even where the colour saturates
    lo_v, hi_v = np.nanmin(rel), np.nanmax(rel)
    if hi_v - lo_v <= 1e-3 * max(abs(lo_v), abs(hi_v), 1e-300):
        ax.text(0.5, 0.5, f"margin constant on this slice:\n{lo_v:.4g} … {hi_v:.4g}", transform=ax.transAxes,
                ha="center", va="center", fontsize=10, bbox={"facecolor": "white", "alpha": 0.85})
    else:
        lines = ax.contour(A, B, rel, levels=np.linspace(lo_v, hi_v, 7)[1:-1], colors="#404040",
                           linewidths=0.6, linestyles="solid")
        ax.clabel(lines, fontsize=7, fmt="%.3g")
    return image


def _label(ax, cost, moving, fixed):
    mn = names(cost, moving)
    fixed_side = "x" if moving == "y" else "y"
    fn = names(cost, fixed_side)
    ax.set_xlabel(mn[0]), ax.set_ylabel(mn[1])
    ax.set_title(f"{fixed_side} fixed at ({', '.join(f'{a}={b:.3g}' for a, b in zip(fn, fixed))}), "
                 f"{moving} varies", fontsize=9)


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
    panels = margin_slices(cost, x, y)
    finite = np.concatenate([p[5][np.isfinite(p[5])] for p in panels])
    if finite.size == 0:
        return []
    fig, axes = plt.subplots(1, 2, figsize=(12.5, 5.2))
    fig.subplots_adjust(wspace=0.28)
    bound = float(np.max(np.abs(finite))) or 1.0
    norm = TwoSlopeNorm(vmin=-bound, vcenter=0.0, vmax=bound)
    image, flat = None, []
    for ax, (moving, fixed, A, B, inside, rel, level) in zip(axes, panels):
        if not np.isfinite(rel).any():
            ax.text(0.5, 0.5, "margin undefined on this slice", ha="center", va="center", transform=ax.transAxes)
        elif rounding.identically_zero(rel):
            rounding.flat_zero_panel(ax, inside, (A[0, 0], A[0, -1], B[0, 0], B[-1, 0]), "margin", level)
            flat.append(level)
        else:
            image = _colour_panel(ax, plt, A, B, rel, norm)
        _label(ax, cost, moving, fixed)
        if wx is not None:
            point = wy if moving == "y" else wx
            ax.scatter(*point, s=140, marker="*", color="yellow", edgecolor="black", zorder=6, label="MTW witness")
            ax.legend(loc="lower right", fontsize=8, framealpha=0.9)
    if image is not None:
        cbar = fig.colorbar(image, ax=axes, shrink=0.9)
        cbar.set_label("scale-free A3w margin (min over unit ξ ⊥ η)")
        cbar.ax.axhline(0.0, color="black", linewidth=1.5)
    word = verdict.verdict if verdict is not None else "?"
    fig.suptitle(f"{cost.id}: MTW margin on two slices (MTW verdict: {word})")
    return [finish(fig, directory, "mtw-margin-slices", "mtw-margin-slices", _caption(wx is not None, flat))]


COLOURS = ("Blue is positive (A3w holds there), red negative; the black line is the zero level and the hatched "
           "region is negative, so the sign reads in grey too; thin labelled lines are levels of the margin. ")


def _caption(witness: bool, flat: list[float]) -> str:
    where = "the MTW witness (star)" if witness else "a central point of each domain"
    zero = (f"Values within the rounding level {rounding.ROUNDING_MULTIPLE}·eps·cond(M) are drawn as 0. ")
    if len(flat) == 2:
        zero += (f"On both slices every value is within it (|margin| ≤ {max(flat):.2g}): the margin is zero up "
                 "to float rounding there, so no colour map is drawn (a map would show only rounding noise). ")
    elif flat:
        zero += (f"On one slice every value is within it (|margin| ≤ {flat[0]:.2g}): that panel is drawn flat, "
                 "with no colour map. ")
    return ("Scale-free A3w margin, min over unit ξ ⊥ η of S(ξ, η) / (scale · |M⁻¹|²) (the quantity the MTW check "
            f"minimises), with one point fixed at {where}: left, x fixed and y over Y; right, y fixed and x over "
            f"X. {'' if len(flat) == 2 else COLOURS}{zero}Blank: outside the domain or undefined. "
            "Two slices through a 4-dimensional set of pairs: not the whole picture.")
