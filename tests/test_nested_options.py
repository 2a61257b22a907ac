"""Nestedness's ``--levels`` and ``--grid`` on ``check`` and ``nested``: they reach the verdict, and
bad values end in exit status 2 with one line."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from costcheck.cli import main
from costcheck.defaults import DEFAULT_LEVELS

ROOT = Path(__file__).resolve().parent.parent
LADDER = str(ROOT / "catalog/economics/skills-to-ladder.yaml")
BUMP = str(ROOT / "tests/costs/bump-disc-to-line.yaml")  # a source density on the unit disc


def _one_error_line(capsys) -> str:
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "Traceback" not in err[0], err
    return err[0]


@pytest.mark.parametrize("command", ["check", "nested"])
@pytest.mark.parametrize(("option", "value", "needle"), [
    ("--levels", "1", "at least 2"),
    ("--levels", "ten", "whole number"),
    ("--levels", "100001", "at most 100000"),
    ("--grid", "0", "at least 2"),
    ("--grid", "4097", "at most 4096"),
    ("--grid", "1e3", "whole number"),
])
def test_bad_level_and_grid_values_are_usage_errors(capsys, command, option, value, needle):
    with pytest.raises(SystemExit) as info:
        main([command, LADDER, option, value])
    assert info.value.code == 2
    line = _one_error_line(capsys)
    assert option in line and needle in line


@pytest.mark.parametrize("argv", [
    # 2001² nodes in two dimensions: refused before the grid is built
    ["nested", BUMP, "--grid", "2001"],
    ["check", BUMP, "--only", "nested", "--no-cache", "--grid", "2001"],
    # 5000 levels × ~31,000 nodes of the default rule on the disc: past the (level, point) bound
    ["nested", BUMP, "--levels", "5000"],
])
def test_grids_and_levels_too_large_for_memory_are_refused_naming_the_file(capsys, argv):
    assert main(argv) == 2
    line = _one_error_line(capsys)
    assert "bump-disc-to-line.yaml" in line and "data.source.density" in line and "(memory)" in line


def test_one_levels_default_for_check_and_nested(capsys):
    # the same number of levels by default in both commands (it was 48 in check, 96 in nested)
    # (exit 1: with --only, the file's expectations of the conditions not run count as unmet)
    assert main(["check", LADDER, "--only", "nested", "--no-cache", "--json"]) in (0, 1)
    checked = json.loads(capsys.readouterr().out)
    assert checked["options"]["levels"] == DEFAULT_LEVELS
    assert checked["costs"][0]["checks"]["nested"]["evidence"]["levels"] == DEFAULT_LEVELS
    assert main(["nested", LADDER, "--json"]) == 0
    nested = json.loads(capsys.readouterr().out)
    assert nested["checks"]["nested"]["evidence"]["levels"] == DEFAULT_LEVELS


def test_levels_and_grid_reach_the_verdict_in_both_commands(capsys):
    argv = [BUMP, "--levels", "12", "--grid", "40"]
    assert main(["check", *argv, "--only", "nested", "--no-cache", "--json"]) in (0, 1)
    evidence = json.loads(capsys.readouterr().out)["costs"][0]["checks"]["nested"]["evidence"]
    assert evidence["levels"] == 12 and "40^2-node midpoint rule" in evidence["source"]
    assert main(["nested", *argv, "--json"]) in (0, 1)
    evidence = json.loads(capsys.readouterr().out)["checks"]["nested"]["evidence"]
    assert evidence["levels"] == 12 and "40^2-node midpoint rule" in evidence["source"]


DENSITY_SOURCE = """id: dens
title: two skills to a ladder with a density source (test fixture, invented)
sense: surplus
x: [a, b]
y: [r]
expr: r*b + r**2/2*a
domain:
  x: {box: [[0, 1], [0, 1]]}
  y: {box: [[0, 1]]}
data:
  source: {density: 1 + a}
  target: {density: 1}
"""


def test_out_writes_the_map_on_a_density_source_without_at(tmp_path, capsys):
    # docs/usage.md's promise: --out DIR writes the map as CSV, with or without --at; for a density
    # the rows are the midpoint-rule nodes, each with its normalised mass
    import numpy as np

    path = tmp_path / "dens.yaml"
    path.write_text(DENSITY_SOURCE, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["nested", str(path), "--grid", "20", "--levels", "16", "--out", str(out)]) == 0
    assert sorted(p.name for p in out.iterdir()) == ["levels.csv", "map-on-source.csv", "nested.json"]
    lines = (out / "map-on-source.csv").read_text().splitlines()
    assert lines[0] == "a,b,r,weight" and len(lines) == 1 + 20 * 20
    table = np.array([[float(v) for v in line.split(",")] for line in lines[1:]])
    # node masses ∝ 1 + a on cells of equal area, normalised (docs/cost-files.md#data-and-normalisation)
    assert abs(table[:, 3].sum() - 1.0) < 1e-12
    np.testing.assert_allclose(table[:, 3] / (1 + table[:, 0]), 1 / np.sum(1 + table[:, 0]), rtol=1e-12)
    # T pushes the source to the uniform target: its weighted median is close to 1/2 (a check of the
    # map, independent of how it was built; tolerance: 16 levels and a 20² rule)
    order = np.argsort(table[:, 2])
    median = table[order, 2][np.searchsorted(np.cumsum(table[order, 3]), 0.5)]
    assert abs(median - 0.5) < 0.05
    assert "wrote" in capsys.readouterr().out
