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
import io
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


#: pixels per inch of the PNG: the widest figure (12.5 in) is then about 1130 px, as wide as the
#: report page's column (72 rem less its padding, 1088 px at 16 px per rem) shows it, so the page
#: loses no detail to it (at 120 the page was scaling every picture down)
PNG_DPI = 90
#: colours in the PNG's palette: the colour maps are 256-step matplotlib maps already, so a
#: 256-colour palette keeps every step they draw, at a third of the size of 24-bit colour
PNG_COLOURS = 256


def save_figure(fig, directory: Path, stem: str) -> tuple[Path, Path]:
    """Write ``fig`` as ``stem.png`` (palette colour) and ``stem.svg`` in ``directory`` and close it."""
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    png, svg = directory / f"{stem}.png", directory / f"{stem}.svg"
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=PNG_DPI, bbox_inches="tight")
    write_palette_png(buffer.getvalue(), png)
    # text kept as SVG text rather than one path per glyph: a fraction of the size, still selectable
    with pyplot().rc_context({"svg.fonttype": "none"}):
        fig.savefig(svg, dpi=PNG_DPI, bbox_inches="tight")
    pyplot().close(fig)
    return png, svg


def write_palette_png(data: bytes, path: Path) -> None:
    """Write the PNG ``data`` to ``path`` with a palette of :data:`PNG_COLOURS` (Pillow, matplotlib's own
    image library: octree quantisation, which on these pictures compresses a quarter better than
    median cut, then zlib at its best compression)."""
    from PIL import Image

    with Image.open(io.BytesIO(data)) as image:
        image.convert("RGB").quantize(colors=PNG_COLOURS, method=Image.Quantize.FASTOCTREE,
                                      dither=Image.Dither.NONE).save(path, format="PNG", optimize=True)


def write_figures(report, directory) -> list[Figure]:
    """Every maker's pictures of ``report``'s cost, written under ``directory``."""
    figures: list[Figure] = []
    for name in MAKERS:
        module_name, function = name.split(":")
        module = importlib.import_module(f"{__name__}.{module_name}")
        figures += getattr(module, function)(report, Path(directory))
    return figures
