"""Human-readable output for a terminal: a plain aligned grid, 80 columns, details on demand.

The compact view gives each cost one header line and each condition one line: the condition,
its verdict, the kind of evidence, the worst value found and the witness in short form.
Conditions that do not apply to a cost are counted in its header, not listed.  ``verbose``
adds, under each condition, the evidence in words, the full witness and the notes;
``failures`` keeps only the conditions that fail, are undecided or missed their expectation.
"""

from __future__ import annotations

import math
import textwrap
from dataclasses import dataclass, field
from typing import Sequence

from rich.console import Console
from rich.text import Text

from ..errors import CostFileError
from ..model.display import full_witness, number, short_witness
from ..model.report import CostReport
from ..model.verdict import Verdict, Witness

_GOOD = {"holds", "strong", "weak"}
_BAD = {"fails"}
#: what a verdict counts as in the summary line
_TALLY = {"holds": "hold", "strong": "hold", "weak": "hold", "fails": "fail", "undecided": "undecided",
          "not-applicable": "n/a"}

EVIDENCE_WORDS = {
    "proved": "proved",
    "refuted": "refuted",
    "sampled": "sampled",
    "not_applicable": "n/a",
    "undecided": "undecided",
}

WIDTH = 80
#: where each column starts: condition, verdict, evidence, worst value (right-aligned to its end), witness
_CONDITION, _VERDICT, _EVIDENCE, _VALUE_END, _DETAIL = 2, 18, 28, 46, 48
_INDENT = " " * 6  # the verbose paragraphs under a condition


def verdict_style(verdict: str) -> str:
    if verdict in _GOOD:
        return "bold green"
    if verdict in _BAD:
        return "bold red"
    return "yellow"


def format_witness(w: Witness, x_names: Sequence[str], y_names: Sequence[str]) -> str:
    """Every coordinate of the witness, its value with its error bound, how it was confirmed."""
    return full_witness(w, x_names, y_names)


def worst_value(v: Verdict) -> str:
    """The worst value in 4 digits; ``≈ 0`` when it is the witness's value and within its error bound."""
    w = v.witness
    if (v.value is not None and w is not None and w.error_bound and abs(v.value) <= w.error_bound
            and math.isclose(v.value, w.value, rel_tol=1e-9, abs_tol=w.error_bound)):
        return "≈ 0"
    return number(v.value, 4 if v.value is None or abs(v.value) >= 1e-4 or v.value == 0 else 3)


def _shown(v: Verdict, expected: str | None, failures: bool) -> bool:
    missed = bool(expected) and expected != v.verdict
    if failures:
        return v.verdict in ("fails", "undecided") or missed
    return v.verdict != "not-applicable" or missed


@dataclass
class TerminalView:
    """Prints reports as they arrive, then one summary line; ``width`` is at most 80."""

    console: Console
    verbose: bool = False
    failures: bool = False
    width: int = WIDTH
    _headed: bool = field(default=False, init=False)

    def __post_init__(self):
        self.width = max(60, min(WIDTH, self.width))

    def _print(self, text: Text | str, style: str = "") -> None:
        if isinstance(text, str):
            text = Text(text, style=style)
        self.console.print(text, no_wrap=True, overflow="ignore", crop=False, soft_wrap=True)

    def _column_heads(self) -> None:
        if self._headed:
            return
        self._headed = True
        heads = " " * _CONDITION + "condition".ljust(_VERDICT - _CONDITION) + "verdict".ljust(_EVIDENCE - _VERDICT)
        heads += "evidence"
        heads += " " * max(1, _VALUE_END - len(heads) - len("worst")) + "worst" + "  witness"
        line = Text(heads, style="bold")
        self._print(line)

    def report(self, report: CostReport) -> None:
        cost = report.cost
        rows = [(name, v) for name, v in report.verdicts.items()
                if self.verbose and not self.failures or _shown(v, cost.expect.get(name), self.failures)]
        if self.failures and not rows:
            return
        self._column_heads()
        hidden = sum(1 for v in report.verdicts.values() if v.verdict == "not-applicable") if not self.verbose else 0
        facts = f"n={cost.n} m={cost.m}" + (" surplus as -s" if cost.sense == "surplus" else "")
        generating = getattr(cost, "generating", None)  # a cached report's header carries its z too
        if generating is not None:  # the target side is (y, z): say so instead of m = m + 1
            facts = f"n={cost.n} m={cost.m - 1} G(x, y, {generating.z})"
        facts += f" · {report.seconds:.1f} s" + (f" · {hidden} n/a" if hidden and not self.failures else "")
        head = Text(cost.id, style="bold")
        head.append(f"  {facts}", style="dim")
        if cost.title:
            room = self.width - len(head.plain) - 3
            if room > 8:
                head.append(" — " + (cost.title if len(cost.title) <= room else cost.title[:room - 1] + "…"))
        self._print(head)
        if self.verbose:
            self._print(_INDENT[:2] + (cost.file or "in memory"), "dim")
        for name, v in rows:
            self._condition_line(name, v, cost.expect.get(name))
            if self.verbose:
                self._details(v, cost)
        for line in mismatch_lines(report, self.width, "  ✗ "):
            self._print(line)

    def _condition_line(self, name: str, v: Verdict, expected: str | None) -> None:
        line = Text(" " * _CONDITION + name.ljust(_VERDICT - _CONDITION - 1) + " ")
        word = "n/a" if v.verdict == "not-applicable" else v.verdict
        line.append(word, style=verdict_style(v.verdict))
        line.append(" " * max(1, _EVIDENCE - len(line.plain)))
        line.append(EVIDENCE_WORDS.get(v.evidence.kind, v.evidence.kind))
        value = worst_value(v)
        line.append(" " * max(1, _VALUE_END - len(line.plain) - len(value)) + value)
        detail = Text()
        if expected and expected != v.verdict:
            detail.append(f"expected {expected}", style="bold red")
        for part in (v.scope.get("text", ""), short_witness(v.witness) if v.witness is not None else ""):
            if part:
                detail.append(("; " if detail.plain else "") + part)
        if not detail.plain:
            self._print(line)
            return
        line.append(" " * max(2, _DETAIL - len(line.plain)))
        if len(line.plain) + len(detail.plain) <= self.width:
            self._print(line + detail)
            return
        line.rstrip()  # the witness goes below, wrapped
        self._print(line)
        for piece in textwrap.wrap(detail.plain, self.width - len(_INDENT), break_on_hyphens=False):
            self._print(_INDENT + piece, "red" if piece.startswith("expected") else "")

    def _details(self, v: Verdict, cost) -> None:
        paragraphs = [v.evidence.summary]
        if v.value is not None and v.value_meaning:
            paragraphs.append(f"worst value: {v.value_meaning}")
        if v.witness is not None:
            paragraphs.append("witness: " + full_witness(v.witness, cost.x_names, cost.y_names))
        paragraphs += [f"note: {note}" for note in v.notes]
        for paragraph in paragraphs:
            for piece in textwrap.wrap(paragraph, self.width - len(_INDENT), break_on_hyphens=False,
                                       subsequent_indent="  "):
                self._print(_INDENT + piece)

    def summary(self, reports: list[CostReport], errors: list[CostFileError]) -> None:
        self._print(summary_line(reports, errors),
                    "bold red" if errors or any(r.mismatches for r in reports) else "bold")
        if any(v.evidence.kind == "sampled" for r in reports for v in r.verdicts.values()):
            self._print("'sampled': no counterexample among the samples; evidence, not proof.", "dim")
        if reports:
            hint = "costcheck explain NAME: what a word means"
            self._print(hint if self.verbose else "--verbose: evidence, witnesses, notes; " + hint, "dim")


def mismatch_lines(report: CostReport, width: int, mark: str = "✗ ") -> list[Text]:
    """One line per missed expectation naming the file; the conditions left out (``--only``) in one
    line for the cost, within ``width``, not one line each."""
    cost = report.cost
    lines = []
    not_run = [mm.condition for mm in report.mismatches if mm.got == "not run"]
    for mm in report.mismatches:
        if mm.got != "not run":
            lines.append(Text(mark, style="bold red")
                         + Text(f"{cost.file or cost.id}: {mm.condition}: expected {mm.expected}, got {mm.got}"))
    if not_run:
        text = f"{cost.id}: expected, not run: {', '.join(not_run)}"
        room = width - len(mark)
        lines.append(Text(mark, style="bold red") + Text(text if len(text) <= room else text[:room - 1] + "…"))
    return lines


def summary_line(reports: list[CostReport], errors: list[CostFileError]) -> str:
    """``27 costs: 109 hold, 66 fail, 2 undecided, 68 n/a; 0 expectations unmet; 48.3 s``.

    The seconds are those the checks took, as each report records them: a result from the
    cache prints exactly as it did when it was computed.
    """
    tally = dict.fromkeys(("hold", "fail", "undecided", "n/a"), 0)
    for r in reports:
        for v in r.verdicts.values():
            key = _TALLY.get(v.verdict, "undecided")
            tally[key] += 1
    unmet = sum(len(r.mismatches) for r in reports)
    text = f"{len(reports)} cost{'s' if len(reports) != 1 else ''}: " + ", ".join(f"{n} {k}" for k, n in tally.items())
    text += f"; {unmet} expectation{'s' if unmet != 1 else ''} unmet"
    if errors:
        text += f"; {len(errors)} file error{'s' if len(errors) != 1 else ''}"
    if reports:
        text += f"; {sum(r.seconds for r in reports):.1f} s"
    return text
