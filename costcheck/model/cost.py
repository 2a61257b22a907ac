"""The validated, symbolic form of one cost: what every later step of the pipeline reads.

A :class:`Cost` is always a cost to be *minimised*: a surplus ``s`` from a file with
``sense: surplus`` is stored as ``c = -s`` (the sign convention of docs/conditions.md), and
``sense`` is kept only so reports can say what the user wrote.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Mapping

import sympy as sp

from .domain import Domain
from .header import CostLabels


@dataclass(frozen=True)
class GeneratingSpec:
    """The third variable of a generating function ``G(x, y, z)``: its name and range.

    A :class:`Cost` with ``generating`` set holds ``G`` itself in ``expr`` (not a cost: no sign is
    flipped) and lists ``z`` as the last of ``y_names``, so samples and witnesses carry ``(y, z)``.
    """

    z: str
    low: float
    high: float


@dataclass(frozen=True)
class Cost(CostLabels):
    id: str
    x_names: tuple[str, ...]
    y_names: tuple[str, ...]
    domain: Domain
    #: the cost to minimise, parameters substituted; ``None`` for a Python-function cost
    expr: sp.Expr | None
    #: a JAX-traceable ``f(x, y)`` returning the cost to minimise, for Python-function costs
    function: Callable | None = None
    title: str = ""
    sense: str = "cost"
    params: Mapping[str, sp.Expr] = field(default_factory=dict)
    #: the expression as written (before the sign of ``sense``), with helpers expanded
    written_expr: sp.Expr | None = None
    expect: Mapping[str, str] = field(default_factory=dict)
    source: str | None = None
    file: str | None = None
    raw: Mapping | None = field(default=None, repr=False, compare=False)
    #: the two distributions of a matching model (``data:``), a :class:`costcheck.spec.data.DataSpec`
    data: object | None = field(default=None, repr=False, compare=False)
    #: in a sweep: ``(expression with the varied parameters as symbols, ((symbol, value), ...))``, so
    #: the symbolic derivatives and their compiled form are shared by every value of the family
    family: tuple | None = field(default=None, repr=False, compare=False)
    #: set for a generating function ``G(x, y, z)`` (``expr`` is then ``G``; ``z`` ends ``y_names``)
    generating: GeneratingSpec | None = None

    @property
    def x_symbols(self) -> tuple[sp.Symbol, ...]:
        return tuple(sp.Symbol(name, real=True) for name in self.x_names)

    @property
    def y_symbols(self) -> tuple[sp.Symbol, ...]:
        return tuple(sp.Symbol(name, real=True) for name in self.y_names)

    def derivatives(self, backend: str = "sympy", order: int = 4):
        """Vectorised evaluator of the cost and its mixed derivatives (see :mod:`costcheck.derivatives`)."""
        from ..derivatives import make_evaluator

        return make_evaluator(self, backend=backend, order=order)
