"""Run every condition check on one cost and compare with the file's expectations.

Each condition is a module of :mod:`costcheck.conditions` exposing ``CONDITION`` (its
name) and ``check(ctx) -> Verdict``; :data:`costcheck.conditions.REGISTRY` lists them in
the order reports show them.
"""

from __future__ import annotations

import importlib
import time
from typing import TYPE_CHECKING, Callable, Sequence

from ..conditions import GENERATING, REGISTRY
from .. import defaults
from ..model.report import CostReport
from ..model.verdict import Verdict, undecided
from ..defaults import DEFAULT_BUDGET, DEFAULT_SEED
from ..numerics.bounded import within
from . import numeric_warnings

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
    levels: int = defaults.DEFAULT_LEVELS,
    grid: int | None = None,
) -> CostReport:
    """All (or the named) condition checks of ``cost``, reproducible for a given ``seed``.

    Every failure witness goes through :func:`costcheck.certify.certify_refutation`; with
    ``prove`` (a :class:`costcheck.certify.ProofOptions`, a dict of its fields, or True for the
    defaults) sampled "holds" verdicts are also
    offered to :func:`costcheck.certify.strengthen`.  ``levels`` and ``grid`` are nestedness's
    (levels of ``y``; cells per axis of a source density, None for the default rule).
    """
    from ..certify import ProofOptions, certify_refutation, strengthen
    from ..conditions.context import CheckContext
    from .preflight import refuse_nothing_to_check

    if isinstance(prove, dict):
        prove = ProofOptions(**prove)
    elif prove is True:
        prove = ProofOptions()
    elif not prove:
        prove = None

    started = time.perf_counter()
    ctx = CheckContext(cost=cost, seed=seed, budget=budget, backend=backend, levels=levels, grid=grid)
    # an empty domain, or a cost undefined on all of it, is a mistake in the file (exit status 2);
    # finding out builds and evaluates the shared derivatives, a stage the file's expression
    # can make arbitrarily slow: bounded, and past the bound nothing is decided
    # (the sample is drawn first, outside the bound: an interrupt inside SciPy's one-time Sobol
    # initialisation is swallowed by its compiled code and would leave it half done)
    with numeric_warnings.recorded() as shared:  # met on the shared sample: every sampled verdict reads it
        ctx.sample  # noqa: B018 - drawn here on purpose
        status, _ = within(defaults.DERIVATIVE_SECONDS, "the derivatives", refuse_nothing_to_check, ctx)
    verdicts: dict[str, Verdict] = {}
    # always in the registry's order, whatever order they were asked in: a later check may read an
    # earlier one's verdict (Loeper's principle at MTW's witness), so the order is part of the evidence
    order = list(REGISTRY)
    names = sorted(conditions, key=lambda c: order.index(c) if c in order else len(order)) if conditions else order
    # a generating function has its own conditions, an ordinary cost the others
    names = [c for c in names if (c in GENERATING) == (cost.generating is not None)]
    for name in names:
        if status == "timeout":
            verdicts[name] = undecided(name, f"not checked: computing the derivatives of the cost (symbolic "
                                             f"differentiation and compilation) did not finish within "
                                             f"{defaults.DERIVATIVE_SECONDS:g} s", stopped_after=defaults.DERIVATIVE_SECONDS)
            continue
        if on_progress:
            on_progress(name)
        module = importlib.import_module(f"costcheck.conditions.{REGISTRY[name]}")

        def one_condition(module=module, name=name):
            verdict = certify_refutation(ctx, module.check(ctx))
            if prove is not None:
                if on_progress:
                    on_progress(f"{name}: proof")
                verdict = strengthen(ctx, verdict, prove)
            return verdict

        with numeric_warnings.recorded() as caught:
            done, verdict = within(defaults.CONDITION_SECONDS, f"the {name} check", one_condition)
        if done == "timeout":
            verdict = undecided(name, f"stopped: the check did not finish within {defaults.CONDITION_SECONDS:g} s "
                                      "(the bound on one check of a cost); nothing was established",
                                stopped_after=defaults.CONDITION_SECONDS)
        verdict = numeric_warnings.with_note(verdict, [*shared, *caught])
        verdicts[name] = verdict
        ctx.verdicts[name] = verdict
    options = {"budget": budget, "seed": seed, "backend": backend}
    if cost.data is not None:  # only where they reach a check
        options.update(levels=levels, grid=grid)
    if prove is not None:
        options["prove"] = prove.to_json()
    return CostReport(cost, verdicts, time.perf_counter() - started, options)
