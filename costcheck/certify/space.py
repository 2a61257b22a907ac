"""Where a proof's cells live: pairs ``(x, y)``, or differences ``z = x − y`` for translation-invariant costs.

A cost ``c(x, y) = h(x − y)`` (every power cost, ``sqrt(1 ± |x − y|²)``, ``−log|x − y|`` …) has
all its derivatives functions of ``z = x − y`` alone, so a property of the derivatives at every
``z`` in the difference set ``X − Y`` holds at every pair.  Proving over ``z`` halves the
dimension of the search (``2n`` → ``n``), which turns out-of-reach covers of ``R^4`` into a few
hundred squares.  The difference box contains ``{x − y}`` for the bounding boxes of ``X`` and ``Y``;
constraints are kept only where they are functions of ``x − y`` (a superset of the true set of
differences, which is sound: proving more than needed), and dropped otherwise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np
import sympy as sp

from . import balls
from .arb_eval import compile_exprs
from .enclosures import FieldEnclosures
from .region import Locator, bounding_box, judge


@dataclass
class ProofSpace:
    description: str
    names: list
    lo: np.ndarray
    hi: np.ndarray
    enclosures: FieldEnclosures
    classify: Callable[[np.ndarray, np.ndarray], str]


def pair_space(cost, fields: Sequence[str]) -> ProofSpace:
    lo, hi = bounding_box(cost.domain)
    return ProofSpace("pairs (x, y)", list(cost.x_names) + list(cost.y_names), lo, hi,
                      FieldEnclosures(cost, fields), Locator(cost.domain, cost.n).classify)


def _difference_substitution(cost):
    zs = tuple(sp.Dummy(f"z{i}", real=True) for i in range(cost.n))
    return zs, {y: x - z for x, y, z in zip(cost.x_symbols, cost.y_symbols, zs)}


def translation_invariant(cost) -> bool:
    """``c(x, x − z)`` does not involve ``x`` once rewritten (structural test; False when unsure)."""
    if cost.expr is None or cost.n != cost.m:
        return False
    _, substitution = _difference_substitution(cost)
    return not (cost.expr.xreplace(substitution).free_symbols & set(cost.x_symbols))


class _DifferenceLocator:
    def __init__(self, tests):
        self.tests = tests

    def classify(self, lo, hi) -> str:
        cell = [balls.from_bounds(a, b) for a, b in zip(lo, hi)]
        return judge((fn(cell)[0], strict) for fn, strict in self.tests)


def difference_space(cost, fields: Sequence[str]) -> ProofSpace | None:
    if not translation_invariant(cost):
        return None
    zs, substitution = _difference_substitution(cost)
    lo, hi = bounding_box(cost.domain)
    n = cost.n
    # z = x − y ranges over [x_lo − y_hi, x_hi − y_lo]; widen by an ulp for the float subtraction
    z_lo = np.array([math.nextafter(lo[i] - hi[n + i], -math.inf) for i in range(n)])
    z_hi = np.array([math.nextafter(hi[i] - lo[n + i], math.inf) for i in range(n)])
    tests = []
    for c in cost.domain.pairs:
        g = c.inequality.g.xreplace({**dict(zip(c.symbols, c.symbols)), **substitution})
        if not (g.free_symbols & set(cost.x_symbols)):
            tests.append((compile_exprs((g,), zs), c.inequality.strict))
    enclosures = FieldEnclosures(cost, fields, substitution=substitution, symbols=zs)
    names = [f"{a}-{b}" for a, b in zip(cost.x_names, cost.y_names)]
    return ProofSpace("differences z = x − y (the cost is a function of x − y)", names, z_lo, z_hi, enclosures,
                      _DifferenceLocator(tests).classify)


def space_for(cost, fields: Sequence[str]) -> ProofSpace:
    return difference_space(cost, fields) or pair_space(cost, fields)
