"""Pictures of one cost's verdicts, written as PNG and SVG (matplotlib, no display).

Each kind of picture is drawn by a *maker*: a function ``maker(report, directory) -> list[Figure]``
that reads a :class:`~costcheck.run.runner.CostReport` (the cost, its verdicts and
witnesses) and writes its files under ``directory``.  A maker that has nothing to draw for a
cost (wrong dimension, no witness) returns ``[]``.  :data:`MAKERS` lists them, as
``"module:function"`` under :mod:`costcheck.render.plots`, in the order reports show them; the
terminal's ``--plots DIR`` and the HTML/Markdown report both go through
:func:`write_figures`, so a new picture appears in both by adding one line here.

Style rules every maker keeps: axis labels in the file's own coordinate names; colour scales
centred on zero with the sign also carried by lightness or hatching (readable in grey); a
caption that says what is shown and what it does not establish.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass
from pathlib import Path

#: "module:function" under costcheck.render.plots, in report order
MAKERS: list[str] = [
    "determinant:determinant_maps",
    "geometry:image_with_segments",
    "geometry:c_segment_exit",
    "geometry:maximum_principle",
    "heatmap:mtw_margin_slices",
    "nested:report_figures",
]

#: verdict → (colour, hatch); lightness rises from bad to good so grey prints stay ordered
VERDICT_STYLE = {
    "fails": ("#8b1a1a", "xx"),
    "error": ("#222222", "oo"),
    "undecided": ("#7a7a7a", ".."),
    "not-applicable": ("#b0b0b0", "--"),
    "weak": ("#e0a030", "//"),
    "holds": ("#9ad39a", ""),
    "strong": ("#cdeccd", ""),
}


@dataclass(frozen=True)
class Figure:
    """One written picture: what it shows (``kind``, ``caption``) and where it is."""

    kind: str
    caption: str
    png: Path
    svg: Path


def pyplot():
    """matplotlib's pyplot on the file-only Agg backend (no display is ever needed)."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    return plt


def save_figure(fig, directory: Path, stem: str) -> tuple[Path, Path]:
    """Write ``fig`` as ``stem.png`` and ``stem.svg`` in ``directory`` and close it."""
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    paths = []
    for ext in ("png", "svg"):
        path = directory / f"{stem}.{ext}"
        fig.savefig(path, dpi=120, bbox_inches="tight")
        paths.append(path)
    pyplot().close(fig)
    return paths[0], paths[1]


def write_figures(report, directory) -> list[Figure]:
    """Every maker's pictures of ``report``'s cost, written under ``directory``."""
    figures: list[Figure] = []
    for name in MAKERS:
        module_name, function = name.split(":")
        module = importlib.import_module(f"{__name__}.{module_name}")
        figures += getattr(module, function)(report, Path(directory))
    return figures
