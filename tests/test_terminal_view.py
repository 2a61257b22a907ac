"""The terminal's compact view, its details on demand, the summary line and the numbers in them.

The reports here are made up to exercise the layout (demo data: no claim about any cost); the
verdicts of real costs are tested elsewhere.
"""

from __future__ import annotations

import io
import json
import warnings

from rich.console import Console

from costcheck.cli import main
from costcheck.model.display import number, short_witness, with_error
from costcheck.model.header import CostHeader
from costcheck.model.report import CostReport
from costcheck.model.verdict import Evidence, Verdict, Witness, not_applicable
from costcheck.render.terminal import TerminalView, summary_line
from costcheck.run import numeric_warnings

import numpy as np

WIDTH = 80
LONG_SUMMARY = "a sentence of evidence that is much longer than one line of the terminal " * 4


def _report(expect=None) -> CostReport:
    header = CostHeader(id="demo-cost", x_names=("x1", "x2"), y_names=("y1", "y2"),
                        title="A made-up cost whose title is far too long to fit on the header line",
                        expect=expect or {}, file="demo.yaml")
    witness = Witness(x=(np.float64(0.123456789), -0.5), y=(0.25, np.float64(1e-7)), value=1.05e-81,
                      error_bound=1.7e-51, confirmation="re-evaluated at 50 and 80 digits")
    verdicts = {
        "twist": Verdict("twist", "fails", Evidence("refuted", LONG_SUMMARY), value=1.05e-81, witness=witness),
        "nondegenerate": Verdict("nondegenerate", "holds", Evidence("proved", "proved on the whole domain"),
                                 value=0.5, notes=("a note only the verbose view shows",)),
        "mtw": Verdict("mtw", "undecided", Evidence("undecided", "could not decide")),
        "nncc": Verdict("nncc", "fails", Evidence("refuted", "S < 0 at the witness"), value=-2.5,
                        witness=Witness(x=(0.1, 0.2), y=(0.3, 0.4), value=-2.5, error_bound=3e-30),
                        scope={"text": "on the non-degenerate part"}),
        "loeper": not_applicable("loeper", "n ≠ m"),
    }
    return CostReport(header, verdicts, 1.25, {})


def _render(*reports, **options) -> str:
    buffer = io.StringIO()
    view = TerminalView(Console(file=buffer, width=150, color_system=None), **options)
    for report in reports:
        view.report(report)
    view.summary(list(reports), [])
    return buffer.getvalue()


def test_compact_view_is_one_line_per_condition_within_80_columns():
    text = _render(_report())
    lines = text.splitlines()
    assert all(len(line) <= WIDTH for line in lines), max(lines, key=len)
    assert lines[0].split() == ["condition", "verdict", "evidence", "worst", "witness"]
    assert lines[1].startswith("demo-cost") and "1 n/a" in lines[1] and lines[1].endswith("…")
    rows = {line.split()[0]: line for line in lines if line.startswith("  ") and not line.startswith("   ")}
    assert set(rows) == {"condition", "twist", "nondegenerate", "mtw", "nncc"}  # n/a counted, not listed
    # the witness value lies within its error bound: said as zero to within it, never "1.05e-81"
    assert rows["twist"].split()[1:4] == ["fails", "refuted", "≈"] and "e-81" not in text
    assert "x=(0.123,-0.5) y=(0.25,1e-07)" in text and "np.float64" not in text
    assert "on the non-degenerate part" in text  # the scope is part of the verdict's words
    assert "much longer than one line" not in text and "a note only" not in text


def test_verbose_adds_evidence_witness_and_notes_wrapped_to_80_columns():
    text = _render(_report(), verbose=True)
    assert all(len(line) <= WIDTH for line in text.splitlines())
    words = " ".join(text.split())
    assert " ".join(LONG_SUMMARY.split()) in words
    assert "note: a note only the verbose view shows" in words
    assert "witness: x=(x1=0.123457, x2=-0.5)" in words and "value ≈ 0 (|·| ≤ 1.7e-51)" in words
    assert "loeper n/a n/a" in words and "demo.yaml" in words


def test_failures_keeps_only_what_fails_is_undecided_or_missed_its_expectation():
    text = _render(_report(expect={"nondegenerate": "fails"}), failures=True)
    shown = {line.split()[0] for line in text.splitlines()[2:] if line.startswith("  ") and line[2] != " "}
    assert {"twist", "mtw", "nncc", "nondegenerate"} <= shown and "loeper" not in shown
    assert "expected fails" in text and "✗ demo.yaml: nondegenerate: expected fails, got holds" in text
    assert _render(CostReport(_report().cost, {"nondegenerate": _report().verdicts["nondegenerate"]}, 1.0),
                   failures=True).splitlines()[0].startswith("1 cost: ")  # nothing failing: only the summary


def test_summary_line_counts_verdicts_and_expectations():
    line = summary_line([_report(expect={"mtw": "weak"})], [])
    assert line == "1 cost: 1 hold, 2 fail, 1 undecided, 1 n/a; 1 expectation unmet; 1.2 s"


def test_numbers_are_plain_and_error_bars_honest():
    assert number(np.float64(2.7740419707973536)) == "2.774" and number(-0.0) == "0"
    assert number(float("nan")) == "nan" and number(None) == ""
    assert with_error(1.05e-81, 1.7e-51) == "≈ 0 (|·| ≤ 1.7e-51)"
    assert with_error(-2.51535, 3.2e-30) == "-2.51535 ± 3.2e-30" and with_error(0.25, 0.0) == "0.25"
    assert short_witness(Witness(x=(1.0,), y=(2.0,), value=0.0, vectors={"y_prime": (3.0,)})) == "x=(1) y=(2) y'=(3)"


def test_arithmetic_warnings_become_a_note_on_sampled_verdicts_only():
    with numeric_warnings.recorded() as caught:
        np.exp(np.array([1000.0]))
        warnings.warn("a library's deprecation", DeprecationWarning)
    sampled = Verdict("twist", "holds", Evidence("sampled", "no collision among the samples"))
    noted = numeric_warnings.with_note(sampled, caught)
    assert len(noted.notes) == 1 and "overflow encountered in exp (1×)" in noted.notes[0]
    assert "deprecation" not in noted.notes[0]
    proved = Verdict("twist", "holds", Evidence("proved", "ball arithmetic"))
    assert numeric_warnings.with_note(proved, caught) is proved


def test_json_output_is_untouched_by_the_view_and_progress(tmp_path, capsys):
    path = tmp_path / "line.yaml"
    path.write_text("id: line\nx: [x]\ny: [y]\nexpr: (x - y)**2 / 2\n"
                    "domain:\n  x: {box: [[0, 1]]}\n  y: {box: [[0, 1]]}\n")
    assert main(["check", str(path), "--json", "--only", "nondegenerate", "--budget", "64", "--quick"]) == 0
    out = capsys.readouterr().out
    document = json.loads(out)  # stdout is exactly one JSON document
    assert document["costs"][0]["checks"]["nondegenerate"]["verdict"] == "holds"
    assert main(["check", str(path), "--only", "nondegenerate", "--budget", "64", "--quick", "--failures"]) == 0
    captured = capsys.readouterr()
    assert captured.out.splitlines()[0].startswith("1 cost: 1 hold") and not captured.err
