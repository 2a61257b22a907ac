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
from ...numerics.curvature import algebra, precise
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
    valid = margins.valid & defined
    if not valid.any():
        return None
    rel = np.where(valid, margins.rel, np.inf)
    # every batch of the search has at most starts · (2 · 2n) points
    evaluator = ctx.evaluator(4)  # the JAX backend pads batch sizes, so the search compiles once
    domain = cost.domain

    def objective(Z):
        out = np.full(Z.shape[0], np.inf)
        xs, ys = Z[:, :n], Z[:, n:]
        inside = domain.contains_pairs(xs, ys)
        if inside.any():
            values = margin_fn(evaluator(xs[inside], ys[inside])).rel
            out[inside] = np.where(np.isfinite(values), values, np.inf)
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
                   float(m1.rel[0]), float(m1.raw[0]), float(m1.normaliser[0]))
    if not np.isfinite(best.rel):  # cannot happen for a valid sample; keep the sample's own numbers
        best = Minimum(sample.xs[i_sample], sample.ys[i_sample], margins.xi[i_sample], margins.eta[i_sample],
                       float(margins.rel[i_sample]), float(margins.raw[i_sample]),
                       float(margins.normaliser[i_sample]))
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
    )


@dataclass(frozen=True)
class Confirmation:
    value: float
    error: float
    #: negative beyond its error estimate
    negative: bool
    high_precision: bool
    text: str


def confirm_minimum(ctx, search: Search, orthogonal: bool) -> Confirmation:
    """Re-evaluate ``S(ξ, η)`` at the minimum: mpmath at 30 and 60 digits, or float64 for a function cost."""
    best = search.best
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
    conf = confirm_minimum(ctx, s, orthogonal=orthogonal)
    rel_conf = conf.value / best.normaliser if best.normaliser > 0 else 0.0
    orth = " (ξ · η = 0)" if orthogonal else ""
    if conf.negative and rel_conf < -tol:
        kind_text = "in high precision" if conf.high_precision else "in float64 only"
        summary = (f"{failure}: at {where(best)}{orth} S(ξ, η) = {conf.value:.6g} ± {conf.error:.2g}, "
                   f"confirmed {kind_text}; scale-free margin {rel_conf:.4g} (tolerance {tol:g})")
        if not conf.high_precision:
            notes.append("the witness is confirmed in float64 only (no high-precision evaluator for a "
                         "Python-function cost)")
        return Verdict(condition, "fails",
                       Evidence("refuted", summary, samples=s.samples, resolution=s.resolution,
                                details={**details, "scale_free_value": rel_conf}),
                       value=best.rel, value_meaning=meaning,
                       witness=witness(best, conf.value, conf.error, conf.text + f"; scale-free value {rel_conf:.6g}"),
                       notes=tuple(notes))
    notes.append(f"float64 found a scale-free margin {best.rel:.3g} below -{tol:g} at {where(best)}, but the "
                 f"high-precision re-evaluation gives S = {conf.value:.3g} ± {conf.error:.2g} "
                 f"(scale-free {rel_conf:.3g}), not negative beyond its error and the tolerance; "
                 f"reported as {fallback}")
    summary = (f"no confirmed negative margin among {coverage(s)}; the one float64 candidate did not survive "
               "high-precision re-evaluation: evidence, not proof")
    return Verdict(condition, fallback, Evidence("sampled", summary, samples=s.samples, resolution=s.resolution,
                                                 details=details),
                   value=rel_conf, value_meaning=meaning,
                   witness=witness(best, conf.value, conf.error, conf.text), notes=tuple(notes))
