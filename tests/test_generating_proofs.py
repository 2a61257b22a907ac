"""Proofs for generating functions: a reduced cost G = -c - z runs c's certificates, and G_z < 0 is
proved by identity or by branch and bound.

The reduction is Trudinger's ("On the local theory of prescribed Jacobian equations", DCDS-A 34,
2014 — cited from memory): an ordinary cost c is the generating function G(x, y, z) = -c(x, y) - z,
whose effective cost is c, so G's twist, non-degeneracy and G3 are c's twist, non-degeneracy and
MTW. The comparison is with the ordinary cost computed by the same program, never with a
written-down answer.
"""

from __future__ import annotations

import numpy as np
import sympy as sp
import pytest

import costcheck
from costcheck.certify.reduced import dual_cost, reduced_cost
from costcheck.spec.loader import build_cost

from test_generating import BOX, PAIRS, R2, reduce_file, two_dimensional_catalog

#: small sample budget; the proofs get the default per-condition budget, on both sides the same
SAMPLES = 128


def generating(expr: str, *, rng=(-1, 1), domain=BOX, **extra):
    data = {"id": "g", "x": ["x1", "x2"], "y": ["y1", "y2"], "domain": domain,
            "generating": {"expr": expr, "z": "z", "range": list(rng)}, **extra}
    return build_cost(data)


@pytest.mark.parametrize("path", two_dimensional_catalog(), ids=lambda p: p.stem)
def test_a_reduced_cost_gets_the_ordinary_verdict_and_evidence_kind(path):
    # G = -c - z for every 2-D catalog cost: verdict word and evidence kind (proved, sampled,
    # refuted, undecided) of G1, G2 and G3 equal c's twist, non-degeneracy and MTW, same seed and
    # budget. One rule differs by design: a generating condition's failure that no enclosure
    # certifies is undecided, where an ordinary cost's is "fails" on sampled evidence.
    cost, reduced = reduce_file(path)
    ordinary = costcheck.check(cost, budget=SAMPLES, seed=1, conditions=list(PAIRS)).verdicts
    mine = costcheck.check(reduced, budget=SAMPLES, seed=1, conditions=list(PAIRS.values())).verdicts
    for name, g_name in PAIRS.items():
        theirs, ours = ordinary[name], mine[g_name]
        if theirs.verdict == "fails" and theirs.evidence.kind != "refuted":
            assert (ours.verdict, ours.evidence.kind) == ("undecided", "undecided"), (name, ours.evidence.summary)
            continue
        assert (ours.verdict, ours.evidence.kind) == (theirs.verdict, theirs.evidence.kind), \
            (name, ours.evidence.summary, theirs.evidence.summary)
        if ours.evidence.kind == "proved":  # the evidence states the reduction it rests on
            assert "G = −c − z with c = " in ours.evidence.summary and "G_z ≡ −1 exactly" in ours.evidence.summary


def test_reduced_cost_is_detected_exactly_and_keeps_the_domain():
    # G = -(z + 1)²/2 + z²/2 - c: G_z = -(z + 1) + z = -1 (elementary algebra), so G = -(c + 1/2) - z
    G = generating(f"-(z + 1)**2 / 2 + z**2 / 2 - {R2} / 2")
    c = reduced_cost(G)
    assert c is not None and c.y_names == ("y1", "y2") and c.domain.y.lower == (1.5, 1.5)
    x1, x2, y1, y2 = sp.symbols("x1 x2 y1 y2", real=True)
    assert sp.expand(c.expr - ((x1 - y1) ** 2 + (x2 - y2) ** 2) / 2 - sp.Rational(1, 2)) == 0
    assert reduced_cost(generating(f"-{R2} / 2 - 2 * z")) is None  # G_z = -2: not the reduction G_z ≡ -1
    assert reduced_cost(generating(f"-{R2} / 2 - z - z**2 / 100")) is None
    # a constraint on z: the domain is not c's domain times the range of z
    cut = {**BOX, "pairs": ["z - x1 + 1 >= 0"]}
    assert reduced_cost(generating(f"-{R2} / 2 - z", domain=cut)) is None
    dual = dual_cost(c)
    assert dual.x_names == c.y_names and dual.y_names == c.x_names and dual.domain.x == c.domain.y


def test_g_z_identically_minus_one_is_proved_by_identity():
    G = generating(f"-{R2} / 2 - z")
    verdict = costcheck.check(G, budget=SAMPLES, seed=1, conditions=["z_monotone"]).verdicts["z_monotone"]
    assert verdict.verdict == "holds" and verdict.evidence.kind == "proved"
    assert "G_z = -1 exactly" in verdict.evidence.summary


def test_g_z_negative_but_not_constant_is_proved_by_branch_and_bound():
    # G_z = -z² - 1 - x1² ≤ -1 on the whole box (elementary calculus)
    G = generating(f"-{R2} / 2 - z**3 / 3 - z - x1**2 * z")
    verdict = costcheck.check(G, budget=SAMPLES, seed=1, conditions=["z_monotone"]).verdicts["z_monotone"]
    assert verdict.verdict == "holds" and verdict.evidence.kind == "proved", verdict.evidence.summary
    proof = verdict.evidence.details["proof"]
    assert proof["proved"] and proof["space"] == "triples (x, y, z)"
    assert 0 < proof["lower_bound"] <= 1  # -G_z ≥ 1, and the certified bound is below the true minimum


def test_g_z_touching_zero_is_never_proved():
    # G_z = -3 z² vanishes at z = 0, inside the range: G_z < 0 fails there (elementary calculus)
    G = generating(f"-{R2} / 2 - z**3")
    verdict = costcheck.check(G, budget=SAMPLES, seed=1, conditions=["z_monotone"]).verdicts["z_monotone"]
    assert verdict.evidence.kind != "proved" and verdict.verdict != "holds"


def test_a_generating_function_that_is_not_reduced_gets_no_cost_proof():
    # G = -c - 2z: G_z = -2, so the conditions are c/2's, but the exact reduction G_z ≡ -1 does not
    # apply and no cost proof is run: the twist stays sampled; the monotonicity is still proved (a
    # negative constant), and G2 by the extended-Hessian certificate, which needs no reduction
    G = generating(f"-{R2} / 2 - 2 * z")
    verdicts = costcheck.check(G, budget=SAMPLES, seed=1, conditions=["z_monotone", "g_twist", "g_nondegenerate"]).verdicts
    assert verdicts["z_monotone"].evidence.kind == "proved"
    twist = verdicts["g_twist"].evidence
    assert verdicts["g_twist"].verdict == "holds" and twist.kind == "sampled"
    assert "G = −c − z" not in twist.summary and "proof attempt" not in twist.summary
    assert "proof" not in twist.details and "proof_attempt" not in twist.details
    nondegenerate = verdicts["g_nondegenerate"].evidence
    assert nondegenerate.kind == "proved" and "G = −c − z" not in nondegenerate.summary
    assert nondegenerate.details["proof"]["space"] == "triples (x, y, z)"


def test_the_dual_twist_of_a_reduced_cost_is_the_twist_with_roles_exchanged():
    # c = x1 y1 + x2 y2 + x1² y1 (elementary): D_x c = (y1 + 2 x1 y1, y2), whose symmetric y-Jacobian
    # diag(1 + 2 x1, 1) is definite for x1 > -1/2; c_y = (x1 + x1², x2) at fixed y is one-to-one in x
    # with x1 ∈ [0, 1] (x1 + x1² is increasing there): both twists hold and are proved
    G = generating("-(x1*y1 + x2*y2 + x1**2*y1) - z")
    verdicts = costcheck.check(G, budget=SAMPLES, seed=1, conditions=["g_twist", "g_dual_twist"]).verdicts
    for name in ("g_twist", "g_dual_twist"):
        assert verdicts[name].verdict == "holds" and verdicts[name].evidence.kind == "proved", name
    assert "x and y exchanged" in verdicts["g_dual_twist"].evidence.summary


def test_a_proved_monotonicity_agrees_with_dense_sampling():
    # cross-examination of the branch and bound on the near-field reflector (G_z < 0 by the nesting of
    # confocal ellipsoids: the file's notes, elementary geometry): the certificate says G_z ≤ -bound on
    # the whole domain, so no point of a dense random sample may exceed it
    from costcheck.derivatives.generating import z_derivative
    from costcheck.spec.loader import load_cost
    from test_generating import ROOT

    cost = load_cost(ROOT / "catalog" / "generating" / "near-field-reflector.yaml")
    verdict = costcheck.check(cost, budget=SAMPLES, seed=1, conditions=["z_monotone"]).verdicts["z_monotone"]
    assert verdict.evidence.kind == "proved", verdict.evidence.summary
    bound = verdict.evidence.details["proof"]["lower_bound"]
    lo, hi = map(np.array, zip(*[*zip(cost.domain.x.lower, cost.domain.x.upper),
                                 *zip(cost.domain.y.lower, cost.domain.y.upper)]))
    points = np.random.default_rng(7).uniform(lo, hi, size=(20000, len(lo)))
    fn = sp.lambdify(cost.x_symbols + cost.y_symbols, z_derivative(cost.expr, cost.y_symbols[-1]), "numpy")
    values = fn(*points.T)
    assert np.all(np.isfinite(values)) and values.max() <= -bound * (1 - 1e-9)


def test_a_kink_and_a_pairs_constraint_reduce_too():
    # c = |x1 - y1|³/3 + (x2 - y2)²/2 with y1 - x1 ≥ 1 on the boxes: D²_xy c = diag(-2|x1 - y1|, -1),
    # det ≥ 2 (elementary calculus). The constraint (true on the whole box, but a constraint) keeps the
    # reduction (it does not mention z) and stops the twist certificate (its slices need no cut), which
    # the evidence says. abs differentiated twice gives DiracDelta: the collision search must run too.
    domain = {"x": {"box": [[0, 1], [0, 1]]}, "y": {"box": [[2, 3], [0, 1]]}, "pairs": ["y2 - x2 + 2 >= 0"]}
    G = generating("-abs(x1 - y1)**3 / 3 - (x2 - y2)**2 / 2 - z", domain=domain)
    verdicts = costcheck.check(G, budget=SAMPLES, seed=1, conditions=["g_twist", "g_nondegenerate"]).verdicts
    nondegenerate, twist = verdicts["g_nondegenerate"], verdicts["g_twist"]
    assert nondegenerate.verdict == "holds" and nondegenerate.evidence.kind == "proved"
    assert 0 < nondegenerate.evidence.details["proof"]["lower_bound"] <= 2
    assert twist.verdict == "holds" and twist.evidence.kind == "sampled"
    assert "no proof attempted on the reduced cost c" in twist.evidence.summary


def test_extended_non_degeneracy_of_a_general_g_is_proved_and_agrees_with_dense_sampling():
    # G = -|x - y|²/2 - z (1 + x1 y1 / 10) is not a reduced cost (G_z = -(1 + x1 y1/10), G_xz ≠ 0):
    # the certificate encloses det E over cells of (x, y, z); cross-examined by dense sampling of det E
    # (E = G_xy - G_xz ⊗ G_y / G_z, Trudinger 2014, recalled from memory), which must keep the
    # certificate's sign and stay at least its bound in size
    from costcheck.derivatives.sympy_backend import symbolic_derivatives

    G = generating(f"-{R2} / 2 - z * (1 + x1 * y1 / 10)", rng=(0, 1))
    verdict = costcheck.check(G, budget=SAMPLES, seed=1, conditions=["g_nondegenerate"]).verdicts["g_nondegenerate"]
    assert verdict.verdict == "holds" and verdict.evidence.kind == "proved", verdict.evidence.summary
    assert "G = −c − z" not in verdict.evidence.summary and "det E" in verdict.evidence.summary
    bound = verdict.evidence.details["proof"]["lower_bound"]
    M = symbolic_derivatives(G.expr, G.x_symbols, G.y_symbols, 2, True)["dxy"]
    det = sp.lambdify(G.x_symbols + G.y_symbols, M[0][0] * M[1][1] - M[0][1] * M[1][0], "numpy")
    lo = np.array([0, 0, 1.5, 1.5, 0])
    values = det(*np.random.default_rng(3).uniform(lo, lo + 1, size=(20000, 5)).T)
    assert np.all(np.isfinite(values)) and (np.all(values >= bound) or np.all(values <= -bound))
