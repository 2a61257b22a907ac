"""Every output on a generating function ``G(x, y, z)``: the terminal view, ``--json`` (valid
against the shipped results schema), ``--junit``, ``report`` (Markdown and HTML) and ``sweep``.

The file is catalog/generating/income-effect-matching.yaml at a small budget with sampling only:
these tests check what the outputs *say* about a generating function (its five conditions by
name, the formula written as ``G(x, y, z)``, the third variable in the witnesses), not its
verdicts, which tests/test_generating.py derives.  The checks are of our own output format
("common practice": a reader must see which kind of file was checked).
"""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
from junitparser import JUnitXml, Properties, Property

from costcheck.cli import main
from costcheck.conditions import GENERATING

ROOT = Path(__file__).resolve().parent.parent
FILE = str(ROOT / "catalog" / "generating" / "income-effect-matching.yaml")
SMALL = ["--budget", "64", "--quick", "--workers", "1"]
ORDINARY = ("twist", "nondegenerate", "mtw", "nncc")


def test_terminal_view_names_the_generating_conditions_and_the_third_variable(capsys):
    assert main(["check", FILE, *SMALL, "--verbose"]) == 0
    out = capsys.readouterr().out
    assert "G(x, y, z)" in out and "n=2 m=2" in out  # m counts y, not (y, z)
    for name in GENERATING:
        assert f"  {name} " in out, name
    assert not any(f"  {name} " in out for name in ORDINARY)  # a generating file is not checked for them


def test_json_is_valid_against_the_shipped_schema_and_json_and_junit_agree(tmp_path, capsys):
    junit = tmp_path / "results.xml"
    assert main(["check", FILE, *SMALL, "--json", "--junit", str(junit)]) == 0
    document = json.loads(capsys.readouterr().out)
    schema = json.loads((ROOT / "schema" / "results.schema.json").read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator(schema).validate(document)
    [entry] = document["costs"]
    assert list(entry["checks"]) == list(GENERATING)
    assert entry["generating"] == {"z": "z"} and entry["m"] == 3  # the target side (y, z)
    # a witness's y carries z by name (g_mtw reports the point of its smallest margin)
    assert "z" in entry["checks"]["g_mtw"]["witness"]["y"]
    # the cached path (no sympy: the header read from the file) writes the same entry
    assert main(["check", FILE, *SMALL, "--json"]) == 0
    [cached] = json.loads(capsys.readouterr().out)["costs"]
    assert {k: v for k, v in cached.items() if k != "seconds"} == {k: v for k, v in entry.items() if k != "seconds"}

    xml = JUnitXml.fromfile(str(junit))
    cases = {case.name: case for suite in xml for case in suite}
    assert list(cases) == list(GENERATING)
    for name, case in cases.items():
        [props] = case.iterchildren(Properties)
        words = {p.name: p.value for p in props.iterchildren(Property)}
        assert words["verdict"] == entry["checks"][name]["verdict"] and words["code"].startswith(name + "-"), name


def test_report_writes_G_and_names_its_conditions_in_both_pages(tmp_path, capsys):
    out = tmp_path / "report"
    assert main(["report", FILE, *SMALL, "--quiet", "--out", str(out)]) == 0
    capsys.readouterr()
    markdown = (out / "report.md").read_text(encoding="utf-8")
    html = (out / "index.html").read_text(encoding="utf-8")
    assert "$$ G(x, y, z) = " in markdown and "c(x, y)" not in markdown
    assert "<mi>G</mi>" in html and "<mi>z</mi><mo stretchy=\"false\">)</mo><mo>=</mo>" in html
    for page in (markdown, html):
        assert "n = 2, m = 2 and z" in page and "generating function" in page
        for name in GENERATING:
            assert f"{name}-" in page, name  # its stable code, in the summary table and the section
        assert "costcheck explain g_mtw-" in page


def test_sweep_of_a_generating_file_tabulates_its_conditions(capsys):
    # B is the buyer's income: any B > 1 keeps B - z > 0 on z in [0, 1], so nothing changes
    argv = ["sweep", FILE, "--vary", "B=2,3", "--budget", "64", "--quick", "--workers", "1", "--no-bisect"]
    assert main([*argv, "--quiet"]) == 0
    table = capsys.readouterr().out
    header = next(line for line in table.splitlines() if line.startswith("B "))
    assert header.split() == ["B", *GENERATING]
    assert main([*argv, "--quiet", "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert json.dumps(document).count("g_dual_twist") >= 2  # one verdict per value


BEND = """\
id: bend
title: a twist that folds past a = 1/2
x: [x1, x2]
y: [y1, y2]
params:
  a: 0.2
generating:
  expr: x1*(y1 + a*y1**2) + x2*y2 - z
  z: z
  range: [-1, 1]
domain:
  x: {box: [[0.5, 1], [0.5, 1]]}
  y: {box: [[-1, 1], [-1, 1]]}
"""


def test_sweep_bisects_a_generating_twist_to_its_hand_derived_boundary(tmp_path, capsys):
    # At fixed x, (G_x, G) = (y1 + a y1², y2, ...) fixes y2 and then z once y1 + a y1² does; that
    # is one-to-one on y1 in [-1, 1] exactly when 1 + 2 a y1 > 0 there, i.e. a ≤ 1/2 (elementary
    # calculus). So the twist holds for a ≤ 1/2 and fails (certified collisions) beyond
    path = tmp_path / "bend.yaml"
    path.write_text(BEND, encoding="utf-8")
    argv = ["sweep", str(path), "--vary", "a=0.2,0.8", "--only", "g_twist", "--budget", "128", "--quick",
            "--workers", "1", "--tolerance", "0.02", "--json", "--quiet"]
    assert main(argv) == 0
    [boundary] = json.loads(capsys.readouterr().out)["boundaries"]
    low, high = boundary["interval"]
    assert (boundary["from"], boundary["to"]) == ("holds", "fails") and boundary["right"]["kind"] == "refuted"
    assert high > 0.5 and low < 0.6  # no certified collision can exist at a ≤ 1/2
    a, w = boundary["right"]["param"], boundary["right"]["witness"]
    t, t2 = w["y"]["y1"], w["y_prime"]["y1"]
    assert abs((t + a * t * t) - (t2 + a * t2 * t2)) < 1e-12 and abs(t - t2) > 1e-3
