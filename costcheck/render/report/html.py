"""The report as one self-contained HTML page: inline CSS, images as data URIs, formulas in
MathML (sympy's presentation printer; browsers render it natively, no script, no network)."""

from __future__ import annotations

import base64
from html import escape
from pathlib import Path

from .model import CAUTION, GENERATING_NOTE, CostSection, ReportModel, VerdictRow, condition_name

CSS = """
body { font: 15px/1.5 system-ui, -apple-system, "Segoe UI", sans-serif; color: #1a1a1a; margin: 0 auto;
       max-width: 72rem; padding: 1.5rem 2rem 4rem; }
h1 { font-size: 1.7rem; margin-bottom: .2rem; } h2 { margin-top: 2.8rem; border-bottom: 2px solid #ccc; }
h3 { font-size: 1.05rem; margin: 1.4rem 0 .4rem; }
.meta, .dim { color: #555; font-size: .9rem; }
.caution { border-left: 5px solid #b07000; background: #fff6e0; padding: .7rem 1rem; margin: 1rem 0; }
.problem { border-left: 5px solid #8b1a1a; background: #fbeaea; padding: .7rem 1rem; margin: 1rem 0; }
table { border-collapse: collapse; margin: .5rem 0 1rem; }
th, td { border: 1px solid #bbb; padding: .3rem .6rem; text-align: left; vertical-align: top; }
th { background: #eee; }
/* every table sits in its own scroll box: if one is still wider than the page (a very narrow
   window), it scrolls by itself and the page keeps its width */
.scroll { max-width: 100%; overflow-x: auto; }
/* the summary shares the page width among its columns (fixed layout) and wraps inside a cell,
   breaking a long code anywhere, rather than growing past the right edge (issue 21: at 1280 px
   it pushed columns off-screen) */
table.summary { table-layout: fixed; width: 100%; font-size: .85rem; }
table.summary th, table.summary td { padding: .25rem .4rem; overflow-wrap: anywhere; }
table.summary th:first-child { width: 9rem; }
table.summary .kind { font-size: .78rem; }
td.coords { font-size: .8rem; overflow-wrap: anywhere; font-variant-numeric: tabular-nums; }
.v { font-weight: 600; }
.v-holds, .v-strong { background: #dff2df; } .v-weak { background: #fdf0d0; }
.v-fails { background: #f6d4d4; } .v-undecided, .v-not-applicable { background: #eeeeee; }
.miss { color: #8b1a1a; font-weight: 700; }
.kind { color: #444; font-size: .85rem; } abbr { text-decoration: underline dotted; }
.meaning { font-size: .92rem; }
math[display="block"] { font-size: 1.25rem; margin: .6rem 0; max-width: 100%; overflow-x: auto; }
figure { margin: 1rem 0; } figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { font-size: .88rem; color: #333; max-width: 60rem; }
code { background: #f3f3f3; padding: 0 .2rem; }
a { color: #1a4f8b; }
"""


def _math(section: CostSection) -> str:
    if section.written_expr is None:
        return "<p>The cost is given as a Python function; there is no formula to show.</p>"
    from sympy.printing.mathml import mathml

    # sympy writes parentheses as plain <mo> fences, which MathML stretches to the height of what
    # they hold: around a fraction or a power browsers draw them several lines tall
    body = (mathml(section.written_expr, printer="presentation")
            .replace("<mo>(</mo>", '<mo stretchy="false">(</mo>').replace("<mo>)</mo>", '<mo stretchy="false">)</mo>'))
    name, args = section.formula_lhs
    arguments = "<mo>,</mo>".join(f"<mi>{escape(a)}</mi>" for a in args)
    formula = (f'<math display="block" xmlns="http://www.w3.org/1998/Math/MathML"><mrow><mi>{name}</mi>'
               f'<mo stretchy="false">(</mo>{arguments}<mo stretchy="false">)</mo><mo>=</mo>{body}'
               "</mrow></math>")
    if section.z is not None:
        formula += f"<p class=dim>{escape(GENERATING_NOTE)}</p>"
    elif section.sense == "surplus":
        formula += "<p class=dim>A surplus, maximised; every condition is checked on the cost c = −s.</p>"
    return formula


def _verdict_cell(row: VerdictRow | None) -> str:
    if row is None:
        return '<td class="cell dim">—</td>'
    miss = "" if row.met else f' <span class="miss">✗ expected {escape(row.expected or "")}</span>'
    kind = row.kind.replace("_", " ")
    return (f'<td class="cell v-{escape(row.verdict)}"><span class="v">{escape(row.verdict_words)}</span>{miss}'
            f'<br><span class="kind">{escape(kind)}{" · " + _code(row) if row.code else ""}</span></td>')


def _code(row: VerdictRow) -> str:
    """The code, its meaning shown on hovering (the verdict list below says it in full); it may
    break after its separators, so a narrow column wraps it between words."""
    code = breakable(row.code)
    return f'<abbr title="{escape(row.meaning)}">{code}</abbr>' if row.meaning else code


def breakable(code: str) -> str:
    return escape(code).replace("_", "_<wbr>").replace("-", "-<wbr>")


def _summary_table(model: ReportModel) -> str:
    head = "".join(f'<th title="{escape(c)}">{escape(condition_name(c))}</th>' for c in model.conditions)
    rows = []
    for s in model.sections:
        cells = "".join(_verdict_cell(model.cell(s, c)) for c in model.conditions)
        rows.append(f'<tr><td><a href="#{escape(s.id)}">{escape(s.id)}</a><br>'
                    f'<span class="dim">{escape(s.title)}</span></td>{cells}</tr>')
    return (f'<div class="scroll"><table class="summary"><thead><tr><th>cost</th>{head}</tr></thead>'
            f"<tbody>{''.join(rows)}</tbody></table></div>")


def _verdicts(section: CostSection) -> str:
    items = []
    for r in section.verdicts:
        expected = ""
        if r.expected:
            expected = (f' <span class="dim">(expected {escape(r.expected)}: met)</span>' if r.met
                        else f' <span class="miss">(expected {escape(r.expected)}: NOT met)</span>')
        notes = "".join(f'<br><span class="dim">Note: {escape(n)}</span>' for n in r.notes)
        detail = f'<br><span class="dim">{escape(r.summary)}</span>' if r.summary else ""
        if r.code:
            detail = (f'<br><span class="meaning">{escape(r.code)}: {escape(r.meaning)} '
                      f'(<code>costcheck explain {escape(r.code)}</code>)</span>{detail}')
        items.append(f"<li><b>{escape(r.title)}</b>: <span class=\"v\">{escape(r.verdict_words)}</span>"
                     f"{' [' + escape(r.code) + ']' if r.code else ''}{expected} — {escape(r.words)}."
                     f"{detail}{notes}</li>")
    return f"<ul>{''.join(items)}</ul>"


def _witnesses(section: CostSection) -> str:
    out = []
    for w in section.witnesses:
        rows = "".join(f'<tr><th>{escape(r.label)}</th><td class="coords">{escape(r.coordinates)}</td></tr>'
                       for r in w.rows)
        rows += f"<tr><th>value</th><td>{escape(w.value)}</td></tr>"
        if w.confirmation:
            rows += f"<tr><th>confirmed by</th><td>{escape(w.confirmation)}</td></tr>"
        out.append(f'<h3>Witness for {escape(condition_name(w.condition))}</h3><div class="scroll"><table>{rows}</table></div>')
    return "".join(out)


def _figures(section: CostSection, root: Path) -> str:
    out = []
    for f in section.figures:
        data = base64.b64encode((root / f.png).read_bytes()).decode("ascii")
        out.append(f'<figure><img src="data:image/png;base64,{data}" alt="{escape(f.caption)}">'
                   f"<figcaption>{escape(f.caption)}</figcaption></figure>")
    return "".join(out)


def _section(s: CostSection, root: Path) -> str:
    params = ""
    if s.params:
        params = "<h3>Parameters</h3><p>" + ", ".join(f"{escape(k)} = {escape(v)}" for k, v in s.params) + "</p>"
    domain = "".join(f"<li>{escape(d)}</li>" for d in s.domain)
    source = f"<h3>Source</h3><p>{escape(s.source)}</p>" if s.source else \
        "<h3>Source</h3><p class=dim>No source given in the file.</p>"
    notes = f"<h3>Notes</h3><p>{escape(s.notes)}</p>" if s.notes else ""
    figures = _figures(s, root)
    return (f'<section id="{escape(s.id)}"><h2>{escape(s.id)} — {escape(s.title)}</h2>'
            f'<p class="meta">{escape(s.file)} · {escape(s.dimensions)} · checked in {s.seconds:.1f} s</p>'
            f"{_math(s)}<h3>Domain</h3><ul>{domain}</ul>{params}"
            f"<h3>Verdicts</h3>{_verdicts(s)}{_witnesses(s)}"
            f"{'<h3>Pictures</h3>' + figures if figures else ''}{source}{notes}</section>")


def render_html(model: ReportModel, root: Path) -> str:
    """The page; ``root`` is the report folder the figure paths are relative to."""
    options = model.options_line
    caution = f'<div class="caution"><b>Caution.</b> {escape(CAUTION)}</div>' if model.any_sampled else ""
    problems = ""
    if model.mismatches or model.errors:
        items = "".join(f"<li>{escape(e)}</li>" for e in model.errors)
        problems = (f'<div class="problem"><b>{model.mismatches} expectation(s) not met, '
                    f"{len(model.errors)} file(s) could not be read.</b><ul>{items}</ul></div>")
    sections = "".join(_section(s, root) for s in model.sections)
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
            f'<meta name="viewport" content="width=device-width, initial-scale=1"><link rel="icon" href="data:,">'
            f"<title>costcheck report</title><style>{CSS}</style></head><body>"
            f"<h1>Transport-cost design review</h1>"
            f'<p class="meta">costcheck {escape(model.version)} · {escape(model.created)} · {escape(options)}</p>'
            f"<p>{len(model.sections)} cost(s). Each cell gives the verdict, then how it was established "
            f"(proved, refuted by a witness, sampled) and its stable code.</p>"
            f"{problems}{caution}{_summary_table(model)}{sections}</body></html>\n")
