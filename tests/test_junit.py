"""``check --junit``: a JUnit XML file a standard parser accepts, one case per cost × condition."""

from __future__ import annotations

import textwrap

from junitparser import Error, Failure, JUnitXml, Properties, Property, Skipped

from costcheck.cli import main
from small_costs import line_quadratic

# the line quadratic (c_xy = -1: non-degenerate) wrongly expecting non-degeneracy to fail,
# so that case must be a <failure>
WRONG_EXPECTATION = line_quadratic("quad-line", expect="{twist: holds, nondegenerate: fails}")

# n = 1, m = 2: MTW and NNCC are not defined when n != m (Ma-Trudinger-Wang 2005 define them for
# n = m), so they must come out as <skipped>
UNEQUAL = """\
id: unequal
x: [a]
y: [b1, b2]
expr: -a * (b1 + b2**2)
domain:
  x: {box: [[0, 1]]}
  y: {box: [[0, 1], [0, 1]]}
"""


def test_junit_counts_cases_failures_skips_and_errors(tmp_path, capsys):
    (tmp_path / "wrong.yaml").write_text(textwrap.dedent(WRONG_EXPECTATION))
    (tmp_path / "unequal.yaml").write_text(textwrap.dedent(UNEQUAL))
    (tmp_path / "broken.yaml").write_text("id: broken\nx: [a]\n")
    report = tmp_path / "results.xml"
    code = main(["check", str(tmp_path), "--budget", "128", "--junit", str(report)])
    capsys.readouterr()
    assert code == 2  # a file could not be read: the exit status says so, and so does the XML

    xml = JUnitXml.fromfile(str(report))
    cases = {(case.classname, case.name): case for suite in xml for case in suite}
    wrong = [c for (cls, _), c in cases.items() if cls == "quad-line"]
    unequal = [c for (cls, _), c in cases.items() if cls == "unequal"]
    from costcheck.conditions import conditions_for
    # every condition the runner checks an ordinary cost for, per cost
    per_cost = len(conditions_for(False))
    assert len(wrong) == per_cost and len(unequal) == per_cost

    failed = [(cls, name) for (cls, name), c in cases.items() if any(isinstance(r, Failure) for r in c.result)]
    assert failed == [("quad-line", "nondegenerate")]
    skipped = sorted(key for key, c in cases.items() if any(isinstance(r, Skipped) for r in c.result))
    # MTW needs orthogonal ξ ⟂ η, which a line does not have (Ma-Trudinger-Wang 2005), hence also n = 1
    assert {("quad-line", "mtw"), ("unequal", "mtw"), ("unequal", "nncc")} <= set(skipped)
    # and only not-applicable cases are skipped (index form and nestedness need n > m or data, the
    # geometry checks n = m: each of those says not-applicable here too)
    for key in skipped:
        [props] = cases[key].iterchildren(Properties)
        assert {p.name: p.value for p in props.iterchildren(Property)}["verdict"] == "not-applicable", key
    errored = [cls for (cls, _), c in cases.items() if any(isinstance(r, Error) for r in c.result)]
    assert len(errored) == 1 and errored[0].endswith("broken.yaml")

    assert (xml.tests, xml.failures, xml.errors, xml.skipped) == (2 * per_cost + 1, 1, 1, len(skipped))
    case = cases[("quad-line", "nondegenerate")]
    [properties] = case.iterchildren(Properties)
    props = {p.name: p.value for p in properties.iterchildren(Property)}
    assert props["verdict"] == "holds" and props["expected"] == "fails" and props["code"] == "nondegenerate-holds"
    # the expectation is wrong and the proof (on by default) says so: det D²_xy c is enclosed away
    # from 0 on the whole domain
    assert props["evidence"] == "proved"
    assert "proved on the whole domain" in case.system_out
    assert not case.is_passed and cases[("quad-line", "twist")].is_passed


def _undecided_and_missed_report():
    """A cost whose MTW check is undecided and whose twist misses its expectation (no check run)."""
    from costcheck.model.header import CostHeader
    from costcheck.model.report import CostReport
    from costcheck.model.verdict import Evidence, Verdict, undecided

    header = CostHeader("demo", ("x1", "x2"), ("y1", "y2"), expect={"twist": "fails"}, file="demo.yaml")
    return CostReport(header, {"twist": Verdict("twist", "holds", Evidence("sampled", "no collision found")),
                               "mtw": undecided("mtw", "every sample was undefined")}, 0.2)


def test_failing_and_undecided_cases_say_what_their_code_means(tmp_path):
    # a CI reader sees the meaning of the code next to it, from the same source as the JSON's code_meaning
    from costcheck.model.verdict import CODE_MEANINGS
    from costcheck.render.junit import run_to_junit

    report = tmp_path / "results.xml"
    report.write_text(run_to_junit([_undecided_and_missed_report()], []), encoding="utf-8")
    cases = {case.name: case for suite in JUnitXml.fromfile(str(report)) for case in suite}
    for name, code in (("twist", "twist-holds"), ("mtw", "mtw-undecided")):
        [properties] = cases[name].iterchildren(Properties)
        props = {p.name: p.value for p in properties.iterchildren(Property)}
        assert props["code"] == code and props["code_meaning"] == CODE_MEANINGS[code]
        assert props["docs"] == f"docs/codes.md#{code}"
        assert cases[name].system_out.splitlines()[0] == f"{code}: {CODE_MEANINGS[code]} (costcheck explain {code})"
    [failure] = [r for r in cases["twist"].result if isinstance(r, Failure)]
    assert failure.message == f"expected fails, got holds (twist-holds: {CODE_MEANINGS['twist-holds']})"
    assert cases["mtw"].is_passed  # undecided is an honest answer, not a broken build
