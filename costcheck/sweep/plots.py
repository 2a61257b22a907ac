"""Pictures of a sweep (matplotlib, PNG and SVG): verdict strips, a phase map, margins.

Colours are paired with hatching and with lightness steps, so the pictures read in grey too.
"""

from __future__ import annotations

from pathlib import Path

from ..render.plots import VERDICT_STYLE as STYLE, save_figure


def _style(verdict):
    return STYLE.get(verdict, ("#ffffff", "++"))


def _save(fig, directory: Path, stem: str) -> list[str]:
    return [str(path) for path in save_figure(fig, directory, stem)]


def write_plots(result, directory) -> list[str]:
    from matplotlib.patches import Patch

    from ..render.plots import pyplot
    plt = pyplot()

    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    written: list[str] = []
    if len(result.axes) == 1:
        axis = result.axes[0]
        xs = list(axis.values)
        edges = ([xs[0] - (xs[1] - xs[0]) / 2] if len(xs) > 1 else [xs[0] - 0.5])
        edges += [(a + b) / 2 for a, b in zip(xs, xs[1:])]
        edges += [xs[-1] + (xs[-1] - xs[-2]) / 2] if len(xs) > 1 else [xs[0] + 0.5]
        conds = result.conditions
        fig, ax = plt.subplots(figsize=(10, 0.7 * len(conds) + 1.2))
        seen = set()
        for row, cond in enumerate(conds):
            for i in range(len(xs)):
                verdict = result.verdict(i, cond)
                colour, hatch = _style(verdict)
                seen.add(verdict)
                ax.add_patch(plt.Rectangle((edges[i], row + 0.1), edges[i + 1] - edges[i], 0.8,
                                           facecolor=colour, hatch=hatch, edgecolor="black", linewidth=0.2))
            for b in result.boundaries:
                if b["condition"] == cond:
                    ax.plot([b["interval"][0]] * 2, [row + 0.02, row + 0.98], color="black", linewidth=1.4)
        ax.set_xlim(edges[0], edges[-1])
        ax.set_ylim(0, len(conds))
        ax.set_yticks([r + 0.5 for r in range(len(conds))], conds)
        ax.set_xlabel(f"parameter {axis.name}")
        ax.set_title(f"verdicts along {axis.name} (lines: located boundaries)")
        ax.legend(handles=[Patch(facecolor=_style(v)[0], hatch=_style(v)[1], edgecolor="black", label=v)
                           for v in STYLE if v in seen], loc="upper center", bbox_to_anchor=(0.5, -0.35),
                  ncol=len(seen), frameon=False)
        written += _save(fig, directory, "verdict-strip")
        if "mtw" in conds:
            fig, ax = plt.subplots(figsize=(8, 4))
            pts = [(x, result.results[i]["mtw"]["value"]) for i, x in enumerate(xs)
                   if result.results[i]["mtw"]["value"] is not None]
            if pts:
                ax.plot([p[0] for p in pts], [p[1] for p in pts], marker="o", markersize=3, color="black")
            ax.axhline(0, color="grey", linewidth=0.8, linestyle="--")
            for b in result.boundaries:
                if b["condition"] == "mtw":
                    ax.axvline(b["interval"][0], color="grey", linewidth=0.6, linestyle=":")
            ax.set_xlabel(f"parameter {axis.name}")
            ax.set_ylabel("minimum MTW margin (scale-free)")
            ax.set_yscale("symlog", linthresh=1e-4)
            ax.set_title("minimum MTW margin found")
            written += _save(fig, directory, "mtw-margin")
    else:
        a0, a1 = result.axes
        n0, n1 = len(a0.values), len(a1.values)
        for cond in result.conditions:
            fig, ax = plt.subplots(figsize=(7, 5))
            seen = set()
            for i, v0 in enumerate(a0.values):
                for j, v1 in enumerate(a1.values):
                    verdict = result.verdict(i * n1 + j, cond)
                    seen.add(verdict)
                    colour, hatch = _style(verdict)
                    ax.scatter([v0], [v1], s=2000 / max(n0, n1), marker="s", c=colour, hatch=hatch,
                               edgecolors="black", linewidths=0.3)
            ax.set_xlabel(f"parameter {a0.name}")
            ax.set_ylabel(f"parameter {a1.name}")
            ax.set_title(f"{cond}: phase map")
            ax.legend(handles=[Patch(facecolor=_style(v)[0], hatch=_style(v)[1], edgecolor="black", label=v)
                               for v in STYLE if v in seen], loc="upper left", bbox_to_anchor=(1.02, 1))
            written += _save(fig, directory, f"phase-{cond}")
    return written
