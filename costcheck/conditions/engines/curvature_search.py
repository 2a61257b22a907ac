"""The search for the smallest curvature margin, its high-precision confirmation and its wording:
the steps the MTW check (orthogonal pairs, A3w / A3s) and the NNCC check (all pairs) share.

1. margins at every sampled pair where the mixed Hessian is invertible;
2. a batched local descent from the worst, mutually separated samples, never leaving the domain;
3. the minimiser re-evaluated in mpmath at two precisions before a failure is reported."""

from __future__ import annotations

from dataclasses import dataclass

import mpmath
import numpy as np

from ...errors import UsageError
from ...model.verdict import Evidence, Verdict, Witness
from ...numerics.curvature import algebra, nondegenerate_part, precise
from ...numerics.curvature.margins import a3w_margin, form_at, margin_at
from ...numerics.search import batched_descent

#: scale-free margins within ±TOLERANCE of zero count as zero
TOLERANCE = 1e-7

#: local searches started from the worst separated samples
STARTS = 12

#: iterations of each local search (two batched evaluations each)
ITERATIONS = 30


@dataclass(frozen=True)
class Minimum:
    """The smallest margin found and where: unit ``xi``, unit covector ``eta``."""

    x: np.ndarray
    y: np.ndarray
    xi: np.ndarray
    eta: np.ndarray
    rel: float
    raw: float
    normaliser: float
    #: the scale-free determinant ρ there (:mod:`~costcheck.numerics.curvature.nondegenerate_part`)
    rho: float = float("nan")


@dataclass(frozen=True)
class Search:
    #: the evaluator the search used (reuse it: no new compilation)
    evaluate: object
    samples: int
    resolution: float
    valid: int
    undefined: int
    singular: int
    flat: int  # valid sampled pairs where T vanishes exactly (scale 0)
    starts: int
    evaluations: int
    sample_min: float
    best: Minimum
    #: the scale S of ρ, and the sampled pairs off the non-degenerate part (ρ < DEFINED_RATIO)
    scale_S: float = 1.0
    near_singular: int = 0
    #: the smallest margin at those pairs (computed, not used for the verdict); NaN if none
    near_min: float = float("nan")
    #: signs of det M on the usable pairs
    det_positive: int = 0
    det_negative: int = 0
    #: among usable sampled pairs with a margin below -TOLERANCE, the one with the largest ρ
    far: Minimum | None = None

    @property
    def degenerate_somewhere(self) -> bool:
        """Non-degeneracy fails on the sample: pairs near the singular set, or det M of both signs."""
        return self.near_singular > 0 or (self.det_positive > 0 and self.det_negative > 0)


def separated_starts(points: np.ndarray, order: np.ndarray, count: int, spacing: float) -> list[int]:
    """Up to ``count`` indices from ``order`` (best first), each at least ``spacing`` from those taken."""
    chosen: list[int] = []
    for i in order:
        if len(chosen) >= count:
            break
        if chosen and spacing > 0:
            if np.min(np.linalg.norm(points[chosen] - points[i], axis=1)) < spacing:
                continue
        chosen.append(int(i))
    return chosen


def sample_margins(ctx, margin_fn):
    """The margins at every sampled pair.

    A sample large enough to repay the compilation (:data:`fused_margin.WORTHWHILE_PAIRS`) of a
    symbolic n = 2 cost gets its A3w margins from the fused kernel (the same exact minimum, to
    rounding); otherwise numpy computes them from the shared derivatives.
    """
    from ...numerics.curvature.n2 import fused_margin

    if margin_fn is a3w_margin and fused_margin.worthwhile(ctx.cost, ctx.sample.xs.shape[0]):
        try:
            m = fused_margin.a3w_margin(ctx.cost, ctx.sample.xs, ctx.sample.ys)
            return algebra.Margins(m.rel, m.raw, m.xi, m.eta, m.normaliser, m.valid)
        except UsageError:  # a function the JAX translation does not know: the numpy route
            pass
    return margin_fn(ctx.derivs)


def search_minimum(ctx, margin_fn, orthogonal: bool, *, starts: int = STARTS,
                   iterations: int = ITERATIONS) -> Search | None:
    """Smallest scale-free margin over the sample, then local searches from the worst samples."""
    cost, sample = ctx.cost, ctx.sample
    n = cost.n
    derivs = ctx.derivs
    defined = ctx.defined
    margins = sample_margins(ctx, margin_fn)
    S = nondegenerate_part.scale(derivs.dxy, defined)
    rho, sign = nondegenerate_part.relative_det(derivs.dxy, S)
    part = nondegenerate_part.on_part(derivs.dxy, S, search=True)
    near = margins.valid & defined & ~part
    valid = margins.valid & defined & part
    if not valid.any():
        return None
    rel = np.where(valid, margins.rel, np.inf)
    failing = valid & (margins.rel < -TOLERANCE)
    # every batch of the search has at most starts · (2 · 2n) points
    evaluator = ctx.evaluator(4)  # the JAX backend pads batch sizes, so the search compiles once
    domain = cost.domain

    def objective(Z):
        out = np.full(Z.shape[0], np.inf)
        xs, ys = Z[:, :n], Z[:, n:]
        inside = domain.contains_pairs(xs, ys)
        if inside.any():
            d = evaluator(xs[inside], ys[inside])
            values = margin_fn(d).rel
            usable = np.isfinite(values) & nondegenerate_part.on_part(d.dxy, S, search=True)
            out[inside] = np.where(usable, values, np.inf)
        return out

    points = np.concatenate([sample.xs, sample.ys], axis=1)
    lx, ux = domain.x.bounds()
    ly, uy = domain.y.bounds()
    lower, upper = np.concatenate([lx, ly]), np.concatenate([ux, uy])
    resolution = float(sample.resolution) if np.isfinite(sample.resolution) else 0.0
    order = np.argsort(rel)
    order = order[np.isfinite(rel[order])][: 50 * starts]
    chosen = separated_starts(points, order, starts, 0.5 * resolution)
    width = float(np.mean(np.where(upper > lower, upper - lower, 1.0)))
    step = float(np.clip(0.5 * resolution / width, 1e-3, 0.1)) if resolution > 0 else 0.05
    z, fz, evaluations = batched_descent(objective, points[chosen], lower, upper,
                                         step=step, iterations=iterations)
    i_sample = int(order[0])
    k = int(np.argmin(fz))
    if fz[k] < rel[i_sample]:
        x, y = z[k, :n], z[k, n:]
    else:
        x, y = sample.xs[i_sample], sample.ys[i_sample]
    # the minimiser at the chosen point, with LAPACK eigenvectors for an accurate η
    d1 = evaluator(x[None], y[None])
    m1 = margin_fn(d1)
    m1 = margin_at(d1, m1.xi, orthogonal) if n > 1 else m1
    best = Minimum(np.asarray(x, float), np.asarray(y, float), m1.xi[0], m1.eta[0],
                   float(m1.rel[0]), float(m1.raw[0]), float(m1.normaliser[0]),
                   float(nondegenerate_part.relative_det(d1.dxy, S)[0][0]))
    if not np.isfinite(best.rel):  # cannot happen for a valid sample; keep the sample's own numbers
        best = Minimum(sample.xs[i_sample], sample.ys[i_sample], margins.xi[i_sample], margins.eta[i_sample],
                       float(margins.rel[i_sample]), float(margins.raw[i_sample]),
                       float(margins.normaliser[i_sample]), float(rho[i_sample]))
    far = _farthest_failure(evaluator, margin_fn, orthogonal, sample, failing, rho, S)
    inv_ok = np.all(np.isfinite(derivs.dxy.reshape(derivs.dxy.shape[0], -1)), axis=1)
    return Search(
        evaluate=evaluator,
        samples=sample.count,
        resolution=float(sample.resolution),
        valid=int(valid.sum()),
        undefined=int((~defined).sum()),
        singular=int((defined & inv_ok & ~margins.valid).sum()),
        flat=int((valid & (margins.normaliser == 0)).sum()),
        starts=len(chosen),
        evaluations=int(evaluations),
        sample_min=float(rel[i_sample]),
        best=best,
        scale_S=S,
        near_singular=int(near.sum()),
        near_min=float(np.nanmin(margins.rel[near])) if near.any() else float("nan"),
        det_positive=int(np.sum(valid & (sign > 0))),
        det_negative=int(np.sum(valid & (sign < 0))),
        far=far,
    )


def _farthest_failure(evaluator, margin_fn, orthogonal, sample, failing, rho, S) -> Minimum | None:
    """The failing sampled pair farthest from the singular set (largest ρ), re-evaluated as a minimiser."""
    if not failing.any():
        return None
    i = int(np.argmax(np.where(failing, rho, -np.inf)))
    x, y = sample.xs[i], sample.ys[i]
    d1 = evaluator(x[None], y[None])
    m1 = margin_fn(d1)
    m1 = margin_at(d1, m1.xi, orthogonal) if sample.xs.shape[1] > 1 else m1
    if not np.isfinite(m1.rel[0]):
        return None
    return Minimum(np.asarray(x, float), np.asarray(y, float), m1.xi[0], m1.eta[0], float(m1.rel[0]),
                   float(m1.raw[0]), float(m1.normaliser[0]), float(rho[i]))


@dataclass(frozen=True)
class Confirmation:
    value: float
    error: float
    #: negative beyond its error estimate
    negative: bool
    high_precision: bool
    text: str


def confirm_minimum(ctx, search: Search, orthogonal: bool, best: Minimum | None = None) -> Confirmation:
    """Re-evaluate ``S(ξ, η)`` at the minimum (or at ``best``): mpmath at 30 and 60 digits, or float64 for a
    function cost."""
    best = search.best if best is None else best
    constraint = "η made exactly orthogonal to ξ and both normalised" if orthogonal else "ξ and η normalised"
    hp = ctx.high_precision
    if hp is None:
        d1 = search.evaluate(best.x[None], best.y[None])
        value = float(form_at(d1, best.xi[None], best.eta[None])[0])
        M = d1.dxy[0]
        cond = float(np.linalg.cond(M)) if np.all(np.isfinite(M)) else np.inf
        error = 1e4 * np.finfo(float).eps * cond * best.normaliser
        return Confirmation(value, error, value < -error, False,
                            "confirmed in float64 only: a Python-function cost has no high-precision evaluator; "
                            f"error estimate 1e4·eps·cond(M)·scale = {error:.2g} is a heuristic, not a bound")
    try:
        value, error = precise.confirm_form(hp, best.x, best.y, best.xi, best.eta, orthogonal=orthogonal)
        if isinstance(value, mpmath.mpc):
            if abs(value.imag) > error:
                raise ValueError(f"complex value {value}")
            value = value.real
        value, error = float(value), float(error)
    except Exception as exc:  # noqa: BLE001 - any failure of the confirming evaluation is reported, not raised
        return Confirmation(best.raw, np.inf, False, True, f"the high-precision re-evaluation failed ({exc})")
    return Confirmation(value, error, value < -error, True,
                        "recomputed with mpmath from the symbolic derivatives at 30 and 60 significant digits, "
                        f"at the exact binary values of x, y, ξ, η ({constraint} in working precision); "
                        "the error bound is the difference of the two precisions plus the last digit: "
                        "an estimate, not a rigorous enclosure")


def fmt(v) -> str:
    return "(" + ", ".join(f"{float(t):.6g}" for t in np.atleast_1d(v)) + ")"


def where(best: Minimum) -> str:
    return f"x = {fmt(best.x)}, y = {fmt(best.y)}, ξ = {fmt(best.xi)}, η = {fmt(best.eta)}"


def location(best: Minimum) -> dict:
    return {"x": [float(v) for v in best.x], "y": [float(v) for v in best.y],
            "xi": [float(v) for v in best.xi], "eta": [float(v) for v in best.eta]}


def witness(best: Minimum, value: float, error: float | None, confirmation: str) -> Witness:
    return Witness(x=[float(v) for v in best.x], y=[float(v) for v in best.y], value=float(value),
                   error_bound=None if error is None else float(error), confirmation=confirmation,
                   vectors={"xi": [float(v) for v in best.xi], "eta": [float(v) for v in best.eta]},
                   vector_sides={"xi": "x", "eta": "x"})


def coverage(s: Search) -> str:
    return (f"{s.valid} sampled pairs (resolution {s.resolution:.3g}) and {s.starts} local searches "
            f"({s.evaluations} further evaluations)")


def skipped_notes(s: Search) -> list[str]:
    notes = []
    if s.undefined:
        notes.append(f"{s.undefined} of {s.samples} sampled pairs were skipped: the cost or a derivative up to "
                     "order 4 is not finite there")
    if s.singular:
        notes.append(f"{s.singular} sampled pairs were skipped: the mixed Hessian is numerically singular there "
                     f"(σ_min/σ_max < {algebra.SINGULAR_RCOND:g}), so non-degeneracy (A2) fails or nearly fails")
    if s.flat:
        notes.append(f"the tensor T vanishes exactly at {s.flat} of the {s.valid} usable sampled pairs "
                     "(its two terms are both zero there)")
    return notes

SCALE_TEXT = ("S(ξ, η) / (scale · |M⁻¹η|²) with unit ξ and covector η (T on the unit vectors ξ and "
              "M⁻¹η/|M⁻¹η|), where "
              "scale = |c_{ij,r} c^{r,s} c_{s,kl}|_F + |c_{ij,kl}|_F (the two terms whose difference is T); "
              "it lies in [-1, 1]")


def refuted_or_unconfirmed(ctx, s: Search, *, condition: str, orthogonal: bool, failure: str, fallback: str,
                           meaning: str, details: dict, notes: list[str]) -> Verdict:
    """The verdict for a float64 minimum below ``-TOLERANCE``: confirmed, or not.

    Confirmed (the high-precision value is negative beyond its error and the scale-free value
    beyond the tolerance): ``fails`` with the witness.  Otherwise the float64 value was a
    rounding artefact and the verdict is ``fallback``, with a note that says so.
    """
    tol = TOLERANCE
    best = s.best
    # where non-degeneracy fails, the witness is the failing pair farthest from the singular set (if
    # it is clearly farther than the minimiser), so that it is plainly not an effect of that set
    candidates = [best]
    if s.degenerate_somewhere and s.far is not None and (
            s.far.rho > 10 * best.rho or (s.far.rho > best.rho and s.far.rel <= best.rel + 1e-12)):
        candidates = [s.far, best]  # (a tie, as for n = 1 where every failing margin is -1: the farther one)
    for point in candidates:
        conf = confirm_minimum(ctx, s, orthogonal=orthogonal, best=point)
        rel_conf = conf.value / point.normaliser if point.normaliser > 0 else 0.0
        if conf.negative and rel_conf < -tol:
            break
    orth = " (ξ · η = 0)" if orthogonal else ""
    if conf.negative and rel_conf < -tol:
        kind_text = "in high precision" if conf.high_precision else "in float64 only"
        summary = (f"{part_prefix(s)}{failure}: at {where(point)}{orth} S(ξ, η) = {conf.value:.6g} ± {conf.error:.2g}, "
                   f"confirmed {kind_text}; scale-free margin {rel_conf:.4g} (tolerance {tol:g})")
        if point is not best:
            summary += (f"; this is the failing sampled pair farthest from the singular set (ρ = {point.rho:.3g}); "
                        f"the smallest margin found, {best.rel:.4g}, is at ρ = {best.rho:.3g}")
        if not conf.high_precision:
            notes.append("the witness is confirmed in float64 only (no high-precision evaluator for a "
                         "Python-function cost)")
        return Verdict(condition, "fails",
                       Evidence("refuted", summary, samples=s.samples, resolution=s.resolution,
                                details={**details, "scale_free_value": rel_conf}),
                       value=best.rel, value_meaning=meaning,
                       witness=witness(point, conf.value, conf.error, conf.text + f"; scale-free value {rel_conf:.6g}"),
                       notes=tuple(notes), scope=scope(s))
    notes.append(f"float64 found a scale-free margin {best.rel:.3g} below -{tol:g} at {where(best)}, but the "
                 f"high-precision re-evaluation gives S = {conf.value:.3g} ± {conf.error:.2g} "
                 f"(scale-free {rel_conf:.3g}), not negative beyond its error and the tolerance; "
                 f"reported as {fallback}")
    summary = (f"{part_prefix(s)}no confirmed negative margin among {coverage(s)}; the one float64 candidate did not survive "
               "high-precision re-evaluation: evidence, not proof")
    return Verdict(condition, fallback, Evidence("sampled", summary, samples=s.samples, resolution=s.resolution,
                                                 details=details),
                   value=rel_conf, value_meaning=meaning,
                   witness=witness(best, conf.value, conf.error, conf.text), notes=tuple(notes), scope=scope(s))


# --------------------------------------------------------------------------- the part it was decided on

def part_details(s: Search) -> dict:
    """The part of the domain the verdict was decided on, for the evidence's details."""
    out = {"relative_det_at_least": nondegenerate_part.DEFINED_RATIO, "scale_S": s.scale_S,
           "pairs_used": s.valid, "pairs_near_singular": s.near_singular,
           "det_signs_on_used_pairs": {"positive": s.det_positive, "negative": s.det_negative}}
    if s.near_singular:
        out["smallest_margin_near_singular"] = s.near_min
    if s.far is not None:
        out["failing_pair_farthest_from_singular"] = {"relative_det": s.far.rho, "margin": s.far.rel}
    return out


def scope(s: Search) -> dict:
    """The verdict's scope: empty where non-degeneracy holds on the sample, else the part it was decided on."""
    if not s.degenerate_somewhere:
        return {}
    return {"part": "non-degenerate", "relative_det_at_least": nondegenerate_part.DEFINED_RATIO,
            "text": "on the non-degenerate part"}


def part_prefix(s: Search) -> str:
    """The sentence that opens the summary when non-degeneracy fails on the sample ('' otherwise)."""
    if not s.degenerate_somewhere:
        return ""
    why = []
    if s.near_singular:
        why.append(f"{s.near_singular} sampled pairs have ρ below {nondegenerate_part.DEFINED_RATIO:g} and were not "
                   "used" + (f" — their scale-free margins reach {s.near_min:.3g}, so next to the singular set the "
                             "condition is left undecided" if s.near_min < -TOLERANCE else ""))
    if s.det_positive and s.det_negative:
        why.append(f"det D²_xy c takes both signs on the {s.valid} pairs used ({s.det_positive} positive, "
                   f"{s.det_negative} negative), so it vanishes in between")
    return (f"non-degeneracy fails on this domain ({'; '.join(why)}): decided on {nondegenerate_part.describe()} "
            "only — ")


def part_notes(s: Search, notes: list[str]) -> list[str]:
    """Notes on what was computed off the part and how far from the singular set a failure reaches."""
    if s.near_singular and np.isfinite(s.near_min) and s.near_min >= -TOLERANCE:
        notes.append(f"at the {s.near_singular} sampled pairs off the non-degenerate part the scale-free margin "
                     f"reaches {s.near_min:.3g}; it is not used: the condition is not stated where D²_xy c is "
                     "singular")
    if s.far is not None and s.degenerate_somewhere:
        notes.append(f"the sampled pair with a margin below -{TOLERANCE:g} farthest from the singular set has "
                     f"ρ = {s.far.rho:.3g} (margin {s.far.rel:.3g} there)")
    return notes


def nowhere_defined(what: str) -> str:
    return (f"no sampled pair has finite derivatives up to order 4 and lies on {nondegenerate_part.describe()}, "
            f"so {what} could not be evaluated anywhere it is defined")
