"""Parameter sweeps: --vary parsing, boundary location on the power family, Dask, CLI, plots.

The family ``-(1/p)|x-y|^p`` (catalog/euclidean/power-0.5.yaml, p varied) has published MTW
check values (docs/check-values.md): strong for -2 < p < 1 (p ≠ 0), weak at p = -2, fails for
p < -2 and for p > 1 (p ≠ 2); p = 2 is the quadratic cost (weak, S ≡ 0); p = 1 is |x - y|
(degenerate).  Budgets are small to keep this file quick.
"""

from __future__ import annotations

import json
import sys

import pytest

from costcheck.cli import main
from costcheck.sweep.engine import run_sweep
from costcheck.sweep.grid import SweepSpecError, parse_axes, parse_vary, plan

POWER = "catalog/euclidean/power-0.5.yaml"
TOL = 1e-3
BUDGET = 256


# --- parsing ---------------------------------------------------------------------------------

def test_linspace_is_inclusive_and_snapped():
    axis = parse_vary("p=-4:3:71")
    assert axis.name == "p" and len(axis.values) == 71
    assert axis.values[0] == -4.0 and axis.values[-1] == 3.0
    for exact in (-2.0, 1.0, 2.0, 0.0):
        assert exact in axis.values


def test_comma_list_and_grid_plan():
    assert parse_vary("p=0.5,1.5,3").values == (0.5, 1.5, 3.0)
    axes = parse_axes(["p=1,2", "eps=0.1:0.3:3"], {"p": 1, "eps": 0})
    points = plan(axes)
    assert len(points) == 6 and points[0] == {"p": 1.0, "eps": 0.1} and points[-1] == {"p": 2.0, "eps": 0.3}


@pytest.mark.parametrize("spec", ["p", "p=", "=1,2", "p=1:2", "p=1:2:x", "p=a,b", "p=1:2:0", "p=1,1",
                                  "p=1:2:3:4", "p=nan", "2p=1,2"])
def test_bad_vary(spec):
    with pytest.raises(SweepSpecError, match="--vary"):
        parse_vary(spec)


def test_unknown_and_repeated_parameters():
    with pytest.raises(SweepSpecError, match="no parameter named 'q'"):
        parse_axes(["q=1,2"], {"p": 0.5})
    with pytest.raises(SweepSpecError, match="given twice"):
        parse_axes(["p=1,2", "p=3,4"], {"p": 0.5})


# --- boundaries on the power family ------------------------------------------------------------

@pytest.fixture(scope="module")
def power_sweep():
    axes = [parse_vary("p=-2.1,-2.0,-1.9,0.9,1.0,1.1")]
    # sampling only (as `check --quick`): the boundary is a change of the verdict word, which a
    # proof never changes, and the default proof attempts near it would take most of this file's time
    return run_sweep(POWER, axes, budget=BUDGET, seed=1, conditions=["mtw", "nondegenerate"], workers=1,
                     tolerance=TOL, prove=False)


def _boundary(result, condition, lo, hi):
    found = [b for b in result.boundaries if b["condition"] == condition
             and b["grid_interval"] == [lo, hi]]
    assert len(found) == 1, result.boundaries
    return found[0]


def test_mtw_boundary_at_p_minus_2(power_sweep):
    # MTW 2005; Trudinger–Wang 2009: strong for -2 < p < 1; p = -2 weak, not strong
    # (the check-value table marks p = -2 "from memory"); p < -2 fails (computed here, per the table).
    left = _boundary(power_sweep, "mtw", -2.1, -2.0)
    assert (left["from"], left["to"]) == ("fails", "weak")
    a, b = left["interval"]
    assert b - a <= TOL and a - TOL <= -2.0 <= b + TOL
    right = _boundary(power_sweep, "mtw", -2.0, -1.9)
    assert (right["from"], right["to"]) == ("weak", "strong")
    a, b = right["interval"]
    assert b - a <= TOL and a - TOL <= -2.0 <= b + TOL
    assert left["left"]["witness"] is not None          # the failing side has a witness
    assert right["right"]["value"] > 0                   # strong: a positive margin


def test_boundaries_at_p_1(power_sweep):
    # At p = 1 exactly the cost is |x - y|: non-degeneracy fails there (elementary; check-value table),
    # holds on both sides (|det D²_xy c| = |p - 1| |x - y|^(2p-4)); located within the tolerance.
    below = _boundary(power_sweep, "nondegenerate", 0.9, 1.0)
    above = _boundary(power_sweep, "nondegenerate", 1.0, 1.1)
    assert (below["from"], below["to"], above["from"], above["to"]) == ("holds", "fails", "fails", "holds")
    for bd in (below, above):
        a, b = bd["interval"]
        assert b - a <= TOL and a - TOL <= 1.0 <= b + TOL
    # MTW: strong below p = 1 (MTW 2005; Trudinger–Wang 2009), fails above (Loeper 2009); at p = 1
    # MTW is 'undecided' (degenerate cost), its own verdict.  The margin vanishes like (1 - p)² as
    # p -> 1 (S / |M⁻¹η|², computed here), so at the tolerance 1e-7 no 'weak' band appears.  MTW is
    # decided only where D²_xy c is clearly invertible (relative determinant ≥ DEFINED_RATIO = 1e-3),
    # and that ratio is about |p − 1| here (eigenvalues (p − 1) r^(p−2) and r^(p−2), elementary), so
    # within about 2e-3 of p = 1 no sampled pair qualifies and MTW is undecided: the band is that wide.
    mtw = [b for b in power_sweep.boundaries if b["condition"] == "mtw" and b["grid_interval"][0] >= 0.9]
    last_strong = max(b["interval"][0] for b in mtw if b["from"] == "strong")
    first_fails = min(b["interval"][1] for b in mtw if b["to"] == "fails")
    assert 1.0 - 2e-3 - TOL <= last_strong < 1.0 < first_fails <= 1.0 + 2e-3 + TOL
    assert {(b["from"], b["to"]) for b in mtw} == {("strong", "undecided"), ("undecided", "fails")}
    assert power_sweep.results[4]["mtw"]["verdict"] == "undecided"
    assert ("mtw", 1.0, "undecided") in [(i["condition"], i["value"], i["verdict"]) for i in power_sweep.isolated]


def test_p_2_isolated_weak_when_the_grid_hits_it():
    # p = 2 is the quadratic cost: weak, S ≡ 0 (MTW 2005); fails on both sides (Loeper 2009, p > 1)
    result = run_sweep(POWER, [parse_vary("p=1.9,2.0,2.1")], budget=BUDGET, seed=1, conditions=["mtw"],
                       workers=1, bisect=False)
    assert [r["mtw"]["verdict"] for r in result.results] == ["fails", "weak", "fails"]
    assert [(i["condition"], i["value"], i["verdict"]) for i in result.isolated] == [("mtw", 2.0, "weak")]


# --- Dask --------------------------------------------------------------------------------------

TWO_PARAM = """\
id: power-shifted
title: -(1/p) (|x-y|^2 + eps)^(p/2)
x: [x1, x2]
y: [y1, y2]
params: {p: 0.5, eps: 0.0}
define:
  r2: (x1 - y1)**2 + (x2 - y2)**2
expr: -(1/p) * (r2 + eps)**(p/2)
domain:
  x: {box: [[-1, 1], [-1, 1]]}
  y: {box: [[-1, 1], [-1, 1]]}
  pairs: ["r2 >= 0.04"]
"""


def test_two_parameter_sweep_on_a_local_dask_cluster(tmp_path):
    distributed = pytest.importorskip("dask.distributed")
    path = tmp_path / "two.yaml"
    path.write_text(TWO_PARAM)
    axes = parse_axes(["p=0.5,1.5", "eps=0,0.1"], {"p": 0.5, "eps": 0.0})
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster, distributed.Client(cluster) as client:
        result = run_sweep(path, axes, budget=128, seed=1, conditions=["mtw"], client=client, bisect=False,
                           prove=False)
    assert len(result.points) == 4
    verdicts = {(p["p"], p["eps"]): r["mtw"]["verdict"] for p, r in zip(result.points, result.results)}
    # eps = 0: the power family (MTW 2005 for p = 0.5; Loeper 2009 for p = 1.5)
    assert verdicts[(0.5, 0.0)] == "strong" and verdicts[(1.5, 0.0)] == "fails"


def test_scheduler_without_dask_is_a_one_line_error(monkeypatch, capsys):
    monkeypatch.setitem(sys.modules, "dask.distributed", None)
    code = main(["sweep", POWER, "--vary", "p=0.5,1.5", "--scheduler", "tcp://127.0.0.1:1", "--budget", "64"])
    err = capsys.readouterr().err
    assert code == 2 and "--scheduler" in err and len(err.strip().splitlines()) == 1


# --- CLI and plots ------------------------------------------------------------------------------

@pytest.mark.parametrize("argv, word", [(["--vary", "p=1:2"], "--vary"), (["--vary", "q=1,2"], "--vary"),
                                        (["--vary", "p=1,2", "--tolerance", "0"], "--tolerance")])
def test_cli_bad_options_exit_2(argv, word, capsys):
    try:
        code = main(["sweep", POWER, *argv])
    except SystemExit as exc:  # refused by the option parser itself (--tolerance is bounded there)
        code = exc.code
    err = capsys.readouterr().err
    assert code == 2 and word in err and len(err.strip().splitlines()) == 1


def test_cli_json_shape(capsys, tmp_path):
    code = main(["sweep", POWER, "--vary", "p=1.9,2.0,2.1", "--only", "mtw", "--budget", str(BUDGET),
                 "--workers", "1", "--tolerance", "0.05", "--json", "--plots", str(tmp_path / "pics"), "--quick"])
    doc = json.loads(capsys.readouterr().out)
    assert doc["options"]["proofs"] is False
    # nothing proved: p = 2 (weak, S ≡ 0) would be proved by identity under the default proofs
    assert all(pt["checks"]["mtw"]["kind"] in ("sampled", "refuted") for pt in doc["points"])
    assert doc["points"][1]["checks"]["mtw"]["kind"] == "sampled"
    assert code == 0 and doc["summary"]["exit_code"] == 0
    assert doc["axes"] == [{"name": "p", "values": [1.9, 2.0, 2.1]}]
    assert doc["conditions"] == ["mtw"] and len(doc["points"]) == 3
    point = doc["points"][1]
    assert point["params"] == {"p": 2.0} and point["checks"]["mtw"]["verdict"] == "weak"
    assert {"verdict", "code", "kind", "value", "witness"} <= set(point["checks"]["mtw"])
    assert len(doc["boundaries"]) == 2
    for b in doc["boundaries"]:
        assert {"condition", "parameter", "interval", "from", "to", "left", "right"} <= set(b)
        assert b["interval"][1] - b["interval"][0] <= 0.05
    assert doc["isolated"][0]["value"] == 2.0
    files = sorted(p.name for p in (tmp_path / "pics").iterdir())
    assert files == ["mtw-margin.png", "mtw-margin.svg", "verdict-strip.png", "verdict-strip.svg"]
    assert all((tmp_path / "pics" / f).stat().st_size > 0 for f in files)


def test_phase_map_plots(tmp_path):
    from costcheck.sweep.engine import SweepResult
    from costcheck.sweep.plots import write_plots

    axes = parse_axes(["p=0.5,1.5", "eps=0,0.1"], None)
    points = plan(axes)
    results = [{"mtw": {"verdict": v, "value": None}} for v in ("strong", "strong", "fails", "weak")]
    written = write_plots(SweepResult("f", axes, ["mtw"], points, results, options={"tolerance": TOL}), tmp_path)
    assert sorted(written) == sorted(str(tmp_path / f"phase-mtw.{e}") for e in ("png", "svg"))
    assert all((tmp_path / f"phase-mtw.{e}").stat().st_size > 0 for e in ("png", "svg"))


def test_a_family_shares_its_derivatives_and_gives_the_same_numbers():
    # one differentiation per sweep: the template with p symbolic, evaluated at p, must agree with
    # the cost built with p substituted (float64 to rounding; mpmath to its working precision)
    import numpy as np

    from costcheck.derivatives.mp_backend import _cached, high_precision
    from costcheck.derivatives.sympy_backend import build
    from costcheck.spec.loader import load_cost

    rng = np.random.default_rng(3)
    xs, ys = rng.uniform(-1, 1, (40, 2)), rng.uniform(-1, 1, (40, 2))
    for p in (-2.5, 0.73, 2.0):
        cost = load_cost(POWER, param_overrides={"p": p})
        assert cost.family is not None
        shared = cost.derivatives(order=4)(xs, ys)
        direct = build(cost.expr, cost.x_symbols, cost.y_symbols, 4)(xs, ys)
        for name in ("value", "dxy", "dxxy", "dxyy", "dxxyy"):
            a, b = getattr(shared, name), getattr(direct, name)
            # at p = 2 the direct third and fourth derivatives are exact zeros; the template's are
            # rounding: Faà di Bruno's sum (derivatives.composition) cancels terms as large as the
            # inner expression's derivatives near x = y, measured up to 1.5e-12 on these points
            atol = max(1e-10, 1e-12 * max(1.0, np.nanmax(np.abs(b))))
            assert np.allclose(a, b, rtol=1e-10, atol=atol), name
        hp_shared = high_precision(cost, 4)([0.1, 0.2], [0.7, -0.3], 40)["dxxyy"][0][1][0][1]
        hp_direct = _cached(cost.expr, cost.x_symbols, cost.y_symbols, 4)([0.1, 0.2], [0.7, -0.3], 40)["dxxyy"][0][1][0][1]
        assert abs(hp_shared - hp_direct) <= 1e-30 * max(1, abs(hp_direct))


def test_a_sweep_where_no_value_can_be_checked_is_bad_input(tmp_path, capsys):
    # the file loads at its own p = 2, but at p = 1 and p = 3 the cost divides by zero: nothing was
    # checked, so the run is broken input (exit 2 and one line), never a result with exit 0
    path = tmp_path / "poles.yaml"
    path.write_text("id: poles\ntitle: poles at p = 1 and p = 3\nx: [x1]\ny: [y1]\nparams: {p: 2}\n"
                    "expr: (x1 - y1)**2 / ((p - 1)*(p - 3))\n"
                    "domain:\n  x: {box: [[0, 1]]}\n  y: {box: [[0, 1]]}\n", encoding="utf-8")
    code = main(["sweep", str(path), "--vary", "p=1,3", "--quick", "--workers", "1", "--no-cache", "--json"])
    captured = capsys.readouterr()
    assert code == 2 and json.loads(captured.out)["summary"]["exit_code"] == 2
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1 and "no parameter value could be checked" in lines[0] and "p = 1" in lines[0]


def test_terminal_view_is_a_plain_grid_in_80_columns(capsys):
    code = main(["sweep", POWER, "--vary", "p=1.9,2.0,2.1", "--only", "mtw", "--only", "twist", "--budget", "64",
                 "--workers", "1", "--no-bisect", "--quick", "--no-cache"])
    lines = capsys.readouterr().out.splitlines()
    assert code == 0
    assert not any(ch in "".join(lines) for ch in "┃━│─┏┡└╇"), "no library box drawing"
    assert max(len(line) for line in lines) <= 80
    head = lines.index(next(line for line in lines if line.split()[:1] == ["p"]))
    assert lines[head].split() == ["p", "mtw", "twist"]
    rows = [line.split() for line in lines[head + 1:head + 4]]
    assert [r[0] for r in rows] == ["1.9", "2", "2.1"] and rows[1][1] == "weak"  # S ≡ 0 at p = 2 (MTW 2005)
    assert lines[-1].startswith("3 values, 2 boundaries")
