"""One pass of a straight-line program over many cells: value, middle value and gradient in one array.

:meth:`.interval_eval.IntervalFunction.duals_over_cells` needs, for every cell ``B`` of a batch
of ``N`` cells in ``d`` variables, three things of each expression: its natural enclosure over
``B``, its enclosure at the cell's middle point ``m``, and its gradient's natural enclosure over
``B`` (forward-mode differentiation), for the mean-value form
``f(B) ⊂ f(m) + ∇f(B)·(B − m)`` (Moore, Kearfott and Cloud, *Introduction to Interval Analysis*,
SIAM 2009, §6.4).  Here every register of the program holds all three as one ``ival`` array of
shape ``(d + 2, N)``: row 0 the value over ``B``, row 1 the value at ``m``, rows ``2 …`` the
gradient.  A constant stays one scalar interval (no gradient).

Each interval operation costs ival a fixed ~10 µs of Python and ctypes, then ~1–5 ns per
interval (more when its operands have left the cache), so on a batch of a few thousand cells
both the number of calls and the working set count: a register is dropped after the last step
that reads it (measured on 2,000 cells of the power cost's fields: kept to the end, the
registers took ~30 MB and the pass ran 1.4× slower, 2.8× on 8,000 cells).  Stacked, a
sum is one call over all rows; a product by a constant is one call (``c·value``, ``c·middle
value``, ``c·gradient``); a function is one call for its value over ``B`` and at ``m`` together,
and its derivative and chain rule on the gradient rows.  The interval arithmetic of every entry
is the one of evaluating the three separately (the same operations on the same operands, in the
same order): only the number of calls changes — except that an integer power's choice between
repeated squaring and 1788's pown (both tight) is made over the value and middle rows together.
``tests/test_interval_eval.py`` compares the two routes cell by cell.
"""

from __future__ import annotations

import operator
from fractions import Fraction

import ival
import numpy as np
from ival import Interval

from . import intervals as iv
from .interval_dual import repeat_rows
from .interval_ops import UNARY, chain, ipow, real_power, rpow, step_value

__all__ = ["Jet", "last_uses", "mean_value_form", "output_parts", "stacked_registers"]


class Jet:
    """A step's two value rows and its gradient rows computed apart (an operation's result before it is
    stored as one ``(d + 2, N)`` register); the helpers below read either form."""

    __slots__ = ("values", "grad")

    def __init__(self, values: Interval, grad: Interval):
        self.values, self.grad = values, grad


def _is_constant(x) -> bool:
    return isinstance(x, Interval) and np.ndim(x.lo) == 0


def _stacked(x) -> bool:
    return isinstance(x, Interval) and np.ndim(x.lo) != 0


def _values(x) -> Interval:
    """The value over the cell and at its middle (rows 0 and 1), or the constant itself."""
    if isinstance(x, Jet):
        return x.values
    return x if _is_constant(x) else iv.make(x.lo[:2], x.hi[:2])


def _grad(x) -> Interval:
    """The gradient rows (views, no copy)."""
    return x.grad if isinstance(x, Jet) else iv.make(x.lo[2:], x.hi[2:])


def _box(x) -> Interval:
    """The value over the cell (row 0), or the constant itself."""
    if _is_constant(x):
        return x
    v = _values(x)
    return iv.make(v.lo[0], v.hi[0])


def _scale(partial: Interval, register) -> Interval:
    """``partial · ∇`` of a register: one interval per cell spread over the gradient rows."""
    gradient = _grad(register)
    return repeat_rows(partial, gradient) * gradient


def _add(a, b):
    if _is_constant(a) and _is_constant(b):
        return a + b
    if _is_constant(b):  # a constant moves the values only
        return Jet(_values(a) + b, _grad(a))
    if _is_constant(a):
        return Jet(a + _values(b), _grad(b))
    if _stacked(a) and _stacked(b):
        return a + b  # values, middle values and gradients in one call
    return Jet(_values(a) + _values(b), _grad(a) + _grad(b))


def _product(args: list):
    """``Π a_i`` and ``Σ_i (Π_{j≠i} a_j) ∇a_i``: the partial products from prefix products (over the cell
    and at the middle at once: the last one is the value) and suffix products (over the cell only)."""
    varying = [i for i, a in enumerate(args) if not _is_constant(a)]
    if not varying:
        return chain(args, operator.mul)
    if len(args) == 2 and len(varying) == 1:
        c, x = (args[0], args[1]) if varying == [1] else (args[1], args[0])
        if _stacked(x):
            return args[0] * args[1]  # c·(value, middle value, gradient): one call
        return Jet(_values(args[0]) * _values(args[1]), c * x.grad)
    k = len(args)
    prefix = [None] * (k + 1)
    for i, a in enumerate(args):
        prefix[i + 1] = _values(a) if prefix[i] is None else prefix[i] * _values(a)
    suffix = [None] * (k + 1)
    for i in range(k - 1, varying[0], -1):  # only as far down as a partial product reads them
        suffix[i] = _box(args[i]) if suffix[i + 1] is None else _box(args[i]) * suffix[i + 1]
    gradient = None
    for i in varying:
        before, after = prefix[i], suffix[i + 1]
        before = None if before is None else _box(before)
        partial = after if before is None else (before if after is None else before * after)
        term = _scale(partial, args[i])
        gradient = term if gradient is None else gradient + term
    return Jet(prefix[k], gradient)


def _step(op: str, args: list, extra: tuple, constants: list, d: int) -> Interval:
    if op == "constant" or all(_is_constant(a) for a in args):
        return step_value(op, args, extra, constants)
    if op == "sum":
        return chain(args, _add)
    if op == "product":
        return _product(args)
    if op == "power":
        base, exponent = args
        values = real_power(_values(base), _values(exponent))
        value, b, e = _box(values), _box(base), _box(exponent)
        gradient = None
        if not _is_constant(base):
            gradient = _scale(iv.bounded_only(e * value / b), base)
        if not _is_constant(exponent):
            term = _scale(iv.undefined_where(ival.log(b) * value, ~(b.lo > 0)), exponent)
            gradient = term if gradient is None else gradient + term
        return Jet(values, gradient)
    (x,) = args
    values = step_value(op, [_values(x)], extra, constants)
    box = _box(x)
    if op == "ipow":
        k = extra[0]
        derivative = k * ipow(box, k - 1)
    elif op == "rpow":
        p, q = extra
        derivative = Interval(Fraction(p, q)) * rpow(box, p - q, q)
    else:
        derivative = UNARY[op][1](box, _box(values))
    return Jet(values, _scale(derivative, x))


def _stacked_register(r):
    """A :class:`Jet` joined into one ``(d + 2, N)`` array: measured ~0.5 ms faster per 2,000 cells than
    keeping the two parts (a later sum or product by a constant is then one call, not two)."""
    if isinstance(r, Jet):
        return iv.make(np.concatenate((r.values.lo, r.grad.lo)), np.concatenate((r.values.hi, r.grad.hi)))
    return r


def stacked_registers(program, constants: list, lo: np.ndarray, hi: np.ndarray, middle: np.ndarray,
                      last: list | None = None) -> list:
    """Every register of ``program`` over the cells ``[lo[k], hi[k]]`` with middle points ``middle[k]``
    (arrays of shape ``(N, d)``): a ``(d + 2, N)`` interval array (value, middle value, gradient rows)
    for a step that depends on the variables, the scalar interval of a constant; a register no later
    step reads is ``None``.  ``last`` is
    :func:`last_uses` of the program (computed here when not given)."""
    n, d = lo.shape
    unit = np.eye(d)[:, :, None] * np.ones(n)  # unit[j] = ∇x_j, rows of shape (d, N)
    registers = []
    for j in range(d):
        registers.append(iv.make(np.concatenate((lo[None, :, j], middle[None, :, j], unit[j])),
                                 np.concatenate((hi[None, :, j], middle[None, :, j], unit[j]))))
    last = last_uses(program) if last is None else last
    with np.errstate(invalid="ignore"):
        for s, (op, args, extra) in enumerate(program.steps):
            registers.append(_stacked_register(_step(op, [registers[a] for a in args], extra, constants, d)))
            for a in last[s]:  # freed as soon as no later step reads them: a small working set, reused
                registers[a] = None
    return registers


def last_uses(program) -> list[tuple]:
    """Per step, the registers it reads for the last time (never an output): the evaluation drops them
    there.  Each ``(d + 2, N)`` register is ~0.1 MB per 1,000 cells; kept to the end, a 171-step
    program's ~30 MB were fresh pages for every batch (measured: 11,000 page faults per call on 2,000
    cells, more time than the arithmetic)."""
    keep = set(program.outputs)
    seen: set = set()
    out = []
    for op, args, extra in reversed(program.steps):
        out.append(tuple(a for a in set(args) if a not in seen and a not in keep))
        seen.update(args)
    return out[::-1]


def output_parts(registers: list, indices, n: int, d: int) -> tuple:
    """The output registers as ``(values, middles, gradients, by_row)``: the values over the cells and at
    their middles as ``(E, N)`` interval arrays, each output's gradient as its own ``(d, N)`` interval
    array (the register's, not copied) and all gradients again as one ``(d, E, N)`` array (row ``j`` of
    every output contiguous, for the mean-value form).  A constant has zero gradient."""
    e_count = len(indices)
    v_lo, v_hi = np.empty((2, e_count, n)), np.empty((2, e_count, n))
    g_lo, g_hi = np.empty((d, e_count, n)), np.empty((d, e_count, n))
    gradients = []
    for e, i in enumerate(indices):
        r = registers[i]
        if _is_constant(r):
            v_lo[:, e], v_hi[:, e] = r.lo, r.hi
            g_lo[:, e], g_hi[:, e] = 0.0, 0.0
            gradients.append(iv.make(np.zeros((d, n)), np.zeros((d, n))))
            continue
        values, grad = _values(r), _grad(r)
        v_lo[:, e], v_hi[:, e] = values.lo, values.hi
        g_lo[:, e], g_hi[:, e] = grad.lo, grad.hi
        gradients.append(grad)
    return (iv.make(v_lo[0], v_hi[0]), iv.make(v_lo[1], v_hi[1]), gradients, iv.make(g_lo, g_hi))


def mean_value_form(middles: Interval, by_row: Interval, offsets: Interval) -> Interval:
    """``q(m) + Σ_j ∂_j q(B)·(B − m)_j`` for every output at once, summed in the order of the rows (as
    :func:`.interval_dual.tighten` does), one ``(E, N)`` row of products at a time."""
    total = middles
    for j in range(np.shape(by_row.lo)[0]):
        total = total + iv.make(by_row.lo[j], by_row.hi[j]) * iv.make(offsets.lo[j], offsets.hi[j])
    return total
