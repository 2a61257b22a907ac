"""One cost's report: its verdicts, the time they took, and how a person or a program reads them.

``repr(report)`` is one line per cost plus one per condition; in a notebook the report shows as
a small table (``_repr_html_``); ``to_dict()`` is the cost's entry of ``costcheck check --json``.
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from .display import number, short_witness
from .verdict import Verdict

if TYPE_CHECKING:  # the cost model imports sympy; a report stays light (the cached path)
    from .cost import Cost


@dataclass(frozen=True)
class Mismatch:
    condition: str
    expected: str
    got: str


@dataclass(repr=False)
class CostReport:
    #: the cost checked; for a result read from the cache, a :class:`~costcheck.model.header.CostHeader`
    #: (the file's names, expectations and labels, no expression): renderers read only those
    cost: Cost
    verdicts: dict[str, Verdict]
    seconds: float
    options: dict = field(default_factory=dict)

    @property
    def mismatches(self) -> list[Mismatch]:
        out = []
        for condition, expected in self.cost.expect.items():
            verdict = self.verdicts.get(condition)
            got = verdict.verdict if verdict else "not run"
            if got != expected:
                out.append(Mismatch(condition, expected, got))
        return out

    def to_dict(self) -> dict:
        """The cost's entry of the JSON document (``costcheck check --json``), as Python values."""
        cost = self.cost
        generating = getattr(cost, "generating", None)  # a Cost's spec or a cached header's label: both name z
        return {
            "id": cost.id,
            "file": cost.file,
            "title": cost.title,
            "sense": cost.sense,
            "n": cost.n,
            "m": cost.m,
            **({"generating": {"z": generating.z}} if generating is not None else {}),
            "seconds": round(self.seconds, 3),
            "checks": {name: v.to_json(cost.x_names, cost.y_names) for name, v in self.verdicts.items()},
            "expect": dict(cost.expect),
            "mismatches": [{"condition": mm.condition, "expected": mm.expected, "got": mm.got}
                           for mm in self.mismatches],
        }

    def _rows(self) -> list[tuple[str, str, str, str, str]]:
        rows = []
        expected = self.cost.expect
        for name, v in self.verdicts.items():
            detail = short_witness(v.witness) if v.witness is not None else ""
            if expected.get(name) and expected[name] != v.verdict:
                detail = f"expected {expected[name]}" + (f"; {detail}" if detail else "")
            rows.append((name, v.words, v.evidence.kind.replace("_", " "), number(v.value), detail))
        return rows

    def _title(self) -> str:
        cost = self.cost
        return (f"{cost.id}: n={cost.n}, m={cost.m}" + (", surplus checked as -s" if cost.sense == "surplus" else "")
                + f", {self.seconds:.1f} s")

    def __repr__(self) -> str:
        rows = self._rows()
        widths = [max((len(r[i]) for r in rows), default=0) for i in range(4)]
        lines = [f"<CostReport {self._title()}>"]
        for row in rows:
            cells = [row[0].ljust(widths[0]), row[1].ljust(widths[1]), row[2].ljust(widths[2]),
                     row[3].rjust(widths[3]), row[4]]
            lines.append(("  " + "  ".join(cells)).rstrip())
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        """A small table for a notebook: the same columns as the terminal's compact view."""
        e = html.escape
        colour = {"holds": "#1a7f37", "strong": "#1a7f37", "weak": "#1a7f37", "fails": "#cf222e"}
        cells = "".join(
            f"<tr><td>{e(name)}</td><td style='color:{colour.get(words.split()[0], '#9a6700')}'><b>{e(words)}</b></td>"
            f"<td>{e(kind)}</td><td style='text-align:right'>{e(value)}</td><td>{e(detail)}</td></tr>"
            for name, words, kind, value, detail in self._rows())
        head = "".join(f"<th style='text-align:left'>{h}</th>" for h in
                       ("condition", "verdict", "evidence", "worst value", "witness"))
        title = e(self._title()) + (f" — {e(self.cost.title)}" if self.cost.title else "")
        return (f"<div><p><b>{title}</b></p><table><thead><tr>{head}</tr></thead><tbody>{cells}</tbody></table>"
                "<p><small>'sampled' means no counterexample among the samples: evidence, not proof. "
                "Full evidence: <code>report.verdicts[name].evidence.summary</code>.</small></p></div>")
