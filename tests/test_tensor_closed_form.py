"""``costcheck tensor``: the tidied tensor and the closed form of ``S(ξ, η)`` on orthogonal pairs.

The printed expressions are read back (they are our own output, never a cost file) and
evaluated against the derivative engine's numeric ``T`` and ``S`` at random pairs: two
independent computations of the same quantity (common practice).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import sympy as sp

import costcheck
from costcheck.cli import main
from costcheck.numerics.curvature import algebra, margins
from costcheck.render.tensor import WIDTH, wrap

CATALOG = Path(__file__).resolve().parent.parent / "catalog"

#: a polynomial cost that is not a function of x − y, with a non-zero tensor (invented for the test)
POLY2 = "-(x1*y1 + x2*y2) - (x1*y1)**2/2 + x2**2*y1**2/3"
POLY3 = "-(x1*y1 + x2*y2 + x3*y3) - (x1*y1)**2/2 + x2**2*y3**2/3"


def write_cost(tmp_path, expr: str, n: int, low: float = 0.0) -> Path:
    names = lambda s: "[" + ", ".join(f"{s}{i + 1}" for i in range(n)) + "]"  # noqa: E731
    box = "[" + ", ".join(f"[{low}, {low + 1}]" for _ in range(n)) + "]"
    path = tmp_path / "c.yaml"
    path.write_text(f"id: c\ntitle: test\nx: {names('x')}\ny: {names('y')}\nexpr: {expr}\n"
                    f"domain:\n  x: {{box: [{box[1:-1]}]}}\n  y: {{box: [{box[1:-1]}]}}\n")
    return path


def run(argv, capsys):
    code = main([str(a) for a in argv])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def read_back(text: str, n: int) -> sp.Expr:
    """One printed expression as sympy (our own output, in the variables we print)."""
    names = [f"{s}{i + 1}" for s in ("x", "y", "d", "xi", "eta") for i in range(n)] + ["theta"]
    return sp.parse_expr(text, local_dict={name: sp.Symbol(name) for name in names})


def values(n: int, x, y, theta=None, xi=None, eta=None) -> dict:
    out = {}
    for i in range(n):
        out |= {f"x{i + 1}": x[i], f"y{i + 1}": y[i], f"d{i + 1}": x[i] - y[i]}
        if xi is not None:
            out |= {f"xi{i + 1}": xi[i], f"eta{i + 1}": eta[i]}
    if theta is not None:
        out["theta"] = theta
    return {sp.Symbol(k): v for k, v in out.items()}


def engine_S(cost, x, y, xi, eta) -> float:
    d = cost.derivatives(order=4)(np.array([x]), np.array([y]))
    return float(margins.form_at(d, np.array([xi]), np.array([eta]))[0])


def test_squared_distance_has_zero_tensor_and_zero_form(capsys):
    # c = |x − y|²/2: T ≡ 0 and S ≡ 0 (Ma–Trudinger–Wang 2005; common practice)
    code, out, _ = run(["tensor", CATALOG / "euclidean/sq-euclid.yaml", "--json"], capsys)
    assert code == 0
    doc = json.loads(out)
    assert doc["complete"] and doc["note"] is None
    assert len(doc["components"]) == 9 and all(c["expr"] == "0" and c["simplified"] for c in doc["components"])
    assert doc["S"]["closed_form"]["expr"] == "0"
    assert [c["label"] for c in doc["S"]["coefficients"]] == [f"a_{p}" for p in range(5)]


def test_n2_closed_form_is_the_engines_S_on_orthogonal_pairs(capsys):
    # a function of x − y (written in d = x − y): S(θ) with ξ = (cos θ, sin θ), η = (−sin θ, cos θ)
    # against the engine's S(ξ, η) at random pairs and angles; the cost is A3s (MTW 2005), so S > 0
    path = CATALOG / "euclidean/power-0.5.yaml"
    code, out, _ = run(["tensor", path, "--json", "--simplify-seconds", "30"], capsys)
    assert code == 0
    doc = json.loads(out)
    assert doc["complete"] and doc["variables"] == {"d1": "x1 - y1", "d2": "x2 - y2"}
    form = read_back(doc["S"]["closed_form"]["expr"], 2)
    assert form.free_symbols == {sp.Symbol("d1"), sp.Symbol("d2"), sp.Symbol("theta")}
    cost = costcheck.load(str(path))
    rng = np.random.default_rng(20)
    for _ in range(4):
        x, y, theta = rng.uniform(-1, 1, 2), rng.uniform(-1, 1, 2), rng.uniform(0, np.pi)
        if np.linalg.norm(x - y) < 0.3:
            continue
        xi, eta = (np.cos(theta), np.sin(theta)), (-np.sin(theta), np.cos(theta))
        printed = float(form.subs(values(2, x, y, theta)))
        assert printed == pytest.approx(engine_S(cost, x, y, xi, eta), rel=1e-9)
        assert printed > 0


@pytest.mark.parametrize("n, expr", [(2, POLY2), (3, POLY3)])
def test_printed_tensor_and_form_match_the_engine(tmp_path, capsys, n, expr):
    # not a function of x − y: written in x and y. T against the engine's T; S (n = 2: S(θ);
    # n ≥ 3: Σ B ξξηη) against the engine's S at orthogonal ξ, η
    path = write_cost(tmp_path, expr, n, low=0.2)
    code, out, _ = run(["tensor", path, "--json"], capsys)
    assert code == 0
    doc = json.loads(out)
    assert doc["complete"] and doc["variables"] == {}
    cost = costcheck.load(str(path))
    rng = np.random.default_rng(n)
    x, y = rng.uniform(0.2, 1.2, n), rng.uniform(0.2, 1.2, n)
    T, _ = algebra.mtw_tensor(cost.derivatives(order=4)(np.array([x]), np.array([y])))
    point = values(n, x, y)
    for comp in doc["components"]:
        i, j, k, l = (int(ch) - 1 for ch in comp["index"])
        assert float(read_back(comp["expr"], n).subs(point)) == pytest.approx(T[0, i, j, k, l], rel=1e-9, abs=1e-12)
    assert any(c["expr"] != "0" for c in doc["components"])
    form = read_back(doc["S"]["closed_form"]["expr"], n)
    for _ in range(3):
        xi = rng.standard_normal(n)
        xi /= np.linalg.norm(xi)
        eta = rng.standard_normal(n)
        eta -= (eta @ xi) * xi
        if n == 2:
            theta = float(np.arctan2(xi[1], xi[0]))
            xi, eta = np.array([np.cos(theta), np.sin(theta)]), np.array([-np.sin(theta), np.cos(theta)])
            printed = float(form.subs(values(n, x, y, theta)))
        else:
            printed = float(form.subs(values(n, x, y, xi=xi, eta=eta)))
        assert printed == pytest.approx(engine_S(cost, x, y, xi, eta), rel=1e-9, abs=1e-12)


def test_text_and_latex_show_components_and_form_in_80_columns(tmp_path, capsys):
    path = write_cost(tmp_path, POLY2, 2, low=0.2)
    code, out, _ = run(["tensor", path], capsys)
    assert code == 0
    lines = out.splitlines()
    assert all(len(line) <= WIDTH for line in lines)
    assert any(line.startswith("T_1111 = ") for line in lines)
    assert any(line.startswith("S(θ) = a_0 cos⁴θ") for line in lines)
    assert {f"a_{p}" for p in range(5)} <= {line.split(" = ")[0] for line in lines}
    code, out, _ = run(["tensor", path, "--latex"], capsys)
    assert code == 0
    assert "T_{1111} = " in out and r"S(\theta) = a_0 \cos^4\theta" in out and "a_{4} = " in out


def test_one_dimensional_cost_has_no_orthogonal_pair(tmp_path, capsys):
    code, out, _ = run(["tensor", write_cost(tmp_path, "exp(x1*y1)", 1, low=1.0)], capsys)
    assert code == 0
    assert "T_1111 = " in out and "no non-zero ξ ⊥ η" in out


def test_three_dimensional_power_cost_ends_with_a_clear_note(capsys):
    # it took more than 200 s before the factored path; now a small limit ends in a note, not a hang
    code, out, _ = run(["tensor", CATALOG / "euclidean/power-0.5-3d.yaml", "--simplify-seconds", "1"], capsys)
    assert code == 0
    lines = out.splitlines()
    assert sum(line.startswith("T_") for line in lines) == 36
    assert "not tidied within 1 s" in out and "--simplify-seconds" in out
    assert all(len(line) <= WIDTH for line in lines)


def test_wrap_breaks_between_terms_and_keeps_the_text():
    body = " + ".join(f"{k}*d1**{k}*(d2**2 - {k})" for k in range(1, 12))
    lines = wrap("a_0 = ", body)
    assert len(lines) > 1 and all(len(line) <= WIDTH for line in lines)
    assert all(line.startswith("    + ") for line in lines[1:])
    assert " ".join(line.strip() for line in lines) == "a_0 = " + body
