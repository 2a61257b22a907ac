"""What every condition check receives: the cost, its evaluators, and the shared sample.

Building the derivative evaluators and evaluating them on the sample is the
expensive common part; it is done once per cost and handed to each check.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from ..defaults import DEFAULT_LEVELS
from ..derivatives.fields import Derivatives, Evaluator
from ..derivatives.mp_backend import HighPrecision, high_precision
from ..certify.preparation import ProofPreparation
from ..model.cost import Cost
from ..numerics import precision
from ..numerics.sampling import PairSample, sample_pairs


@dataclass
class CheckContext:
    cost: Cost
    seed: int
    budget: int
    backend: str = "sympy"
    #: nestedness: levels of y, and cells per axis of a source density (None: the default rule)
    levels: int = DEFAULT_LEVELS
    grid: int | None = None
    #: evaluators by derivative order, built on first use
    _evaluators: dict = field(default_factory=dict, repr=False)
    #: ``(mpmath evaluator or None, reason)`` by derivative order, tried on first use
    _usable_hp: dict = field(default_factory=dict, repr=False)
    #: the (certified) verdicts of the conditions already checked on this cost, by name; a check
    #: that cross-examines another (Loeper's principle at MTW's witness) reads it, and must work
    #: without it (``--only``)
    verdicts: dict = field(default_factory=dict, repr=False)

    def evaluator(self, order: int = 4) -> Evaluator:
        """Derivatives up to at least ``order``, built once and kept.

        With sympy a low-order evaluator is cheap to build and much cheaper to call, so each
        order gets its own.  With a JIT backend every new evaluator is a new compilation, so an
        existing one of a higher order is re-used, and a new one is built at the context's order.
        """
        if order in self._evaluators:
            return self._evaluators[order]
        if self.backend != "sympy":
            higher = [k for k in self._evaluators if k >= order]
            if higher:
                return self._evaluators[min(higher)]
            order = max(order, self.order)
        self._evaluators[order] = self.cost.derivatives(backend=self.backend, order=order)
        return self._evaluators[order]

    def rng(self, salt: int) -> np.random.Generator:
        """An independent, reproducible random stream for one check (``salt`` names the check)."""
        return np.random.default_rng([self.seed, salt])

    @cached_property
    def sample(self) -> PairSample:
        return sample_pairs(self.cost.domain, self.cost.n, self.cost.m, self.budget, self.seed)

    @cached_property
    def order(self) -> int:
        # fourth derivatives are only needed for the MTW tensor, which needs n == m (or a generating
        # function, whose effective fields are n × n: costcheck.derivatives.generating)
        return 4 if self.cost.n == self.cost.m or self.cost.generating is not None else 2

    @cached_property
    def derivs(self) -> Derivatives:
        """Derivatives at every sampled pair (NaN where the cost is undefined)."""
        return self.evaluator(self.order)(self.sample.xs, self.sample.ys)

    @cached_property
    def defined(self) -> np.ndarray:
        return self.derivs.defined

    def usable_high_precision(self, order: int) -> tuple:
        """``(evaluator, None)`` if the mpmath derivatives up to ``order`` evaluate at a defined sample,
        else ``(None, reason)``; tried once per order."""
        if order not in self._usable_hp:
            i = int(np.argmax(self.defined))
            self._usable_hp[order] = precision.usable_high_precision(self.cost, order, self.sample.xs[i],
                                                                     self.sample.ys[i])
        return self._usable_hp[order]

    @cached_property
    def proof_preparation(self) -> ProofPreparation:
        """The proof spaces the conditions of this cost share (built on first use, dropped with the run)."""
        return ProofPreparation(self.cost)

    @cached_property
    def high_precision(self) -> HighPrecision | None:
        """mpmath evaluator of the same derivatives, for confirming witnesses (None for function costs)."""
        return high_precision(self.cost, self.order)
