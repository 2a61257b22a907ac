"""Twist for a cost ``F(σ)`` of a sphere or hyperbolic chart, proved along the distance alone.

A cost recognised by :mod:`.charts` is ``c(u, v) = F(σ(u, v))`` with ``σ`` the chart's pairing.

**Sphere** (gnomonic chart).  Let ``p = P(u)``, ``q = P(v)`` be the unit vectors of the two points,
so ``σ = p·q = cos d`` with ``d`` the geodesic distance, and ``J = dP/du`` (3 × 2, rank 2).  Since
``|P| = 1``, ``Jᵀp = 0``: the columns of ``J`` span the tangent plane ``T_p S²``.  Hence

    D_u c = F'(σ) Jᵀ q = F'(σ) Jᵀ q_t,   q_t = q − σ p,   |q_t| = sin d.

``Jᵀ`` is one-to-one on ``T_p S²`` (a tangent ``w`` with ``Jᵀw = 0`` is orthogonal to every
tangent vector), so ``D_u c(u, v)`` fixes the tangent vector ``w = F'(σ) q_t`` and its length
``|h(σ)|``, where ``h(σ) = F'(σ) √(1 − σ²) = F'(cos d) sin d``.  If ``h`` is of one sign and
strictly monotone on an interval containing every ``σ`` of the domain's pairs, inside ``(−1, 1)``
(so ``0 < d < π``), then ``|h|`` fixes ``σ``, ``F'(σ) ≠ 0`` fixes ``q_t = w / F'(σ)``, and then
``q = σ p + q_t`` and ``v = P⁻¹(q)`` (``P`` is one-to-one onto its open hemisphere).  So
``v ↦ D_u c(u, v)`` is injective on every ``u``-slice: twist holds, whatever the shape of the
slices (no convexity is used).  Monotone in ``σ`` is monotone in ``d``: ``σ = cos d`` is strictly
decreasing on ``(0, π)``.

**Hyperbolic plane** (upper half-plane).  The half-plane maps isometrically onto the hyperboloid
``⟨X, X⟩ = −1``, ``X₀ > 0``, of Minkowski space (``⟨X, Y⟩ = −X₀Y₀ + X₁Y₁ + X₂Y₂``); with ``p, q`` the
two points there, ``−⟨p, q⟩ = cosh d`` and the chart's pairing is ``σ = 2(cosh d − 1) = −2⟨p, q⟩ − 2``.
With ``J`` the chart's Jacobian and ``η = diag(−1, 1, 1)``, ``⟨p, p⟩ = −1`` gives ``Jᵀηp = 0``, so

    D_x c = −2F'(σ) Jᵀη q = −2F'(σ) Jᵀη q_t,   q_t = q + ⟨p, q⟩ p,   ⟨q_t, q_t⟩ = sinh² d,

and ``Jᵀη`` is one-to-one on the tangent plane (where ``⟨·,·⟩`` is positive definite).  The
length is ``|h(σ)|`` with ``h(σ) = F'(σ) √(σ(σ + 4)) = 2F'(σ) sinh d``, and the same argument,
with ``q = (1 + σ/2) p + q_t``, proves twist when ``h`` is of one sign and strictly monotone on an
interval of ``σ > 0`` containing the domain's (``σ`` increases with ``d``).

**Certificate.**  ``F`` comes from the chart's exact rewriting, ``h`` and ``dh/dσ`` are formed in
sympy, and both are enclosed away from 0, in arb balls (natural ∩ mean-value form), on every cell
of a bisection cover of ``[L, U]``, the enclosure of ``σ`` over the domain
(:func:`.charts.pairing_range`); cells where a ``pairs`` constraint that is a function of ``σ``
surely fails are dropped, and the proved cells must join into one interval.  A non-zero
derivative on a connected interval keeps one sign (the signs of every cell are checked to agree
as well), so ``h`` is strictly monotone there.  The argument is the Riemannian one behind the
twist of ``d²/2`` below the cut locus (McCann, GAFA 11, 2001; Loeper, Acta Math. 202, 2009):
``D_x c = −F'·φ'(d)`` times the unit vector towards ``y``, with ``σ = φ(d)``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import sympy as sp

from . import balls
from .arb_eval import compile_exprs
from .branch_bound import Budget, Outcome, branch_and_bound, connected
from .charts import SPHERE, through_pairing
from .preparation import ProofPreparation, normal_forms_of
from .space import ConstraintLocator


@dataclass(frozen=True)
class Profile:
    """``h(σ)`` and ``dh/dσ`` in sympy, with the interval of σ they must be enclosed on."""
    t: sp.Symbol
    h: sp.Expr
    dh: sp.Expr
    lo: float
    hi: float
    sphere: bool


def profile(cost, prep: ProofPreparation | None = None) -> tuple[Profile | None, str]:
    """The distance profile of a chart cost, or ``(None, why)`` (``why`` empty: no chart recognised)."""
    forms = normal_forms_of(cost, prep)
    if forms is None or forms.chart is None:
        return None, ""
    x, y, t = tuple(cost.x_symbols), tuple(cost.y_symbols), sp.Dummy("sigma")
    F = through_pairing(cost.expr, x, y, forms.chart, t)
    if F is None:
        return None, ""
    L, U = forms.sigma_range
    sphere = forms.chart is SPHERE
    weight = sp.sqrt(1 - t**2) if sphere else sp.sqrt(t * (t + 4))
    h = sp.diff(F, t) * weight
    return Profile(t, h, sp.diff(h, t), L, U, sphere), ""


def _locator(cost, forms_chart, t):
    """Tests on σ from the ``pairs`` constraints that are functions of σ."""
    x, y = tuple(cost.x_symbols), tuple(cost.y_symbols)
    tests = []
    for c in cost.domain.pairs:
        g = through_pairing(c.inequality.g, x, y, forms_chart, t)
        if g is not None:
            tests.append((compile_exprs((g,), (t,)), c.inequality.strict))
    return ConstraintLocator(tests), len(tests)


def _shown(built: Profile) -> str:
    """``g`` as a formula in σ when it is short enough to read (the sphere's d²/2: ``-acos(σ)``)."""
    text = str(built.h.xreplace({built.t: sp.Symbol("σ")}))
    return f" (here g = {text})" if len(text) <= 60 else ""


def chart_twist(cost, budget: Budget, prep: ProofPreparation | None = None) -> tuple[Outcome | None, str]:
    """Branch and bound over ``σ ∈ [L, U]``: ``h ≠ 0`` and ``dh/dσ ≠ 0`` on a connected cover."""
    built, why = profile(cost, prep)
    if built is None:
        return None, why
    forms = normal_forms_of(cost, prep)
    function = compile_exprs((built.h, built.dh), (built.t,))
    signs: set = set()
    cells: list = []

    def decide(a, b):
        duals, _, _ = function.duals_over_box(a, b)
        h, dh = duals[0].value, duals[1].value
        if not (balls.excludes_zero(h) and balls.excludes_zero(dh)):
            return None
        signs.add((balls.positive(h), balls.positive(dh)))
        cells.append((float(a[0]), float(b[0])))
        return min(balls.lower(balls.ball_abs(h)), balls.lower(balls.ball_abs(dh)))

    lo, hi = np.array([built.lo]), np.array([built.hi])
    locator, constraints = _locator(cost, forms.chart, built.t)
    outcome = branch_and_bound(lo, hi, locator.classify, decide, budget)
    cut = (f" and cut by the {constraints} 'pairs' constraint{'s' if constraints > 1 else ''} written in σ"
           if constraints else "")
    outcome.space = (f"σ ∈ [{built.lo:.6g}, {built.hi:.6g}], the pairing of {forms.chart.name} enclosed over the "
                     f"domain{cut} (the cost is F(σ), shown by exact rewriting)")
    outcome.names = ["sigma"]
    if not outcome.proved:
        return outcome, ""
    if len(signs) != 1 or not connected(cells):
        return None, ("the σ the domain allows form several intervals (or h changes sign between them); the chart "
                      "twist argument needs one interval")
    first, last = min(a for a, _ in cells), max(b for _, b in cells)
    if not ((-1 < first and last < 1) if built.sphere else first > 0):
        return None, (f"the proved cover σ ∈ [{first:.6g}, {last:.6g}] reaches "
                      + ("±1 (distance 0 or π); the chart twist argument needs 0 < d < π" if built.sphere else
                         "0 (distance 0); the chart twist argument needs d > 0"))
    name = "F'(cos d) sin d" if built.sphere else "2 F'(σ) sinh d, σ = 2(cosh d − 1)"
    (h_positive, dh_positive), = signs or {(True, True)}
    formula = ("D_x c = F'(σ) Jᵀ q_t, q_t = q − σ p" if built.sphere else
               "D_x c = −2 F'(σ) Jᵀη q_t, q_t = q + ⟨p, q⟩ p (Minkowski)")
    outcome.what = (f"twist: {formula} tangent at p, fixes the tangent vector F'(σ) q_t and "
                    f"its length |g(d)|, g(d) = {name}{_shown(built)}; g is enclosed {'positive' if h_positive else 'negative'} "
                    f"and strictly {'increasing' if dh_positive != built.sphere else 'decreasing'} in d "
                    f"(dg/dσ {'> 0' if dh_positive else '< 0'}) on every cell of a connected cover of "
                    f"σ ∈ [{first:.6g}, {last:.6g}], so D_x c fixes d, then q_t, the partner point q and y; "
                    "the bound is min(|g|, |dg/dσ|)")
    return outcome, ""
