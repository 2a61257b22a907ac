"""Exact confirmation: snap a float point to nearby simple rationals
(:meth:`fractions.Fraction.limit_denominator`) or closed forms (:func:`sympy.nsimplify`), and
decide in exact arithmetic whether an expression vanishes there."""

from __future__ import annotations

from fractions import Fraction
from typing import Sequence

import mpmath
import numpy as np
import sympy as sp

from ..defaults import EXACT_ZERO_SECONDS
from .bounded import within
from .precision import mp_det

_DENOMINATORS = (1, 2, 3, 4, 5, 6, 8, 10, 12, 16, 20, 25, 50, 100, 1000, 10**4, 10**6)

_CLOSED_FORM_BASES = (sp.sqrt(2), sp.sqrt(3), sp.sqrt(5), sp.sqrt(6), sp.pi, 1 / sp.pi, sp.E, sp.log(2))


def _closed_form(value: float, tol: float) -> sp.Expr | None:
    """A short closed form within ``tol``: ``(p/q)·b`` for a few constants ``b``, or ``±sqrt(p/q)``.

    A small, fast relative of integer-relation searches (:func:`sympy.nsimplify` is too slow
    to run on every coordinate of every candidate).
    """
    if value == 0:
        return sp.Integer(0)
    for base in _CLOSED_FORM_BASES:
        f = Fraction(value / float(base)).limit_denominator(24)
        if f != 0 and abs(float(f) * float(base) - value) <= tol:
            return sp.Rational(f.numerator, f.denominator) * base
    f = Fraction(value * value).limit_denominator(400)
    if f > 0 and abs(np.sign(value) * np.sqrt(float(f)) - value) <= tol:
        return int(np.sign(value)) * sp.sqrt(sp.Rational(f.numerator, f.denominator))
    return None


def _snap_one(value: float, tol: float, closed_forms: bool) -> sp.Expr:
    small = [d for d in _DENOMINATORS if d <= 1000]
    large = [d for d in _DENOMINATORS if d > 1000]
    for den in small:
        f = Fraction(value).limit_denominator(den)
        if abs(float(f) - value) <= tol:
            return sp.Rational(f.numerator, f.denominator)
    if closed_forms:
        guess = _closed_form(value, tol)
        if guess is not None:
            return guess
    for den in large:
        f = Fraction(value).limit_denominator(den)
        if abs(float(f) - value) <= tol:
            return sp.Rational(f.numerator, f.denominator)
    f = Fraction(value)  # the float itself, exactly
    return sp.Rational(f.numerator, f.denominator)


def snap_candidates(values: Sequence[float], widths: Sequence[float] | None = None,
                    levels: Sequence[float] = (1e-4, 1e-7, 1e-10)) -> list[tuple[sp.Expr, ...]]:
    """Nearby simple exact points, coordinate by coordinate.

    For each relative tolerance in ``levels`` (times the coordinate's domain width), each
    coordinate becomes the simplest rational within it (smallest denominator first,
    :meth:`fractions.Fraction.limit_denominator`); at the finest level a short closed form
    from :func:`sympy.nsimplify` (with ``pi``) is tried before falling back to the float's
    exact binary value.  Snapping works on the float *values* found by the search, never on
    file text.  The caller decides by exact evaluation which candidate, if any, is a witness.
    """
    values = [float(v) for v in values]
    widths = [1.0] * len(values) if widths is None else [float(w) if w > 0 else 1.0 for w in widths]
    out: list[tuple[sp.Expr, ...]] = []
    for k, level in enumerate(levels):
        last = k == len(levels) - 1
        point = tuple(_snap_one(v, level * w, closed_forms=last) for v, w in zip(values, widths))
        if point not in out:
            out.append(point)
    return out


def exact_expression(expr: sp.Expr) -> tuple[sp.Expr, bool]:
    """The expression with each decimal constant (a sympy ``Float``) read as the exact decimal it spells.

    ``0.123456789`` becomes ``123456789/10**9`` — the value the user wrote, which is also what
    the mpmath evaluator uses (it reads the same digits at its working precision); float64
    evaluation uses the nearest binary number instead.  Returns the expression and whether
    anything was replaced, so a witness can say so.
    """
    floats = expr.atoms(sp.Float)
    if not floats:
        return expr, False
    return expr.xreplace({f: sp.Rational(str(f)) for f in floats}), True


def exactly_zero(expr: sp.Expr, digits: int = 40, max_ops: int = 200) -> bool:
    """True if a constant sympy expression is shown to be exactly zero (sound, not complete).

    A numeric screen at ``digits`` digits rejects clear non-zeros cheaply.  Then the
    expression must be zero as sympy builds it (exact rational and algebraic arithmetic
    cancel automatically), or its expansion must vanish identically when transcendental
    numbers such as ``tanh(1/3)`` are treated as independent symbols — a polynomial
    identity, so a ``True`` is always right.  ``sympy.simplify`` is deliberately not used: on
    expressions with a few transcendental constants it can take minutes.  ``False`` means
    "not shown exactly"; the caller then falls back to high precision.
    """
    try:
        approx = sp.N(expr, digits)
        value = complex(approx)
    except (TypeError, ValueError):
        return False
    if value != 0 and abs(value) > 10.0 ** (-(digits // 2)):
        return False
    if expr == 0:
        return True
    if sp.count_ops(expr) > max_ops:
        return False
    # a few operations can still expand to very many terms ((a + b + c)**60): bounded, and a
    # timeout is "not shown exactly", which the caller already handles
    status, expanded = within(EXACT_ZERO_SECONDS, "an exact zero test", sp.expand, expr)
    return status == "ok" and expanded == 0


def exact_det(rows: sp.Matrix) -> sp.Expr | None:
    """The determinant of a matrix of exact numbers without sympy's intermediate simplification.

    ``None`` when a cheap numeric screen (40 digits) already shows it is not zero, so no
    exact work is wasted on it, or when the exact work takes longer than
    :data:`~costcheck.defaults.EXACT_ZERO_SECONDS`.
    """
    with mpmath.workdps(40):
        try:
            numeric = mpmath.matrix([[mpmath.mpf(sp.N(e, 40)) for e in rows.row(i)] for i in range(rows.rows)])
        except (TypeError, ValueError):
            return None
        if not all(mpmath.isfinite(v) for v in numeric):
            return None
        d = mp_det(numeric)
        scale = max([abs(numeric[i, j]) for i in range(numeric.rows) for j in range(numeric.cols)] + [mpmath.mpf(1)])
        if not mpmath.isfinite(d) or abs(d) > mpmath.mpf(10) ** -20 * scale ** numeric.rows:
            return None
    from sympy.matrices.utilities import dotprodsimp

    with dotprodsimp(False):
        # bounded like exactly_zero; None (no exact determinant) sends the caller to high precision
        status, det = within(EXACT_ZERO_SECONDS, "an exact determinant", rows.det, method="berkowitz")
        return det if status == "ok" else None


def points_in_domain(domain, x_exact: Sequence[sp.Expr], y_exact: Sequence[sp.Expr]) -> bool:
    xs = np.array([[float(v) for v in x_exact]])
    ys = np.array([[float(v) for v in y_exact]])
    return bool(domain.contains_pairs(xs, ys)[0])
