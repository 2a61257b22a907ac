"""The command line: exit codes, one-line errors, JSON shape, show and tensor."""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from costcheck.cli import main

QUADRATIC = """\
id: quad
title: Squared distance
x: [x1, x2]
y: [y1, y2]
expr: ((x1 - y1)**2 + (x2 - y2)**2) / 2
domain:
  x: {box: [[-1, 1], [-1, 1]]}
  y: {box: [[-1, 1], [-1, 1]]}
"""


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(textwrap.dedent(text))
    return path


def run(argv, capsys):
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def test_check_passes_with_met_expectations(tmp_path, capsys):
    # |x-y|²/2 has D²_xy c = -I: non-degenerate everywhere (elementary calculus)
    path = write(tmp_path, "quad.yaml", QUADRATIC + "expect: {nondegenerate: holds}\n")
    code, out, _ = run(["check", path, "--only", "nondegenerate", "--budget", "256"], capsys)
    assert code == 0
    assert "nondegenerate" in out and "holds" in out


def test_check_exit_1_when_expectation_not_met(tmp_path, capsys):
    # the same cost written to expect a failure it cannot have (D²_xy c = -I, elementary)
    path = write(tmp_path, "quad.yaml", QUADRATIC + "expect: {nondegenerate: fails}\n")
    code, out, _ = run(["check", path, "--only", "nondegenerate", "--budget", "256"], capsys)
    assert code == 1
    assert "expected fails" in out


def test_check_exit_2_on_bad_file_names_file_and_field(tmp_path, capsys):
    path = write(tmp_path, "bad.yaml", QUADRATIC.replace("expr: ((x1 - y1)**2 + (x2 - y2)**2) / 2",
                                                         "expr: x1 + zz"))
    code, _, err = run(["check", path], capsys)
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1
    assert str(path) in lines[0] and "'expr'" in lines[0] and "unknown name 'zz'" in lines[0]


def test_bad_file_beats_mismatch_and_other_files_still_run(tmp_path, capsys):
    write(tmp_path, "a.yaml", QUADRATIC + "expect: {nondegenerate: fails}\n")
    write(tmp_path, "b.yaml", "id: [\n")
    code, out, err = run(["check", tmp_path, "--only", "nondegenerate", "--budget", "128"], capsys)
    assert code == 2
    assert "b.yaml" in err and "bad YAML" in err
    assert "quad" in out  # the good file was still checked


def test_duplicate_ids_in_one_run_are_an_input_error(tmp_path, capsys):
    write(tmp_path, "a.yaml", QUADRATIC)
    write(tmp_path, "b.yaml", QUADRATIC)
    code, _, err = run(["check", tmp_path, "--only", "nondegenerate", "--budget", "64"], capsys)
    assert code == 2
    assert "field 'id'" in err and "already used" in err


def test_json_output_shape(tmp_path, capsys):
    path = write(tmp_path, "quad.yaml", QUADRATIC + "expect: {nondegenerate: holds}\n")
    code, out, _ = run(["check", path, "--json", "--only", "nondegenerate", "--budget", "128", "--seed", "7"], capsys)
    assert code == 0
    doc = json.loads(out)
    assert doc["options"]["seed"] == 7 and doc["options"]["budget"] == 128
    (cost,) = doc["costs"]
    assert cost["id"] == "quad" and cost["file"] == str(path)
    check = cost["checks"]["nondegenerate"]
    for key in ("verdict", "evidence", "witness", "value", "code"):
        assert key in check
    assert check["verdict"] == "holds" and check["evidence"]["kind"] in ("sampled", "proved")
    assert doc["summary"] == {"costs": 1, "mismatches": 0, "errors": 0, "exit_code": 0}


def test_json_reports_file_errors(tmp_path, capsys):
    path = write(tmp_path, "bad.yaml", QUADRATIC.replace("box: [[-1, 1], [-1, 1]]}\n  y", "box: [[1, -1], [-1, 1]]}\n  y"))
    code, out, _ = run(["check", path, "--json"], capsys)
    assert code == 2
    doc = json.loads(out)
    assert doc["errors"][0]["field"] == "domain.x.box[0]"
    assert "inverted" in doc["errors"][0]["message"]


def test_no_cost_files_is_a_usage_error(tmp_path, capsys):
    code, _, err = run(["check", tmp_path], capsys)
    assert code == 2 and "no cost files" in err


def test_unknown_option_exits_2(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["check", "--no-such-option", "x.yaml"])
    assert exc.value.code == 2
    assert "usage error" in capsys.readouterr().err


def test_show_prints_the_minimised_cost_of_a_surplus(tmp_path, capsys):
    path = write(tmp_path, "s.yaml", QUADRATIC.replace("id: quad", "id: s\nsense: surplus")
                 .replace("expr: ((x1 - y1)**2 + (x2 - y2)**2) / 2", "expr: x1*y1 + x2*y2"))
    code, out, _ = run(["show", path, "--json"], capsys)
    assert code == 0
    info = json.loads(out)
    assert info["sense"] == "surplus"
    assert info["cost_minimised"].replace(" ", "") in ("-x1*y1-x2*y2", "-x2*y2-x1*y1")
    assert info["derivative_sizes"]["dxy"]["entries"] == 4


def test_tensor_of_bilinear_cost_is_zero(tmp_path, capsys):
    # c = -x·y has T ≡ 0 (Ma–Trudinger–Wang 2005: bilinear costs)
    path = write(tmp_path, "b.yaml", QUADRATIC.replace("expr: ((x1 - y1)**2 + (x2 - y2)**2) / 2",
                                                       "expr: -(x1*y1 + x2*y2)"))
    code, out, _ = run(["tensor", path, "--json"], capsys)
    assert code == 0
    comps = json.loads(out)["components"]
    assert len(comps) == 9 and all(c["expr"] == "0" for c in comps)


def test_tensor_of_a_curved_cost_is_not_zero(tmp_path, capsys):
    # c = sqrt(1 + |x-y|²) satisfies A3s (Ma–Trudinger–Wang 2005), so T cannot vanish
    path = write(tmp_path, "r.yaml", QUADRATIC.replace("expr: ((x1 - y1)**2 + (x2 - y2)**2) / 2",
                                                       "expr: sqrt(1 + (x1 - y1)**2 + (x2 - y2)**2)"))
    code, out, _ = run(["tensor", path, "--latex", "--simplify-seconds", "2"], capsys)
    assert code == 0
    assert "T_{1122} =" in out and "T_{1122} = 0\n" not in out


def test_malicious_file_runs_nothing_and_gives_one_line(tmp_path):
    # a real interpreter, as a user would run it: no traceback, exit 2, nothing executed
    marker = tmp_path / "PWNED"
    path = write(tmp_path, "evil.yaml", QUADRATIC.replace(
        "expr: ((x1 - y1)**2 + (x2 - y2)**2) / 2", f"expr: \"__import__('os').system('touch {marker}')\""))
    result = subprocess.run([sys.executable, "-m", "costcheck.cli", "check", str(path)],
                            capture_output=True, text=True, cwd=tmp_path, timeout=120)
    assert result.returncode == 2
    assert "Traceback" not in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1
    assert "field 'expr'" in result.stderr
    assert not marker.exists()
