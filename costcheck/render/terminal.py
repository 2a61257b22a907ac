"""Human-readable output for a terminal (rich), one table per cost."""

from __future__ import annotations

from typing import Sequence

from rich.console import Console
from rich.table import Table
from rich.text import Text

from ..model.verdict import CostReport
from ..errors import CostFileError
from ..model.verdict import Verdict, Witness

_GOOD = {"holds", "strong", "weak"}
_BAD = {"fails"}

EVIDENCE_WORDS = {
    "proved": "proved",
    "refuted": "refuted",
    "sampled": "sampled",
    "not_applicable": "n/a",
    "undecided": "undecided",
}


def verdict_style(verdict: str) -> str:
    if verdict in _GOOD:
        return "bold green"
    if verdict in _BAD:
        return "bold red"
    return "yellow"


def _vector(names: Sequence[str], values: Sequence[float]) -> str:
    return "(" + ", ".join(f"{n}={v:.6g}" for n, v in zip(names, values)) + ")"


def format_witness(w: Witness, x_names: Sequence[str], y_names: Sequence[str]) -> str:
    parts = [f"x={_vector(x_names, w.x)}", f"y={_vector(y_names, w.y)}"]
    for name, vec in w.vectors.items():
        names = x_names if w.vector_sides.get(name, "x") == "x" else y_names
        label = {"y_prime": "y'", "xi": "ξ", "eta": "η"}.get(name, name)
        parts.append(f"{label}=({', '.join(f'{v:.4g}' for v in vec)})" if name in ("xi", "eta")
                     else f"{label}={_vector(names, vec)}")
    value = f"value {w.value:.6g}"
    if w.error_bound is not None:
        value += f" ± {w.error_bound:.2g}"
    parts.append(value)
    if w.confirmation:
        parts.append(f"[{w.confirmation}]")
    return " ".join(parts)


def _value(v: Verdict) -> str:
    return "" if v.value is None else f"{v.value:.4g}"


def render_report(console: Console, report: CostReport) -> None:
    cost = report.cost
    head = Text(cost.id, style="bold")
    if cost.title:
        head.append(f" — {cost.title}")
    head.append(f"  ({cost.file or 'in memory'}, n={cost.n}, m={cost.m}"
                f"{', surplus checked as -s' if cost.sense == 'surplus' else ''}, {report.seconds:.1f} s)", style="dim")
    console.print(head)
    table = Table(show_header=True, header_style="bold", expand=False, pad_edge=False)
    table.add_column("condition")
    table.add_column("verdict", max_width=16)  # a scope ("on the non-degenerate part") wraps
    # no code column: a code is the condition and its verdict word, both already in the row
    table.add_column("evidence")
    table.add_column("worst value", justify="right")
    table.add_column("what was established", overflow="fold")
    for name, v in report.verdicts.items():
        expected = cost.expect.get(name)
        verdict = Text(v.verdict, style=verdict_style(v.verdict))
        if v.scope.get("text"):  # the part it was decided on is part of the verdict's words
            verdict.append(f" {v.scope['text']}", style="bold")
        if expected and expected != v.verdict:
            verdict.append(f" (expected {expected})", style="bold red")
        detail = v.evidence.summary
        if v.witness is not None:
            detail += "\nwitness: " + format_witness(v.witness, cost.x_names, cost.y_names)
        for note in v.notes:
            detail += f"\nnote: {note}"
        table.add_row(name, verdict, EVIDENCE_WORDS.get(v.evidence.kind, v.evidence.kind), _value(v), detail)
    console.print(table)
    for mm in report.mismatches:
        console.print(f"  [bold red]✗[/] {cost.file or cost.id}: {mm.condition}: expected {mm.expected}, got {mm.got}")


def render_summary(console: Console, reports: list[CostReport], errors: list[CostFileError]) -> None:
    mismatches = sum(len(r.mismatches) for r in reports)
    sampled = any(v.evidence.kind == "sampled" for r in reports for v in r.verdicts.values())
    line = f"{len(reports)} cost(s) checked, {mismatches} expectation(s) not met, {len(errors)} file error(s)"
    style = "bold red" if mismatches or errors else "bold green"
    console.print(Text(line, style=style))
    if sampled:
        console.print(Text("'sampled' verdicts found no counterexample among the samples: evidence, not proof.",
                           style="dim"))
    if reports:
        console.print(Text("What a code or word means: costcheck explain NAME (e.g. mtw-fails, sampled; see docs/).",
                           style="dim"))
