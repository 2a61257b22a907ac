"""Work shared between the conditions and files of a run gives what the unshared work gave."""

import sympy as sp

from costcheck.certify.preparation import ProofPreparation
from costcheck.certify.substitution import Substitution
from costcheck.run.parallel import expected_work


def test_substitution_is_xreplace():
    u, v, s = sp.symbols("u v s")
    root = sp.sqrt(1 + u**2 + v**2)
    exprs = [sp.acos((1 + u * v) / root) ** 2, sp.diff(sp.acos((1 + u * v) / root) ** 2, u, v), root * u + v]
    mapping = {u: -s, v: sp.Integer(0)}
    shared = Substitution(mapping)
    for e in exprs + exprs:  # the second pass reads the images of the first
        assert shared(e) == e.xreplace(mapping)
    assert Substitution({})(exprs[0]) is exprs[0]


def test_a_preparation_builds_each_thing_once():
    built = []
    prep = ProofPreparation(cost=None)
    for _ in range(3):
        assert prep.once(("space", ("dxy",)), lambda: built.append(1) or "the space") == "the space"
    assert built == [1]


def test_longer_expected_work_first_and_ties_in_file_order():
    small = {"x": ["a"], "y": ["b"], "expr": "a*b"}
    chart = {"x": ["u1", "u2"], "y": ["v1", "v2"], "expr": "d**2/2", "define": {"d": "acos(u1*v1 + u2*v2)"}}
    space = {"x": ["x1", "x2", "x3"], "y": ["y1", "y2", "y3"], "expr": "x1*y1"}
    jobs = [small, chart, space, dict(small)]
    order = sorted(range(len(jobs)), key=lambda i: expected_work(jobs[i]), reverse=True)
    assert order == [2, 1, 0, 3]
