"""The report as Markdown: the same model as the HTML page, formulas in LaTeX (``$$…$$``,
which common Markdown viewers typeset) and pictures as files beside it."""

from __future__ import annotations

from .model import CAUTION, CostSection, ReportModel


def _esc(text: str) -> str:
    """Table cells: a pipe would end the cell, a newline the row."""
    return str(text).replace("|", "\\|").replace("\n", " ")


def _math(s: CostSection) -> list[str]:
    if s.written_expr is None:
        return ["The cost is given as a Python function; there is no formula to show.", ""]
    import sympy as sp

    lhs = "s" if s.sense == "surplus" else "c"
    out = [f"$$ {lhs}(x, y) = {sp.latex(s.written_expr)} $$", ""]
    if s.sense == "surplus":
        out += ["A surplus, maximised; every condition is checked on the cost c = −s.", ""]
    return out


def _cell(model: ReportModel, s: CostSection, condition: str) -> str:
    r = model.cell(s, condition)
    if r is None:
        return "—"
    miss = "" if r.met else f" ✗ expected {r.expected}"
    return f"**{r.verdict_words}**{miss} ({r.kind.replace('_', ' ')}{', ' + r.code if r.code else ''})"


def _section(s: CostSection) -> list[str]:
    # an explicit anchor: viewers derive heading anchors differently, the summary table links to this
    out = [f'<a id="{s.id}"></a>', "", f"## {s.id} — {s.title}", "", f"`{s.file}` · n = {s.n}, m = {s.m} · checked in {s.seconds:.1f} s", ""]
    out += _math(s)
    out += ["### Domain", ""] + [f"- {d}" for d in s.domain] + [""]
    if s.params:
        out += ["### Parameters", "", ", ".join(f"{k} = {v}" for k, v in s.params), ""]
    out += ["### Verdicts", ""]
    for r in s.verdicts:
        expected = ""
        if r.expected:
            expected = f" (expected {r.expected}: {'met' if r.met else 'NOT met'})"
        out.append(f"- **{r.title}**: **{r.verdict_words}**{' [' + r.code + ']' if r.code else ''}{expected} — {r.words}.")
        if r.summary:
            out.append(f"  {r.summary}")
        out += [f"  Note: {n}" for n in r.notes]
    out.append("")
    for w in s.witnesses:
        out += [f"### Witness for {w.condition}", "", "| point | coordinates |", "|---|---|"]
        out += [f"| {_esc(r.label)} | {_esc(r.coordinates)} |" for r in w.rows]
        out.append(f"| value | {_esc(w.value)} |")
        if w.confirmation:
            out.append(f"| confirmed by | {_esc(w.confirmation)} |")
        out.append("")
    if s.figures:
        out += ["### Pictures", ""]
        for f in s.figures:
            out += [f"![{_esc(f.caption)}]({f.png})", "", f"*{f.caption}*", ""]
    out += ["### Source", "", s.source or "No source given in the file.", ""]
    if s.notes:
        out += ["### Notes", "", s.notes.strip(), ""]
    return out


def render_markdown(model: ReportModel) -> str:
    options = ", ".join(f"{k} = {'all' if v is None else v}" for k, v in model.options.items())
    out = ["# Transport-cost design review", "", f"costcheck {model.version} · {model.created} · {options}", "",
           f"{len(model.sections)} cost(s). Each cell gives the verdict, then how it was established "
           "(proved, refuted by a witness, sampled) and its stable code.", ""]
    if model.mismatches or model.errors:
        out += [f"**{model.mismatches} expectation(s) not met, {len(model.errors)} file(s) could not be read.**", ""]
        out += [f"- {e}" for e in model.errors] + [""]
    if model.any_sampled:
        out += [f"> **Caution.** {CAUTION}", ""]
    out += ["| cost | " + " | ".join(model.conditions) + " |", "|---" * (len(model.conditions) + 1) + "|"]
    for s in model.sections:
        out.append(f"| [{s.id}](#{s.id}) | " + " | ".join(_cell(model, s, c) for c in model.conditions) + " |")
    out.append("")
    for s in model.sections:
        out += _section(s)
    return "\n".join(out) + "\n"
