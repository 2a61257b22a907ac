"""Generating functions G(x, y, z): the reduction of an ordinary cost, bad ``generating:`` blocks,
the monotonicity condition's witness, certified twist collisions and a matching utility derived by hand.

An ordinary cost c (minimised) is the generating function G(x, y, z) = -c(x, y) - z (Trudinger,
"On the local theory of prescribed Jacobian equations", DCDS-A 34, 2014 — cited from memory; the
convention is the one docs/conditions.md#generating-functions fixes).  Its effective cost is c
itself, so every derivative field and every verdict must be c's: the tests compare against the
ordinary cost computed by the same program, never against a written-down answer.
"""

from __future__ import annotations

import textwrap
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
import yaml

import costcheck
from costcheck.cli import main
from costcheck.derivatives.fields import fields_up_to
from costcheck.derivatives.sympy_backend import symbolic_derivatives
from costcheck.spec.loader import build_cost, find_cost_files, load_cost

ROOT = Path(__file__).resolve().parent.parent
#: keys of a cost file that a reduced generating file keeps as they are
KEPT = ("id", "x", "y", "params", "define", "domain")


def reduced_data(data: dict, expr: str, sense: str = "cost", z: str = "zeta") -> dict:
    """The file ``data`` rewritten as G = -c - z (c = expr, or c = -expr for a surplus)."""
    out = {k: v for k, v in data.items() if k in KEPT}
    G = f"-({expr}) - {z}" if sense == "cost" else f"({expr}) - {z}"
    out["generating"] = {"expr": G, "z": z, "range": [-1, 1]}
    return out


def two_dimensional_catalog() -> list[Path]:
    files = []
    for path in find_cost_files([ROOT / "catalog"]):
        raw = yaml.safe_load(Path(path).read_text(encoding="utf-8"))
        if "expr" in raw and len(raw["x"]) == 2 and len(raw["y"]) == 2:
            files.append(Path(path))
    return files


def differences(cost, generating, order: int) -> list[str]:
    """The entries of the fields up to ``order`` where c's and the effective cost's differ."""
    a = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, order)
    b = symbolic_derivatives(generating.expr, generating.x_symbols, generating.y_symbols, order, True)
    bad = []
    for name in fields_up_to(order):
        if name == "value":  # -G = c + z: the value differs by z, which no condition reads
            continue
        for k, (u, v) in enumerate(zip(np.array(a[name], dtype=object).ravel(), np.array(b[name], dtype=object).ravel())):
            if u != v and sp.cancel(u - v) != 0:
                bad.append(f"{name}[{k}]")
    return bad


def reduce_file(path: Path):
    raw = yaml.safe_load(path.read_text(encoding="utf-8"))
    return load_cost(path), build_cost(reduced_data(raw, raw["expr"], raw.get("sense", "cost")), file=str(path))


@pytest.mark.parametrize("path", two_dimensional_catalog(), ids=lambda p: p.stem)
def test_reduced_cost_has_the_costs_twist_and_mixed_hessian_fields(path):
    # D_x, D_y and the mixed Hessian of the effective cost of -c - z are c's (identity of the
    # level-set derivative D_k = ∂_{y_k} + c_{y_k} ∂_z on functions of (x, y) alone): order 2 for
    # every 2-D catalog cost; the fourth-order fields below for the ones quick to differentiate
    cost, generating = reduce_file(path)
    assert generating.generating is not None and generating.m == cost.m + 1
    assert differences(cost, generating, 2) == []


@pytest.mark.parametrize("name", ["euclidean/sq-euclid", "euclidean/neg-inner", "euclidean/power-0.5",
                                  "euclidean/sqrt-one-plus", "economics/bilinear-matching-surplus"])
def test_reduced_cost_has_the_costs_mtw_fields(name):
    cost, generating = reduce_file(ROOT / "catalog" / f"{name}.yaml")
    assert differences(cost, generating, 4) == []


BOX = {"x": {"box": [[0, 1], [0, 1]]}, "y": {"box": [[1.5, 2.5], [1.5, 2.5]]}}
R2 = "((x1 - y1)**2 + (x2 - y2)**2)"
#: ordinary condition → its generating counterpart
PAIRS = {"twist": "g_twist", "nondegenerate": "g_nondegenerate", "mtw": "g_mtw"}


@pytest.mark.parametrize("expr, conditions", [
    # |x - y|²/2: MTW tensor ≡ 0 (Ma–Trudinger–Wang 2005), so a "weak" verdict on both sides
    (f"{R2} / 2", ("twist", "nondegenerate", "mtw")),
    # the power cost -(1/p)|x - y|^p with p = 4 on disjoint squares: A3w fails for p > 1, p ≠ 2
    # (Loeper, Acta Math. 202, 2009 — recalled from memory): a certified failure on both sides
    (f"-{R2}**2 / 4", ("nondegenerate", "mtw")),
    # -x1 cos(2 (y1 - 2)) - x2 y2: D_x c = -(cos(2 (y1 - 2)), y2) is even in y1 - 2, so twist fails
    # (elementary calculus); a certified collision on both sides (Krawczyk's test)
    ("-(x1*cos(2*(y1 - 2)) + x2*y2)", ("twist",)),
])
def test_reduced_cost_reproduces_the_ordinary_verdicts(expr, conditions):
    cost = costcheck.from_expression(expr, x=["x1", "x2"], y=["y1", "y2"], domain=BOX)
    generating = build_cost(reduced_data({"id": "reduced", "x": ["x1", "x2"], "y": ["y1", "y2"], "domain": BOX},
                                         expr, z="z"))
    ordinary = costcheck.check(cost, budget=128, seed=1, prove=False, conditions=list(conditions)).verdicts
    reduced = costcheck.check(generating, budget=128, seed=1, prove=False,
                              conditions=["z_monotone"] + [PAIRS[c] for c in conditions]).verdicts
    for name in conditions:
        mine, theirs = reduced[PAIRS[name]], ordinary[name]
        assert mine.verdict == theirs.verdict, (name, mine.evidence.summary, theirs.evidence.summary)
        # a refutation is certified on both sides; anything else is sampled evidence (no proof was asked for)
        assert mine.evidence.kind == theirs.evidence.kind, name
    assert reduced["z_monotone"].verdict == "holds"  # G_z = -1
    # prove=False: the sampled evidence alone; with proofs, G_z ≡ -1 is proved by identity and these
    # verdicts by c's certificates (tests/test_generating_proofs.py)
    assert reduced["z_monotone"].evidence.kind == "sampled"
    assert not set(reduced) & set(PAIRS)  # a generating function is not checked for the cost conditions


def test_g_z_positive_somewhere_is_a_certified_failure_with_its_witness():
    # G = -|x - y|²/2 - z² on z in [-1, 1]: G_z = -2z > 0 wherever z < 0 (elementary calculus)
    data = {"id": "bent", "x": ["x1", "x2"], "y": ["y1", "y2"], "domain": BOX,
            "generating": {"expr": f"-{R2} / 2 - z**2", "z": "z", "range": [-1, 1]}}
    verdict = costcheck.check(build_cost(data), budget=128, seed=2, conditions=["z_monotone"]).verdicts["z_monotone"]
    assert verdict.verdict == "fails" and verdict.evidence.kind == "refuted"
    w = verdict.witness
    assert len(w.x) == 2 and len(w.y) == 3  # (y, z)
    assert -2 * w.y[2] > 0 and w.value == pytest.approx(-2 * w.y[2])
    assert "ball arithmetic" in w.confirmation and "above 0" in w.confirmation


GOOD = """\
id: reduced-quadratic
x: [x1, x2]
y: [y1, y2]
generating:
  expr: -((x1 - y1)**2 + (x2 - y2)**2) / 2 - z
  z: z
  range: [-1, 1]
domain:
  x: {box: [[-1, 1], [-1, 1]]}
  y: {box: [[-1, 1], [-1, 1]]}
"""


@pytest.mark.parametrize("old, new, field, phrase", [
    ("  z: z\n", "", "generating", "'z' is missing"),
    ("range: [-1, 1]", "range: [1, -1]", "generating.range", "inverted"),
    ("range: [-1, 1]", "range: [0, 0]", "generating.range", "empty"),
    ("  z: z\n", "  z: x1\n", "generating.z", "defined twice"),
    (") / 2 - z\n", ") / 2 + 0 * z\n", "generating.expr", "does not depend on its third variable"),
    ("- z\n", "- w\n", "generating.expr", "unknown name 'w'"),
    ("y: [y1, y2]\n", "y: [y1, y2]\nsense: surplus\n", "sense", "own sign convention"),
    ("  y: {box: [[-1, 1], [-1, 1]]}", "  y: {ball: {center: [0, 0], radius: 1}}", "domain.y", "must be a box"),
])
def test_a_bad_generating_block_is_one_line_naming_file_and_field(tmp_path, capsys, old, new, field, phrase):
    assert old in GOOD
    path = tmp_path / "bad.yaml"
    path.write_text(GOOD.replace(old, new))
    code = main(["check", str(path), "--no-cache", "--budget", "64"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2
    assert len(err) == 1 and str(path) in err[0] and f"field '{field}'" in err[0] and phrase in err[0], err


@pytest.mark.parametrize("text, phrase", [
    (GOOD.replace("generating:", "expr: x1 * y1\ngenerating:"), "not both"),
    (textwrap.dedent(GOOD).split("generating:")[0] + GOOD.split("  range: [-1, 1]\n")[1], "'expr' is missing"),
])
def test_expr_and_generating_exactly_one(tmp_path, capsys, text, phrase):
    path = tmp_path / "bad.yaml"
    path.write_text(text)
    code = main(["check", str(path), "--no-cache", "--budget", "64"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2 and len(err) == 1 and str(path) in err[0] and phrase in err[0], err


def test_a_twist_collision_is_certified_with_both_points_as_witness():
    # G = x1 cos(y1) + x2 y2 - z: G_x = (cos y1, y2) and G take the same values at y1 and -y1
    # (cos is even), so (y, z) ↦ (G_x, G) is not one-to-one on y1 in [-2, 2]; at fixed (y, z),
    # G_y / G_z = (x1 sin y1, -x2) is one-to-one in x where sin y1 ≠ 0 (elementary calculus).
    # The collision is proved by Krawczyk's test (Krawczyk 1969; Moore 1977 — recalled from memory)
    data = {"id": "fold", "x": ["x1", "x2"], "y": ["y1", "y2"],
            "domain": {"x": {"box": [[0.5, 1], [0.5, 1]]}, "y": {"box": [[-2, 2], [-1, 1]]}},
            "generating": {"expr": "x1*cos(y1) + x2*y2 - z", "z": "z", "range": [-1, 1]}}
    verdicts = costcheck.check(build_cost(data), budget=128, seed=4, conditions=["g_twist", "g_dual_twist"]).verdicts
    twist = verdicts["g_twist"]
    assert twist.verdict == "fails" and twist.evidence.kind == "refuted" and twist.value == 0.0
    w = twist.witness
    first, second = np.array(w.y), np.array(w.vectors["y_prime"])
    assert np.allclose(first[1:], second[1:])  # same y2 and z
    assert first[0] == pytest.approx(-second[0], abs=1e-12) and abs(first[0]) > 1e-3  # y1 and -y1
    # the exact partner is -y1 (cos is even): the certified bound must contain it
    bound = float(w.confirmation.split("within ")[1].split(" ")[0])
    assert abs(second[0] + first[0]) <= bound and "Krawczyk" in w.confirmation and "excludes w₁" in w.confirmation
    assert verdicts["g_dual_twist"].verdict == "holds" and verdicts["g_dual_twist"].evidence.kind == "sampled"


def test_a_dual_twist_collision_is_certified():
    # G = cos(x1) y1 + x2 y2 - z: G_y / G_z = -(cos x1, x2) takes the same value at x1 and -x1
    # (elementary calculus), so x ↦ G_y / G_z is not one-to-one on x1 in [-2, 2]
    data = {"id": "dual-fold", "x": ["x1", "x2"], "y": ["y1", "y2"],
            "domain": {"x": {"box": [[-2, 2], [-1, 1]]}, "y": {"box": [[0.5, 1], [0.5, 1]]}},
            "generating": {"expr": "cos(x1)*y1 + x2*y2 - z", "z": "z", "range": [-1, 1]}}
    dual = costcheck.check(build_cost(data), budget=128, seed=4, conditions=["g_dual_twist"]).verdicts["g_dual_twist"]
    assert dual.verdict == "fails" and dual.evidence.kind == "refuted", dual.evidence.summary
    w = dual.witness
    first, second = np.array(w.x), np.array(w.vectors["x_prime"])
    assert first[0] == pytest.approx(-second[0], abs=1e-12) and abs(first[0]) > 1e-3  # x1 and -x1
    assert first[1] == pytest.approx(second[1], abs=1e-12) and "Krawczyk" in w.confirmation


def test_the_collision_certificate_refuses_what_it_cannot_prove():
    # Krawczyk's test needs a square system (three equations in two unknowns are refused), and a
    # one-to-one map has no partner to isolate: Newton from the "second point" of the identity map
    # returns to the first, and a box that may hold the first point proves nothing (elementary)
    from costcheck.certify.collisions import certify_collision
    from costcheck.spec.loader import build_cost as build
    cost = build({"id": "fold", "x": ["x1", "x2"], "y": ["y1", "y2"],
                  "domain": {"x": {"box": [[0.5, 1], [0.5, 1]]}, "y": {"box": [[-2, 2], [-1, 1]]}},
                  "generating": {"expr": "x1*cos(y1) + x2*y2 - z", "z": "z", "range": [-1, 1]}})
    x1, x2 = cost.x_symbols
    y1, y2, z = cost.y_symbols
    variables = (x1, x2, y1, y2, z)
    found, why = certify_collision(cost.domain, 2, [sp.cos(y1), y2, z], variables, [2, 3],
                                   [0.7, 0.7, 1.0, 0.2, 0.1], [0.7, 0.7, -1.0, 0.2, 0.1])
    assert found is None and "as many equations as unknowns" in why
    found, why = certify_collision(cost.domain, 2, [y1, y2, z], variables, [2, 3, 4],
                                   [0.7, 0.7, 1.0, 0.2, 0.1], [0.7, 0.7, -1.0, 0.2, 0.1])
    assert found is None and "no box" in why, why


def test_income_effect_matching_utility_has_the_hand_derived_fields_and_verdicts():
    # G = s w, s = 1 + x·y, w = B - z (catalog/generating/income-effect-matching.yaml; the utility
    # form after Nöldeke–Samuelson 2018 and McCann–Zhang 2019, recalled from memory). Elementary
    # calculus: E = G_xy - G_xz ⊗ G_y / G_z = w (I - y xᵀ / s), det E = w² / s; G is linear in x,
    # so every field with two x-derivatives (Trudinger's A = G_xx and its p-derivatives) is 0
    cost = costcheck.load(ROOT / "catalog" / "generating" / "income-effect-matching.yaml")
    x1, x2 = cost.x_symbols
    y1, y2, z = cost.y_symbols
    s, w = 1 + x1 * y1 + x2 * y2, 2 - z
    fields = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 4, True)
    E = sp.Matrix(2, 2, lambda i, k: -fields["dxy"][i][k])
    assert sp.simplify(E - w * (sp.eye(2) - sp.Matrix([y1, y2]) * sp.Matrix([[x1, x2]]) / s)) == sp.zeros(2, 2)
    assert sp.simplify(E.det() - w**2 / s) == 0
    assert all(sp.simplify(v) == 0 for v in np.array(fields["dxxyy"], dtype=object).ravel())
    assert all(sp.simplify(v) == 0 for v in np.array(fields["dxxy"], dtype=object).ravel())
    verdicts = costcheck.check(cost, budget=128, seed=3, prove=False).verdicts
    got = {name: v.verdict for name, v in verdicts.items()}
    assert got == {"z_monotone": "holds", "g_twist": "holds", "g_dual_twist": "holds",
                   "g_nondegenerate": "holds", "g_mtw": "weak"}, got
    assert all(v.evidence.kind == "sampled" for v in verdicts.values())  # evidence, never "proved"


@pytest.mark.parametrize("path", sorted((ROOT / "catalog" / "generating").glob("*.yaml")), ids=lambda p: p.stem)
def test_jax_implicit_function_route_agrees_with_the_sympy_level_set_formula(path):
    # two routes to the same fields (costcheck.derivatives.jax_generating): JAX differentiates the
    # implicit function ζ(y) of G(x₀, y, ζ) = G(x₀, y₀, z₀) through its implicit-function-theorem
    # derivative; sympy applies the total derivative D_k = ∂_{y_k} − (G_{y_k}/G_z) ∂_z symbolically.
    # Their agreement to rounding at sampled points of the domain checks both (common practice for
    # automatic against symbolic differentiation)
    from costcheck.derivatives import make_evaluator
    from costcheck.numerics.sampling import sample_side

    cost = load_cost(path)
    xs = sample_side(cost.domain, "x", cost.n, 24, 5)
    ws = sample_side(cost.domain, "y", cost.m, 24, 6)
    count = min(len(xs), len(ws))
    a = make_evaluator(cost, "sympy", 4)(xs[:count], ws[:count])
    b = make_evaluator(cost, "jax", 4)(xs[:count], ws[:count])
    for name in fields_up_to(4):
        u, v = getattr(a, name), getattr(b, name)
        assert u.shape == v.shape, name
        assert np.all(np.isfinite(u)), name
        assert np.max(np.abs(u - v) / (1 + np.abs(u))) < 1e-10, name
