"""The Python API's one-call check and closed-form tensor."""

from __future__ import annotations

import math

import costcheck

BOX = {"x": {"box": [[0, 1], [0, 1]]}, "y": {"box": [[0, 1], [0, 1]]}}


def test_check_returns_verdicts_with_evidence():
    # c = -x·y: twist and non-degeneracy hold, S ≡ 0 so MTW is weak, NNCC holds (Ma–Trudinger–Wang 2005)
    cost = costcheck.from_expression("-(x1*y1 + x2*y2)", x=["x1", "x2"], y=["y1", "y2"], domain=BOX)
    report = costcheck.check(cost, budget=256, seed=3)
    got = {name: v.verdict for name, v in report.verdicts.items()}
    # index form and nestedness are questions for n > m and m = 1 with data (Chiappori–McCann–Pass 2017);
    # -D_x c = -y, -D_y c = -x: c-convexity is convexity of the boxes, and A3w on c-convex
    # domains gives Loeper's maximum principle (MTW 2005 §2; Loeper, Acta Math. 202, 2009)
    assert got == {"nondegenerate": "holds", "twist": "holds", "mtw": "weak", "nncc": "holds",
                   "target_c_convex": "holds", "source_c_convex": "holds", "loeper": "holds",
                   "index_form": "not-applicable", "nested": "not-applicable"}
    # proofs run by default: M = -I and T ≡ 0 give certificates for the first four (ball arithmetic
    # and the identity T = 0); the geometry checks have no certificate and stay sampled
    proved = {"nondegenerate", "twist", "mtw", "nncc"}
    for name, v in report.verdicts.items():
        kind = "not_applicable" if v.verdict == "not-applicable" else ("proved" if name in proved else "sampled")
        assert v.evidence.kind == kind, name
    assert report.options["budget"] == 256 and report.options["seed"] == 3 and "prove" in report.options
    quick = costcheck.check(cost, budget=256, seed=3, prove=False, conditions=["mtw"])
    assert quick.verdicts["mtw"].evidence.kind == "sampled"


def test_same_seed_same_report_and_other_seed_other_sample():
    cost = costcheck.from_expression("sqrt(1 + (x1-y1)**2 + (x2-y2)**2)", x=["x1", "x2"], y=["y1", "y2"], domain=BOX)
    a = costcheck.check(cost, budget=128, seed=5, conditions=["mtw"]).verdicts["mtw"]
    b = costcheck.check(cost, budget=128, seed=5, conditions=["mtw"]).verdicts["mtw"]
    c = costcheck.check(cost, budget=128, seed=6, conditions=["mtw"]).verdicts["mtw"]
    names = (cost.x_names, cost.y_names)

    def timeless(value):  # the seconds a proof took are measured, not derived from the seed
        if isinstance(value, dict):
            return {k: timeless(v) for k, v in value.items() if k != "seconds"}
        return value

    assert timeless(a.to_json(*names)) == timeless(b.to_json(*names))
    assert a.evidence.details["sampled_minimum"] != c.evidence.details["sampled_minimum"]


def test_mtw_tensor_closed_form():
    # T_11,11 = c_xx,y c^{y,x} c_x,yy - c_xx,yy (the MTW 2005 formula), checked against hand
    # computations; for a bilinear cost every component is 0 (Ma–Trudinger–Wang 2005)
    bilinear = costcheck.from_expression("-(x1*y1 + x2*y2)", x=["x1", "x2"], y=["y1", "y2"], domain=BOX)
    assert all(c.expr == 0 for c in costcheck.mtw_tensor(bilinear))
    quadratic_plus = costcheck.from_expression("(x1 - y1)**2/2 + x1**3 * y1", x=["x1"], y=["y1"],
                                               domain={"x": {"box": [[1, 2]]}, "y": {"box": [[1, 2]]}})
    (comp,) = costcheck.mtw_tensor(quadratic_plus)
    # by hand: c_xy = -1 + 3x², c_xx,y = 6x, c_x,yy = 0, c_xx,yy = 0  =>  T = 0 (elementary calculus)
    assert comp.expr == 0
    cubic = costcheck.from_expression("x1**2 * y1**2", x=["x1"], y=["y1"],
                                      domain={"x": {"box": [[1, 2]]}, "y": {"box": [[1, 2]]}})
    (comp,) = costcheck.mtw_tensor(cubic)
    # by hand: M = 4xy, c_xx,y = 4y, c_x,yy = 4x, c_xx,yy = 4  =>  T = 4y·4x/(4xy) - 4 = 0 (elementary)
    assert comp.expr == 0
    mixed = costcheck.from_expression("exp(x1*y1)", x=["x1"], y=["y1"],
                                      domain={"x": {"box": [[1, 2]]}, "y": {"box": [[1, 2]]}})
    (comp,) = costcheck.mtw_tensor(mixed)
    # by hand with u = xy: M = e^u(1+u), c_xx,y = e^u y(2+u), c_x,yy = e^u x(2+u), c_xx,yy = e^u(2+4u+u²)
    # T = e^u [ (2+u)² u/(1+u) - (2+4u+u²) ] = -e^u (2 + 2u + u²) / (1+u)  (elementary calculus)
    x, y = sorted(comp.expr.free_symbols, key=lambda s: s.name)
    value = float(comp.expr.subs({x: 1.5, y: 1.2}))
    u = 1.5 * 1.2
    assert abs(value - (-math.exp(u) * (2 + 2 * u + u * u) / (1 + u))) < 1e-12


def test_report_prints_short_displays_in_a_notebook_and_is_the_json_entry():
    from costcheck.render.json_out import cost_to_json

    cost = costcheck.from_expression("(x - y)**2 / 2", x=["x"], y=["y"],
                                     domain={"x": {"box": [[0, 1]]}, "y": {"box": [[0, 1]]}}, id="line")
    report = costcheck.check(cost, budget=64, conditions=["nondegenerate", "mtw"], prove=False)
    text = repr(report)
    assert text.splitlines()[0].startswith("<CostReport line: n=1, m=1") and len(text.splitlines()) == 3
    assert "Verdict(" not in text and "Evidence(" not in text  # not a dataclass dump
    assert "<table>" in report._repr_html_() and "nondegenerate" in report._repr_html_()
    assert report.to_dict() == cost_to_json(report) and report.to_dict()["checks"]["mtw"]["verdict"] == "not-applicable"


def test_a_function_cost_is_checked_with_jax_without_options():
    import jax.numpy as jnp

    # c = -x·y: M = -I, so non-degeneracy holds (elementary)
    cost = costcheck.from_function(lambda x, y: -jnp.dot(x, y), n=2, m=2, domain=BOX)
    report = costcheck.check(cost, budget=64, conditions=["nondegenerate"])
    assert report.options["backend"] == "jax" and report.verdicts["nondegenerate"].verdict == "holds"


def test_the_notebook_style_example_in_docs_runs():
    import runpy
    from pathlib import Path

    runpy.run_path(str(Path(__file__).resolve().parent.parent / "docs" / "api-example.py"), run_name="__main__")
