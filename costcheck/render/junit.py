"""JUnit XML for CI systems: one test case per cost × condition.

What counts as what (the same rule as the exit codes, so a CI page and the exit status agree):

- ``<failure>``: the cost file's ``expect`` names a verdict and the check reached another
  one (or the condition was expected but not run); exit status 1;
- ``<skipped>``: the condition is not applicable to this cost (e.g. MTW when ``n != m``);
- ``<error>``: the file could not be read (one test case named ``load`` per bad file); exit 2;
- otherwise the test case passes, *whatever the verdict*: a condition that fails without an
  expectation is a finding about the cost, not a broken build.  Write ``expect`` to make CI
  enforce it.

Every test case carries ``verdict``, ``code``, ``code_meaning`` (the code in plain words, the
JSON's own), ``docs`` (where the code is explained), ``evidence`` (kind) and ``expected``
properties, and the code's meaning, the evidence summary, witness and notes in ``<system-out>``;
a failure's message says what the code reached means, so a CI page needs no table.  A suite per
cost file (``name`` = the file), ``classname`` = the cost id, ``name`` = the condition.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

from ..errors import CostFileError
from ..model.verdict import CODE_MEANINGS, docs_links
from .terminal import format_witness


def _testcase(suite: ET.Element, classname: str, name: str, seconds: float) -> ET.Element:
    return ET.SubElement(suite, "testcase", classname=classname, name=name, time=f"{seconds:.3f}")


def _properties(case: ET.Element, values: dict) -> None:
    props = ET.SubElement(case, "properties")
    for key, value in values.items():
        ET.SubElement(props, "property", name=key, value="" if value is None else str(value))


def run_to_junit(reports, errors: list[CostFileError]) -> str:
    root = ET.Element("testsuites", name="costcheck")
    totals = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
    for report in reports:
        cost = report.cost
        suite = ET.SubElement(root, "testsuite", name=cost.file or cost.id)
        counts = {"tests": 0, "failures": 0, "errors": 0, "skipped": 0}
        mismatched = {mm.condition: mm for mm in report.mismatches}
        share = report.seconds / max(len(report.verdicts), 1)
        for name, v in report.verdicts.items():
            case = _testcase(suite, cost.id, name, share)
            counts["tests"] += 1
            meaning = CODE_MEANINGS[v.code]
            _properties(case, {"verdict": v.verdict, "code": v.code, "code_meaning": meaning,
                               "docs": docs_links(name, v.code)["code"], "evidence": v.evidence.kind,
                               "expected": cost.expect.get(name)})
            if name in mismatched:
                counts["failures"] += 1
                ET.SubElement(case, "failure", type="expectation",
                              message=f"expected {mismatched[name].expected}, got {v.verdict} ({v.code}: {meaning})")
            elif v.evidence.kind == "not_applicable":
                counts["skipped"] += 1
                ET.SubElement(case, "skipped", message=v.evidence.summary)
            lines = [f"{v.code}: {meaning} (costcheck explain {v.code})",
                     f"{v.verdict}, evidence {v.evidence.kind}: {v.evidence.summary}"]
            if v.witness is not None:
                lines.append("witness: " + format_witness(v.witness, cost.x_names, cost.y_names))
            lines += [f"note: {note}" for note in v.notes]
            ET.SubElement(case, "system-out").text = "\n".join(lines)
        for name, mm in mismatched.items():
            if name not in report.verdicts:  # expected but not run (e.g. left out by --only)
                case = _testcase(suite, cost.id, name, 0.0)
                counts["tests"] += 1
                counts["failures"] += 1
                _properties(case, {"verdict": mm.got, "code": "", "code_meaning": "", "docs": "", "evidence": "",
                                   "expected": mm.expected})
                ET.SubElement(case, "failure", type="expectation", message=f"expected {mm.expected}, got {mm.got}")
        _close(suite, counts, totals, report.seconds)
    for error in errors:
        suite = ET.SubElement(root, "testsuite", name=error.file or "input")
        case = _testcase(suite, error.file or "input", "load", 0.0)
        ET.SubElement(case, "error", type="CostFileError", message=str(error))
        _close(suite, {"tests": 1, "failures": 0, "errors": 1, "skipped": 0}, totals, 0.0)
    for key, value in totals.items():
        root.set(key, str(value))
    ET.indent(root)
    return ET.tostring(root, encoding="unicode", xml_declaration=True) + "\n"


def _close(suite: ET.Element, counts: dict, totals: dict, seconds: float) -> None:
    for key, value in counts.items():
        suite.set(key, str(value))
        totals[key] += value
    suite.set("time", f"{seconds:.3f}")
