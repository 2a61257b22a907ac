"""Decide nestedness from the levels, with a witness where the level curves cross.

For every source point ``x_i`` and grid level ``y_j``: *inside* when
``∂s/∂y(x_i, y_j) ≤ k_lo(y_j)`` (in ``X≤(y_j, k+(y_j))`` beyond the tolerance) and *outside*
when ``∂s/∂y(x_i, y_j) ≥ k_hi(y_j)`` (not in ``X<(y_j, k-(y_j))`` beyond the tolerance); see
:mod:`.levels` for ``k_lo``, ``k_hi``.  Nestedness (Chiappori–McCann–Pass, CPAM 70, 2017)
forbids a point inside at ``y`` and outside at a later ``y' > y``.  Per point that is one
comparison — the first level at which it is inside against the levels after it at which it
is outside — so the whole decision is ``O(K N)`` in numpy.

A crossing is a witness ``(x, y, y')``; the two inequalities are re-evaluated in mpmath at
50 and 80 digits and must hold beyond their error estimates (evidence ``refuted``).  Where
nestedness first breaks is the smallest such ``y'``.  What is *not* established: the levels
``k`` come from the data, so with points as a sample the witness holds at the stated
confidence of the sampling band; between grid values of ``y`` nothing is checked.
"""

from __future__ import annotations

from dataclasses import dataclass

import mpmath
import numpy as np

from ...model.verdict import Evidence, Verdict, Witness, undecided
from ...numerics import precision
from .levels import Levels

CONDITION = "nested"
CONFIRM_TRIES = 4

VALUE_MEANING = ("largest margin by which a source point lies on the wrong side of two level curves, in units of "
                 "the spread of ∂s/∂y (0 when no crossing is found; > 0 at a witness)")


@dataclass(frozen=True)
class Crossings:
    inside: np.ndarray  # (K, N) bool
    outside: np.ndarray  # (K, N) bool
    first_in: np.ndarray  # (N,) first level at which the point is inside (K if never)
    violating: np.ndarray  # (N,) bool
    first_out_after: np.ndarray  # (N,) first level after first_in at which it is outside
    raw_crossings: int  # points crossing with the central levels, tolerance ignored


def find_crossings(levels: Levels) -> Crossings:
    phi = levels.phi
    K, N = phi.shape
    with np.errstate(invalid="ignore"):
        inside = phi <= levels.k_lo[:, None]
        outside = phi >= levels.k_hi[:, None]
        raw_in = phi <= levels.k[:, None]
        raw_out = phi > levels.k[:, None]
    first_in = np.where(inside.any(axis=0), np.argmax(inside, axis=0), K)
    later = np.arange(K)[:, None] > first_in[None, :]
    after = outside & later
    violating = after.any(axis=0)
    first_out_after = np.where(violating, np.argmax(after, axis=0), K)
    raw_first = np.where(raw_in.any(axis=0), np.argmax(raw_in, axis=0), K)
    raw = int(np.sum((raw_out & (np.arange(K)[:, None] > raw_first[None, :])).any(axis=0)))
    return Crossings(inside, outside, first_in, violating, first_out_after, raw)


def _confirm(cost, hp, x, y, yp, k_lo, k_hi):
    """mpmath: ``∂s/∂y(x, y) ≤ k_lo`` and ``∂s/∂y(x, y') ≥ k_hi`` beyond the error estimates."""
    def phi_at(yy):
        return lambda dps: -hp(list(x), [yy], dps)["dy"][0]
    a, ea = precision.confirm_value(phi_at(y))
    b, eb = precision.confirm_value(phi_at(yp))
    ok = (mpmath.isfinite(a) and mpmath.isfinite(b) and mpmath.mpf(k_lo) - a > ea and b - mpmath.mpf(k_hi) > eb)
    return ok, (a, ea, b, eb)


def nested_verdict(cost, levels: Levels, crossings: Crossings, points: np.ndarray, weights: np.ndarray,
                   source_text: str, target_text: str, refinement=None) -> Verdict:
    """The verdict; ``refinement`` (a :class:`.refine.Outcome`) re-tested the crossings within the tolerance."""
    K, N = levels.phi.shape
    y_name = cost.y_names[0]
    details = {"levels": K, "source": source_text, "target": target_text, "tolerance": levels.band_rule,
               "max_band": float(np.max(levels.band)), "undefined_pairs": levels.undefined,
               "crossings_within_tolerance": crossings.raw_crossings}
    notes = []
    if levels.undefined:
        notes.append(f"∂s/∂y is undefined at {levels.undefined} of {K * N} (point, level) pairs (outside the pairs "
                     "domain or a singularity); those pairs decide nothing")
    if not crossings.violating.any():
        if refinement is not None and refinement.candidates:
            return _after_refinement(cost, levels, refinement, points, details, notes)
        summary = (f"nested on the data: no source point is inside X≤(y, k+(y)) and outside X<(y', k-(y')) for any "
                   f"y < y' among {K} levels of {y_name} ({N} source points or nodes; tolerance: {levels.band_rule}); "
                   "nothing is checked between the levels: evidence, not proof")
        return Verdict(CONDITION, "holds", Evidence("sampled", summary, samples=N * K, details=details),
                       value=0.0, value_meaning=VALUE_MEANING, notes=tuple(notes))
    viol = np.flatnonzero(crossings.violating)
    j_break = int(np.min(crossings.first_out_after[viol]))
    wrong_mass = float(np.sum(weights[viol]))
    details.update(first_break_y_prime=float(levels.ys[j_break]), wrong_side_mass=wrong_mass,
                   wrong_side_points=int(viol.size))
    j_in = crossings.first_in[viol]
    j_out = crossings.first_out_after[viol]
    phi = levels.phi
    margin = np.minimum((levels.k_lo[j_in] - phi[j_in, viol]) / levels.spread[j_in],
                        (phi[j_out, viol] - levels.k_hi[j_out]) / levels.spread[j_out])
    at_break = j_out == j_break
    order = np.lexsort((-margin, ~at_break))  # at the first break first, largest margin first
    hp, reason = precision.usable_high_precision(cost, 1, points[viol[order[0]]], [levels.ys[0]])
    for r in order[:CONFIRM_TRIES]:
        i, a, b = int(viol[r]), int(j_in[r]), int(j_out[r])
        x = points[i]
        y, yp = float(levels.ys[a]), float(levels.ys[b])
        if hp is None:
            ok, how = bool(margin[r] > 1e-9), f"float64 only ({reason})"
            err = 1e-15 * float(levels.spread[a])
            vals = (phi[a, i], err, phi[b, i], err)
        else:
            ok, vals = _confirm(cost, hp, x, y, yp, levels.k_lo[a], levels.k_hi[b])
            how = "mpmath at 50 and 80 digits"
        if not ok:
            continue
        va, ea, vb, eb = vals
        text = (f"{y_name} = {y:.6g} < {y_name}' = {yp:.6g}: ∂s/∂y(x, {y_name}) = {precision.fmt(va, 10)} ± "
                f"{precision.fmt(ea, 2)} ≤ k_lo({y_name}) = {levels.k_lo[a]:.10g}, so x ∈ X≤({y_name}, k+); and "
                f"∂s/∂y(x, {y_name}') = {precision.fmt(vb, 10)} ± {precision.fmt(eb, 2)} ≥ k_hi({y_name}') = "
                f"{levels.k_hi[b]:.10g}, so x ∉ X<({y_name}', k-) ({how}).  The levels k come from the data with the "
                f"tolerance {levels.band_rule}; the level curves through x cross.")
        witness = Witness(x=list(map(float, x)), y=[y], value=float(margin[r]),
                          error_bound=float(max(ea, eb) / levels.spread[a]), confirmation=text,
                          vectors={"y_prime": [yp]}, vector_sides={"y_prime": "y"})
        summary = (f"not nested: the level curves cross; nestedness first breaks at {y_name}' = "
                   f"{levels.ys[j_break]:.6g} (a source point inside X≤({y_name}, k+) for an earlier {y_name} lies "
                   f"outside X<({y_name}', k-)); {viol.size} source points, mass {wrong_mass:.3g}, are on the wrong "
                   "side beyond the tolerance; the witness was confirmed in high precision against the data's levels")
        return Verdict(CONDITION, "fails", Evidence("refuted", summary, samples=N * K, details=details),
                       value=float(margin[r]), value_meaning=VALUE_MEANING, witness=witness, notes=tuple(notes))
    return undecided(CONDITION, f"{viol.size} source points look like crossings of level curves in float64, but none "
                               "was confirmed in high precision beyond its error estimate", **details)



def _refinement_details(levels: Levels, r) -> dict:
    return {"candidates": r.candidates, "tested": len(r.tested), "untested": r.untested, "factor": r.factor,
            "levels_refined": [float(levels.ys[j]) for j in sorted(r.refined)], "sub_nodes": r.sub_nodes,
            "refined_max_band": r.max_band if r.refined else None, "confirmed": len(r.confirmed),
            "cleared": len(r.cleared), "pending": len(r.pending)}


def _after_refinement(cost, levels: Levels, r, points, details, notes) -> Verdict:
    """Crossings of the central levels within the tolerance, after the finer quadrature of :mod:`.refine`."""
    y_name = cost.y_names[0]
    K, N = levels.phi.shape
    details = {**details, "refinement": _refinement_details(levels, r)}
    coarse = (f"{r.candidates} source points cross the central level curves of {K} levels of {y_name} only within "
              f"the tolerance ({levels.band_rule})")
    finer = ""
    if r.factor:
        finer = (f"the {len(r.refined)} levels they use were recomputed with the cells near each level curve split "
                 f"{r.factor} × {r.factor} ({r.sub_nodes} sub-nodes; refined mass band at most {r.max_band:.2g})")
    if r.confirmed:
        hp, reason = precision.usable_high_precision(cost, 1, points[r.confirmed[0].point], [levels.ys[0]])
        for c in r.confirmed[:CONFIRM_TRIES]:
            ra, rb = r.refined[c.a], r.refined[c.b]
            x, y, yp = points[c.point], float(levels.ys[c.a]), float(levels.ys[c.b])
            if hp is None:
                break
            ok, (va, ea, vb, eb) = _confirm(cost, hp, x, y, yp, ra.k_lo, rb.k_hi)
            if not ok:
                continue
            spread = float(levels.spread[c.a])
            text = (f"{y_name} = {y:.6g} < {y_name}' = {yp:.6g}: ∂s/∂y(x, {y_name}) = {precision.fmt(va, 10)} ± "
                    f"{precision.fmt(ea, 2)} ≤ k_lo({y_name}) = {ra.k_lo:.10g} and ∂s/∂y(x, {y_name}') = "
                    f"{precision.fmt(vb, 10)} ± {precision.fmt(eb, 2)} ≥ k_hi({y_name}') = {rb.k_hi:.10g} (mpmath at 50 "
                    f"and 80 digits), with both levels from the refined quadrature ({r.factor} × {r.factor} sub-cells "
                    "near the level curves); the level curves through x cross, and x is a quadrature node where the "
                    "source density is positive, so (the density being continuous and both inequalities strict) "
                    "they cross on a set of positive mass")
            margin = min(ra.k_lo - float(va), float(vb) - rb.k_hi) / spread
            witness = Witness(x=list(map(float, x)), y=[y], value=float(margin), error_bound=float(max(ea, eb) / spread),
                              confirmation=text, vectors={"y_prime": [yp]}, vector_sides={"y_prime": "y"})
            crosses = "of them crosses" if len(r.confirmed) == 1 else "of them cross"
            summary = (f"not nested: {coarse}; {finer}, and then {len(r.confirmed)} {crosses} beyond the refined "
                       f"tolerance; the witness was confirmed in high precision against the refined levels")
            return Verdict(CONDITION, "fails", Evidence("refuted", summary, samples=N * K, details=details),
                           value=float(margin), value_meaning=VALUE_MEANING, witness=witness, notes=tuple(notes))
        return undecided(CONDITION, f"{coarse}; {finer}, and {len(r.confirmed)} of them cross beyond the refined "
                         "tolerance in float64, but none was confirmed in high precision, so neither verdict is "
                         "established", **details)
    if r.pending or r.untested:
        why = r.reason or (f"{finer}, and {len(r.pending)} of them still cross within the refined tolerance"
                           if r.factor else "")
        if r.untested:
            why += (f"{'; ' if why else ''}{r.untested} candidates were not re-tested (at most "
                    f"{len(r.refined)} levels are recomputed)")
        return undecided(CONDITION, f"{coarse}; {why}: a crossing of that little mass can be neither confirmed nor "
                         "excluded, so nestedness is not decided on these data", **details)
    notes.append(f"{coarse}; {finer}, and none of them crosses the refined central levels: they came from the "
                 "coarse rule's levels")
    summary = (f"nested on the data: no source point is inside X≤(y, k+(y)) and outside X<(y', k-(y')) for any y < y' "
               f"among {K} levels of {y_name} ({N} source points or nodes; tolerance: {levels.band_rule}); the "
               f"{r.candidates} crossings within the tolerance were cleared on a finer quadrature; nothing is "
               "checked between the levels: evidence, not proof")
    return Verdict(CONDITION, "holds", Evidence("sampled", summary, samples=N * K, details=details),
                   value=0.0, value_meaning=VALUE_MEANING, notes=tuple(notes))
