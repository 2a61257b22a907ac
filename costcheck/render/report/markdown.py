"""The report as Markdown: the same model as the HTML page, formulas in LaTeX (``$$…$$``,
which common Markdown viewers typeset) and pictures as files beside it."""

from __future__ import annotations

from .model import CAUTION, GENERATING_NOTE, CostSection, ReportModel, condition_name


# Every character that can start Markdown or HTML structure.  A title such as
# "<script>…" or "[x](javascript:…)" written into a report must stay text: the page
# escapes it for HTML (render/report/html.py), and this is the Markdown twin's part.
_MARKDOWN_PUNCTUATION = set("\\`*_{}[]()#+-.!|~>")


def _text(value) -> str:
    """A user string as inert Markdown text on one line (a newline could start a block)."""
    out = []
    for ch in " ".join(str(value).split()):
        if ch == "&":
            out.append("&amp;")
        elif ch == "<":
            out.append("&lt;")
        elif ch == ">":
            out.append("&gt;")
        elif ch in _MARKDOWN_PUNCTUATION:
            out.append("\\" + ch)
        else:
            out.append(ch)
    return "".join(out)


def _paragraphs(value) -> list[str]:
    """A multi-line user string (notes): its paragraphs kept, each line inert."""
    blocks = [b for b in str(value).strip().split("\n\n") if b.strip()]
    out: list[str] = []
    for block in blocks:
        out += [_text(block), ""]
    return out


def _esc(text: str) -> str:
    """Table cells: inert text (a pipe would end the cell, a newline the row)."""
    return _text(text)


def _anchor(cost_id: str) -> str:
    """An anchor from an id (the schema allows only letters, digits, '.', '_', '-'; kept to those)."""
    return "".join(ch for ch in str(cost_id) if ch.isalnum() or ch in "._-")


def _link(path: str) -> str:
    """A relative picture path as a link target: the characters that could end it, percent-encoded."""
    from urllib.parse import quote

    return quote(str(path), safe="/._-")


def _math(s: CostSection) -> list[str]:
    if s.written_expr is None:
        return ["The cost is given as a Python function; there is no formula to show.", ""]
    import sympy as sp

    name, args = s.formula_lhs
    out = [f"$$ {name}({', '.join(args)}) = {sp.latex(s.written_expr)} $$", ""]
    if s.z is not None:
        out += [GENERATING_NOTE, ""]
    elif s.sense == "surplus":
        out += ["A surplus, maximised; every condition is checked on the cost c = −s.", ""]
    return out


def _cell(model: ReportModel, s: CostSection, condition: str) -> str:
    r = model.cell(s, condition)
    if r is None:
        return "—"
    miss = "" if r.met else f" ✗ expected {r.expected}"
    return f"**{_text(r.verdict_words)}**{_text(miss)} ({_text(r.kind.replace('_', ' '))}{', ' + r.code if r.code else ''})"


def _section(s: CostSection) -> list[str]:
    # an explicit anchor: viewers derive heading anchors differently, the summary table links to this
    out = [f'<a id="{_anchor(s.id)}"></a>', "", f"## {_text(s.id)} — {_text(s.title)}", "",
           f"{_text(s.file)} · {s.dimensions} · checked in {s.seconds:.1f} s", ""]
    out += _math(s)
    out += ["### Domain", ""] + [f"- {_text(d)}" for d in s.domain] + [""]
    if s.params:
        out += ["### Parameters", "", ", ".join(f"{_text(k)} = {_text(v)}" for k, v in s.params), ""]
    out += ["### Verdicts", ""]
    for r in s.verdicts:
        expected = ""
        if r.expected:
            expected = f" (expected {r.expected}: {'met' if r.met else 'NOT met'})"
        code = " \\[" + _text(r.code) + "\\]" if r.code else ""
        out.append(f"- **{_text(r.title)}**: **{_text(r.verdict_words)}**{code}{_text(expected)} — {_text(r.words)}.")
        if r.code:
            out.append(f"  {_text(r.code)}: {_text(r.meaning)} (`costcheck explain {r.code}`).")
        if r.summary:
            out.append(f"  {_text(r.summary)}")
        out += [f"  Note: {_text(n)}" for n in r.notes]
    out.append("")
    for w in s.witnesses:
        out += [f"### Witness for {_text(condition_name(w.condition))}", "", "| point | coordinates |", "|---|---|"]
        out += [f"| {_esc(r.label)} | {_esc(r.coordinates)} |" for r in w.rows]
        out.append(f"| value | {_esc(w.value)} |")
        if w.confirmation:
            out.append(f"| confirmed by | {_esc(w.confirmation)} |")
        out.append("")
    if s.figures:
        out += ["### Pictures", ""]
        for f in s.figures:
            out += [f"![{_esc(f.caption)}]({_link(f.png)})", "", f"*{_text(f.caption)}*", ""]
    out += ["### Source", "", _text(s.source) if s.source else "No source given in the file.", ""]
    if s.notes:
        out += ["### Notes", ""] + _paragraphs(s.notes)
    return out


def render_markdown(model: ReportModel) -> str:
    options = model.options_line
    out = ["# Transport-cost design review", "", f"costcheck {model.version} · {model.created} · {options}", "",
           f"{len(model.sections)} cost(s). Each cell gives the verdict, then how it was established "
           "(proved, refuted by a witness, sampled) and its stable code.", ""]
    if model.mismatches or model.errors:
        out += [f"**{model.mismatches} expectation(s) not met, {len(model.errors)} file(s) could not be read.**", ""]
        out += [f"- {_text(e)}" for e in model.errors] + [""]
    if model.any_sampled:
        out += [f"> **Caution.** {CAUTION}", ""]
    out += ["| cost | " + " | ".join(_text(condition_name(c)) for c in model.conditions) + " |", "|---" * (len(model.conditions) + 1) + "|"]
    for s in model.sections:
        out.append(f"| [{_text(s.id)}](#{_anchor(s.id)}) | " + " | ".join(_cell(model, s, c) for c in model.conditions)
                   + " |")
    out.append("")
    for s in model.sections:
        out += _section(s)
    return "\n".join(out) + "\n"
