"""Work removed from a check's start-up gives the same results as the work it replaces."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import sympy as sp

import costcheck
from costcheck.certify import radial
from costcheck.certify.space import RadialFrame, radial_frame
from costcheck.derivatives.sympy_backend import symbolic_derivatives

ROOT = Path(__file__).resolve().parent.parent


@pytest.mark.parametrize("name", ["euclidean/power-1.5.yaml", "euclidean/neg-sqrt-one-plus.yaml"])
def test_the_axis_inverse_is_the_one_sympy_inv_returns(name):
    cost = costcheck.load(ROOT / "catalog" / name)
    frame = radial_frame(cost)
    sym = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 2)
    M = sp.Matrix([[e.xreplace(frame.to_axis) for e in row] for row in sym["dxy"]])
    assert radial.adjugate_inverse(M, frame) == M.inv(method="ADJ")


def test_a_singular_matrix_that_does_not_look_singular_is_still_refused():
    # det = r - r (sin² r + cos² r) is the zero function, though not written as 0
    r = sp.Dummy("r", nonnegative=True)
    M = sp.Matrix([[1, r], [sp.sin(r) ** 2 + sp.cos(r) ** 2, r]])
    frame = RadialFrame(r, {}, np.array([0.5]), np.array([2.0]), classify=lambda a, b: "inside")
    assert M.det() != 0
    with pytest.raises(sp.matrices.exceptions.NonInvertibleMatrixError):
        radial.adjugate_inverse(M, frame)


def test_nestedness_not_applicable_loads_none_of_its_numerics():
    code = ("import sys, costcheck\n"
            "from costcheck.conditions import nested\n"
            "from costcheck.conditions.context import CheckContext\n"
            f"cost = costcheck.load({str(ROOT / 'catalog/euclidean/power-1.5.yaml')!r})\n"
            "v = nested.check(CheckContext(cost, seed=1, budget=64))\n"
            "print(v.verdict, 'costcheck.conditions.nested.analysis' in sys.modules)\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.split() == ["not-applicable", "False"]
