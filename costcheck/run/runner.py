"""Run every condition check on one cost and compare with the file's expectations.

Each condition is a module of :mod:`costcheck.conditions` exposing ``CONDITION`` (its
name) and ``check(ctx) -> Verdict``; :data:`costcheck.conditions.REGISTRY` lists them in
the order reports show them.
"""

from __future__ import annotations

import importlib
import time
from typing import TYPE_CHECKING, Callable, Sequence

from ..conditions import REGISTRY
from ..model.verdict import CostReport, Verdict, undecided
from ..defaults import DEFAULT_BUDGET, DEFAULT_SEED

if TYPE_CHECKING:  # the checks' machinery (sympy, SciPy) is imported when checks run, not before
    from ..model.cost import Cost

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
    from ..conditions.context import CheckContext

    if isinstance(prove, dict):
        prove = ProofOptions(**prove)
    elif prove is True:
        prove = ProofOptions()
    elif not prove:
        prove = None

    started = time.perf_counter()
    ctx = CheckContext(cost=cost, seed=seed, budget=budget, backend=backend)
    verdicts: dict[str, Verdict] = {}
    # always in the registry's order, whatever order they were asked in: a later check may read an
    # earlier one's verdict (Loeper's principle at MTW's witness), so the order is part of the evidence
    order = list(REGISTRY)
    names = sorted(conditions, key=lambda c: order.index(c) if c in order else len(order)) if conditions else order
    for name in names:
        if on_progress:
            on_progress(name)
        module = importlib.import_module(f"costcheck.conditions.{REGISTRY[name]}")
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
        ctx.verdicts[name] = verdict
    options = {"budget": budget, "seed": seed, "backend": backend}
    if prove is not None:
        options["prove"] = prove.to_json()
    return CostReport(cost, verdicts, time.perf_counter() - started, options)
