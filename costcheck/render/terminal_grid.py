"""The view of many cost files at once: one line per cost, one column per condition.

A catalog of thirty costs in the one-line-per-condition view (:mod:`.terminal`) runs to a few
hundred lines; here it is one line per cost, so it fits a screen or two in 80 columns and every
failure stays visible as a cell.  A cell is the verdict in four letters and a mark for its
evidence: ``*`` proved, or refuted by a certified witness; no mark, sampled (evidence, not
proof).  A cell whose verdict is not the file's expectation is drawn in reverse video and the
mismatch is listed under the grid.  Only the conditions that apply to some cost of a section get
a column; a section starts where the conditions change (the generating functions' own five).
Witnesses and evidence in words are behind ``--verbose`` (the per-condition view).
"""

from __future__ import annotations

import textwrap
from dataclasses import dataclass, field

from rich.console import Console
from rich.text import Text

from ..conditions import REGISTRY
from ..errors import CostFileError
from ..model.report import CostReport
from .terminal import WIDTH, mismatch_lines, summary_line, verdict_style

#: column headings, at most five letters
HEADS = {"twist": "twist", "nondegenerate": "ndeg", "mtw": "mtw", "nncc": "nncc", "target_c_convex": "tcc",
         "source_c_convex": "scc", "loeper": "loep", "index_form": "index", "nested": "nest",
         "z_monotone": "zmon", "g_twist": "gtw", "g_dual_twist": "gdtw", "g_nondegenerate": "gndeg",
         "g_mtw": "gmtw"}
#: verdict words in four letters (a failure in capitals, so it stands out without colour)
WORDS = {"holds": "hold", "strong": "strg", "weak": "weak", "fails": "FAIL", "undecided": "undc",
         "not-applicable": "·", "error": "err"}
CERTIFIED = {"proved", "refuted"}
#: column order: the registry's (the order of docs/conditions.md; a generating function's five last)
ORDER = {name: i for i, name in enumerate(REGISTRY)}
CELL = 5  # four letters and the evidence mark
LEGEND = ("* proved, or refuted by a certified witness; unmarked: sampled (evidence, not proof); "
          "undc undecided, · not applicable. --verbose: witnesses and evidence")


def cell_text(verdict: str, evidence: str) -> str:
    return WORDS.get(verdict, verdict[:4]) + ("*" if evidence in CERTIFIED else "")


@dataclass
class GridView:
    """Collects the reports of a run and prints them as one grid at the end."""

    console: Console
    failures: bool = False
    width: int = WIDTH
    reports: list[CostReport] = field(default_factory=list)

    def report(self, report: CostReport) -> None:
        self.reports.append(report)

    def _print(self, text: Text | str, style: str = "") -> None:
        if isinstance(text, str):
            text = Text(text, style=style)
        self.console.print(text, no_wrap=True, overflow="ignore", crop=False, soft_wrap=True)

    def _interesting(self, report: CostReport) -> bool:
        return bool(report.mismatches) or any(v.verdict in ("fails", "undecided") for v in report.verdicts.values())

    def _section(self, reports: list[CostReport]) -> None:
        names = sorted(reports[0].verdicts, key=lambda c: ORDER.get(c, len(ORDER)))
        columns = [c for c in names
                   if any(r.verdicts[c].verdict != "not-applicable" or r.cost.expect.get(c) for r in reports)]
        widths = [max(CELL, len(HEADS.get(c, c[:5]))) for c in columns]
        room = self.width - sum(w + 1 for w in widths)
        id_width = max(8, min(max(len(r.cost.id) for r in reports), room))
        head = Text("cost".ljust(id_width), style="bold")
        for c, w in zip(columns, widths):
            head.append(" " + HEADS.get(c, c[:5]).ljust(w), style="bold")
        head.rstrip()
        self._print(head)
        for r in reports:
            name = r.cost.id if len(r.cost.id) <= id_width else r.cost.id[:id_width - 1] + "…"
            line = Text(name.ljust(id_width))
            for c, w in zip(columns, widths):
                v = r.verdicts[c]
                expected = r.cost.expect.get(c)
                style = verdict_style(v.verdict) if v.verdict != "not-applicable" else "dim"
                if expected and expected != v.verdict:
                    style = "reverse bold red"
                line.append(" ")
                line.append(cell_text(v.verdict, v.evidence.kind).ljust(w), style=style)
            line.rstrip()
            self._print(line)

    def summary(self, reports: list[CostReport], errors: list[CostFileError]) -> None:
        shown = [r for r in self.reports if self._interesting(r)] if self.failures else self.reports
        sections: dict[frozenset, list[CostReport]] = {}
        for r in shown:  # one section per set of conditions, each in file order
            sections.setdefault(frozenset(r.verdicts), []).append(r)
        for section in sections.values():
            self._section(section)
        for r in self.reports:
            for line in mismatch_lines(r, self.width):
                self._print(line)
        self._print(summary_line(reports, errors),
                    "bold red" if errors or any(r.mismatches for r in reports) else "bold")
        for piece in textwrap.wrap(LEGEND, self.width):
            self._print(piece, "dim")
