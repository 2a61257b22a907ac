"""Design-review reports: ``costcheck report PATH... --out DIR``.

Writes ``DIR/index.html`` (one self-contained page: CSS inline, pictures as data URIs, formulas
in MathML; it opens offline and needs no script), ``DIR/report.md`` (the same content, LaTeX
formulas, pictures linked) and ``DIR/figures/<cost id>/`` (every picture of
:data:`costcheck.render.plots.MAKERS`, PNG and SVG).  :mod:`.model` decides what is said;
:mod:`.html` and :mod:`.markdown` only lay it out.
"""

from __future__ import annotations

import datetime as _dt
from pathlib import Path

from ... import __version__
from ..plots import write_figures
from .html import render_html
from .markdown import render_markdown
from .model import FigureRef, ReportModel, cost_section


def build_model(reports, errors, out: Path, options: dict) -> ReportModel:
    sections, conditions = [], []
    for report in reports:
        figures = write_figures(report, out / "figures" / report.cost.id)
        refs = [FigureRef(f.caption, f.png.relative_to(out).as_posix()) for f in figures]
        section = cost_section(report, refs)
        sections.append(section)
        conditions += [r.condition for r in section.verdicts if r.condition not in conditions]
    created = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    return ReportModel(sections, conditions, [str(e) for e in errors], options, __version__, created)


def write_report(reports, errors, out, *, options: dict) -> list[Path]:
    """Write the page and its Markdown twin into ``out``; return the two paths."""
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    model = build_model(reports, errors, out, options)
    html_path, md_path = out / "index.html", out / "report.md"
    html_path.write_text(render_html(model, out), encoding="utf-8")
    md_path.write_text(render_markdown(model), encoding="utf-8")
    return [html_path, md_path]
