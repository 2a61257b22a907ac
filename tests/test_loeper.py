"""Loeper's maximum principle as a second opinion on MTW (issue 18, part 2).

The fact every test here leans on: where A3w fails, the maximum principle fails along a short
c-segment through the failing direction (Loeper, "On the regularity of solutions of optimal
transportation problems", Acta Math. 202 (2009) 241–283, the local direction of his Thm 3.2
— numbering from memory; it needs no c-convexity of the domains).  So a refuted MTW verdict
and a "holds" from Loeper cannot both be right.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

import costcheck
from loeper_witness import assert_violates_the_maximum_principle
from costcheck.conditions import loeper
from costcheck.conditions.context import CheckContext
from costcheck.conditions.engines import loeper_search as ls
from costcheck.model.verdict import Evidence, Verdict, Witness
from costcheck.run.runner import run_checks

CATALOG = Path(__file__).resolve().parent.parent / "catalog"
XY = {"x": ["x1", "x2"], "y": ["y1", "y2"]}


def power_minus_2_5():
    """The reproducer of issue 18: -(1/p)|x - y|^p, p = -2.5, on [0, 1]² × [0, 1]² with |x - y|² >= 0.09."""
    return costcheck.from_expression(
        "-(1/p) * ((x1 - y1)**2 + (x2 - y2)**2)**(p/2)", params={"p": -2.5},
        domain={"x": {"box": [[0, 1], [0, 1]]}, "y": {"box": [[0, 1], [0, 1]]},
                "pairs": ["(x1 - y1)**2 + (x2 - y2)**2 >= 0.09"]}, **XY)


@pytest.fixture(scope="module")
def reproducer():
    return run_checks(power_minus_2_5(), conditions=["mtw", "loeper"])


def test_loeper_finds_the_small_failure_of_the_p_minus_2_5_power_cost(reproducer):
    # MTW's scale-free margin here is about -0.0038 (computed here, issue 18); before this change
    # Loeper said "holds (sampled)".  Loeper 2009: A3w fails ⇒ the principle fails.
    report = reproducer
    mtw, lp = report.verdicts["mtw"], report.verdicts["loeper"]
    assert (mtw.verdict, mtw.evidence.kind) == ("fails", "refuted")
    assert (lp.verdict, lp.evidence.kind, lp.code) == ("fails", "refuted", "loeper-fails"), lp.evidence.summary
    assert "found by the independent search" in lp.evidence.summary
    assert "certified by ball arithmetic" in lp.evidence.summary
    lo, hi = lp.evidence.details["enclosure"]["interval"]
    assert 0 < lo <= hi and lp.witness.value > lp.witness.error_bound
    # the consistency step also showed the violation at MTW's own witness
    at = lp.evidence.details["at_mtw_failure"]
    assert at["shown"] and at["origin"].startswith("the MTW check's witness")
    assert at["x"] == list(mtw.witness.x) and at["y"] == list(mtw.witness.y)


def test_the_witness_violates_the_principle_by_the_costs_own_values(reproducer):
    # independent re-computation with the cost's values only (no c-segment code): f(y_t) exceeds
    # both ends (the definition, Loeper 2009), and y_t lies on the line -D_x c(x, ·) = p_t
    assert_violates_the_maximum_principle(reproducer)


def test_consistency_step_alone_shows_the_violation_at_the_mtw_minimiser():
    # without an MTW verdict in the run, Loeper computes the MTW form's minimiser itself and builds
    # the construction there; p = 1.5 violates A3w (Loeper 2009: -(1/p)|x-y|^p fails for p > 1, p ≠ 2)
    ctx = CheckContext(cost=costcheck.load(CATALOG / "euclidean/power-1.5.yaml"), seed=1, budget=1024)
    cons = loeper.consistency(ctx, [])
    assert cons["shown"] and cons["origin"].startswith("the minimiser of the MTW form computed here")
    fine, k, value, error, _ = cons["hit"]
    assert value > error > 0 and fine.v[k] > loeper.TOLERANCE


def test_a_disagreement_with_mtw_is_reported_as_a_defect():
    # |x - y|²/2 has S ≡ 0 (MTW 2005), so no construction can show a violation; an MTW "failure"
    # planted in the run's verdicts must come out as a defect, not as "holds"
    cost = costcheck.from_expression("((x1 - y1)**2 + (x2 - y2)**2) / 2",
                                     domain={"x": {"box": [[-1, 1], [-1, 1]]}, "y": {"box": [[-1, 1], [-1, 1]]}},
                                     **XY)
    ctx = CheckContext(cost=cost, seed=1, budget=512)
    planted = Witness(x=[0.1, 0.2], y=[-0.3, 0.1], value=-1.0, vectors={"xi": [1.0, 0.0], "eta": [0.0, 1.0]})
    ctx.verdicts["mtw"] = Verdict("mtw", "fails", Evidence("refuted", "planted"), witness=planted)
    v = loeper.check(ctx)
    assert (v.verdict, v.evidence.kind) == ("undecided", "undecided")
    assert v.evidence.summary.startswith("DEFECT: MTW fails at x = (0.1, 0.2)")
    assert v.evidence.details["at_mtw_failure"]["shown"] is False


def test_nearly_singular_points_are_not_evaluated():
    # c = -x1 y1 - (x2 y2)³/3: D²_xy c = -diag(1, 3 x2² y2²) is singular on x2 = 0 (its det never
    # changes sign, so the fold test does not catch it); a profile through (x', y_t) with x'2 = 0
    # is excluded and counted, never evaluated
    cost = costcheck.from_expression("-x1*y1 - (x2*y2)**3/3",
                                     domain={"x": {"box": [[-1, 1], [-1, 1]]}, "y": {"box": [[0.5, 1], [0.5, 1]]}},
                                     **XY)
    ctx = CheckContext(cost=cost, seed=1, budget=512)
    z = np.array([[0.5, 0.5, 0.5, 0.0, 0.6, 0.6, 0.9, 0.8],     # x' on the singular line
                  [0.5, 0.5, 0.4, 0.6, 0.6, 0.6, 0.9, 0.8]])    # a regular configuration
    prof = ls.profiles(ctx, z, steps=8)
    assert prof.singular.tolist() == [True, False] and prof.admissible.tolist() == [False, True]
    assert np.isnan(prof.v[0]) and np.isfinite(prof.v[1])
    v = loeper.check(ctx)
    assert "singular_excluded" in v.evidence.details and v.evidence.details["rcond_threshold"] == ls.RCOND


def test_loeper_agrees_with_mtw_on_every_catalog_file_with_both():
    # the live catalog run at the snapshot's budget (shared with the snapshot test): MTW fails ⇔
    # Loeper fails (Loeper 2009, local direction), and MTW strong/weak ⇒ Loeper does not fail
    # (on these c-convex or locally tested domains; Loeper 2009 Thm 3.2 for the converse)
    from catalog_snapshot import catalog_document

    both, failing = 0, 0
    for c in json.loads(catalog_document())["costs"]:
        if "mtw" not in c["checks"]:  # a generating function: its own five conditions
            continue
        mtw, lp = c["checks"]["mtw"], c["checks"]["loeper"]
        if mtw["verdict"] not in ("strong", "weak", "fails") or lp["verdict"] == "not-applicable":
            continue
        both += 1
        if mtw["verdict"] == "fails":
            failing += 1
            assert (lp["verdict"], lp["evidence"]["kind"]) == ("fails", "refuted"), (c["id"], lp["evidence"]["summary"])
            assert lp["evidence"]["at_mtw_failure"]["shown"], c["id"]
        else:
            assert lp["verdict"] != "fails", (c["id"], lp["evidence"]["summary"])
    assert both >= 18 and failing >= 6, (both, failing)


@pytest.mark.parametrize("relpath", ["euclidean/power-0.5.yaml", "euclidean/sq-euclid.yaml"])
def test_the_construction_shows_no_violation_where_a3w_holds(relpath):
    # A3s for p = 0.5, S ≡ 0 for the quadratic cost (MTW 2005): Loeper's construction at any point
    # and direction stays at or below its ends (up to the tolerance)
    ctx = CheckContext(cost=costcheck.load(CATALOG / relpath), seed=2, budget=512)
    rng = np.random.default_rng(5)
    idx = rng.choice(np.flatnonzero(ctx.defined), 6)
    xi, eta = ls.random_directions(2, 6, rng)
    prof = ls.profiles(ctx, ls.construction(ctx, ctx.sample.xs[idx], ctx.sample.ys[idx], xi, eta), steps=16)
    assert prof.admissible.sum() > 20
    assert np.nanmax(prof.v) <= loeper.TOLERANCE



def test_loeper_reads_mtw_whatever_order_the_conditions_are_asked_in():
    # the runner keeps the registry's order, so Loeper always sees MTW's verdict when both run;
    # p = 3 violates A3w (Loeper 2009: p > 1, p ≠ 2)
    report = run_checks(costcheck.load(CATALOG / "euclidean/power-3.yaml"), conditions=["loeper", "mtw"], budget=512)
    assert list(report.verdicts) == ["mtw", "loeper"]
    at = report.verdicts["loeper"].evidence.details["at_mtw_failure"]
    assert at["origin"].startswith("the MTW check's witness") and at["shown"]
    from costcheck.sweep.boundaries import with_inputs

    assert with_inputs({"loeper"}, ["mtw", "loeper"]) == ["loeper", "mtw"]
    assert with_inputs({"loeper"}, ["loeper"]) == ["loeper"]  # a sweep of Loeper alone stays alone
