"""Pictures of nestedness (m = 1): level curves over the source domain, and ``k(y)`` against ``y``.

Level curves ``{x : ∂s/∂y(x, y) = k(y)}`` (Chiappori–McCann–Pass, CPAM 70, 2017) for a fan of
``y`` values, coloured by ``y`` on a colour scale whose lightness rises with ``y`` (viridis) and
with line styles cycling, so the fan reads in grey; the cells where two curves of the fan
cross are marked, and so is the witness of a failure.  Only drawn for ``n = 2`` (for other
``n`` the level sets are not curves in a plane); ``k(y)`` is drawn for every ``n``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from . import Figure, pyplot, save_figure

FAN = 9
GRID = 161
_STYLES = ("-", "--", "-.", ":")


def _crossing_cells(h1: np.ndarray, h2: np.ndarray) -> np.ndarray:
    """Cells (i, j) of the grid in which both functions change sign: where their zero curves meet."""
    def changes(h):
        corners = np.stack([h[:-1, :-1], h[1:, :-1], h[:-1, 1:], h[1:, 1:]])
        return (np.nanmin(corners, axis=0) <= 0) & (np.nanmax(corners, axis=0) > 0)
    with np.errstate(invalid="ignore"):
        return np.argwhere(changes(h1) & changes(h2))


def level_curves_figure(result, directory: Path) -> Figure | None:
    from ...conditions.nested.levels import surplus_y

    cost, lv = result.cost, result.levels
    if cost.n != 2 or lv is None:
        return None
    plt = pyplot()
    lo, hi = cost.domain.x.bounds()
    g0, g1 = np.linspace(lo[0], hi[0], GRID), np.linspace(lo[1], hi[1], GRID)
    A, B = np.meshgrid(g0, g1, indexing="ij")
    nodes = np.stack([A.ravel(), B.ravel()], axis=1)
    inside = cost.domain.contains_x(nodes).reshape(A.shape)
    fan = np.unique(np.linspace(0, lv.ys.shape[0] - 1, min(FAN, lv.ys.shape[0])).round().astype(int))
    evaluator = cost.derivatives(backend="sympy", order=2)
    phi, _, _ = surplus_y(evaluator, cost.domain, nodes, lv.ys[fan])
    H = (phi - lv.k[fan][:, None]).reshape(len(fan), *A.shape)
    H = np.where(inside[None], H, np.nan)
    fig, ax = plt.subplots(figsize=(6.4, 5.6))
    pts = result.source.points
    if pts.shape[0] > 3000:
        pts = pts[np.random.default_rng(0).choice(pts.shape[0], 3000, replace=False)]
    ax.scatter(pts[:, 0], pts[:, 1], s=1.5, color="#dadada", zorder=0, label="source (sample)")
    # viridis up to 85 %: lightness still rises with y, and the lightest curve stays visible in grey
    from matplotlib.colors import ListedColormap
    cmap = ListedColormap(plt.get_cmap("viridis")(np.linspace(0.0, 0.85, 256)))
    ymin, ymax = float(lv.ys[fan[0]]), float(lv.ys[fan[-1]])
    for r, j in enumerate(fan):
        colour = cmap((lv.ys[j] - ymin) / (ymax - ymin) if ymax > ymin else 0.5)
        ax.contour(A, B, H[r], levels=[0.0], colors=[colour], linestyles=_STYLES[r % len(_STYLES)], linewidths=1.6)
    crossings = []
    for a in range(len(fan)):
        for b in range(a + 1, len(fan)):
            for i, j in _crossing_cells(H[a], H[b])[:40]:
                crossings.append((0.5 * (g0[i] + g0[i + 1]), 0.5 * (g1[j] + g1[j + 1])))
    if crossings:
        c = np.array(crossings)
        ax.scatter(c[:, 0], c[:, 1], marker="x", s=28, color="black", linewidths=1.0, zorder=3,
                   label="fan curves cross")
    w = result.verdict.witness
    if w is not None:
        ax.scatter([w.x[0]], [w.x[1]], marker="*", s=220, facecolor="white", edgecolor="black", linewidths=1.2,
                   zorder=4, label="witness x", clip_on=False)
    sm = plt.cm.ScalarMappable(cmap=cmap, norm=plt.Normalize(ymin, ymax))
    fig.colorbar(sm, ax=ax, label=f"{cost.y_names[0]} (level curve of ∂s/∂{cost.y_names[0]} = k)")
    ax.set_xlabel(cost.x_names[0])
    ax.set_ylabel(cost.x_names[1])
    ax.set_xlim(lo[0], hi[0])
    ax.set_ylim(lo[1], hi[1])
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.12), ncol=3, frameon=False, fontsize=8)
    verdict = result.verdict.verdict
    caption = (f"{cost.id}: level curves {{∂s/∂{cost.y_names[0]}(x, {cost.y_names[0]}) = k({cost.y_names[0]})}} for "
               f"{len(fan)} values of {cost.y_names[0]} (s the surplus; Chiappori–McCann–Pass 2017): a model is "
               "nested when these curves do not cross where the source has mass. Verdict on the data: "
               f"{verdict}. Crosses mark grid cells where two drawn curves meet; curves are drawn at the data's "
               "levels k; the picture shows a fan only, the verdict rests on all levels and every source point.")
    ax.set_title(f"{cost.id}: level curves, nestedness {verdict}", fontsize=10)
    fig.text(0.02, -0.08, _wrap(caption), fontsize=7, va="top")
    png, svg = save_figure(fig, directory, f"{cost.id}-level-curves")
    return Figure("nested-level-curves", caption, png, svg)


def levels_figure(result, directory: Path) -> Figure | None:
    cost, lv = result.cost, result.levels
    if lv is None:
        return None
    plt = pyplot()
    y = cost.y_names[0]
    fig, ax = plt.subplots(figsize=(6.4, 4.2))
    lo_band = np.where(np.isfinite(lv.k_lo), lv.k_lo, np.nan)
    hi_band = np.where(np.isfinite(lv.k_hi), lv.k_hi, np.nan)
    ax.fill_between(lv.ys, lo_band, hi_band, color="#d0d0d0", label="tolerance band [k_lo, k_hi]")
    ax.plot(lv.ys, lv.k, color="black", linewidth=1.5, label=f"k({y})")
    gap = lv.k_plus > lv.k_minus + 1e-12 * np.maximum(1, np.abs(lv.k_minus))
    if np.any(gap & np.isfinite(lv.k_plus)):
        ax.plot(lv.ys, lv.k_minus, color="black", linestyle="--", linewidth=0.8, label="k−, k+ (source gaps)")
        ax.plot(lv.ys, lv.k_plus, color="black", linestyle="--", linewidth=0.8)
    brk = result.verdict.evidence.details.get("first_break_y_prime") if result.verdict.evidence else None
    if brk is not None:
        ax.axvline(brk, color="black", linestyle=":", linewidth=1.2, label="nestedness first breaks")
    ax.set_xlabel(y)
    ax.set_ylabel(f"k({y}): level of ∂s/∂{y}")
    ax.legend(fontsize=8, frameon=False)
    caption = (f"{cost.id}: the level k({y}) solving μ(∂s/∂{y} ≤ k) = ν((−∞, {y}]) on {lv.ys.shape[0]} levels, with "
               f"the tolerance band used to decide inclusions ({lv.band_rule}).")
    ax.set_title(f"{cost.id}: mass-balance level k({y})", fontsize=10)
    fig.text(0.02, -0.04, _wrap(caption), fontsize=7, va="top")
    png, svg = save_figure(fig, directory, f"{cost.id}-levels")
    return Figure("nested-levels", caption, png, svg)


def _wrap(text: str, width: int = 110) -> str:
    import textwrap
    return "\n".join(textwrap.wrap(text, width))


def nested_figures(result, directory) -> list[Figure]:
    directory = Path(directory)
    return [f for f in (level_curves_figure(result, directory), levels_figure(result, directory)) if f is not None]


def report_figures(report, directory) -> list[Figure]:
    """Maker for :data:`costcheck.render.plots.MAKERS`: nestedness pictures of a cost that carries ``data:``."""
    from ...conditions.nested.analysis import analyse

    cost = report.cost
    if cost.m != 1 or cost.data is None:
        return []
    result = analyse(cost, with_map=False)
    if result.levels is None:
        return []
    return nested_figures(result, directory)
