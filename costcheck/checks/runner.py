"""Run every condition check on one cost and compare with the file's expectations.

Each condition is a module of :mod:`costcheck.checks` exposing ``CONDITION`` (its
name) and ``check(ctx) -> Verdict``; :data:`CONDITION_MODULES` lists them in the
order reports show them.
"""

from __future__ import annotations

import importlib
import time
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Callable, Sequence

from ..verdict import Verdict, undecided
from .defaults import DEFAULT_BUDGET, DEFAULT_SEED  # noqa: F401 - DEFAULT_SEED re-exported

if TYPE_CHECKING:  # the checks' machinery (sympy, SciPy) is imported when checks run, not before
    from ..cost import Cost

#: condition name → module under costcheck.checks
CONDITION_MODULES: dict[str, str] = {
    "nondegenerate": "nondegeneracy",
    "twist": "twist",
    "mtw": "mtw",
    "nncc": "nncc",
    "target_c_convex": "target_c_convex",
    "source_c_convex": "source_c_convex",
    "loeper": "loeper",
    "index_form": "index_form",
    "nested": "nested",
}


@dataclass(frozen=True)
class Mismatch:
    condition: str
    expected: str
    got: str


@dataclass
class CostReport:
    #: the cost checked; for a result read from the cache, a :class:`~costcheck.header.CostHeader`
    #: (the file's names, expectations and labels, no expression): renderers read only those
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
    prove=None,
) -> CostReport:
    """All (or the named) condition checks of ``cost``, reproducible for a given ``seed``.

    Every failure witness goes through :func:`costcheck.certify.certify_refutation`; with
    ``prove`` (a :class:`costcheck.certify.ProofOptions`, a dict of its fields, or True for the
    defaults) sampled "holds" verdicts are also
    offered to :func:`costcheck.certify.strengthen`.
    """
    from ..certify import ProofOptions, certify_refutation, strengthen
    from .context import CheckContext

    if isinstance(prove, dict):
        prove = ProofOptions(**prove)
    elif prove is True:
        prove = ProofOptions()
    elif not prove:
        prove = None

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
        verdict = certify_refutation(ctx, module.check(ctx))
        if prove is not None:
            if on_progress:
                on_progress(f"{name}: proof")
            verdict = strengthen(ctx, verdict, prove)
        verdicts[name] = verdict
    options = {"budget": budget, "seed": seed, "backend": backend}
    if prove is not None:
        options["prove"] = prove.to_json()
    return CostReport(cost, verdicts, time.perf_counter() - started, options)
