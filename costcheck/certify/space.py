"""Where a proof's cells live: pairs ``(x, y)``, differences ``z = x − y``, or distances ``r = |x − y|``.

A cost ``c(x, y) = h(x − y)`` (every power cost, ``sqrt(1 ± |x − y|²)``, ``−log|x − y|`` …) has
all its derivatives functions of ``z = x − y`` alone, so a property of the derivatives at every
``z`` in the difference set ``X − Y`` holds at every pair.  Proving over ``z`` halves the
dimension of the search (``2n`` → ``n``), which turns out-of-reach covers of ``R^4`` into a few
hundred squares.  The difference box contains ``{x − y}`` for the bounding boxes of ``X`` and ``Y``;
constraints are kept only where they are functions of ``x − y`` (a superset of the true set of
differences, which is sound: proving more than needed), and dropped otherwise.

A cost ``c(x, y) = g(|x − y|²)`` is moreover invariant under rotations ``(x, y) ↦ (Rx, Ry)``:
the fields at ``z = R(r, 0, …)`` are those at ``(r, 0, …)`` turned by ``R``, and every quantity a
proof certifies is unchanged by that turn (``det D²_xy c``; the eigenvalues of its symmetric
part; the minimum of ``S(ξ, η)`` over orthonormal pairs, which the turn permutes; the same for
``A(ξ)``).  So it suffices to prove the quantity at ``z = (r, 0, …)`` for every ``r`` in an
interval containing ``{|x − y|}``: a one-dimensional cover.  The interval is
``[dist(0, Z), max |corner of Z|]`` for the difference box ``Z``, cut by those ``pairs``
constraints that are themselves functions of ``|x − y|²``.  Radial symmetry is recognised
structurally: ``c(x, x − z)`` rewritten with ``Σ zᵢ²`` replaced by one symbol must keep no ``zᵢ``.
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
    # composed: the derivatives the sampled checks already formed (Faà di Bruno's formula where the cost is
    # F(t)); differentiating a chart cost plainly four times took most of a default check on the sphere
    return ProofSpace("pairs (x, y)", list(cost.x_names) + list(cost.y_names), lo, hi,
                      FieldEnclosures(cost, fields, composed=True), Locator(cost.domain, cost.n).classify)


def _difference_substitution(cost):
    zs = tuple(sp.Dummy(f"z{i}", real=True) for i in range(cost.n))
    return zs, {y: x - z for x, y, z in zip(cost.x_symbols, cost.y_symbols, zs)}


def translation_invariant(cost) -> bool:
    """``c(x, x − z)`` does not involve ``x`` once rewritten (structural test; False when unsure)."""
    if cost.expr is None or cost.n != cost.m:
        return False
    _, substitution = _difference_substitution(cost)
    return not (cost.expr.xreplace(substitution).free_symbols & set(cost.x_symbols))


class ConstraintLocator:
    """Classifies a cell of a reduced space by ball enclosures of the constraint functions ``tests``
    (each ``(fn, strict)``): inside, outside, or straddling (``region.judge``)."""

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
                      ConstraintLocator(tests).classify)


def _radial(expr, zs, rho) -> bool:
    """``expr`` is written through ``Σ zᵢ²`` only (structural: the replacement removes every ``zᵢ``)."""
    squares = sp.Add(*[z**2 for z in zs])
    return not (expr.subs(squares, rho).free_symbols & set(zs))


def _distance_range(z_lo: np.ndarray, z_hi: np.ndarray) -> tuple[float, float]:
    """``[dist(0, Z), max_Z |z|]`` for the box ``Z = [z_lo, z_hi]``, rounded outward."""
    near = np.where((z_lo <= 0) & (z_hi >= 0), 0.0, np.minimum(np.abs(z_lo), np.abs(z_hi)))
    far = np.maximum(np.abs(z_lo), np.abs(z_hi))
    # each float operation rounds by at most half an ulp: four ulps of slack cover the few of them
    low = float(np.sqrt(np.sum(near**2))) * (1 - 2**-50)
    high = float(np.sqrt(np.sum(far**2))) * (1 + 2**-50)
    return low, high


@dataclass
class RadialFrame:
    """The distance variable ``r``, the rewrite of ``y`` that puts ``x − y`` at ``(r, 0, …)``, and the cover."""
    r: sp.Symbol
    to_axis: dict
    lo: np.ndarray
    hi: np.ndarray
    classify: Callable[[np.ndarray, np.ndarray], str]
    description: str = ("distances r = |x − y| (the cost is a function of |x − y|: a translation and a rotation "
                        "carry every pair to z = (r, 0))")
    #: identities applied to the derivatives once rewritten (:mod:`.range_identities`), or None
    rewrite: Callable | None = None
    #: the derivatives by Faà di Bruno's formula (:mod:`costcheck.derivatives.composition`), as a chart's
    #: space encloses them, instead of differentiated plainly
    composed: bool = False


def radial_frame(cost) -> RadialFrame | None:
    """The frame for a cost of ``|x − y|`` alone (``n ≥ 2``), or None."""
    if cost.n < 2 or not translation_invariant(cost):
        return None
    zs, substitution = _difference_substitution(cost)
    rho = sp.Dummy("rho", nonnegative=True)
    if not _radial(cost.expr.xreplace(substitution), zs, rho):
        return None
    r = sp.Dummy("r", nonnegative=True)
    on_axis = {z: (r if i == 0 else sp.Integer(0)) for i, z in enumerate(zs)}
    to_axis = {y: x - on_axis[z] for x, y, z in zip(cost.x_symbols, cost.y_symbols, zs)}
    lo, hi = bounding_box(cost.domain)
    n = cost.n
    z_lo = np.array([math.nextafter(lo[i] - hi[n + i], -math.inf) for i in range(n)])
    z_hi = np.array([math.nextafter(hi[i] - lo[n + i], math.inf) for i in range(n)])
    r_lo, r_hi = _distance_range(z_lo, z_hi)
    tests = []
    for c in cost.domain.pairs:
        g = c.inequality.g.xreplace(substitution)
        if not (g.free_symbols & set(cost.x_symbols)) and _radial(g, zs, rho):
            tests.append((compile_exprs((g.xreplace(on_axis),), (r,)), c.inequality.strict))
    return RadialFrame(r, to_axis, np.array([r_lo]), np.array([r_hi]), ConstraintLocator(tests).classify)


def radial_space(cost, fields: Sequence[str]) -> ProofSpace | None:
    frame = radial_frame(cost)
    if frame is None:
        return None
    enclosures = FieldEnclosures(cost, fields, substitution=frame.to_axis, symbols=(frame.r,))
    if not enclosures.free_of_others:
        return None  # a derivative kept x after the rewrite: fall back to the difference space
    return ProofSpace(frame.description, ["|x-y|"], frame.lo, frame.hi, enclosures, frame.classify)


def space_for(cost, fields: Sequence[str]) -> ProofSpace:
    return radial_space(cost, fields) or difference_space(cost, fields) or pair_space(cost, fields)
