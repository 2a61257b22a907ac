"""The MTW form S(ξ, η) at one pair in mpmath, and its two-precision confirmation: what turns a
float witness of a negative margin into a refutation with an error bound."""

from __future__ import annotations

import mpmath


def form_mp(fields: dict, xi, eta, *, orthogonal: bool) -> mpmath.mpf:
    """``S(ξ, η)`` from one point's mpmath derivative fields, at the current working precision.

    ``ξ`` and ``η`` are taken at their exact binary values, normalised to unit length in working
    precision, and (``orthogonal``) ``η`` is first made exactly orthogonal to ``ξ`` there, so the
    value is the A3w form on genuinely orthogonal unit vectors.
    """
    n = len(xi)
    xi = [mpmath.mpf(float(v)) for v in xi]
    eta = [mpmath.mpf(float(v)) for v in eta]
    nx = mpmath.sqrt(mpmath.fsum(v * v for v in xi))
    xi = [v / nx for v in xi]
    if orthogonal:
        dot = mpmath.fsum(a * b for a, b in zip(xi, eta))
        eta = [b - dot * a for a, b in zip(xi, eta)]
    ne = mpmath.sqrt(mpmath.fsum(v * v for v in eta))
    eta = [v / ne for v in eta]
    M = mpmath.matrix(n, n)
    for i in range(n):
        for k in range(n):
            M[i, k] = fields["dxy"][i, k]
    inv = M**-1
    eta_p = [mpmath.fsum(inv[k, l] * eta[l] for l in range(n)) for k in range(n)]
    dxxy, dxyy, dxxyy = fields["dxxy"], fields["dxyy"], fields["dxxyy"]
    total = []
    for i in range(n):
        for j in range(n):
            wij = xi[i] * xi[j]
            for k in range(n):
                for l in range(n):
                    first = mpmath.fsum(dxxy[i, j, r] * inv[r, s] * dxyy[s, k, l] for r in range(n) for s in range(n))
                    total.append(wij * (first - dxxyy[i, j, k, l]) * eta_p[k] * eta_p[l])
    return mpmath.fsum(total)


def confirm_form(hp, x, y, xi, eta, *, orthogonal: bool, dps_low: int = 30, dps_high: int = 60):
    """``S(ξ, η)`` at ``(x, y)`` recomputed at two precisions: ``(value, error estimate)`` as mpf."""
    from ...derivatives.mp_backend import confirm

    def compute(dps):
        with mpmath.workdps(dps):
            return form_mp(hp(x, y, dps), xi, eta, orthogonal=orthogonal)

    return confirm(compute, dps_low, dps_high)
