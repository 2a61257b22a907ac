"""Pictures of the domain geometry: every maker writes readable, non-empty PNG and SVG files,
and ``costcheck check --plots DIR`` writes them per cost and says what it wrote."""

from __future__ import annotations

from pathlib import Path

import pytest

import costcheck
from costcheck.run.runner import run_checks
from costcheck.render.plots import MAKERS, write_figures

CATALOG = Path(__file__).resolve().parent.parent / "catalog"


#: pictures of other makers (determinant maps, nestedness), tested in their own files
OTHER_KINDS = {"determinant", "nested-levels", "nested-k"}


@pytest.fixture(scope="module")
def failing_report():
    # p = 3: A3w fails (Loeper 2009) and the boxes are not c-convex for this cost (computed here)
    return run_checks(costcheck.load(CATALOG / "euclidean" / "power-3.yaml"), budget=512)


def test_every_geometry_picture_is_written(failing_report, tmp_path):
    figures = write_figures(failing_report, tmp_path)
    kinds = {f.kind for f in figures} - OTHER_KINDS
    assert kinds == {"c-segments-image", "target_c_convex-witness", "source_c_convex-witness",
                     "maximum-principle", "mtw-margin-slices"}
    for f in figures:
        assert f.png.stat().st_size > 10_000 and f.svg.stat().st_size > 10_000
        assert f.png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        svg = f.svg.read_text(encoding="utf-8")
        # axis labels in the file's own coordinate names, and a caption
        assert "y1" in svg or "x1" in svg
        assert len(f.caption) > 80
    assert len(MAKERS) >= 4


def test_a_passing_cost_has_no_witness_pictures(tmp_path):
    report = run_checks(costcheck.load(CATALOG / "euclidean" / "sq-euclid.yaml"), budget=256,
                        conditions=["target_c_convex", "source_c_convex", "loeper"])
    kinds = {f.kind for f in write_figures(report, tmp_path)} - OTHER_KINDS
    assert kinds == {"c-segments-image", "maximum-principle"}


def test_one_dimensional_cost_draws_nothing_it_cannot(tmp_path):
    report = run_checks(costcheck.load(CATALOG / "economics" / "spence-mirrlees-1d.yaml"), budget=256,
                        conditions=["mtw", "target_c_convex", "loeper"])
    kinds = {f.kind for f in write_figures(report, tmp_path)} - OTHER_KINDS
    assert kinds <= {"maximum-principle"}


def test_cli_plots_option(tmp_path, capsys):
    from costcheck.cli import main

    cost = tmp_path / "sq-euclid.yaml"
    cost.write_text("id: sq-euclid\nx: [x1, x2]\ny: [y1, y2]\nexpr: ((x1 - y1)**2 + (x2 - y2)**2) / 2\n"
                    "domain:\n  x: {box: [[-1, 1], [-1, 1]]}\n  y: {box: [[-1, 1], [-1, 1]]}\n")
    code = main(["check", "--budget", "256", "--only", "loeper", "--plots", str(tmp_path / "pics"), str(cost)])
    err = capsys.readouterr().err
    assert code == 0, err
    assert "pictures of sq-euclid" in err and "maximum-principle" in err
    assert (tmp_path / "pics" / "sq-euclid" / "maximum-principle.png").stat().st_size > 0
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    code = main(["check", "--budget", "256", "--only", "twist", "--plots", str(blocker), str(cost)])
    err = capsys.readouterr().err
    assert code == 2 and "--plots" in err and len(err.strip().splitlines()) == 1
