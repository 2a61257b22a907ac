"""The vectorised rigorous evaluator (costcheck.certify.interval_eval, interval_dual, cell_enclosures).

Soundness is the bar, as for the ball evaluator: every enclosure of every cell must contain the
exact value at every point of the cell.  The exact values come from mpmath at 40 digits
(sympy's expressions evaluated by mpmath, an independent evaluator), compared with the
interval ends exactly (an mpf built from a float is that float).  Widths are compared with our
ball compiler (costcheck.certify.arb_eval, python-flint's arb).
"""

from __future__ import annotations

from fractions import Fraction

import mpmath
import numpy as np
import pytest
import sympy as sp

import costcheck
from costcheck.certify import balls, quantities
from costcheck.certify import intervals as iv
from costcheck.certify.arb_eval import BallFunction
from costcheck.certify.cell_enclosures import CellFieldEnclosures
from costcheck.certify.enclosures import TENSOR_FIELDS, FieldEnclosures
from costcheck.certify.interval_dual import IntervalDual, tighten
from costcheck.certify.interval_eval import IntervalFunction, Unsupported
from costcheck.spec.expression import parse_expression

CATALOG = __import__("pathlib").Path(__file__).resolve().parent.parent / "catalog"
X, Y = sp.Symbol("x", real=True), sp.Symbol("y", real=True)

#: expressions reaching the edges of their functions' domains on [-2, 2]^2, every function and power
TEXTS = [
    "sqrt(x)", "log(x)", "acos(x)", "asin(y/2)", "acosh(x + 1)", "atanh(x)", "1/(x - y)",
    "abs(x - y)**3", "x**(1/3)", "(x*x)**(3/2)", "sqrt(abs(x))", "x**y", "tan(x)",
    "exp(x)*cos(y) - sinh(x*y)", "atan(x/y)", "sqrt(1 - x**2 - y**2)", "log(1 + x) * acos(y - 1)",
    "(x - y)**4 - 3*(x - y)**2", "cosh(x)**-2 + tanh(y)", "abs(x)*y + abs(y - 1)",
    "pi*x**5 - E*y**-3", "x**(-7/4) + (x*y)**(5/2)", "sin(x)**7 * cos(x*y)", "x**(2/3) - y**(1/5)",
    "asinh(x*y) + atan(y)**3", "1/3*x - 2/7*y**2", "(1 + x**2)**(-1/2) * exp(-y**2)",
]
#: functions the derivatives may produce that the cost language does not offer
EXTRA = [sp.sec(X) * Y, sp.csc(X) + Y**2, sp.cot(X * Y), X**sp.pi + Y]


def _mp(expr):
    fn = sp.lambdify((X, Y), expr, modules="mpmath")

    def value(p):
        """The exact value to 40 digits (mpmath), or None where the real function is undefined."""
        try:
            with mpmath.workdps(40):
                v = fn(mpmath.mpf(float(p[0])), mpmath.mpf(float(p[1])))
        except (ZeroDivisionError, ValueError, TypeError):
            return None
        if isinstance(v, mpmath.mpc):
            return None if abs(v.imag) > 0 else v.real
        return v if mpmath.isfinite(v) else None
    return value


def _contains(lo: float, hi: float, exact) -> bool:
    return mpmath.mpf(lo) <= exact <= mpmath.mpf(hi)


def _cells(rng, count, centre=2.0, widths=(1e-6, 1.5)):
    c = rng.uniform(-centre, centre, size=(count, 2))
    w = np.exp(rng.uniform(np.log(widths[0]), np.log(widths[1]), size=(count, 2)))
    return c - w, c + w


@pytest.mark.parametrize("text", TEXTS + EXTRA, ids=str)
def test_cell_enclosures_contain_mpmath_values_at_random_points(text):
    # f(B) ⊂ F(B) for every cell of the batch (Moore, Kearfott and Cloud, Introduction to Interval
    # Analysis, SIAM 2009, ch. 5); reference: mpmath at 40 digits at random points of each cell
    expr = text if isinstance(text, sp.Expr) else parse_expression(text, {"x": X, "y": Y})
    exprs = [expr, sp.diff(expr, X)]
    fn = IntervalFunction(exprs, (X, Y))
    rng = np.random.default_rng(sum(map(ord, str(text))))
    lo, hi = _cells(rng, 48)
    natural = fn([iv.from_bounds(lo[:, 0], hi[:, 0]), iv.from_bounds(lo[:, 1], hi[:, 1])])
    duals, _, _ = fn.duals_over_cells(lo, hi)
    exact = [_mp(e) for e in exprs] + [_mp(sp.diff(expr, X)), _mp(sp.diff(expr, Y))]
    checked = 0
    for k in range(lo.shape[0]):
        points = np.vstack([lo[k], hi[k], [lo[k, 0], hi[k, 1]], rng.uniform(lo[k], hi[k], size=(3, 2))])
        for p in points:
            for e in range(2):
                value = exact[e](p)
                for enclosure in (natural[e], duals[e].value):
                    if iv.finite(enclosure)[k]:
                        assert value is not None, f"{exprs[e]} enclosed on a cell where it is undefined at {p}"
                        assert _contains(enclosure.lo[k], enclosure.hi[k], value), (exprs[e], p, value)
                        checked += 1
            # the forward-mode gradient encloses both partial derivatives of the expression
            for j in range(2):
                g = duals[0].grad[j]
                if iv.finite(g)[k]:
                    value = exact[2 + j](p)
                    assert value is not None and _contains(g.lo[k], g.hi[k], value), (expr, j, p, value)
    assert checked > 0, f"no cell of {text} was enclosed"


#: 0·tan(x) + 1, unevaluated: set-based 0 × [−∞, ∞] is [0, 0], which would hide the pole
ZERO_TIMES_POLE = sp.Add(sp.Mul(sp.Integer(0), sp.tan(X), evaluate=False), sp.Integer(1), evaluate=False)


def test_undefined_points_leave_their_cells_without_enclosure_and_only_them():
    # IEEE 1788's set-based sqrt([-1, 1]) is [0, 1]; a cell where the expression is undefined
    # somewhere must instead have no enclosure (common practice in verified computing: decorations)
    # expression: (x-range of a cell where it is undefined somewhere, x-range of one where it is defined)
    cases = {"sqrt(x)": ((-1, 1), (0.6, 0.7)), "log(x)": ((0, 1), (0.6, 0.7)), "acos(x)": ((0.5, 2), (0.6, 0.7)),
             "1/x": ((-1, 1), (0.6, 0.7)), "x**(1/3)": ((-1, 1), (0.6, 0.7)), "tan(x)": ((1, 2), (0.6, 0.7)),
             sp.sign(X): ((-1, 1), (0.6, 0.7)), sp.DiracDelta(X): ((-1, 1), (0.6, 0.7)),
             "acosh(x)": ((0.5, 2), (1.6, 1.7)), "atanh(x)": ((0.5, 1), (0.6, 0.7)), "x**(-3)": ((0, 1), (0.6, 0.7)),
             "x**y": ((-1, 1), (0.6, 0.7)), ZERO_TIMES_POLE: ((1, 2), (0.6, 0.7)),
             sp.sec(X): ((1, 2), (0.6, 0.7)), sp.cot(X): ((-1, 1), (0.6, 0.7))}
    for text, ((a, b), (c, d)) in cases.items():
        expr = text if isinstance(text, sp.Expr) else parse_expression(text, {"x": X, "y": Y})
        fn = IntervalFunction([expr], (X, Y))
        lo = np.array([[a, 0.5], [c, 0.5], [a, 0.5]])
        hi = np.array([[b, 1.0], [d, 1.0], [b, 1.0]])
        for value in (fn([iv.from_bounds(lo[:, 0], hi[:, 0]), iv.from_bounds(lo[:, 1], hi[:, 1])])[0],
                      fn.over_cells(lo, hi)[0]):
            assert list(iv.finite(value)) == [False, True, False], (text, value)


def test_constants_are_enclosed_not_rounded():
    # 1/3, 1/10, pi and e are not binary floats: each must lie strictly inside its interval
    # (reference: Fraction for the rationals; mpmath's pi and e at 50 digits)
    for text, exact in (("x/3", Fraction(1, 3)), ("0.1*x", Fraction(1, 10)), ("2/7*x", Fraction(2, 7))):
        (value,) = IntervalFunction([parse_expression(text, {"x": X})], (X,))([iv.from_bounds([1.0], [1.0])])
        assert Fraction(value.lo[0]) < exact < Fraction(value.hi[0]), text
    with mpmath.workdps(50):
        for text, exact in (("pi*x", mpmath.pi), ("E*x", mpmath.e)):
            (value,) = IntervalFunction([parse_expression(text, {"x": X})], (X,))([iv.from_bounds([1.0], [1.0])])
            assert mpmath.mpf(value.lo[0]) < exact < mpmath.mpf(value.hi[0]), text
            assert value.hi[0] == np.nextafter(value.lo[0], np.inf)  # the tightest binary64 interval


def test_unsupported_nodes_are_refused():
    with pytest.raises(Unsupported):
        IntervalFunction([sp.gamma(X)], (X,))


def _power_cost():
    return costcheck.load(CATALOG / "euclidean/power-0.5.yaml")


def _random_cells(lo, hi, count, fraction, seed):
    rng = np.random.default_rng(seed)
    w = (hi - lo) * fraction
    a = lo + rng.random((count, lo.size)) * (hi - lo - w)
    return a, a + w


def test_field_enclosures_match_the_ball_compiler_in_layout_and_width():
    # the same fields in the same layout as FieldEnclosures (arb balls), and enclosures at least about
    # as narrow: IEEE 1788 powers are tight where arb's midpoint–radius forms are not
    cost = _power_cost()
    lo0, hi0 = np.array([-1.0] * 4), np.array([1.0] * 4)
    lo, hi = _random_cells(lo0, hi0, 24, 1 / 16, 3)
    cells = CellFieldEnclosures(cost, TENSOR_FIELDS).duals_on_cells(lo, hi)[0]
    balls_fe = FieldEnclosures(cost, TENSOR_FIELDS)
    ratios = []
    for k in range(lo.shape[0]):
        arb_fields, _, _ = balls_fe.duals_on_cell(lo[k], hi[k])
        if arb_fields is None:
            assert not cells.enclosed[k]
            continue
        assert cells.enclosed[k]
        for name in TENSOR_FIELDS:
            ours = cells.array(name)
            flat = np.array(arb_fields[name], dtype=object).reshape(-1)
            for index, ball in enumerate(flat):
                a, b = balls.lower(ball.value), balls.upper(ball.value)
                entry = np.unravel_index(index, ours.shape[1:])
                o_lo, o_hi = ours.lo[(k, *entry)], ours.hi[(k, *entry)]
                # the two rigorous enclosures must overlap (both contain the exact range)
                assert o_lo <= b and a <= o_hi, (name, entry)
                ratios.append((o_hi - o_lo) / max(b - a, 1e-300))
    ratios = np.array(ratios)
    assert ratios.size > 100
    assert np.median(ratios) <= 1.01 and ratios.max() <= 1.5, (np.median(ratios), ratios.max())


def test_field_enclosures_contain_mpmath_values_of_the_power_costs_derivatives():
    # reference: the symbolic derivatives evaluated by mpmath at 40 digits at random points of each cell
    from costcheck.derivatives.sympy_backend import symbolic_derivatives

    cost = _power_cost()
    lo, hi = _random_cells(np.array([-1.0] * 4), np.array([1.0] * 4), 40, 1 / 8, 5)
    cells = CellFieldEnclosures(cost, ("dxy", "dxxyy")).over_cells(lo, hi)
    sym = symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 4)
    symbols = tuple(cost.x_symbols) + tuple(cost.y_symbols)
    entries = {"dxy": (0, 1), "dxxyy": (0, 1, 1, 0)}
    rng = np.random.default_rng(9)
    hits = 0
    for name, index in entries.items():
        e = sym[name]
        for i in index:
            e = e[i]
        fn = sp.lambdify(symbols, e, modules="mpmath")
        ours = cells[name]
        for i in index:
            ours = ours[i]
        for k in np.flatnonzero(cells.enclosed):
            for p in rng.uniform(lo[k], hi[k], size=(3, 4)):
                with mpmath.workdps(40):
                    exact = fn(*(mpmath.mpf(float(v)) for v in p))
                assert _contains(ours.lo[k], ours.hi[k], exact), (name, p)
                hits += 1
    assert hits > 30


def test_quantities_on_interval_duals_enclose_the_mpmath_determinant():
    # the conditions' algebra (quantities.det) runs unchanged on IntervalDual numbers; the mean-value
    # form at the quantity level (tighten) still contains mpmath's det D²_xy c at points of each cell
    cost = _power_cost()
    lo, hi = _random_cells(np.array([-1.0] * 4), np.array([1.0] * 4), 30, 1 / 8, 11)
    enclosures = CellFieldEnclosures(cost, ("dxy",))
    over, mid, offsets = enclosures.duals_on_cells(lo, hi)
    d = quantities.det(over["dxy"])
    assert isinstance(d, IntervalDual)
    tight = tighten(d, quantities.det(mid["dxy"]), offsets)
    from costcheck.derivatives.sympy_backend import symbolic_derivatives

    M = sp.Matrix(symbolic_derivatives(cost.expr, cost.x_symbols, cost.y_symbols, 2)["dxy"])
    fn = sp.lambdify(tuple(cost.x_symbols) + tuple(cost.y_symbols), M.det(), modules="mpmath")
    rng = np.random.default_rng(2)
    for k in np.flatnonzero(iv.finite(tight)):
        assert tight.hi[k] - tight.lo[k] <= d.value.hi[k] - d.value.lo[k]
        for p in rng.uniform(lo[k], hi[k], size=(3, 4)):
            with mpmath.workdps(40):
                exact = fn(*(mpmath.mpf(float(v)) for v in p))
            assert _contains(tight.lo[k], tight.hi[k], exact)


def test_one_cell_batch_agrees_with_the_ball_compiler():
    # a batch of one behaves as arb_eval's over_box on the same cell: overlapping enclosures
    expr = parse_expression("exp(x)*cos(y) - sinh(x*y)", {"x": X, "y": Y})
    lo, hi = np.array([[0.1, -0.4]]), np.array([[0.3, -0.1]])
    (ours,) = IntervalFunction([expr], (X, Y)).over_cells(lo, hi)
    (ball,) = BallFunction([expr], (X, Y)).over_box(lo[0], hi[0])
    assert ours.lo[0] <= balls.upper(ball) and balls.lower(ball) <= ours.hi[0]
    assert ours.hi[0] - ours.lo[0] <= 1.01 * (balls.upper(ball) - balls.lower(ball))


def _separately(fn, lo, hi):
    """The three passes apart, as the evaluator ran them before the one-pass route: natural values and
    gradients (``with_gradients``), the values at the middles (``__call__``), then ``tighten``."""
    from costcheck.certify.interval_eval import cell_offsets

    natural, gradients = fn.with_gradients([iv.from_bounds(lo[:, j], hi[:, j]) for j in range(lo.shape[1])])
    middle, offsets = cell_offsets(lo, hi)
    at_middle = fn([iv.from_bounds(middle[:, j], middle[:, j]) for j in range(lo.shape[1])])
    tight = [tighten(IntervalDual(v, g), m, offsets) for v, g, m in zip(natural, gradients, at_middle)]
    return tight, gradients, at_middle, middle


def _same(a, b) -> bool:
    return np.array_equal(a.lo, b.lo, equal_nan=True) and np.array_equal(a.hi, b.hi, equal_nan=True)


@pytest.mark.parametrize("text", TEXTS + EXTRA, ids=str)
def test_one_pass_route_gives_the_separate_passes_enclosures(text):
    # the one-pass evaluator (interval_rows: value, middle value and gradient stacked) runs the same
    # interval operations on the same operands as the three passes apart, so its enclosures are the
    # same floats.  The one exception allowed: an integer power's choice between repeated squaring and
    # pown is made over the whole array, so the middle values may take the other (also tight) route;
    # there the middle value must still hold the exact value (mpmath, 40 digits).
    expr = text if isinstance(text, sp.Expr) else parse_expression(text, {"x": X, "y": Y})
    exprs = [expr, sp.diff(expr, X), sp.diff(expr, X, Y)]
    fn = IntervalFunction(exprs, (X, Y))
    lo, hi = _cells(np.random.default_rng(sum(map(ord, str(text))) + 1), 64)
    duals, at_middle, _ = fn.duals_over_cells(lo, hi)
    tight, gradients, middles, points = _separately(fn, lo, hi)
    for e, expression in enumerate(exprs):
        assert _same(duals[e].grad, iv.broadcast(gradients[e], duals[e].grad.lo.shape)), (expression, "gradient")
        if _same(at_middle[e], middles[e]):
            assert _same(duals[e].value, tight[e]), (expression, "value")
            continue
        exact = _mp(expression)
        for k in np.flatnonzero(~((at_middle[e].lo == middles[e].lo) & (at_middle[e].hi == middles[e].hi))):
            value = exact(points[k])
            if iv.finite(at_middle[e])[k]:
                assert value is not None and _contains(at_middle[e].lo[k], at_middle[e].hi[k], value), expression


def test_one_pass_route_on_the_certify_benchmark_fields():
    # the bench's cells (catalog/euclidean/power-0.5.yaml, TENSOR_FIELDS): every value, middle value and
    # gradient the same floats as the separate passes
    from costcheck.bench import certify_cells

    cost = costcheck.load(CATALOG / "euclidean/power-0.5.yaml")
    fn = CellFieldEnclosures(cost, TENSOR_FIELDS).function
    lo, hi = certify_cells(cost, 300, seed=7)
    duals, at_middle, _ = fn.duals_over_cells(lo, hi)
    tight, gradients, middles, _ = _separately(fn, lo, hi)
    assert all(_same(d.value, t) and _same(d.grad, g) and _same(a, m)
               for d, t, g, a, m in zip(duals, tight, gradients, at_middle, middles))
