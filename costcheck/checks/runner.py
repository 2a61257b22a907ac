"""Run every condition check on one cost and compare with the file's expectations.

Each condition is a module of :mod:`costcheck.checks` exposing ``CONDITION`` (its
name) and ``check(ctx) -> Verdict``; :data:`CONDITION_MODULES` lists them in the
order reports show them.
"""

from __future__ import annotations

import importlib
import time
from dataclasses import dataclass, field
from typing import Callable, Sequence

from ..cost import Cost
from ..verdict import Verdict, undecided
from .context import CheckContext
from .sampler import DEFAULT_BUDGET

#: condition name → module under costcheck.checks
CONDITION_MODULES: dict[str, str] = {
    "nondegenerate": "nondegeneracy",
    "twist": "twist",
    "mtw": "mtw",
    "nncc": "nncc",
    "target_c_convex": "target_c_convex",
    "source_c_convex": "source_c_convex",
    "loeper": "loeper",
}

DEFAULT_SEED = 20261201


@dataclass(frozen=True)
class Mismatch:
    condition: str
    expected: str
    got: str


@dataclass
class CostReport:
    cost: Cost
    verdicts: dict[str, Verdict]
    seconds: float
    options: dict = field(default_factory=dict)

    @property
    def mismatches(self) -> list[Mismatch]:
        out = []
        for condition, expected in self.cost.expect.items():
            verdict = self.verdicts.get(condition)
            got = verdict.verdict if verdict else "not run"
            if got != expected:
                out.append(Mismatch(condition, expected, got))
        return out


def run_checks(
    cost: Cost,
    *,
    budget: int = DEFAULT_BUDGET,
    seed: int = DEFAULT_SEED,
    backend: str = "sympy",
    conditions: Sequence[str] | None = None,
    on_progress: Callable[[str], None] | None = None,
) -> CostReport:
    """All (or the named) condition checks of ``cost``, reproducible for a given ``seed``."""
    started = time.perf_counter()
    ctx = CheckContext(cost=cost, seed=seed, budget=budget, backend=backend)
    verdicts: dict[str, Verdict] = {}
    for name in conditions or CONDITION_MODULES:
        if on_progress:
            on_progress(name)
        module = importlib.import_module(f"{__package__}.{CONDITION_MODULES[name]}")
        if ctx.sample.count == 0 or not ctx.defined.any():
            verdicts[name] = undecided(name, "no sampled pair lies where the cost is defined (inside the domain "
                                             "and with finite derivatives); check the expression and the domain")
            continue
        verdicts[name] = module.check(ctx)
    return CostReport(cost, verdicts, time.perf_counter() - started,
                      {"budget": budget, "seed": seed, "backend": backend})
