"""Many files at once: one line per cost, one column per condition, within 80 columns."""

from __future__ import annotations

import shutil

from costcheck.cli import main

from catalog_snapshot import ROOT

FILES = ["euclidean/sq-euclid.yaml", "euclidean/power-3.yaml", "degenerate/neg-cos-1d.yaml"]


def run(tmp_path, capsys, *extra):
    for name in FILES:
        shutil.copy(ROOT / "catalog" / name, tmp_path / name.replace("/", "-"))
    code = main(["check", str(tmp_path), "--quick", "--budget", "64", "--no-cache", "--workers", "1", *extra])
    return code, capsys.readouterr().out.splitlines()


def test_one_line_per_cost_with_every_failure_visible(tmp_path, capsys):
    code, lines = run(tmp_path, capsys, "--only", "twist", "--only", "nondegenerate", "--only", "mtw")
    assert max(len(line) for line in lines if not line.startswith("✗ /")) <= 80  # a file's path may be long
    head = lines[0].split()
    assert head == ["cost", "ndeg", "twist", "mtw"]
    rows = {line.split()[0]: line.split()[1:] for line in lines[1:4]}
    assert set(rows) == {"sq-euclid", "power-3", "neg-cos-1d"}
    # sources as in the catalog files: S ≡ 0 for the quadratic cost (MTW 2005); p = 3 > 2 fails
    # MTW (Loeper 2009, a certified witness: *); -cos(x - y) on a long interval is not twisted
    assert rows["sq-euclid"] == ["hold", "hold", "weak"]
    assert rows["power-3"][2] == "FAIL*"
    assert rows["neg-cos-1d"][1].startswith("FAIL") and rows["neg-cos-1d"][2] == "·"
    # the conditions left out by --only but expected in a file: one line for that file, exit 1
    import costcheck
    missing = [name for name in FILES
               if set(costcheck.load(ROOT / "catalog" / name).expect) - {"twist", "nondegenerate", "mtw"}]
    assert code == (1 if missing else 0)
    assert sum("expected, not run" in line for line in lines) == len(missing) > 0
    assert any(line.startswith("3 costs:") for line in lines)


def test_failures_keeps_only_costs_with_a_failure_or_a_miss(tmp_path, capsys):
    code, lines = run(tmp_path, capsys, "--only", "mtw", "--failures")
    ids = [line.split()[0] for line in lines[1:] if line.split() and line.split()[0] in
           {"sq-euclid", "power-3", "neg-cos-1d"}]
    # every file misses the expectations --only left out, so all three stay; power-3 shows FAIL*
    assert "power-3" in ids


def test_verbose_keeps_the_per_condition_view(tmp_path, capsys):
    _, lines = run(tmp_path, capsys, "--only", "twist", "--verbose")
    assert lines[0].split()[:3] == ["condition", "verdict", "evidence"]
