"""Domain geometry: c-segments, c-convexity of the domains, Loeper's maximum principle.

Sources beside each check.  The costs are built in memory with ``costcheck.from_expression``
or loaded from the catalog; one report per catalog cost is shared through a module fixture.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

import costcheck
from loeper_witness import assert_violates_the_maximum_principle
from costcheck.conditions.context import CheckContext
from costcheck.run.runner import run_checks
from costcheck.errors import UsageError
from costcheck.numerics.geometry.csegment import SOLVED, GradientMap, solve_direct, solve_segments
from costcheck.model.verdict import CODES

CATALOG = Path(__file__).resolve().parent.parent / "catalog"
QUADRATIC = "((x1 - y1)**2 + (x2 - y2)**2) / 2"
BOX = {"box": [[-1, 1], [-1, 1]]}
BALL = {"ball": {"center": [0, 0], "radius": 1}}


def quadratic(y_side=BOX, where=None, x_side=BOX):
    domain = {"x": x_side, "y": y_side}
    if where:
        domain["where"] = where
    return costcheck.from_expression(QUADRATIC, x=["x1", "x2"], y=["y1", "y2"], domain=domain)


def geometry_verdict(cost, condition, budget=1024):
    return run_checks(cost, conditions=[condition], budget=budget).verdicts[condition]


# --------------------------------------------------------------------------- c-segments


def test_quadratic_c_segment_is_the_straight_segment():
    # |x - y|²/2 has -D_x c(x, y) = y - x, so -D_x c(x, y_t) = (1-t) p0 + t p1 gives
    # y_t = (1-t) y0 + t y1 exactly (Ma–Trudinger–Wang 2005, §2: c-segments of the quadratic
    # cost are line segments); likewise the dual segment in x for fixed y.
    ev = quadratic().derivatives(order=2)
    rng = np.random.default_rng(3)
    fixed, a, b = (rng.uniform(-1, 1, (20, 2)) for _ in range(3))
    for moving in ("y", "x"):
        for solver in (lambda g: solve_segments(g, fixed, a, b, steps=8),
                       lambda g: solve_direct(g, fixed, a, b, np.linspace(0, 1, 9))):
            seg = solver(GradientMap(ev, moving))
            assert (seg.status == SOLVED).all()
            t = seg.ts[None, :, None]
            line = (1 - t) * a[:, None] + t * b[:, None]
            assert np.max(np.abs(seg.points - line)) < 1e-12


def test_c_segment_of_a_curved_cost_solves_its_equation():
    # a non-quadratic cost: the defining equation itself is the check (definition in
    # Loeper 2009, Def. 2.6); the curve is not straight
    cost = costcheck.load(CATALOG / "sphere" / "sphere-dist-sq.yaml")
    ev = cost.derivatives(order=2)
    x = np.array([[0.1, -0.2]] * 3)
    y0 = np.array([[0.6, 0.5], [-0.7, 0.4], [0.5, -0.8]])
    y1 = np.array([[-0.5, -0.6], [0.8, -0.3], [-0.6, 0.7]])
    seg = solve_segments(GradientMap(ev, "y"), x, y0, y1, steps=16)
    assert (seg.status == SOLVED).all()
    p = -ev(np.repeat(x, 17, axis=0), seg.points.reshape(-1, 2)).dx.reshape(3, 17, 2)
    t = seg.ts[None, :, None]
    target = (1 - t) * p[:, :1] + t * p[:, -1:]
    assert np.max(np.abs(p - target)) < 1e-10
    straight = (1 - t) * y0[:, None] + t * y1[:, None]
    assert np.max(np.abs(seg.points - straight)) > 1e-3


def test_bad_c_segment_input_is_refused():
    ev = quadratic().derivatives(order=2)
    with pytest.raises(UsageError, match="'x' or 'y'"):
        GradientMap(ev, "z")
    with pytest.raises(UsageError, match="order >= 2"):
        GradientMap(quadratic().derivatives(order=1), "y")
    with pytest.raises(UsageError, match="equal shapes"):
        solve_segments(GradientMap(ev, "y"), np.zeros((2, 2)), np.zeros((3, 2)), np.ones((3, 2)))
    with pytest.raises(UsageError, match="increase from 0 to 1"):
        solve_segments(GradientMap(ev, "y"), np.zeros((1, 2)), np.zeros((1, 2)), np.ones((1, 2)), ts=[0, 0.7, 0.5])


# --------------------------------------------------------------------------- c-convexity = convexity (quadratic cost)

# For the quadratic cost c-convexity is ordinary convexity (Ma–Trudinger–Wang 2005, §2;
# Villani, Optimal Transport: Old and New, 2009, ch. 12). Boxes and balls are convex; an
# L-shape (the square without its open first quadrant) and an annulus are not (elementary).
L_SHAPE = ["(y1 + y2 - abs(y1 - y2)) / 2 <= 0"]  # min(y1, y2) <= 0
ANNULUS = ["y1**2 + y2**2 >= 0.25"]


@pytest.mark.parametrize(("y_side", "where", "expected"), [
    (BOX, None, "holds"), (BALL, None, "holds"), (BOX, L_SHAPE, "fails"), (BALL, ANNULUS, "fails"),
], ids=["box", "ball", "L-shape", "annulus"])
def test_quadratic_target_c_convexity_is_convexity(y_side, where, expected):
    cost = quadratic(y_side, where)
    v = geometry_verdict(cost, "target_c_convex")
    assert v.verdict == expected, v.evidence.summary
    if expected == "holds":
        assert v.evidence.kind == "sampled" and v.evidence.samples > 0 and v.evidence.resolution > 0
        return
    assert v.evidence.kind == "refuted" and v.code == CODES[("target_c_convex", "fails")]
    w = v.witness
    dom = cost.domain
    # the confirmed point is outside Y, the ends are inside, and for this cost the segment is straight
    assert not dom.contains_y(np.array([w.y]))[0]
    assert dom.contains_y(np.array([w.vectors["y0"], w.vectors["y1"]])).all()
    t = v.evidence.details["t_outside"]
    assert np.allclose(w.y, (1 - t) * np.array(w.vectors["y0"]) + t * np.array(w.vectors["y1"]), atol=1e-9)
    assert w.error_bound is not None and w.value > w.error_bound


def test_quadratic_source_c_convexity_sees_a_non_convex_source():
    cost = costcheck.from_expression(QUADRATIC, x=["x1", "x2"], y=["y1", "y2"],
                                     domain={"x": BALL, "y": BOX, "where": ["x1**2 + x2**2 >= 0.25"]})
    v = geometry_verdict(cost, "source_c_convex")
    assert v.verdict == "fails" and v.evidence.kind == "refuted"
    assert not cost.domain.contains_x(np.array([v.witness.x]))[0]
    assert geometry_verdict(cost, "target_c_convex").verdict == "holds"


def test_unequal_dimensions_are_not_applicable():
    cost = costcheck.from_expression("-(x1 + x2) * y1", x=["x1", "x2"], y=["y1"],
                                     domain={"x": BOX, "y": {"box": [[0, 1]]}})
    report = run_checks(cost, conditions=["target_c_convex", "source_c_convex", "loeper"], budget=256)
    assert {v.verdict for v in report.verdicts.values()} == {"not-applicable"}


def test_one_dimensional_intervals_are_c_convex():
    # n = m = 1 with c_xy ≠ 0: c-segments are the intervals between the ends (elementary)
    cost = costcheck.from_expression("-x*y", x=["x"], y=["y"], domain={"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}})
    report = run_checks(cost, conditions=["target_c_convex", "source_c_convex", "loeper"], budget=512)
    assert {k: v.verdict for k, v in report.verdicts.items()} == {
        "target_c_convex": "holds", "source_c_convex": "holds", "loeper": "holds"}


# --------------------------------------------------------------------------- Loeper vs MTW

# The cross-check of Loeper 2009 (Acta Math. 202): A3w fails ⇒ the maximum principle fails
# (local, no c-convexity needed); A3w holds on c-convex domains ⇒ it holds.  The MTW verdicts
# of these catalog costs are the check-value table's (docs/check-values.md: MTW 2005; Loeper 2009; "computed here" for
# p = -3, whose scale-free MTW margin is only about -0.0012 to -0.002).
CROSS = ["euclidean/sq-euclid.yaml", "euclidean/neg-inner.yaml", "euclidean/power-3.yaml",
         "euclidean/power-minus3.yaml", "euclidean/power-minus0.5.yaml", "euclidean/neg-sqrt-one-plus.yaml"]


@pytest.fixture(scope="module")
def cross_reports():
    return {rel: run_checks(costcheck.load(CATALOG / rel), conditions=["mtw", "loeper"], budget=1024)
            for rel in CROSS}


@pytest.mark.parametrize("relpath", CROSS)
def test_loeper_agrees_with_mtw(cross_reports, relpath):
    r = cross_reports[relpath]
    mtw, loeper = r.verdicts["mtw"], r.verdicts["loeper"]
    expected = {"strong": "holds", "weak": "holds", "fails": "fails"}[mtw.verdict]
    assert loeper.verdict == expected, loeper.evidence.summary
    if expected == "fails":
        assert loeper.evidence.kind == "refuted"
        w = loeper.witness
        assert {"x_prime", "y0", "y1"} <= set(w.vectors) and 0 < loeper.evidence.details["worst"]["t"] < 1
        assert w.value > w.error_bound
    else:
        assert loeper.evidence.kind == "sampled" and loeper.evidence.samples > 0


def test_zero_mtw_cost_holds_despite_rounding(cross_reports):
    # -x·y has S ≡ 0 (MTW 2005): f(t) is exactly affine, and rounding must not read as a violation
    v = cross_reports["euclidean/neg-inner.yaml"].verdicts["loeper"]
    assert v.verdict == "holds" and v.value <= v.evidence.details["tolerance"]


def test_loeper_witness_is_a_genuine_violation(cross_reports):
    # independent re-computation of the witness with the cost's own value (no c-segment code):
    # f(t) = c(x, y_t) - c(x', y_t) exceeds max(f(0), f(1)) (definition, Loeper 2009)
    assert_violates_the_maximum_principle(cross_reports["euclidean/power-3.yaml"])


# --------------------------------------------------------------------------- JSON and codes


def test_geometry_checks_appear_in_json(tmp_path):
    path = tmp_path / "quad.yaml"
    path.write_text("id: quad\nx: [x1, x2]\ny: [y1, y2]\nexpr: ((x1 - y1)**2 + (x2 - y2)**2) / 2\n"
                    "domain:\n  x: {box: [[-1, 1], [-1, 1]]}\n  y: {box: [[-1, 1], [-1, 1]]}\n"
                    "  where: ['(y1 + y2 - abs(y1 - y2)) / 2 <= 0']\n"
                    "expect: {target_c_convex: fails, source_c_convex: holds, loeper: holds}\n")
    out = subprocess.run([sys.executable, "-m", "costcheck.cli", "check", "--json", "--budget", "512",
                          "--only", "target_c_convex", "--only", "source_c_convex", "--only", "loeper", str(path)],
                         capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stderr
    checks = json.loads(out.stdout)["costs"][0]["checks"]
    assert [checks[k]["code"] for k in ("target_c_convex", "source_c_convex", "loeper")] == ["target_c_convex-fails", "source_c_convex-holds", "loeper-holds"]
    w = checks["target_c_convex"]["witness"]
    assert set(w["y0"]) == {"y1", "y2"} and set(w["y_exit"]) == {"y1", "y2"} and w["error_bound"] is not None
    assert checks["source_c_convex"]["evidence"]["kind"] == "sampled"


def test_new_codes_are_unique():
    assert len(set(CODES.values())) == len(CODES)
    for name in ("target_c_convex", "source_c_convex", "loeper"):
        # a code says its condition and its verdict word (docs/codes.md)
        assert {CODES[(name, v)] for v in ("holds", "fails", "not-applicable", "undecided")} == \
            {f"{name}-{v}" for v in ("holds", "fails", "not-applicable", "undecided")}


def test_budget_scales_the_work():
    cost = quadratic()
    small = CheckContext(cost=cost, seed=1, budget=256)
    large = CheckContext(cost=cost, seed=1, budget=8192)
    from costcheck.conditions import target_c_convex
    assert target_c_convex.check(small).evidence.samples < target_c_convex.check(large).evidence.samples
