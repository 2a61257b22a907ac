"""The conditions' quantities in ball arithmetic, from enclosures of the derivatives.

Everything here is plain algebra on ``arb`` balls (or on :class:`~.dual.Dual` numbers over
them: the functions use only ``+ − × ÷``) — determinants, the inverse of the mixed
Hessian, the MTW tensor, and its forms on the circle for ``n = 2`` — so an enclosure of the
inputs gives an enclosure of the output.  Formulas follow the conventions of docs/conditions.md:

    T_{ijkl} = Σ_{r,s} c_{ij,r} c^{r,s} c_{s,kl} − c_{ij,kl}     (Ma–Trudinger–Wang, ARMA 177, 2005)
    S(ξ, η)  = Σ T_{ijkl} ξ_i ξ_j η'_k η'_l,   η' = M⁻¹ η

For ``n = 2`` with ``ξ = (cos θ, sin θ)``: on orthogonal pairs ``η = (−sin θ, cos θ)`` and
``S`` is a binary quartic form in ``(cos θ, sin θ)``; for NNCC, ``S = η'ᵀ A(ξ) η'`` with
``A(ξ)_{kl} = Σ T_{ijkl} ξ_i ξ_j``, and ``η' = M⁻¹ η`` ranges over every vector, so
``S > 0`` for all ``ξ, η ≠ 0`` exactly when ``A(ξ)`` is positive definite for every unit ``ξ``
(Kim–McCann, JEMS 12, 2010, for the form).
"""

from __future__ import annotations

import itertools

from flint import arb

from . import balls

Matrix = list  # list of rows of balls


def det(A: Matrix) -> arb:
    n = len(A)
    if n == 1:
        return A[0][0]
    if n == 2:
        return A[0][0] * A[1][1] - A[0][1] * A[1][0]
    if n == 3:
        return (A[0][0] * (A[1][1] * A[2][2] - A[1][2] * A[2][1])
                - A[0][1] * (A[1][0] * A[2][2] - A[1][2] * A[2][0])
                + A[0][2] * (A[1][0] * A[2][1] - A[1][1] * A[2][0]))
    raise ValueError("determinants of balls are implemented for n ≤ 3")


def inverse(A: Matrix) -> Matrix | None:
    """``A⁻¹`` by the adjugate, or None when the determinant's ball contains 0."""
    n = len(A)
    d = det(A)
    if not balls.excludes_zero(d):
        return None
    if n == 1:
        return [[1 / d]]
    if n == 2:
        return [[A[1][1] / d, -A[0][1] / d], [-A[1][0] / d, A[0][0] / d]]
    minor = lambda r, c: det([[A[i][j] for j in range(3) if j != c] for i in range(3) if i != r])  # noqa: E731
    return [[((-1) ** (r + c)) * minor(c, r) / d for c in range(3)] for r in range(3)]


def transpose(A: Matrix) -> Matrix:
    return [list(row) for row in zip(*A)]


def gram(A: Matrix) -> Matrix:
    """``AᵀA``: its determinant is positive exactly when ``A`` has full column rank."""
    cols = transpose(A)
    return [[sum((a * b for a, b in zip(ci, cj)), 0) for cj in cols] for ci in cols]


def rank_determinant(M: Matrix) -> object:
    """``det M`` for square ``M``; otherwise the Gram determinant of the longer side (``det MᵀM`` when
    ``M`` has more rows, ``det MMᵀ`` when more columns): non-zero exactly when ``M`` has full rank."""
    rows, cols = len(M), len(M[0])
    if rows == cols:
        return det(M)
    return det(gram(M) if rows > cols else gram(transpose(M)))


def symmetric_part(A: Matrix) -> Matrix:
    n = len(A)
    return [[(A[i][j] + A[j][i]) / 2 for j in range(n)] for i in range(n)]


def leading_minors(A: Matrix) -> list:
    return [det([row[:k] for row in A[:k]]) for k in range(1, len(A) + 1)]


def definite(minors: list) -> bool:
    """Sylvester's criterion on the leading minors: surely positive or surely negative definite."""
    if all(balls.positive(d) for d in minors):
        return True
    return all(balls.negative(d) if k % 2 == 0 else balls.positive(d) for k, d in enumerate(minors))


def mtw_tensor(fields: dict, inv: Matrix) -> dict:
    """``T[(i, j, k, l)]`` for ``i ≤ j``, ``k ≤ l`` (the tensor is symmetric in both pairs)."""
    n = len(inv)
    T = {}
    for i, j in itertools.combinations_with_replacement(range(n), 2):
        for k, l in itertools.combinations_with_replacement(range(n), 2):
            first = 0
            for r in range(n):
                for s in range(n):
                    first += fields["dxxy"][i][j][r] * inv[r][s] * fields["dxyy"][s][k][l]
            T[(i, j, k, l)] = first - fields["dxxyy"][i][j][k][l]
    return T


def _t(T, i, j, k, l):
    return T[(min(i, j), max(i, j), min(k, l), max(k, l))]


def form_at(T: dict, inv: Matrix, xi, eta) -> arb:
    """``S(ξ, η)`` for given ball vectors."""
    n = len(inv)
    eta_p = [sum((inv[k][i] * eta[i] for i in range(n)), 0) for k in range(n)]
    total = 0
    for i, j, k, l in itertools.product(range(n), repeat=4):
        total += _t(T, i, j, k, l) * xi[i] * xi[j] * eta_p[k] * eta_p[l]
    return total


# ---------------------------------------------------------------- binary forms on the circle (n = 2)
# A form of degree d in (u, v) is its coefficient list [a_0, ..., a_d] of u^(d-k) v^k.

def _multiply(p: list, q: list) -> list:
    out = [0] * (len(p) + len(q) - 1)
    for a, pa in enumerate(p):
        for b, qb in enumerate(q):
            out[a + b] = out[a + b] + pa * qb
    return out


def orthogonal_quartic(T: dict, inv: Matrix) -> list:
    """Coefficients of ``S(ξ, η)`` with ``ξ = (u, v)``, ``η = (−v, u)``: a quartic in ``(u, v)``."""
    xi = [[1, 0], [0, 1]]                                          # ξ_0 = u, ξ_1 = v
    eta_p = [[inv[k][1], -inv[k][0]] for k in range(2)]            # η'_k = B[k][1] u − B[k][0] v
    total = [0] * 5
    for i, j, k, l in itertools.product(range(2), repeat=4):
        term = _multiply(_multiply(xi[i], xi[j]), _multiply(eta_p[k], eta_p[l]))
        coefficient = _t(T, i, j, k, l)
        total = [a + coefficient * b for a, b in zip(total, term)]
    return total


def cross_forms(T: dict) -> tuple[list, list, list]:
    """The entries ``A_00, A_01, A_11`` of ``A(ξ)`` as quadratics in ``ξ = (u, v)``."""
    def entry(k, l):
        return [_t(T, 0, 0, k, l), 2 * _t(T, 0, 1, k, l), _t(T, 1, 1, k, l)]
    return entry(0, 0), entry(0, 1), entry(1, 1)


def cross_determinant(a00: list, a01: list, a11: list) -> list:
    """``det A(ξ) = A_00 A_11 − A_01²`` as a quartic in ``(u, v)``."""
    return [p - q for p, q in zip(_multiply(a00, a11), _multiply(a01, a01))]


def fourier(form: list) -> tuple:
    """``(a_0, [(c_2, s_2), (c_4, s_4)])`` with ``form(cos θ, sin θ) = a_0 + Σ c_k cos kθ + s_k sin kθ``."""
    if len(form) == 3:
        a, b, c = form
        return (a + c) / 2, [((a - c) / 2, b / 2)]
    if len(form) == 5:
        a0, a1, a2, a3, a4 = form
        return ((3 * a0 + a2 + 3 * a4) / 8,
                [((a0 - a4) / 2, (a1 + a3) / 4), ((a0 - a2 + a4) / 8, (a1 - a3) / 8)])
    raise ValueError("forms of degree 2 or 4 only")


def circle_lower_bound(form: list, depth: int = 7) -> float | None:
    """A float ``≤`` the minimum of the form over ``θ ∈ [0, π)``, or None if it may be ≤ 0.

    First the global bound ``a_0 − Σ |(c_k, s_k)|``; if that is not positive, the half circle
    is split adaptively into θ-intervals (the forms are even, so ``[0, π)`` is all of it) and
    the Fourier form is enclosed on each with arb's ``cos``/``sin`` of the interval.
    """
    a0, harmonics = fourier(form)
    bound = a0
    for c, s in harmonics:
        bound = bound - (c * c + s * s).sqrt()
    if balls.positive(bound):
        return balls.lower(bound)
    pi = arb.pi()
    best = None
    pending = [(arb(0), pi, 0)]
    while pending:
        a, b, level = pending.pop()
        theta = a.union(b)
        value = a0
        for order, (c, s) in zip((2, 4), harmonics):
            value = value + c * (order * theta).cos() + s * (order * theta).sin()
        if balls.positive(value):
            best = balls.lower(value) if best is None else min(best, balls.lower(value))
            continue
        if level >= depth:
            return None
        middle = (a + b) / 2
        pending += [(a, middle, level + 1), (middle, b, level + 1)]
    return best


# ---------------------------------------------------------------- a bilinear form on a triangle (n ≥ 3)

def triangle_lower_bound(coefficients: list, depth: int = 8) -> float | None:
    """A float ``≤`` the minimum of ``c₀ + c₁A + c₂B + c₃AB`` over ``A, B ≥ 0, A + B ≤ 1``, or None.

    A bilinear function has no interior minimum (its Hessian ``[[0, c₃], [c₃, 0]]`` is indefinite
    or zero), so the minimum lies on an edge: ``A = 0`` and ``B = 0`` are linear (their ends
    suffice), and on ``A + B = 1`` the quadratic ``c₀ + c₂ + (c₁ − c₂ + c₃)A − c₃A²`` is enclosed on
    ``A``-intervals, split adaptively.
    """
    c0, c1, c2, c3 = coefficients
    corners = [c0, c0 + c1, c0 + c2]
    if not all(balls.positive(v) for v in corners):
        return None
    best = min(balls.lower(v) for v in corners)
    linear, square = c0 + c2, c1 - c2 + c3
    pending = [(arb(0), arb(1), 0)]
    while pending:
        a, b, level = pending.pop()
        A = a.union(b)
        middle = (a + b) / 2
        # the centred form on the interval: q(m) + q'(A)(A − m), intersected with the natural one
        natural = linear + square * A - c3 * A * A
        centred = linear + square * middle - c3 * middle * middle + (square - 2 * c3 * A) * (A - middle)
        value = natural.intersection(centred) if natural.is_finite() and centred.is_finite() else natural
        if balls.positive(value):
            best = min(best, balls.lower(value))
            continue
        if level >= depth:
            return None
        pending += [(a, middle, level + 1), (middle, b, level + 1)]
    return best
