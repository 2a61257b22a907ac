"""Non-degeneracy (A2): the mixed Hessian ``M = D²_{xy} c`` has full rank everywhere.

For ``n = m`` this is ``det M(x, y) ≠ 0``; for ``n > m`` it is ``rank M = m``
(Ma–Trudinger–Wang, ARMA 177, 2005, condition A2; for unequal dimensions
Pass, Math. Res. Lett., 2012; Chiappori–McCann–Pass, CPAM 70, 2017).  For ``n < m``,
which the reference does not define, full rank ``min(n, m) = n`` is checked (the same
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
   Levenberg–Marquardt iteration (:func:`refine.batched_least_squares`: all starts in one
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
"""

from __future__ import annotations

import mpmath
import numpy as np
import sympy as sp
from scipy.spatial import cKDTree
from sympy.matrices.utilities import dotprodsimp

from ..model.verdict import Evidence, Verdict, Witness
from ..numerics import precision as refine

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


class _Setup:
    def __init__(self, ctx):
        self.ctx = ctx
        self.cost = ctx.cost
        self.domain = ctx.cost.domain
        self.n, self.m = ctx.cost.n, ctx.cost.m
        self.k = min(self.n, self.m)
        self.d = self.n + self.m
        self.ev = ctx.evaluator(2)
        lo_x, hi_x = self.domain.x.bounds()
        lo_y, hi_y = self.domain.y.bounds()
        self.width = np.concatenate([hi_x - lo_x, hi_y - lo_y])
        self.diam = float(np.linalg.norm(self.width))
        self.S = 1.0
        self._hp = None
        self._hp_reason = None
        self._M_sym = None
        self.decimals = False

    # --- float evaluation
    def matrices(self, Z: np.ndarray):
        """``A`` (rows ≥ columns: ``M`` or ``Mᵀ``) at each row of ``Z`` and the usable mask."""
        Z = np.atleast_2d(Z)
        xs, ys = Z[:, : self.n], Z[:, self.n:]
        der = self.ev(xs, ys)
        ok = refine.usable(self.domain, der, xs, ys)
        A = der.dxy if self.n >= self.m else np.transpose(der.dxy, (0, 2, 1))
        return A, ok

    def measure(self, A: np.ndarray):
        """``μ``, the signed scale-free determinant (``n = m``; else NaN) and ``σ_max``."""
        sv = np.linalg.svd(A, compute_uv=False)
        smax, smin = sv[:, 0], sv[:, -1]
        denom = np.maximum(smax, self.S)
        with np.errstate(all="ignore"):
            mu = np.where(denom > 0, smin / denom, 0.0)
            if self.n == self.m:
                sdet = np.linalg.det(A) / denom**self.n
                sdet = np.where(denom > 0, sdet, 0.0)
            else:
                sdet = np.full(A.shape[0], np.nan)
        return mu, sdet, smax

    # --- high precision
    @property
    def hp(self):
        if self._hp is None and self._hp_reason is None:
            sample = self.ctx.sample
            i = int(np.argmax(self.ctx.defined))
            self._hp, self._hp_reason = refine.usable_high_precision(self.cost, 2, sample.xs[i], sample.ys[i])
        return self._hp

    def hp_F(self, u, dps):
        """``det M`` (``n = m``) or ``det AᵀA`` at the mpf point ``u`` and ``dps`` digits."""
        with mpmath.workdps(dps):
            fields = self.hp(u[: self.n], u[self.n:], dps)
            A = refine.mp_matrix(fields["dxy"])
            if not all(mpmath.isfinite(v) for v in A):
                return mpmath.nan
            if self.n != self.m:
                A = A.T * A if self.n > self.m else A * A.T
            return refine.mp_det(A)

    @property
    def M_sym(self):
        if self._M_sym is None:
            xs, ys = self.cost.x_symbols, self.cost.y_symbols
            expr, self.decimals = refine.exact_expression(self.cost.expr)
            self._M_sym = sp.Matrix(self.n, self.m, lambda i, j: sp.diff(expr, xs[i], ys[j]))
        return self._M_sym

    def z_of(self, x, y):
        return np.concatenate([np.asarray(x, float), np.asarray(y, float)])


# --------------------------------------------------------------------------- sign changes


def _bisect(st: _Setup, z0, z1):
    """Bisect the segment z0 -> z1 on which det M changes sign.

    Returns a dict with the brackets of every round (widest first), or None when the
    segment leaves the domain / where M is undefined, or the bracket closes on a pole.
    """
    a, b = 0.0, 1.0
    brackets = []
    length = float(np.linalg.norm((z1 - z0) / np.where(st.width > 0, st.width, 1.0)))
    if length == 0:
        return None
    for _ in range(10):
        t = np.linspace(a, b, 33)
        Z = (1 - t)[:, None] * z0 + t[:, None] * z1
        A, ok = st.matrices(Z)
        if not ok.all():
            return None
        _, sdet, _ = st.measure(A)
        exact = np.flatnonzero(sdet == 0)
        if exact.size:
            ta = tb = t[exact[0]]
            brackets.append((ta, tb, 0.0, 0.0))
            break
        change = np.flatnonzero(np.sign(sdet[:-1]) != np.sign(sdet[1:]))
        if not change.size:
            return None
        i = change[0]
        a, b = t[i], t[i + 1]
        brackets.append((a, b, sdet[i], sdet[i + 1]))
        if (b - a) * length < 1e-13:
            break
    ta, tb, _, _ = brackets[-1]
    za, zb = (1 - ta) * z0 + ta * z1, (1 - tb) * z0 + tb * z1
    # a pole of det M also changes its sign: refuse unless |det M| is small at the bracket
    A, ok = st.matrices(np.array([za, zb]))
    det = np.abs(np.linalg.det(A)) if st.n == st.m else np.zeros(2)
    if not ok.all() or np.max(det) > 1e-6 * st.S**st.n:
        return None
    # nor a zero on the boundary of an open domain (an excluded point)
    zm = 0.5 * (za + zb)
    if refine.near_open_boundary(st.ctx, zm[: st.n], zm[st.n:]):
        return None
    return {"z0": z0, "z1": z1, "brackets": brackets}


def _confirm_sign_change(st: _Setup, found) -> Witness | None:
    z0, z1 = found["z0"], found["z1"]
    at = lambda t: (1 - t) * z0 + t * z1  # noqa: E731
    scale_n = st.S**st.n
    chosen = None
    # tightest bracket whose end signs are confirmed
    for ta, tb, fa, fb in reversed(found["brackets"]):
        if ta == tb:  # det M is exactly zero in float at a point: confirm that point instead
            continue
        za, zb = at(ta), at(tb)
        if st.hp is not None:
            va, ea = refine.confirm_value(lambda dps: st.hp_F(refine.mp_vector(za), dps))
            vb, eb = refine.confirm_value(lambda dps: st.hp_F(refine.mp_vector(zb), dps))
            if abs(va) > ea and abs(vb) > eb and mpmath.sign(va) != mpmath.sign(vb):
                chosen = (za, zb, va, ea, vb, eb, "mpmath at 50 and 80 digits")
                break
        else:
            if min(abs(fa), abs(fb)) > 1e-8:
                chosen = (za, zb, fa * scale_n, 1e-14 * scale_n, fb * scale_n, 1e-14 * scale_n,
                          f"float64 only: {st._hp_reason}; both values exceed 1e-8 of the scale, far above "
                          "rounding")
                break
    if chosen is None:
        return None
    za, zb, va, ea, vb, eb, how = chosen
    zm = 0.5 * (za + zb)
    A, _ = st.matrices(zm[None])
    mu, sdet, _ = st.measure(A)
    value, err = float(abs(sdet[0])), None
    if st.hp is not None:
        vm, em = refine.confirm_value(lambda dps: st.hp_F(refine.mp_vector(zm), dps))
        value, err = float(abs(vm) / scale_n), float(em / scale_n)
    n = st.n
    text = (f"det M changes sign between the bracket ends a and b (|b - a| = {np.linalg.norm(zb - za):.3g}): "
            f"det M(a) = {refine.fmt(va, 6)} ± {refine.fmt(ea, 2)}, det M(b) = {refine.fmt(vb, 6)} ± "
            f"{refine.fmt(eb, 2)} ({how}).  The bracket lies on a segment from a sampled pair to another "
            f"(|z1 - z0| = {np.linalg.norm(z1 - z0):.3g}) whose 65 checked points and every bisection point "
            "are inside the domain with M finite, so det M = 0 somewhere in the bracket (intermediate value "
            "theorem); the reported point is its midpoint.  value = |det M| / S^n there.")
    return Witness(x=zm[:n].tolist(), y=zm[n:].tolist(), value=value, error_bound=err, confirmation=text,
                   vectors={"bracket_a_x": za[:n].tolist(), "bracket_a_y": za[n:].tolist(),
                            "bracket_b_x": zb[:n].tolist(), "bracket_b_y": zb[n:].tolist()},
                   vector_sides={"bracket_a_x": "x", "bracket_a_y": "y", "bracket_b_x": "x", "bracket_b_y": "y"})


def _sample_sign_changes(st: _Setup, Z, sdet) -> Witness | None:
    pos, neg = np.flatnonzero(sdet > CLEAR_SIGN), np.flatnonzero(sdet < -CLEAR_SIGN)
    if not pos.size or not neg.size:
        return None
    w = np.where(st.width > 0, st.width, 1.0)
    tree = cKDTree(Z[pos] / w)
    dist, j = tree.query(Z[neg] / w, k=1)
    order = np.argsort(dist, kind="stable")
    tried = 0
    for q in order:
        if tried >= SEGMENT_TRIES:
            break
        tried += 1
        z0, z1 = Z[pos[j[q]]], Z[neg[q]]
        if not refine.segment_is_usable(st.ctx, st.ev, z0, z1):
            continue
        found = _bisect(st, z0, z1)
        if found is None:
            continue
        witness = _confirm_sign_change(st, found)
        if witness is not None:
            return witness
    return None


def _probe_sign_change(st: _Setup, z) -> Witness | None:
    """Look for opposite signs of det M on either side of a near-zero ``z`` (along ∇ det)."""
    if st.n != st.m:
        return None
    h = 1e-7 * np.where(st.width > 0, st.width, 1.0)
    E = np.diag(h)
    A, ok = st.matrices(np.concatenate([z[None] + E, z[None] - E]))
    if not ok.all():
        return None
    det = np.linalg.det(A)
    grad = (det[: st.d] - det[st.d:]) / (2 * h)
    g = grad * st.width
    if not np.all(np.isfinite(g)) or np.linalg.norm(g) == 0:
        return None
    direction = g / np.linalg.norm(g) * st.width
    for t in (1e-9, 1e-7, 1e-5, 1e-3, 1e-2):
        z0, z1 = z - t * direction, z + t * direction
        A, ok = st.matrices(np.array([z0, z1]))
        if not ok.all():
            continue
        _, sdet, _ = st.measure(A)
        if np.sign(sdet[0]) == np.sign(sdet[1]) or min(abs(sdet)) == 0:
            continue
        if not refine.segment_is_usable(st.ctx, st.ev, z0, z1):
            continue
        found = _bisect(st, z0, z1)
        if found is not None:
            witness = _confirm_sign_change(st, found)
            if witness is not None:
                return witness
    return None


# --------------------------------------------------------------------------- local search


def _local_searches(st: _Setup, Z0: np.ndarray, V0: np.ndarray) -> np.ndarray:
    """Minimise ``|A(z) v| / S`` with ``|v| = 1`` from every row of ``Z0`` at once (batched LM)."""
    n, d, k = st.n, st.d, st.k
    rows = max(st.n, st.m)
    lo_x, hi_x = refine.box_bounds(st.domain.x)
    lo_y, hi_y = refine.box_bounds(st.domain.y)
    lower = np.concatenate([lo_x, lo_y, np.full(k, -2.0)])
    upper = np.concatenate([hi_x, hi_y, np.full(k, 2.0)])
    h = 1e-7 * np.where(st.width > 0, st.width, 1.0)
    E = np.diag(h)

    def model(U):
        count = U.shape[0]
        Z, V = U[:, :d], U[:, d:]
        pts = np.concatenate([Z[:, None, :], Z[:, None, :] + E, Z[:, None, :] - E], axis=1)  # (S, 2d+1, d)
        A, okp = st.matrices(pts.reshape(-1, d))
        A = A.reshape(count, 2 * d + 1, rows, k)
        okp = okp.reshape(count, 2 * d + 1)
        Av = np.einsum("sjrk,sk->sjr", A, V) / st.S  # (S, 2d+1, rows)
        bx, gx = refine.ball_penalty(st.domain.x, Z[:, :n])
        by, gy = refine.ball_penalty(st.domain.y, Z[:, n:])
        r = np.concatenate([Av[:, 0], (np.sum(V * V, axis=1) - 1.0)[:, None], bx[:, None], by[:, None]], axis=1)
        J = np.zeros((count, rows + 3, d + k))
        plus, minus, base = Av[:, 1: d + 1], Av[:, d + 1:], Av[:, :1]
        okplus, okminus = okp[:, 1: d + 1], okp[:, d + 1:]
        central = (plus - minus) / (2 * h[None, :, None])
        forward = (plus - base) / h[None, :, None]
        backward = (base - minus) / h[None, :, None]
        both = (okplus & okminus)[:, :, None]
        deriv = np.where(both, central, np.where(okplus[:, :, None], forward,
                                                 np.where(okminus[:, :, None], backward, 0.0)))
        J[:, :rows, :d] = np.transpose(deriv, (0, 2, 1))
        J[:, :rows, d:] = A[:, 0] / st.S
        J[:, rows, d:] = 2 * V
        J[:, rows + 1, :n] = gx
        J[:, rows + 2, n:d] = gy
        ok = okp[:, 0] & np.all(np.isfinite(r), axis=1) & np.all(np.isfinite(J), axis=(1, 2))
        return np.where(np.isfinite(r), r, 0.0), np.where(np.isfinite(J), J, 0.0), ok

    U, _ = refine.batched_least_squares(model, np.concatenate([Z0, V0], axis=1), lower, upper, iterations=80)
    Z = U[:, :d].copy()
    for i in range(Z.shape[0]):
        Z[i, :n] = refine.clip_into(st.domain.x, Z[i, :n])
        Z[i, n:] = refine.clip_into(st.domain.y, Z[i, n:])
    return Z


# --------------------------------------------------------------------------- zero confirmation


def _exact_zero(st: _Setup, values) -> tuple | None:
    """A nearby exact point where det M (det AᵀA) is exactly 0, as sympy numbers."""
    if st.cost.expr is None:
        return None
    symbols = list(st.cost.x_symbols) + list(st.cost.y_symbols)
    for point in refine.snap_candidates(values, st.width):
        if not refine.points_in_domain(st.domain, point[: st.n], point[st.n:]):
            continue
        try:
            Mx = st.M_sym.xreplace(dict(zip(symbols, point)))
            if any(e.has(sp.nan, sp.zoo, sp.oo, -sp.oo) for e in Mx):
                continue
            if st.k == 1 and st.n != st.m:
                # rank 0 < 1 means every entry of M vanishes
                if all(refine.exactly_zero(e) for e in Mx):
                    return point
                continue
            with dotprodsimp(False):
                G = Mx if st.n == st.m else (Mx.T * Mx if st.n > st.m else Mx * Mx.T)
            F = refine.exact_det(G)
            if F is not None and refine.exactly_zero(F):
                return point
        except (TypeError, ValueError, ZeroDivisionError):
            continue
    return None


def _exact_witness(st: _Setup, point, found_at) -> Witness:
    n = st.n
    xs = [float(v) for v in point[:n]]
    ys = [float(v) for v in point[n:]]
    what = "det M" if st.n == st.m else ("det(MᵀM)" if st.n > st.m else "det(MMᵀ)")
    text = (f"{what} = 0 exactly (sympy, exact arithmetic) at the exact point x = ({', '.join(map(str, point[:n]))}), "
            f"y = ({', '.join(map(str, point[n:]))}), obtained by snapping the refined float point "
            f"{refine.fmt_vec(found_at, 8)} to simple numbers; the point is inside the domain."
            + ("  Decimal constants of the expression were read as the exact decimals written." if st.decimals else ""))
    return Witness(x=xs, y=ys, value=0.0, error_bound=0.0, confirmation=text)


def _confirm_zero(st: _Setup, z) -> tuple[Witness | None, str]:
    """Confirm a zero near the float point ``z``: ``(witness, "confirmed")`` or ``(None, status)``.

    ``status`` is ``"nonzero"`` when high precision settled on a critical point where the
    value is clearly not zero, ``"boundary"`` when the refinement closed in on the boundary of
    an open domain, and ``"unresolved"`` otherwise (no high precision, or no convergence).
    """
    point = _exact_zero(st, z)
    if point is not None:
        return _exact_witness(st, point, z), "confirmed"
    if refine.near_open_boundary(st.ctx, z[: st.n], z[st.n:]):
        return None, "boundary"
    if st.hp is None:
        return None, "unresolved"
    n = st.n
    project = refine.compose(refine.mp_project_box(st.domain.x, 0), refine.mp_project_box(st.domain.y, n))
    u, _, settled = refine.mp_critical_point(lambda u: st.hp_F(u, refine.DPS_REFINE), refine.mp_vector(z),
                                             project=project)
    if u is None:
        return None, "unresolved"
    zf = np.array([float(v) for v in u])
    if refine.near_open_boundary(st.ctx, zf[:n], zf[n:]):
        return None, "boundary"
    if not bool(st.domain.contains_pairs(zf[None, :n], zf[None, n:])[0]):
        return None, "unresolved"
    point = _exact_zero(st, zf)
    if point is not None:
        return _exact_witness(st, point, zf), "confirmed"
    val, err = refine.confirm_value(lambda dps: st.hp_F(u, dps))
    power = st.k if st.n == st.m else 2 * st.k
    scale = mpmath.mpf(st.S) ** power
    if not (abs(val) <= err and err <= scale * mpmath.mpf(10) ** -30):
        return None, ("nonzero" if settled and abs(val) > err else "unresolved")
    what = "det M" if st.n == st.m else ("det(MᵀM)" if st.n > st.m else "det(MMᵀ)")
    text = (f"{what} = {refine.fmt(val, 3)} ± {refine.fmt(err, 3)} (mpmath at 50 and 80 digits) at the point "
            f"x = {refine.fmt_vec(u[:n], 30)}, y = {refine.fmt_vec(u[n:], 30)} (given here to 30 digits; the "
            f"float coordinates above are its rounding), while the scale S^{power} = {float(scale):.3g}: zero to "
            f"the working precision.  The point was reached from the float search by Newton's method for a "
            f"critical point of {what} at {refine.DPS_REFINE} digits (a zero without a sign change).")
    return Witness(x=zf[:n].tolist(), y=zf[n:].tolist(), value=float(abs(val) / scale), error_bound=float(err / scale),
                   confirmation=text), "confirmed"


# --------------------------------------------------------------------------- the check


def _where(cost, z):
    n = cost.n
    return {"x": dict(zip(cost.x_names, map(float, z[:n]))), "y": dict(zip(cost.y_names, map(float, z[n:])))}


def check(ctx) -> Verdict:
    st = _Setup(ctx)
    cost = st.cost
    mask = ctx.defined
    xs, ys = ctx.sample.xs[mask], ctx.sample.ys[mask]
    Z = np.concatenate([xs, ys], axis=1)
    M = ctx.derivs.dxy[mask]
    A = M if st.n >= st.m else np.transpose(M, (0, 2, 1))
    sv = np.linalg.svd(A, compute_uv=False)
    S = float(np.median(sv[:, 0]))
    st.S = S if S > 0 else (float(np.max(sv[:, 0])) or 1.0)
    mu, sdet, _ = st.measure(A)
    count, resolution = int(mask.sum()), float(ctx.sample.resolution)
    notes = []
    if st.n < st.m:
        notes.append("n < m: the reference defines non-degeneracy for n ≥ m; full rank min(n, m) = n of M "
                     "(non-degeneracy with the roles of x and y exchanged) was checked")

    def failed(witness: Witness, method: str) -> Verdict:
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
                       Evidence("refuted", summary, samples=count, resolution=resolution,
                                details={"method": method, "scale_S": st.S,
                                         "min_scale_free_sigma_on_samples": float(np.min(mu))}),
                       value=0.0 if method == "exact" else muw, value_meaning=VALUE_MEANING,
                       witness=witness, notes=tuple(notes))

    # 1. sign changes between sampled pairs
    if st.n == st.m:
        witness = _sample_sign_changes(st, Z, sdet)
        if witness is not None:
            return failed(witness, "sign change")

    # 2. local searches from the worst samples
    rng = ctx.rng(_SALT)
    order = np.argsort(mu, kind="stable")
    starts = []
    for i in order:
        if len(starts) >= LOCAL_STARTS:
            break
        if all(np.linalg.norm((Z[i] - Z[j]) / np.where(st.width > 0, st.width, 1.0)) > 0.05 for j in starts):
            starts.append(i)
    refined = []
    if starts:
        V0 = []
        for i in starts:
            _, _, Vt = np.linalg.svd(A[i])
            v0 = Vt[-1] + 1e-3 * rng.standard_normal(st.k)
            V0.append(v0 / np.linalg.norm(v0))
        Zr = _local_searches(st, Z[starts], np.array(V0))
        Az, ok = st.matrices(Zr)
        muz, sdetz, _ = st.measure(np.where(np.isfinite(Az), Az, 0.0))
        for j, i in enumerate(starts):
            if ok[j]:
                refined.append((float(muz[j]), Zr[j], i, float(sdetz[j])))
    refined.sort(key=lambda r: r[0])

    best_mu, best_z = float(mu[order[0]]), Z[order[0]]
    examined = []
    for muz, z, i, sdetz in refined:
        if muz < best_mu:
            best_mu, best_z = muz, z
        if st.n == st.m and np.isfinite(sdetz) and np.sign(sdetz) != np.sign(sdet[i]) and sdetz != 0:
            # the search crossed the zero set: try the segment from its start
            if refine.segment_is_usable(ctx, st.ev, Z[i], z):
                found = _bisect(st, Z[i], z)
                if found is not None:
                    witness = _confirm_sign_change(st, found)
                    if witness is not None:
                        return failed(witness, "sign change")
        if muz >= CANDIDATE_THRESHOLD or len(examined) >= CONFIRM_TRIES:
            continue
        witness = _probe_sign_change(st, z)
        if witness is not None:
            return failed(witness, "sign change")
        witness, status = _confirm_zero(st, z)
        if witness is not None:
            method = "exact" if witness.error_bound == 0.0 and witness.value == 0.0 else "high precision"
            return failed(witness, method)
        examined.append((muz, z, status))

    unresolved = [(muz, z) for muz, z, status in examined if status == "unresolved" and muz < UNRESOLVED]
    if unresolved:
        muz, z = unresolved[0]
        return Verdict(CONDITION, "undecided",
                       Evidence("undecided", f"σ_min(M)/scale = {muz:.3g} at {_where(cost, z)} (zero to float "
                                "precision), but neither an exact zero nor a high-precision zero could be confirmed "
                                "there, nor a clearly non-zero minimum", samples=count, resolution=resolution,
                                details={"min_scale_free_sigma": muz, "where": _where(cost, z), "scale_S": st.S}),
                       value=muz, value_meaning=VALUE_MEANING, notes=tuple(notes))
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
