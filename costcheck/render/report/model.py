"""What a design-review report says, independent of HTML or Markdown.

Every sentence of the report is built here from the :class:`~costcheck.model.verdict.Verdict` and
:class:`~costcheck.model.verdict.Evidence` objects, so the two renderers cannot drift apart in what
they claim.  The wording keeps the evidence kinds apart (the vocabulary of docs/evidence.md):
"proved on the whole domain" only for ``proved``; "refuted at …" names the confirmed witness;
a ``sampled`` verdict says how many samples found no counterexample, and the page carries a
caution that this is evidence, not proof.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

from ...model.display import number, with_error
from ...model.verdict import CODE_MEANINGS, Verdict, Witness

#: what each condition means, in a reader's words; a condition added later shows its name
CONDITION_TITLES = {
    "twist": "Twist — a pure (Monge) matching exists",
    "nondegenerate": "Non-degeneracy — det D²ₓᵧc ≠ 0",
    "mtw": "Ma–Trudinger–Wang sign — the optimal map is continuous",
    "nncc": "Non-negative cross-curvature — the screening problem is convex",
    "target_c_convex": "c-convexity of the target — its c-segments stay inside it",
    "source_c_convex": "c-convexity of the source — its c-segments stay inside it",
    "loeper": "Loeper's maximum principle — along a c-segment the difference of costs peaks at an end",
    "index_form": "Index form — the cost depends on x only through one index (n > m)",
    "nested": "Nestedness — the level sets of a many-to-one model are nested",
}

#: the same conditions in a word or two, for table headings
CONDITION_NAMES = {
    "twist": "twist", "nondegenerate": "non-degeneracy", "mtw": "MTW", "nncc": "NNCC",
    "target_c_convex": "target c-convex", "source_c_convex": "source c-convex", "loeper": "Loeper",
    "index_form": "index form", "nested": "nestedness",
}


def condition_name(condition: str) -> str:
    """A condition's short plain name (its identifier for one added later without a name here)."""
    return CONDITION_NAMES.get(condition, condition)

#: extra vectors of a witness, as a reader names them
VECTOR_LABELS = {"y_prime": "y′", "xi": "ξ", "eta": "η"}

#: said under a generating function's formula (docs/conditions.md#generating-functions)
GENERATING_NOTE = ("A generating function, decreasing in its third variable; it is checked for its own five "
                   "conditions, on the effective cost −G(x, y, ζ(y)) along its level sets.")

CAUTION = ("A verdict whose evidence is “sampled” means that no counterexample was found among the "
           "sampled points at the stated resolution. That is evidence, not proof: a condition can fail "
           "between the samples. Only “proved” covers the whole domain, and “refuted” rests on a witness "
           "re-evaluated in high precision and enclosed in ball arithmetic (the enclosure is shown), which a "
           "reader can re-check.")


def named_point(names: Sequence[str], values: Sequence[float]) -> str:
    return ", ".join(f"{n} = {number(v, 6)}" for n, v in zip(names, values))


def evidence_words(v: Verdict, x_names: Sequence[str], y_names: Sequence[str]) -> str:
    """The plain-words statement of what the evidence establishes."""
    e = v.evidence
    if e.kind == "proved":
        return "proved on the whole domain"
    if e.kind == "refuted":
        if v.witness is None:
            return "refuted"
        w = v.witness
        return (f"refuted at x = ({named_point(x_names, w.x)}), y = ({named_point(y_names, w.y)}), "
                f"where the value is {with_error(w.value, w.error_bound)}")
    if e.kind == "sampled":
        count = f"{e.samples}" if e.samples is not None else "the"
        spacing = f" (spacing about {e.resolution:.3g})" if e.resolution is not None else ""
        return f"no counterexample in {count} samples{spacing}"
    if e.kind == "not_applicable":
        return "not applicable to this cost"
    return "undecided: the check could not reach a verdict"


@dataclass(frozen=True)
class WitnessRow:
    label: str
    coordinates: str


@dataclass(frozen=True)
class WitnessTable:
    condition: str
    rows: tuple[WitnessRow, ...]
    value: str
    confirmation: str


def witness_table(condition: str, w: Witness, x_names: Sequence[str], y_names: Sequence[str]) -> WitnessTable:
    rows = [WitnessRow("x", named_point(x_names, w.x)), WitnessRow("y", named_point(y_names, w.y))]
    for name, vec in w.vectors.items():
        names = x_names if w.vector_sides.get(name, "x") == "x" else y_names
        rows.append(WitnessRow(VECTOR_LABELS.get(name, name.replace("_", " ")), named_point(names, vec)))
    value = with_error(w.value, w.error_bound)
    return WitnessTable(condition, tuple(rows), value, w.confirmation)


@dataclass(frozen=True)
class VerdictRow:
    condition: str
    title: str
    verdict: str
    code: str
    kind: str
    words: str
    summary: str
    expected: str | None
    met: bool
    notes: tuple[str, ...]
    #: where the verdict holds when less than the domain ("on the non-degenerate part"), else ""
    scope: str = ""
    #: the code in plain words (the JSON's ``code_meaning``), so a reader needs no table; "" without a code
    meaning: str = ""

    @property
    def verdict_words(self) -> str:
        return f"{self.verdict} {self.scope}" if self.scope else self.verdict


@dataclass(frozen=True)
class FigureRef:
    caption: str
    png: str  # path relative to the report folder


@dataclass
class CostSection:
    id: str
    title: str
    file: str
    sense: str
    #: the expression as written (a sympy tree), or None for a cost given as a function
    written_expr: object
    n: int
    m: int
    domain: list[str]
    params: list[tuple[str, str]]
    verdicts: list[VerdictRow]
    witnesses: list[WitnessTable]
    figures: list[FigureRef] = field(default_factory=list)
    source: str | None = None
    notes: str | None = None
    seconds: float = 0.0
    #: the third variable's name for a generating function G(x, y, z) (then ``written_expr`` is G
    #: and ``m`` counts z), else None
    z: str | None = None

    @property
    def dimensions(self) -> str:
        """``n = 2, m = 2`` (for a generating function ``n = 2, m = 2 and z``)."""
        if self.z is None:
            return f"n = {self.n}, m = {self.m}"
        return f"n = {self.n}, m = {self.m - 1} and {self.z}"

    @property
    def formula_lhs(self) -> tuple[str, tuple[str, ...]]:
        """The name and arguments the formula is written with: ``c(x, y)``, ``s(x, y)`` or ``G(x, y, z)``."""
        if self.z is not None:
            return "G", ("x", "y", self.z)
        return ("s" if self.sense == "surplus" else "c"), ("x", "y")


def verdict_rows(report) -> list[VerdictRow]:
    cost = report.cost
    rows = []
    for name, v in report.verdicts.items():
        expected = cost.expect.get(name)
        rows.append(VerdictRow(name, CONDITION_TITLES.get(name, name), v.verdict, v.code, v.evidence.kind,
                               evidence_words(v, cost.x_names, cost.y_names), v.evidence.summary, expected,
                               expected is None or expected == v.verdict, tuple(v.notes),
                               v.scope.get("text", "") if v.scope else "", CODE_MEANINGS[v.code]))
    for mm in report.mismatches:
        if mm.condition not in report.verdicts:
            rows.append(VerdictRow(mm.condition, CONDITION_TITLES.get(mm.condition, mm.condition), mm.got, "",
                                   "", "not run", "", mm.expected, False, ()))
    return rows


def cost_section(report, figures: list[FigureRef]) -> CostSection:
    cost = report.cost
    domain = [f"x: {cost.domain.x.describe(cost.x_names)}", f"y: {cost.domain.y.describe(cost.y_names)}"]
    for key, texts in cost.domain.constraint_texts().items():
        domain += [f"{key}: {t}" for t in texts]
    raw = cost.raw or {}
    return CostSection(
        id=cost.id, title=cost.title, file=cost.file or "(in memory)", sense=cost.sense,
        written_expr=cost.written_expr if cost.written_expr is not None else cost.expr,
        n=cost.n, m=cost.m, domain=domain,
        params=[(k, str(v)) for k, v in cost.params.items()],
        verdicts=verdict_rows(report),
        witnesses=[witness_table(name, v.witness, cost.x_names, cost.y_names)
                   for name, v in report.verdicts.items() if v.witness is not None],
        figures=figures, source=cost.source, notes=raw.get("notes"), seconds=report.seconds,
        z=cost.generating.z if getattr(cost, "generating", None) is not None else None,
    )


def _option_words(key: str, value) -> str:
    if key == "prove":
        return "proofs not asked for (samples only)" if value is None else f"proofs: {value}"
    if key == "grid":  # nestedness's density grid: None is the default rule, not "all"
        return f"density grid = {'default' if value is None else f'{value} per axis'}"
    return f"{key} = {'all' if value is None else value}"


@dataclass
class ReportModel:
    sections: list[CostSection]
    conditions: list[str]
    errors: list[str]
    options: dict
    version: str
    created: str

    @property
    def options_line(self) -> str:
        """The run's options in words: ``prove = None`` means proofs were not asked for."""
        return ", ".join(_option_words(k, v) for k, v in self.options.items())

    @property
    def any_sampled(self) -> bool:
        return any(r.kind == "sampled" for s in self.sections for r in s.verdicts)

    @property
    def mismatches(self) -> int:
        return sum(not r.met for s in self.sections for r in s.verdicts)

    def cell(self, section: CostSection, condition: str) -> VerdictRow | None:
        return next((r for r in section.verdicts if r.condition == condition), None)
