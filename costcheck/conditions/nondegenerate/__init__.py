"""Non-degeneracy (A2): the mixed Hessian ``M = D²_{xy} c`` has full rank everywhere.

For ``n = m`` this is ``det M(x, y) ≠ 0``; for ``n > m`` it is ``rank M = m``
(Ma–Trudinger–Wang, ARMA 177, 2005, condition A2; for unequal dimensions
Pass, Math. Res. Lett., 2012; Chiappori–McCann–Pass, CPAM 70, 2017).  For ``n < m``,
for which the literature gives no definition (docs/conditions.md#nondegenerate), full rank ``min(n, m) = n`` is checked (the same
condition with the roles of ``x`` and ``y`` exchanged) and a note says so.

The scale-free measure
----------------------
Per pair, ``μ(x, y) = σ_min(M) / max(σ_max(M), S)`` where ``σ`` are singular values of
``M`` and ``S`` is the median of ``σ_max(M)`` over the defined samples.  Where ``M`` has
at least its typical size this is the pointwise ratio ``σ_min/σ_max`` (unchanged by
``c -> λ c``); where ``M`` itself is small it is ``σ_min/S``, so a point where ``M``
vanishes altogether (for which ``σ_min/σ_max`` stays 1, e.g. ``M = x₁ I``) is seen too.

How a verdict is reached
------------------------
1. ``n = m``: samples where ``det M`` has opposite clear signs are joined by segments
   (nearest pairs first); a segment whose checked points all lie in the domain, with
   ``M`` finite, is bisected.  Opposite signs at the ends of the final bracket,
   re-evaluated with mpmath at 50 and 80 digits with error estimates, prove a zero of
   ``det M`` on the segment by the intermediate value theorem.  (A bracket closing on a
   pole rather than a zero is recognised by ``|det M|`` not becoming small, and refused.)
2. Local minimisation of ``|A v| / S`` (``A`` = ``M``, or ``Mᵀ`` when ``n < m``) over
   ``(x, y, v)`` with ``|v| = 1``, from the 8 samples with the smallest ``μ``, by a batched
   Levenberg–Marquardt iteration (:func:`search.batched_least_squares`: all starts in one
   derivative evaluation per step); a zero of it is a rank-deficient ``M`` with null vector
   ``v``.  (``scipy.optimize.least_squares`` one start at a time was tried first and took
   ~0.3 s per start in call overhead, against ~0.02 s for all starts batched.)
3. A refined point with ``μ < 1e-6`` is a candidate and is confirmed, in this order: a
   sign change of ``det M`` nearby (step 1 again); an exact zero — the point snapped to
   nearby simple rationals / closed forms and ``det M`` (``det MᵀM`` if ``n ≠ m``)
   evaluated exactly with sympy; a high-precision zero — Newton's method for a critical
   point of ``det M`` (a zero without a sign change, such as ``det M = 3 a²``, is one) at
   110 digits, then ``|det M|`` below its error estimate at 50/80 digits while the scale
   ``S^k`` is of order one relative to it.
4. ``fails`` only with such a confirmed zero (evidence ``refuted``).  ``undecided`` when a
   candidate is singular to float precision (``μ < 1e-14``) but could be neither confirmed
   nor shown non-zero (high precision did not settle).  Otherwise ``holds`` with evidence
   ``sampled`` (count, resolution, smallest ``μ`` and where), and a note when the smallest
   ``μ`` is below ``1e-9`` but is no zero of the domain (a clearly non-zero minimum in high
   precision, or the boundary of an open domain such as the excluded diagonal ``x = y``).

Modules
-------
:mod:`.setup` (:class:`~.setup.Setup`: the cost, the scale and the float, high-precision and
exact evaluators every step shares), :mod:`.sign_change` (step 1: sign changes of ``det M``
bracketed, bisected and confirmed), :mod:`.local_search` (step 2: the batched minimisation of
``|A v| / S``), :mod:`.zeros` (step 3: exact and high-precision zeros); this module holds the
constants and :func:`check`, which runs the steps and words the verdict (step 4).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from ...model.verdict import Evidence, Verdict, Witness
from ..engines import admissible
from .local_search import search_from_worst
from .setup import Setup
from .sign_change import bisect_sign_change, confirm_sign_change, probe_sign_change, sample_sign_changes
from .zeros import confirm_zero

CONDITION = "nondegenerate"
_SALT = 0x2A2

#: a refined point with μ below this is sent to confirmation
CANDIDATE_THRESHOLD = 1e-6
#: a confirmed-non-zero minimum below this is reported as "nearly degenerate"
NEAR_ZERO_THRESHOLD = 1e-9
#: a candidate this close to singular in float that is neither confirmed nor refuted makes the verdict undecided
UNRESOLVED = 1e-14
#: a sample's sign of det M counts only when |det M| / scale^n exceeds this
CLEAR_SIGN = 1e-10
LOCAL_STARTS = 8
SEGMENT_TRIES = 12
#: candidates sent to the (costly) zero confirmation
CONFIRM_TRIES = 2

VALUE_MEANING = ("smallest scale-free singular value found, σ_min(M) / max(σ_max(M), S), with S the median "
                 "σ_max(M) over the samples (0: M is rank-deficient there)")


class _Samples(NamedTuple):
    """The defined samples as points ``z = (x, y)``, ``A`` there, its ``μ`` and signed ``det``."""
    Z: np.ndarray
    A: np.ndarray
    mu: np.ndarray
    sdet: np.ndarray
    count: int
    resolution: float


def _where(cost, z):
    n = cost.n
    return {"x": dict(zip(cost.x_names, map(float, z[:n]))), "y": dict(zip(cost.y_names, map(float, z[n:])))}


def _scale(st: Setup, ctx) -> _Samples:
    """Measure the defined samples and set the scale ``S`` (median ``σ_max(M)``) on ``st``."""
    mask = ctx.defined
    xs, ys = ctx.sample.xs[mask], ctx.sample.ys[mask]
    Z = np.concatenate([xs, ys], axis=1)
    M = ctx.derivs.dxy[mask]
    A = M if st.n >= st.m else np.transpose(M, (0, 2, 1))
    sv = np.linalg.svd(A, compute_uv=False)
    S = float(np.median(sv[:, 0]))
    st.S = S if S > 0 else (float(np.max(sv[:, 0])) or 1.0)
    mu, sdet, _ = st.measure(A)
    return _Samples(Z, A, mu, sdet, int(mask.sum()), float(ctx.sample.resolution))


def _confirm(st: Setup, ctx, samples: _Samples, order, refined):
    """Step 3: confirm a zero near the refined points, best first.

    Returns ``(found, best_mu, best_z, examined)``: ``found`` is ``(witness, method)`` for a
    confirmed zero (the rest is then as far as the loop got) or None.
    """
    Z, mu, sdet = samples.Z, samples.mu, samples.sdet
    best_mu, best_z = float(mu[order[0]]), Z[order[0]]
    examined = []
    for muz, z, i, sdetz in refined:
        if muz < best_mu:
            best_mu, best_z = muz, z
        if st.n == st.m and np.isfinite(sdetz) and np.sign(sdetz) != np.sign(sdet[i]) and sdetz != 0:
            # the search crossed the zero set: try the segment from its start
            if admissible.segment_is_usable(ctx, st.ev, Z[i], z):
                found = bisect_sign_change(st, Z[i], z)
                if found is not None:
                    witness = confirm_sign_change(st, found)
                    if witness is not None:
                        return (witness, "sign change"), best_mu, best_z, examined
        if muz >= CANDIDATE_THRESHOLD or len(examined) >= CONFIRM_TRIES:
            continue
        witness = probe_sign_change(st, z)
        if witness is not None:
            return (witness, "sign change"), best_mu, best_z, examined
        witness, status = confirm_zero(st, z)
        if witness is not None:
            method = "exact" if witness.error_bound == 0.0 and witness.value == 0.0 else "high precision"
            return (witness, method), best_mu, best_z, examined
        examined.append((muz, z, status))
    return None, best_mu, best_z, examined


def _failed(st: Setup, samples: _Samples, notes, witness: Witness, method: str) -> Verdict:
    summary = {
        "sign change": "det M changes sign along a segment inside the domain; the zero is bracketed and "
                       + ("the end signs confirmed in high precision" if st.hp is not None
                          else "the end signs clear in float64 (no usable high precision)")
                       + " (intermediate value theorem)",
        "exact": "M is rank-deficient at an exact point (sympy, exact arithmetic)",
        "high precision": "M is rank-deficient at a point refined and confirmed in high precision",
    }[method]
    zw = st.z_of(witness.x, witness.y)
    Aw, _ = st.matrices(zw[None])
    muw = float(st.measure(Aw)[0][0]) if np.all(np.isfinite(Aw)) else 0.0
    return Verdict(CONDITION, "fails",
                   Evidence("refuted", summary, samples=samples.count, resolution=samples.resolution,
                            details={"method": method, "scale_S": st.S,
                                     "min_scale_free_sigma_on_samples": float(np.min(samples.mu))}),
                   value=0.0 if method == "exact" else muw, value_meaning=VALUE_MEANING,
                   witness=witness, notes=tuple(notes))


def _undecided(st: Setup, samples: _Samples, notes, muz, z) -> Verdict:
    cost = st.cost
    return Verdict(CONDITION, "undecided",
                   Evidence("undecided", f"σ_min(M)/scale = {muz:.3g} at {_where(cost, z)} (zero to float "
                            "precision), but neither an exact zero nor a high-precision zero could be confirmed "
                            "there, nor a clearly non-zero minimum", samples=samples.count,
                            resolution=samples.resolution,
                            details={"min_scale_free_sigma": muz, "where": _where(cost, z), "scale_S": st.S}),
                   value=muz, value_meaning=VALUE_MEANING, notes=tuple(notes))


def _holds(st: Setup, samples: _Samples, notes, best_mu, best_z, examined, refined) -> Verdict:
    cost, mu, sdet = st.cost, samples.mu, samples.sdet
    count, resolution = samples.count, samples.resolution
    if best_mu < NEAR_ZERO_THRESHOLD:
        why = {"nonzero": "high precision settles on a minimum that is clearly not zero",
               "boundary": "it lies on the boundary of the open domain, an excluded point"}
        reasons = sorted({why.get(status, "not confirmed") for _, _, status in examined})
        notes.append(f"nearly degenerate: σ_min/scale reaches {best_mu:.3g} at {_where(cost, best_z)}, but it is no "
                     f"zero of the domain ({'; '.join(reasons) or 'not confirmed'})")
    sign_text = ""
    if st.n == st.m:
        signs = {int(s) for s in np.sign(sdet[np.abs(sdet) > CLEAR_SIGN])}
        sign_text = "; det M has one sign on the samples" if len(signs) <= 1 else \
            "; det M takes both signs on the samples, but no segment between them yields a zero in the domain"
        if len(signs) > 1:
            notes.append("det M takes both signs on the samples, but the segments tried between them leave the "
                         "domain or change sign across a pole or an excluded boundary (the domain may be "
                         "disconnected where det M would vanish)")
    summary = (f"smallest σ_min(M)/max(σ_max(M), S) = {best_mu:.3g} over {count} sampled pairs (resolution "
               f"{resolution:.3g}) and {len(refined)} local searches{sign_text}; no zero found: evidence, not proof")
    return Verdict(CONDITION, "holds",
                   Evidence("sampled", summary, samples=count, resolution=resolution,
                            details={"min_scale_free_sigma": best_mu, "where": _where(cost, best_z),
                                     "min_on_samples": float(np.min(mu)), "local_searches": len(refined),
                                     "scale_S": st.S,
                                     "measure": "σ_min(M) / max(σ_max(M), S), S = median σ_max(M) on the samples"}),
                   value=best_mu, value_meaning=VALUE_MEANING, notes=tuple(notes))


def check(ctx) -> Verdict:
    st = Setup(ctx)
    samples = _scale(st, ctx)
    notes = []
    if st.n < st.m:
        notes.append("n < m: non-degeneracy is defined for n ≥ m (docs/conditions.md#nondegenerate); full rank min(n, m) = n of M "
                     "(non-degeneracy with the roles of x and y exchanged) was checked")

    # 1. sign changes between sampled pairs
    if st.n == st.m:
        witness = sample_sign_changes(st, samples.Z, samples.sdet, clear_sign=CLEAR_SIGN, tries=SEGMENT_TRIES)
        if witness is not None:
            return _failed(st, samples, notes, witness, "sign change")

    # 2. local searches from the worst samples
    rng = ctx.rng(_SALT)
    order, refined = search_from_worst(st, samples.Z, samples.A, samples.mu, rng, limit=LOCAL_STARTS)

    # 3. confirmation of the candidates
    found, best_mu, best_z, examined = _confirm(st, ctx, samples, order, refined)
    if found is not None:
        return _failed(st, samples, notes, *found)

    # 4. no confirmed zero: undecided when a float-singular candidate stayed unresolved, else holds
    unresolved = [(muz, z) for muz, z, status in examined if status == "unresolved" and muz < UNRESOLVED]
    if unresolved:
        return _undecided(st, samples, notes, *unresolved[0])
    return _holds(st, samples, notes, best_mu, best_z, examined, refined)
