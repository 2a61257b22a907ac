"""Pictures of the domain geometry: c-segments in the image of the gradient map, a c-segment
leaving the domain, and the functions f(t) of Loeper's maximum principle.

Makers (see :mod:`costcheck.render.plots`): :func:`image_with_segments`, :func:`c_segment_exit`,
:func:`maximum_principle`.  Each draws only what the report's verdicts support and returns
``[]`` otherwise (``n = m = 2`` for the first two; the third needs a configuration recorded
by the ``loeper`` check).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ...numerics.geometry.csegment import SOLVED, GradientMap, solve_segments
from ...numerics.geometry.region import Section
from . import Figure, pyplot, save_figure

#: how the domain region is drawn (light, with a thin outline), and the colours of segments
REGION_COLOUR = "#d9ead3"
OUTSIDE_COLOUR = "#b2182b"
SEGMENT_COLOURS = ["#1b4f72", "#7d3c98", "#117864", "#9c640c", "#515a5a", "#1f618d"]
GRID = 121


def finish(fig, directory: Path, stem: str, kind: str, caption: str) -> Figure:
    """Put ``caption`` under the figure, save it as PNG and SVG, and describe it."""
    import textwrap
    fig.text(0.01, -0.02, "\n".join(textwrap.wrap(caption, 130)), ha="left", va="top", fontsize=8)
    png, svg = save_figure(fig, directory, stem)
    return Figure(kind, caption, png, svg)


def names(cost, side: str) -> tuple[str, ...]:
    return tuple(cost.x_names if side == "x" else cost.y_names)


def central_point(cost, side: str) -> np.ndarray:
    """The centre of a side's box (or ball) if it has a partner in the domain, else a sampled point."""
    region = cost.domain.x if side == "x" else cost.domain.y
    lo, hi = region.bounds()
    centre = 0.5 * (lo + hi)
    from ...numerics.sampling import sample_pairs
    s = sample_pairs(cost.domain, cost.n, cost.m, 256, 1)
    pts = s.xs if side == "x" else s.ys
    if pts.shape[0] == 0:
        return centre
    return pts[int(np.argmin(np.linalg.norm(pts - centre, axis=1)))]


def section_grid(section: Section, partner: np.ndarray, count: int = GRID):
    """A ``count × count`` grid of the section's bounding box: ``(A, B, points, inside)``."""
    lo, hi = section.region.bounds()
    a = np.linspace(lo[0], hi[0], count)
    b = np.linspace(lo[1], hi[1], count)
    A, B = np.meshgrid(a, b)
    pts = np.stack([A.ravel(), B.ravel()], axis=1)
    inside = section.contains(pts, np.repeat(partner[None], pts.shape[0], axis=0)).reshape(A.shape)
    return A, B, pts, inside


def draw_region(ax, A, B, inside, label: str):
    ax.contourf(A, B, inside.astype(float), levels=[0.5, 1.5], colors=[REGION_COLOUR])
    ax.contour(A, B, inside.astype(float), levels=[0.5], colors=["#38761d"], linewidths=1.0)
    ax.plot([], [], color=REGION_COLOUR, linewidth=8, label=label)


def _witness_fixed(report, condition: str, side: str):
    v = report.verdicts.get(condition)
    if v is not None and v.verdict == "fails" and v.witness is not None:
        return np.asarray(v.witness.x if side == "x" else v.witness.y, float)
    return None


# --------------------------------------------------------------------------- (a) image with c-segments

def image_with_segments(report, directory: Path) -> list[Figure]:
    cost = report.cost
    if not (cost.n == cost.m == 2) or "target_c_convex" not in report.verdicts:
        return []
    plt = pyplot()
    x = _witness_fixed(report, "target_c_convex", "x")
    x = central_point(cost, "x") if x is None else x
    section = Section(cost.domain, "y")
    ev = cost.derivatives(order=2)
    gmap = GradientMap(ev, "y")
    A, B, pts, inside = section_grid(section, x)
    g, _, _, finite = gmap(np.repeat(x[None], pts.shape[0], axis=0), pts)
    ok = (inside.ravel() & finite)
    rng = np.random.default_rng(7)
    ends, owner = section.boundary_samples(x[None], 12, rng)
    if ends.shape[0] < 2:
        return []
    k = min(6, ends.shape[0] // 2)
    z0, z1 = ends[:k], ends[k: 2 * k]
    seg = solve_segments(gmap, np.repeat(x[None], k, axis=0), z0, z1, steps=64)
    fig, (left, right) = plt.subplots(1, 2, figsize=(11, 5))
    yn, xn = names(cost, "y"), names(cost, "x")
    draw_region(left, A, B, inside, "Y at x (pairs constraints applied)")
    P1 = np.where(ok, g[:, 0], np.nan).reshape(A.shape)
    P2 = np.where(ok, g[:, 1], np.nan).reshape(A.shape)
    right.scatter(P1[inside], P2[inside], s=2, color="#93c47d", linewidths=0, rasterized=True,
                  label="image −D_x c(x, Y)")
    drawn = [np.array(section.region.bounds())]
    for i in range(k):
        colour = SEGMENT_COLOURS[i % len(SEGMENT_COLOURS)]
        path = seg.points[i]
        have = np.isfinite(path).all(axis=1)
        if not have.any():
            continue
        path = path[have]
        gp, _, _, _ = gmap(np.repeat(x[None], path.shape[0], axis=0), path)
        out = section.outside_distance(path, np.repeat(x[None], path.shape[0], axis=0)) > 0
        drawn.append(path)
        for ax, p in ((left, path), (right, gp)):
            ax.plot(p[:, 0], p[:, 1], color=colour, linewidth=1.6)
            if out.any():
                mask = np.where(out, 1.0, np.nan)
                ax.plot(p[:, 0] * mask, p[:, 1] * mask, color=OUTSIDE_COLOUR, linewidth=3.2, linestyle=(0, (2, 1.5)),
                        zorder=5)
            ax.scatter([p[0, 0], p[-1, 0]], [p[0, 1], p[-1, 1]], s=18, color=colour, zorder=6)
    left.plot([], [], color=OUTSIDE_COLOUR, linewidth=3.2, linestyle=(0, (2, 1.5)),
              label="part of a segment outside the domain")
    everything = np.concatenate(drawn)
    lo, hi = section.region.bounds()
    view_lo = np.maximum(everything.min(axis=0), lo - (hi - lo))
    view_hi = np.minimum(everything.max(axis=0), hi + (hi - lo))
    pad = 0.04 * (view_hi - view_lo)
    left.set_xlim(view_lo[0] - pad[0], view_hi[0] + pad[0])
    left.set_ylim(view_lo[1] - pad[1], view_hi[1] + pad[1])
    left.set_xlabel(yn[0]), left.set_ylabel(yn[1])
    right.set_xlabel(f"−∂c/∂{xn[0]}"), right.set_ylabel(f"−∂c/∂{xn[1]}")
    left.set_title("c-segments in Y (curves)")
    right.set_title("the same segments in −D_x c(x, ·) (straight lines)")
    left.legend(loc="upper left", fontsize=7, framealpha=0.9)
    right.legend(loc="upper left", fontsize=7, framealpha=0.9)
    fx = ", ".join(f"{n}={v:.3g}" for n, v in zip(xn, x))
    verdict = report.verdicts["target_c_convex"].verdict
    fig.suptitle(f"{cost.id}: c-segments w.r.t. x = ({fx}); target c-convexity {verdict}")
    caption = (f"Left: the target domain Y seen from x = ({fx}) (green; pairs constraints applied) and {k} "
               f"c-segments between boundary points, each the curve t ↦ y_t solving −D_x c(x, y_t) = (1−t)p0 + t p1. "
               "Right: the image of Y under y ↦ −D_x c(x, y) (green dots, one per grid point of Y) with the same "
               "segments, which are straight there. Y is c-convex w.r.t. x exactly when this image is convex; "
               "the red dashes mark the parts of segments outside the domain. One x only: not a verdict over all of X.")
    return [finish(fig, directory, "c-segments-image", "c-segments-image", caption)]


# --------------------------------------------------------------------------- (b) a c-segment leaving the domain

def c_segment_exit(report, directory: Path) -> list[Figure]:
    cost = report.cost
    if not (cost.n == cost.m == 2):
        return []
    figures = []
    plt = pyplot()
    for condition, moving in (("target_c_convex", "y"), ("source_c_convex", "x")):
        v = report.verdicts.get(condition)
        if v is None or v.verdict != "fails" or v.witness is None:
            continue
        w = v.witness
        fixed_side = "x" if moving == "y" else "y"
        fixed = np.asarray(w.x if fixed_side == "x" else w.y, float)
        z0 = np.asarray(w.vectors[f"{moving}0"], float)
        z1 = np.asarray(w.vectors[f"{moving}1"], float)
        z_exit = np.asarray(w.vectors[f"{moving}_exit"], float)
        z_out = np.asarray(w.y if moving == "y" else w.x, float)
        section = Section(cost.domain, moving)
        gmap = GradientMap(cost.derivatives(order=2), moving)
        seg = solve_segments(gmap, fixed[None], z0[None], z1[None], steps=160)
        path = seg.points[0]
        have = np.isfinite(path).all(axis=1)
        dist = np.full(path.shape[0], np.nan)
        dist[have] = section.outside_distance(path[have], np.repeat(fixed[None], int(have.sum()), axis=0))
        out = np.nan_to_num(dist, nan=-np.inf) > 0
        fig, (ax, side) = plt.subplots(1, 2, figsize=(12, 5.5), gridspec_kw={"width_ratios": [1.25, 1]})
        side.plot(seg.ts, dist, color="#1b4f72", linewidth=1.8)
        side.axhline(0.0, color="black", linewidth=1)
        side.fill_between(seg.ts, 0, dist, where=out, facecolor="none", edgecolor=OUTSIDE_COLOUR, hatch="////",
                          linewidth=0, label="outside the domain")
        side.set_xlabel("t along the c-segment")
        side.set_ylabel("estimated distance outside the domain (< 0: inside)")
        side.set_title("how far the segment is outside, along t", fontsize=10)
        side.legend(loc="best", fontsize=8)
        A, B, _, inside = section_grid(section, fixed)
        mn = names(cost, moving)
        draw_region(ax, A, B, inside, f"domain {moving.upper()} at {fixed_side} (pairs constraints applied)")
        inner = np.where(have & ~out, 1.0, np.nan)
        outer = np.where(have & out, 1.0, np.nan)
        ax.plot(path[:, 0] * inner, path[:, 1] * inner, color="#1b4f72", linewidth=2.2, label="c-segment, inside")
        ax.plot(path[:, 0] * outer, path[:, 1] * outer, color=OUTSIDE_COLOUR, linewidth=2.2, linestyle="--",
                label="c-segment, outside")
        ax.scatter(*z0, s=40, color="black", zorder=6)
        ax.scatter(*z1, s=40, color="black", zorder=6)
        ax.annotate(f"{moving}0", z0, textcoords="offset points", xytext=(5, 5))
        ax.annotate(f"{moving}1", z1, textcoords="offset points", xytext=(5, 5))
        ax.scatter(*z_exit, s=90, marker="D", facecolor="white", edgecolor="black", zorder=7,
                   label=f"exit, t = {v.evidence.details.get('t_exit', float('nan')):.3g}")
        ax.scatter(*z_out, s=90, marker="X", color=OUTSIDE_COLOUR, edgecolor="black", zorder=7,
                   label=f"confirmed outside, t = {v.evidence.details.get('t_outside', float('nan')):.3g}")
        finite_path = path[have]
        lo, hi = section.region.bounds()
        allp = np.concatenate([finite_path, [lo, hi]])
        span = allp.max(axis=0) - allp.min(axis=0)
        # keep the domain readable when the segment runs far away
        view_lo = np.maximum(allp.min(axis=0), lo - 1.5 * (hi - lo))
        view_hi = np.minimum(allp.max(axis=0), hi + 1.5 * (hi - lo))
        pad = 0.05 * np.where(span > 0, view_hi - view_lo, 1.0)
        ax.set_xlim(view_lo[0] - pad[0], view_hi[0] + pad[0])
        ax.set_ylim(view_lo[1] - pad[1], view_hi[1] + pad[1])
        ax.set_xlabel(mn[0]), ax.set_ylabel(mn[1])
        ax.legend(loc="best", fontsize=8, framealpha=0.9)
        fn = names(cost, fixed_side)
        fx = ", ".join(f"{n}={val:.4g}" for n, val in zip(fn, fixed))
        what = "Y is not c-convex w.r.t. X" if moving == "y" else "X is not c-convex w.r.t. Y"
        ax.set_title(f"{cost.id}: {what}\nc-segment w.r.t. {fixed_side} = ({fx})", fontsize=10)
        grad = "−D_x c" if moving == "y" else "−D_y c"
        caption = (f"The c-segment from {moving}0 to {moving}1 with respect to the fixed {fixed_side} = ({fx}) (the curve "
                   f"on which {grad} moves on a straight line), drawn solid inside the domain (green) and dashed where it "
                   f"is outside; the diamond is where it first leaves, the cross the point confirmed outside in high "
                   f"precision ({v.code}). Right: the distance outside along t (hatched where positive), which shows "
                   "small excursions the left panel cannot. One witness: it shows that the domain is not c-convex, not how often.")
        figures.append(finish(fig, directory, f"{condition}-witness", f"{condition}-witness", caption))
    return figures


# --------------------------------------------------------------------------- (c) Loeper's f(t)

def maximum_principle(report, directory: Path) -> list[Figure]:
    cost = report.cost
    v = report.verdicts.get("loeper")
    if v is None or "worst" not in v.evidence.details:
        return []
    cfg = v.evidence.details["worst"]
    x, xp = np.asarray(cfg["x"], float), np.asarray(cfg["x_prime"], float)
    y0, y1 = np.asarray(cfg["y0"], float), np.asarray(cfg["y1"], float)
    ev = cost.derivatives(order=2)
    seg = solve_segments(GradientMap(ev, "y"), x[None], y0[None], y1[None], steps=160)
    if seg.status[0] != SOLVED:
        return []
    ys = seg.points[0]
    T = ys.shape[0]
    f = ev(np.repeat(x[None], T, axis=0), ys).value - ev(np.repeat(xp[None], T, axis=0), ys).value
    ts = seg.ts
    level = max(f[0], f[-1])
    plt = pyplot()
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(8, 6.5), sharex=True, gridspec_kw={"height_ratios": [2, 1]})
    top.plot(ts, f, color="#1b4f72", linewidth=2, label="f(t) = c(x, y_t) − c(x′, y_t)")
    top.axhline(level, color="black", linestyle="--", linewidth=1, label="max(f(0), f(1))")
    above = f > level
    top.fill_between(ts, level, f, where=above, facecolor="none", edgecolor=OUTSIDE_COLOUR, hatch="////",
                     linewidth=0, label="f above max(f(0), f(1)): violation" if above.any() else None)
    gap = f - level
    bottom.plot(ts, gap, color="#1b4f72", linewidth=1.5)
    bottom.axhline(0, color="black", linewidth=1)
    bottom.fill_between(ts, 0, gap, where=gap > 0, facecolor="none", edgecolor=OUTSIDE_COLOUR, hatch="////",
                        linewidth=0)
    i = int(np.argmax(f))
    top.scatter([ts[i]], [f[i]], s=60, marker="X", color=OUTSIDE_COLOUR if above.any() else "#1b4f72", zorder=5)
    top.legend(loc="best", fontsize=8)
    bottom.set_xlabel("t along the c-segment (w.r.t. x)")
    top.set_ylabel("f(t)")
    bottom.set_ylabel("f(t) − max(f(0), f(1))")
    xn, yn = names(cost, "x"), names(cost, "y")
    vec = lambda nm, val: ", ".join(f"{a}={b:.4g}" for a, b in zip(nm, val))  # noqa: E731
    state = "fails" if v.verdict == "fails" else v.verdict
    top.set_title(f"{cost.id}: Loeper's maximum principle {state} ({v.code})", fontsize=10)
    kind = "worst violation found" if v.verdict == "fails" else "configuration closest to a violation"
    caption = (f"The {kind}: x = ({vec(xn, x)}), x′ = ({vec(xn, xp)}), c-segment w.r.t. x from y0 = ({vec(yn, y0)}) "
               f"to y1 = ({vec(yn, y1)}). A3w (on c-convex domains) is equivalent to f(t) ≤ max(f(0), f(1)) for "
               "every such configuration (Loeper 2009); the hatched area is where f exceeds that level. "
               + ("The violation was confirmed in high precision." if v.verdict == "fails" else
                  "No violation here; this is one sampled configuration, not a proof."))
    return [finish(fig, directory, "maximum-principle", "maximum-principle", caption)]
