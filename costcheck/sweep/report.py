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
        bt = Table(title=f"boundaries (bisected to tolerance {result.options['tolerance']:g})")
        for col in ("condition", "at", "interval [a, b]", "verdict at a → b", "value at a", "value at b"):
            bt.add_column(col)
        for b in result.boundaries:
            at = ", ".join(f"{k}={v:g}" for k, v in b["fixed"].items()) or "—"
            bt.add_row(b["condition"], at, f"{b['parameter']} ∈ [{b['interval'][0]:.6g}, {b['interval'][1]:.6g}]",
                       f"{b['from']} → {b['to']}", _fmt(b["left"]["value"]), _fmt(b["right"]["value"]))
        console.print(bt)
    for iso in result.isolated:
        at = "".join(f", {k}={v:g}" for k, v in iso["fixed"].items())
        console.print(f"isolated: {iso['condition']} is {iso['verdict']} at {iso['parameter']}={iso['value']:g}{at} "
                      f"only (neighbours: {' / '.join(iso['neighbours'])})", markup=False)
    console.print(f"{len(result.points)} values, {len(result.boundaries)} boundaries, "
                  f"{len(result.isolated)} isolated values, {result.seconds:.1f} s", markup=False)


def to_json(result, exit_code: int = 0) -> str:
    doc = {"tool": "costcheck", "version": __version__, "command": "sweep", **result.to_json(),
           "summary": {"points": len(result.points), "boundaries": len(result.boundaries),
                       "isolated": len(result.isolated), "exit_code": exit_code}}
    return json.dumps(clean_json(doc), indent=2, ensure_ascii=False)
