"""Proofs over one distance for a cost written in a chart of a two-point homogeneous space.

A cost given in a chart of the round sphere or of the hyperbolic plane often depends on the pair
only through the chart's *pairing* ``σ``: ``c(x, y) = F(σ(x, y))``.  Two pairings are recognised:

- the gnomonic chart of the unit sphere ``S²``, ``P(u) = (u, 1)/√(1 + |u|²)`` (both sides):
  ``σ = P(u)·P(v) = (1 + u·v)/(√(1 + |u|²) √(1 + |v|²))``, the cosine of the geodesic distance;
  the rotations of ``R³`` preserve it, and they carry any two points of the upper hemisphere at
  distance ``d`` to ``P(−s, 0), P(s, 0)`` with ``s = tan(d/2)``;
- the upper half-plane model of the hyperbolic plane (``x₂, y₂ > 0``):
  ``σ = |x − y|²/(x₂y₂) = 2(cosh d − 1)``; its isometries (real Möbius maps) preserve it and carry
  any pair at distance ``d`` to ``(0, 1), (0, s)`` with ``s = e^d``.

The cost is *shown* to be ``F(σ)`` by exact rewriting: the numerator ``N`` of ``σ = N/K`` (and
``−N``) is replaced by ``t·K`` (``−t·K``) in the cost's expression, which is an identity when
``t = σ``, and the result must keep no coordinate.  Then an isometry ``g`` carrying a pair to
its normal form gives a diffeomorphism ``ρ = P⁻¹∘g∘P`` near each point with
``c(ρx, ρy) = c(x, y)``; the mixed Hessian changes to ``Dρᵀ D²_xy c Dρ`` (so ``det ≠ 0`` is kept)
and the cross-curvature, the curvature of the pseudo-metric ``−D²_xy c``, is carried isometrically
with c-orthogonality (Kim and McCann, JEMS 12, 2010), so its sign on c-orthogonal pairs (A3s)
and on all pairs (NNCC) is kept.  A proof over the normal forms for every ``s`` whose ``σ`` lies
in an enclosure of ``σ`` over the domain therefore proves the condition on the domain.  The
enclosure ``[L, U]`` comes from interval arithmetic over a grid of cells covering the domain
(cells shown outside it dropped); ``pairs`` constraints that are functions of ``σ`` cut the normal
forms as well.  Twist is global and is not reduced this way: :mod:`.chart_twist` proves it from
the same recognition and enclosure of ``σ`` by a one-dimensional argument along the distance.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np
import sympy as sp

from . import balls
from .arb_eval import compile_exprs
from .cell_region import CellLocator
from .enclosures import FieldEnclosures
from .interval_eval import compile_interval_exprs
from .range_identities import RangeRewriter
from .region import bounding_box
from .space import ConstraintLocator, ProofSpace
from .substitution import Substitution

#: cells per side of the grid the pairing is enclosed on first, and the most cells enclosed in all
GRID, MAX_CELLS = 8, 400_000


@dataclass(frozen=True)
class Chart:
    name: str
    #: (x, y) → (N, K) with σ = N/K, K > 0
    pairing: Callable
    #: s → the normal-form pair (x values, y values)
    normal: Callable
    #: σ at the first normal form (s = start) is the extreme σ can take: 1 (sphere) or 0 (hyperbolic)
    start: float
    #: True when σ decreases away from the start (the sphere's cosine)
    decreasing: bool
    statement: str


def _sphere_pairing(x, y):
    return 1 + sum(a * b for a, b in zip(x, y)), sp.sqrt(1 + sum(a**2 for a in x)) * sp.sqrt(1 + sum(b**2 for b in y))


def _hyperbolic_pairing(x, y):
    return sum((a - b)**2 for a, b in zip(x, y)), x[1] * y[1]


SPHERE = Chart("the gnomonic chart of the unit sphere S²", _sphere_pairing,
               lambda s: ((-s, sp.Integer(0)), (s, sp.Integer(0))), 0.0, True,
               "σ = P(u)·P(v) with P(u) = (u, 1)/√(1 + |u|²); rotations of R³ keep σ and carry every pair to "
               "u = (−s, 0), v = (s, 0)")
HYPERBOLIC = Chart("the upper half-plane model of the hyperbolic plane", _hyperbolic_pairing,
                   lambda s: ((sp.Integer(0), sp.Integer(1)), (sp.Integer(0), s)), 1.0, False,
                   "σ = |x − y|²/(x₂y₂); the real Möbius maps keep σ and carry every pair to x = (0, 1), y = (0, s)")


def through_pairing(expr: sp.Expr, x, y, chart: Chart, t: sp.Symbol) -> sp.Expr | None:
    """``F(t)`` with ``expr = F(σ(x, y))`` exactly, found by rewriting ``N → t·K``; None if a coordinate stays."""
    numerator, scale = chart.pairing(x, y)
    rewritten = expr.xreplace({numerator: t * scale, sp.expand(-numerator): -t * scale})
    return rewritten if not (rewritten.free_symbols & (set(x) | set(y))) else None


def _refine(lo, hi):
    """Each cell halved along every side (``2^d`` children)."""
    d = lo.shape[1]
    corners = np.array(np.meshgrid(*[[0, 1]] * d, indexing="ij")).reshape(d, -1).T
    mid = 0.5 * (lo + hi)
    new_lo = np.where(corners[None], mid[:, None], lo[:, None]).reshape(-1, d)
    new_hi = np.where(corners[None], hi[:, None], mid[:, None]).reshape(-1, d)
    return new_lo, new_hi


def _grid(lo, hi):
    steps = [np.linspace(a, b, GRID + 1) for a, b in zip(lo, hi)]
    steps = [np.concatenate([[a], s[1:-1], [b]]) for s, a, b in zip(steps, lo, hi)]
    index = np.array(np.meshgrid(*[np.arange(GRID)] * len(lo), indexing="ij")).reshape(len(lo), -1).T
    cells_lo = np.array([[steps[j][i] for j, i in enumerate(row)] for row in index])
    cells_hi = np.array([[steps[j][i + 1] for j, i in enumerate(row)] for row in index])
    return cells_lo, cells_hi


def _targets(function, locator, cells_lo, cells_hi) -> tuple[float, float]:
    """Where to aim the enclosure's ends: beyond σ's extremes at the cell middles not shown outside
    (only a heuristic for where to subdivide; the bounds returned are the enclosures themselves)."""
    mid = 0.5 * (cells_lo + cells_hi)
    mid = mid[~locator.outside(mid, mid)]
    if not len(mid):
        return -np.inf, np.inf
    (value,) = function.over_cells(mid, mid)
    m, M = float(np.nanmin(value.lo)), float(np.nanmax(value.hi))
    return m - 0.5 * abs(m) - 1e-3, M + 0.5 * abs(M) + 1e-3


def pairing_range(cost, sigma: sp.Expr) -> tuple[float, float, int]:
    """``(L, U, cells)``: floats with ``L ≤ σ ≤ U`` on the whole domain (interval enclosures over a grid of
    cells covering its bounding box, split where an end falls short of its target; cells outside dropped)."""
    cells_lo, cells_hi = _grid(*bounding_box(cost.domain))
    locator = CellLocator(cost.domain, cost.n)
    function = compile_interval_exprs((sigma,), tuple(cost.x_symbols) + tuple(cost.y_symbols))
    target_lo, target_hi = _targets(function, locator, cells_lo, cells_hi)
    L, U, total = np.inf, -np.inf, 0
    while len(cells_lo):
        keep = ~locator.outside(cells_lo, cells_hi)
        cells_lo, cells_hi = cells_lo[keep], cells_hi[keep]
        total += len(cells_lo)
        (value,) = function.over_cells(cells_lo, cells_hi)
        lower = np.where(np.isfinite(value.lo), value.lo, -np.inf)
        upper = np.where(np.isfinite(value.hi), value.hi, np.inf)
        pick = (lower < target_lo) | (upper > target_hi)
        if total + 2 ** cells_lo.shape[1] * int(pick.sum()) > MAX_CELLS:
            pick[:] = False  # out of cells: every cell is final
        if len(lower[~pick]):
            L, U = min(L, float(lower[~pick].min())), max(U, float(upper[~pick].max()))
        cells_lo, cells_hi = _refine(cells_lo[pick], cells_hi[pick])
    return L, U, total


def _far_end(sigma_at, chart: Chart, L: float, U: float) -> float | None:
    """An ``S`` with ``σ(normal form at S)`` surely beyond the far end of ``[L, U]`` (None if not found):
    doubling finds one, bisection then brings it close to the first such ``s`` (a shorter cover)."""
    def beyond(s):
        value = sigma_at([balls.arb(s)])[0]
        return value.is_finite() and ((chart.decreasing and value.upper() < L) or
                                      (not chart.decreasing and value.lower() > U))
    near, far = chart.start, chart.start + 1.0
    for _ in range(60):
        if beyond(far):
            break
        near, far = far, chart.start + 2 * (far - chart.start)
    else:
        return None
    for _ in range(30):
        middle = 0.5 * (near + far)
        near, far = (near, middle) if beyond(middle) else (middle, far)
    return far


@dataclass(frozen=True)
class NormalForms:
    """What a chart's proofs share whatever fields they enclose: the cover of ``s``, its constraint tests,
    the rewrite of ``x, y`` into the normal forms (one :class:`.substitution.Substitution` for every field)
    and the identities proved on the cover."""
    s: sp.Symbol
    to_normal: Substitution
    rewrite: RangeRewriter
    start: float
    far: float
    classify: Callable
    description: str
    #: the chart recognised, and the enclosure ``L ≤ σ ≤ U`` of its pairing over the domain
    chart: Chart | None = None
    sigma_range: tuple[float, float] = (-math.inf, math.inf)


def normal_forms(cost) -> NormalForms | None:
    """The normal forms of the first chart the cost is recognised in, or None."""
    if cost.expr is None or cost.n != 2 or cost.m != 2:
        return None
    x, y = tuple(cost.x_symbols), tuple(cost.y_symbols)
    t, s = sp.Dummy("sigma"), sp.Dummy("s", positive=True)
    for chart in (SPHERE, HYPERBOLIC):
        if chart is HYPERBOLIC:
            lo, _ = bounding_box(cost.domain)
            if not (lo[1] > 0 and lo[3] > 0):
                continue  # the half-plane model needs x₂, y₂ > 0 on the whole domain
        if through_pairing(cost.expr, x, y, chart, t) is None:
            continue
        numerator, scale = chart.pairing(x, y)
        L, U, grid_cells = pairing_range(cost, numerator / scale)
        if chart is SPHERE:
            U = min(U, 1.0)  # Cauchy–Schwarz: σ ≤ 1
        else:
            L = max(L, 0.0)
        nx, ny = chart.normal(s)
        to_normal = {**dict(zip(x, nx)), **dict(zip(y, ny))}
        sigma_at = sp.simplify((numerator / scale).xreplace(to_normal))
        sigma_fn = compile_exprs((sigma_at,), (s,))
        far = _far_end(sigma_fn, chart, L, U)
        if far is None or not math.isfinite(L) or not math.isfinite(U):
            return None
        tests = [(compile_exprs((sigma_at - sp.Float(L),), (s,)), False),
                 (compile_exprs((sp.Float(U) - sigma_at,), (s,)), False)]
        for c in cost.domain.pairs:
            g = through_pairing(c.inequality.g, x, y, chart, t)
            if g is not None:
                tests.append((compile_exprs((g.xreplace({t: sigma_at}),), (s,)), c.inequality.strict))
        description = (f"normal-form pairs of {chart.name} (the cost is F(σ), shown by exact rewriting; "
                       f"{chart.statement}; σ ∈ [{L:.6g}, {U:.6g}] on the domain, enclosed over {grid_cells} "
                       "cells; the determinant's non-vanishing and the cross-curvature's sign are kept by "
                       "that change of chart, its size is not: the lower bound is the normal forms')")
        return NormalForms(s, Substitution(to_normal), RangeRewriter(s, chart.start, far), chart.start, far,
                           ConstraintLocator(tests).classify, description, chart, (L, U))
    return None


def chart_space(cost, fields: Sequence[str], prep=None) -> ProofSpace | None:
    """The one-dimensional proof space over normal-form pairs, or None when no chart is recognised.

    ``prep`` (a :class:`.preparation.ProofPreparation`) shares the normal forms between the fields asked for."""
    forms = prep.normal_forms() if prep is not None else normal_forms(cost)
    if forms is None:
        return None
    enclosures = FieldEnclosures(cost, fields, substitution=forms.to_normal, symbols=(forms.s,),
                                 rewrite=forms.rewrite, composed=True)
    if not enclosures.free_of_others:
        return None
    space = ProofSpace(forms.description, ["s"], np.array([forms.start]), np.array([forms.far]), enclosures,
                       forms.classify)
    # for .chart_mtw: the rewrite of x, y into the normal forms, and the identities proved on the cover
    space.normal_form = (forms.s, forms.to_normal, forms.rewrite)
    return space
