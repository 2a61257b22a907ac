"""Zeros of ``det M`` proved by a sign change (``n = m``): bracket, bisect, confirm.

Samples where ``det M`` has opposite clear signs are joined by segments (nearest pairs
first, :func:`sample_sign_changes`), or a near-zero point is probed on either side along
``∇ det M`` (:func:`probe_sign_change`); a usable segment is bisected
(:func:`bisect_sign_change`, which refuses a pole or an excluded boundary) and the end signs
of its tightest bracket are confirmed in high precision (:func:`confirm_sign_change`), which
proves a zero by the intermediate value theorem.
"""

from __future__ import annotations

import mpmath
import numpy as np

from ...model.verdict import Witness
from ...numerics import precision
from ..engines import admissible
from .setup import Setup
from ...model.display import with_error


def bisect_sign_change(st: Setup, z0, z1):
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
    if admissible.near_open_boundary(st.ctx, zm[: st.n], zm[st.n:]):
        return None
    return {"z0": z0, "z1": z1, "brackets": brackets}


def confirm_sign_change(st: Setup, found) -> Witness | None:
    """The witness of a zero in the tightest bracket of ``found`` whose end signs are confirmed, or None."""
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
            va, ea = precision.confirm_value(lambda dps: st.hp_F(precision.mp_vector(za), dps))
            vb, eb = precision.confirm_value(lambda dps: st.hp_F(precision.mp_vector(zb), dps))
            if abs(va) > ea and abs(vb) > eb and mpmath.sign(va) != mpmath.sign(vb):
                chosen = (za, zb, va, ea, vb, eb, "mpmath at 50 and 80 digits")
                break
        else:
            if min(abs(fa), abs(fb)) > 1e-8:
                chosen = (za, zb, fa * scale_n, 1e-14 * scale_n, fb * scale_n, 1e-14 * scale_n,
                          f"float64 only: {st.hp_reason}; both values exceed 1e-8 of the scale, far above "
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
        vm, em = precision.confirm_value(lambda dps: st.hp_F(precision.mp_vector(zm), dps))
        value, err = float(abs(vm) / scale_n), float(em / scale_n)
    n = st.n
    text = (f"det M changes sign between the bracket ends a and b (|b - a| = {np.linalg.norm(zb - za):.3g}): "
            f"det M(a) = {with_error(va, ea, 6)}, det M(b) = {with_error(vb, eb, 6)}"
            f" ({how}).  The bracket lies on a segment from a sampled pair to another "
            f"(|z1 - z0| = {np.linalg.norm(z1 - z0):.3g}) whose 65 checked points and every bisection point "
            "are inside the domain with M finite, so det M = 0 somewhere in the bracket (intermediate value "
            "theorem); the reported point is its midpoint.  value = |det M| / S^n there.")
    return Witness(x=zm[:n].tolist(), y=zm[n:].tolist(), value=value, error_bound=err, confirmation=text,
                   vectors={"bracket_a_x": za[:n].tolist(), "bracket_a_y": za[n:].tolist(),
                            "bracket_b_x": zb[:n].tolist(), "bracket_b_y": zb[n:].tolist()},
                   vector_sides={"bracket_a_x": "x", "bracket_a_y": "y", "bracket_b_x": "x", "bracket_b_y": "y"})


def sample_sign_changes(st: Setup, Z, sdet, *, clear_sign, tries) -> Witness | None:
    """Join samples where det M has opposite signs (|det M| / S^n above ``clear_sign``), nearest
    pairs first, and confirm a sign change on the first of at most ``tries`` segments that gives one."""
    pos, neg = np.flatnonzero(sdet > clear_sign), np.flatnonzero(sdet < -clear_sign)
    if not pos.size or not neg.size:
        return None
    w = np.where(st.width > 0, st.width, 1.0)
    from scipy.spatial import cKDTree  # SciPy's spatial package loads when a sign change is looked for

    tree = cKDTree(Z[pos] / w)
    dist, j = tree.query(Z[neg] / w, k=1)
    order = np.argsort(dist, kind="stable")
    tried = 0
    for q in order:
        if tried >= tries:
            break
        tried += 1
        z0, z1 = Z[pos[j[q]]], Z[neg[q]]
        if not admissible.segment_is_usable(st.ctx, st.ev, z0, z1):
            continue
        found = bisect_sign_change(st, z0, z1)
        if found is None:
            continue
        witness = confirm_sign_change(st, found)
        if witness is not None:
            return witness
    return None


def probe_sign_change(st: Setup, z) -> Witness | None:
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
        if not admissible.segment_is_usable(st.ctx, st.ev, z0, z1):
            continue
        found = bisect_sign_change(st, z0, z1)
        if found is not None:
            witness = confirm_sign_change(st, found)
            if witness is not None:
                return witness
    return None
