"""Enclosures of a cost's derivative fields over many cells at once (interval arrays, ``ival``).

The array counterpart of :class:`.enclosures.FieldEnclosures`: the same fields, the same index
layout (``dxy[i][k] = ∂²c/∂x_i∂y_k`` …, as :class:`costcheck.derivatives.Derivatives`), but each
entry is one :class:`ival.Interval` array holding an enclosure for every cell of a batch,
evaluated by :mod:`.interval_eval` in one pass.  Cells are given as two float arrays ``lo``,
``hi`` of shape ``(N, d)``.

A cell with an entry that is empty or unbounded has *no enclosure*: ``enclosed[k]`` is False,
and such a cell must stay undecided (the other cells of the batch are unaffected).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np
from ival import Interval

from . import intervals as iv
from .enclosures import flat_fields
from .interval_dual import IntervalDual
from .interval_eval import compile_interval_exprs


@dataclass
class CellFields:
    """Field name → nested lists (the field's shape) of per-cell objects: :class:`ival.Interval` arrays
    of shape ``(N,)``, or :class:`.interval_dual.IntervalDual` over them; ``enclosed`` marks the cells
    where every entry is enclosed (finite and non-empty)."""

    fields: dict
    enclosed: np.ndarray

    def __getitem__(self, name):
        return self.fields[name]

    def array(self, name: str) -> Interval:
        """The field as one interval array of shape ``(N, *field shape)`` (values of duals)."""
        entries, shape = _flatten(self.fields[name])
        n = self.enclosed.shape[0]
        values = [e.value if isinstance(e, IntervalDual) else e for e in entries]
        los = [np.broadcast_to(v.lo, (n,)) for v in values]
        his = [np.broadcast_to(v.hi, (n,)) for v in values]
        return iv.make(np.stack(los, axis=-1).reshape((n,) + shape), np.stack(his, axis=-1).reshape((n,) + shape))


def nest(flat: list, shape: tuple) -> list:
    """A row-major flat list as nested lists of the given shape (no NumPy: an Interval looks like a sequence)."""
    if len(shape) <= 1:
        return list(flat)
    step = len(flat) // shape[0]
    return [nest(flat[k * step:(k + 1) * step], shape[1:]) for k in range(shape[0])]


def _flatten(nested) -> tuple[list, tuple]:
    if not isinstance(nested, list):
        return [nested], ()
    parts = [_flatten(item) for item in nested]
    return [e for p, _ in parts for e in p], (len(nested),) + parts[0][1]


class CellFieldEnclosures:
    """Enclosures of the named derivative fields over arrays of cells (natural and mean-value forms)."""

    def __init__(self, cost, fields: Sequence[str], substitution: dict | None = None,
                 symbols: Sequence | None = None):
        """``substitution`` rewrites the derivatives into other variables ``symbols`` (default: x, then y)."""
        self.fields = tuple(fields)
        flat, self._layout, self._shapes = flat_fields(cost, self.fields, substitution)
        variables = tuple(symbols) if symbols is not None else tuple(cost.x_symbols) + tuple(cost.y_symbols)
        self.function = compile_interval_exprs(tuple(flat), variables)

    def _arrange(self, values: list, n: int) -> CellFields:
        enclosed = np.ones(n, dtype=bool)
        for v in values:
            enclosed &= v.finite() if isinstance(v, IntervalDual) else iv.finite(v)
        out = {}
        for name in self.fields:
            out[name] = nest([values[i] for i in self._layout[name]], self._shapes[name])
        return CellFields(out, enclosed)

    def at_points(self, points: np.ndarray) -> CellFields:
        """Enclosures at points (an ``(N, d)`` float array): thin intervals around the exact values."""
        points = np.asarray(points, dtype=np.float64)
        values = self.function([iv.from_bounds(points[:, j], points[:, j]) for j in range(points.shape[1])])
        return self._arrange(values, points.shape[0])

    def natural(self, lo: np.ndarray, hi: np.ndarray) -> CellFields:
        """Natural interval enclosures over the cells ``[lo[k], hi[k]]``."""
        lo, hi = np.asarray(lo, dtype=np.float64), np.asarray(hi, dtype=np.float64)
        values = self.function([iv.from_bounds(lo[:, j], hi[:, j]) for j in range(lo.shape[1])])
        return self._arrange(values, lo.shape[0])

    def over_cells(self, lo: np.ndarray, hi: np.ndarray) -> CellFields:
        """Enclosures over the cells: natural ∩ mean-value form, entry by entry."""
        return self._arrange(self.function.over_cells(lo, hi), np.shape(lo)[0])

    def duals_on_cells(self, lo: np.ndarray, hi: np.ndarray) -> tuple[CellFields, CellFields, Interval]:
        """``(fields as duals over the cells, fields at their middles, offsets B − m)``.

        As :meth:`.enclosures.FieldEnclosures.duals_on_cell` for a whole batch: each entry's value is
        already tightened by its mean-value form and its gradient is the natural enclosure (a
        ``(d, N)`` interval array); the offsets are ``(d, N)`` intervals.  ``enclosed`` of the first
        marks the cells where every value and gradient is enclosed.
        """
        duals, at_middle, offsets = self.function.duals_over_cells(lo, hi)
        n = np.shape(lo)[0]
        return self._arrange(duals, n), self._arrange(at_middle, n), offsets
