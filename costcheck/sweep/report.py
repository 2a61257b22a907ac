"""Terminal tables (rich) and the JSON document of a sweep."""

from __future__ import annotations

import json

from rich.table import Table

from .. import __version__
from ..render.json_out import clean_json

COLOUR = {"strong": "green", "holds": "green", "weak": "yellow", "fails": "red",
          "undecided": "magenta", "error": "bold red", "not-applicable": "dim"}


def _fmt(v):
    return "—" if v is None else f"{v:.3g}"


def render(console, result) -> None:
    names = [a.name for a in result.axes]
    table = Table(title=f"sweep of {result.file}", show_lines=False)
    for n in names:
        table.add_column(n, justify="right")
    for c in result.conditions:
        table.add_column(c)
    for p, r in zip(result.points, result.results):
        cells = [f"{p[n]:g}" for n in names]
        for c in result.conditions:
            v = r[c]["verdict"]
            cells.append(f"[{COLOUR.get(v, 'white')}]{v}[/]")
        table.add_row(*cells)
    console.print(table)
    if result.boundaries:
        rb = result.options.get("recheck_budget")
        bt = Table(title=f"boundaries (bisected to tolerance {result.options['tolerance']:g}; both sides "
                         f"re-checked at budget {rb})")
        two = len(result.axes) > 1
        for col in (("condition",) + (("fixed",) if two else ())
                    + ("interval [a, b]", "verdict at a → b", "value at a", "value at b", "where (x; y)")):
            bt.add_column(col)
        for b in result.boundaries:
            fixed = (", ".join(f"{k}={v:g}" for k, v in b["fixed"].items()),) if two else ()
            bt.add_row(b["condition"], *fixed, f"{b['parameter']} ∈ [{b['interval'][0]:.6g}, {b['interval'][1]:.6g}]",
                       f"{b['from']} → {b['to']}", _fmt(b["left"]["value"]), _fmt(b["right"]["value"]), _where(b))
        console.print(bt)
    for iso in result.isolated:
        at = "".join(f", {k}={v:g}" for k, v in iso["fixed"].items())
        console.print(f"isolated: {iso['condition']} is {iso['verdict']} at {iso['parameter']}={iso['value']:g}{at} "
                      f"only (neighbours: {' / '.join(iso['neighbours'])})", markup=False)
    for u in result.unstable:
        console.print(_unstable(u, result.options["budget"]), markup=False)
    console.print(f"{len(result.points)} values, {len(result.boundaries)} boundaries, "
                  f"{len(result.isolated)} isolated values, {len(result.unstable)} unstable changes, "
                  f"{result.seconds:.1f} s", markup=False)


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
