"""The terminal view of a sweep (a plain aligned grid of our own, then one line per boundary) and its JSON document."""

from __future__ import annotations

import json

from rich.text import Text

from .. import __version__
from ..render.json_out import clean_json

COLOUR = {"strong": "green", "holds": "green", "weak": "yellow", "fails": "red",
          "undecided": "magenta", "error": "bold red", "not-applicable": "dim"}


def _fmt(v):
    return "—" if v is None else f"{v:.3g}"


def _grid(console, heads: list[str], rows: list[list[str]], styles: list[list[str]], right: int = 0) -> None:
    """A plain aligned grid: a bold heading line, then one line per row, two spaces between columns.

    The first ``right`` columns (parameter values) are right-aligned; ``styles`` colours cells.
    """
    widths = [max([len(h)] + [len(r[i]) for r in rows]) for i, h in enumerate(heads)]

    def line(cells, cell_styles, bold=False):
        text = Text(style="bold" if bold else "")
        for i, (cell, width) in enumerate(zip(cells, widths)):
            if i:
                text.append("  ")
            padded = cell.rjust(width) if i < right else cell.ljust(width)
            text.append(padded, style=cell_styles[i] if cell_styles else "")
        text.rstrip()
        console.print(text, no_wrap=True, overflow="ignore", crop=False, soft_wrap=True)

    line(heads, None, bold=True)
    for cells, cell_styles in zip(rows, styles):
        line(cells, cell_styles)


def render(console, result) -> None:
    names = [a.name for a in result.axes]
    console.print(Text(f"sweep of {result.file}", style="bold"))
    rows, styles = [], []
    for p, r in zip(result.points, result.results):
        verdicts = [r[c]["verdict"] for c in result.conditions]
        rows.append([f"{p[n]:g}" for n in names] + verdicts)
        styles.append([""] * len(names) + [COLOUR.get(v, "") for v in verdicts])
    _grid(console, names + list(result.conditions), rows, styles, right=len(names))
    if result.boundaries:
        rb = result.options.get("recheck_budget")
        console.print(Text(f"boundaries (bisected to width {result.options['tolerance']:g}; both sides "
                           f"re-checked at budget {rb})", style="bold"))
        for b in result.boundaries:
            fixed = "".join(f", {k}={v:g}" for k, v in b["fixed"].items())
            line = Text(f"  {b['condition']}: {b['parameter']} ∈ [{b['interval'][0]:.6g}, {b['interval'][1]:.6g}]"
                        f"{fixed}  ")
            line.append(b["from"], style=COLOUR.get(b["from"], ""))
            line.append(" → ")
            line.append(b["to"], style=COLOUR.get(b["to"], ""))
            line.append(f"  (value {_fmt(b['left']['value'])} → {_fmt(b['right']['value'])})")
            console.print(line, no_wrap=True, overflow="ignore", crop=False, soft_wrap=True)
            where = _where(b)
            if where != "—":
                console.print(f"    where {where}", markup=False, highlight=False)
    for iso in result.isolated:
        at = "".join(f", {k}={v:g}" for k, v in iso["fixed"].items())
        console.print(f"isolated: {iso['condition']} is {iso['verdict']} at {iso['parameter']}={iso['value']:g}{at} "
                      f"only (neighbours: {' / '.join(iso['neighbours'])})", markup=False, highlight=False)
    for u in result.unstable:
        console.print(_unstable(u, result.options["budget"]), markup=False, highlight=False)
    console.print(f"{len(result.points)} values, {len(result.boundaries)} boundaries, "
                  f"{len(result.isolated)} isolated values, {len(result.unstable)} unstable changes, "
                  f"{result.seconds:.1f} s", markup=False, highlight=False)


def _unstable(u, budget) -> str:
    at = "".join(f", {k}={v:g}" for k, v in u["fixed"].items())
    again = u["recheck"]
    if u["kind"] == "point":
        return (f"unstable: {u['condition']} at {u['parameter']}={u['value']:g}{at} is {u['verdict']} at budget "
                f"{budget}, {again['entry']['verdict']} at budget {again['budget']}: not an isolated value")
    moved = "; ".join(f"{u['parameter']}={u[s]['param']:g} gives {again[s]['verdict']}" for s in u["unstable_sides"])
    return (f"unstable: {u['condition']} {u['from']} → {u['to']} in {u['parameter']} ∈ [{u['interval'][0]:.6g}, "
            f"{u['interval'][1]:.6g}]{at} at budget {budget}; at budget {again['budget']} {moved}: not a boundary")


def _where(b) -> str:
    """The (x, y) at which the change shows: the side with a witness first, else a side's extreme point."""
    sides = sorted((b["left"], b["right"]), key=lambda e: e.get("witness") is None)
    for e in sides:
        w = e.get("where")
        if w:
            vec = lambda v: "(" + ", ".join(f"{c:.3g}" for c in v) + ")"  # noqa: E731
            return f"{b['parameter']}={e['param']:g}: {vec(w['x'])}; {vec(w['y'])}"
    return "—"


def to_json(result, exit_code: int = 0) -> str:
    doc = {"tool": "costcheck", "version": __version__, "command": "sweep", **result.to_json(),
           "summary": {"points": len(result.points), "boundaries": len(result.boundaries),
                       "isolated": len(result.isolated), "unstable": len(result.unstable),
                       "exit_code": exit_code}}
    return json.dumps(clean_json(doc), indent=2, ensure_ascii=False)
